"""Spec files: read, validate, and give clear errors.

A spec is TOML with these tables (every value may be a number or an
engineering string read by :mod:`placer.units`):

``[target]``
    What to realise: see :func:`placer.spec.target_table.target_from_table`.
``[cascade]``
    ``ordering`` ("ascending-q", "descending-q", "as-given") and
    ``gain_distribution`` ("headroom", "first", "equal").
``[parts]``
    ``resistor_series``, ``capacitor_series``, ``inductor_series`` (E3…E192),
    ``resistor_range``, ``capacitor_range``, ``inductor_range`` (two values),
    ``fixed`` (a table part → value), ``constraints`` (list such as
    ``["C1 = C2"]``).
``[candidates]``
    ``topologies`` (library ids or paths to topology files; default: every
    library topology whose response kind fits a section) and ``folder`` (a
    folder of the user's own topology files, added to the candidates).
``[tolerance]``
    ``resistor``, ``capacitor``, ``inductor`` (e.g. "1%"; default: the
    series' usual tolerance), ``distribution`` ("uniform", "gaussian"),
    ``samples``, ``seed``, and yield windows ``f0``, ``q``, ``gain`` (±)
    and ``rejection`` (a notch section's least rejection at its target
    zero frequency, e.g. "40 dB").
``[amplifier]``
    The op-amp model: ``gbw`` (Hz), ``gain`` (DC, dB or V/V),
    ``output_resistance`` (ohm), or ``preset`` (see :data:`AMPLIFIER_PRESETS`).
``[loop]``
    A control loop (see :func:`placer.spec.loop_table.loop_from_table`).
"""

from __future__ import annotations

import difflib
import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from ..place.opamp import AMPLIFIER_PRESETS, AmplifierSpec
from ..errors import SpecError
from ..eseries import check_series, usual_tolerance
from ..circuit.library import load_folder, resolve_topology
from .target_table import target_from_table
from ..circuit.topology import parse_constraint
from ..units import parse_quantity, parse_value

__all__ = [
    "Spec",
    "PartsSpec",
    "ToleranceSpec",
    "AmplifierSpec",
    "AMPLIFIER_PRESETS",
    "load_spec",
    "spec_from_dict",
    "amplifier_from_table",
]

TABLES = ("title", "description", "target", "cascade", "parts", "candidates",
          "tolerance", "amplifier", "loop")


_DEFAULT_SERIES = {"resistor": "E96", "capacitor": "E12", "inductor": "E12"}
_DEFAULT_RANGES = {"resistor": (1e3, 1e6), "capacitor": (100e-12, 10e-6), "inductor": (1e-6, 1.0)}
_UNITS = {"resistor": "ohm", "capacitor": "F", "inductor": "H"}


@dataclass(frozen=True)
class PartsSpec:
    """Series, ranges, fixed parts and constraints for the parts."""

    series: dict = field(default_factory=lambda: dict(_DEFAULT_SERIES))
    ranges: dict = field(default_factory=lambda: dict(_DEFAULT_RANGES))
    fixed: dict = field(default_factory=dict)
    constraints: tuple = ()


@dataclass(frozen=True)
class ToleranceSpec:
    """Part tolerances (fractions) and Monte Carlo settings."""

    tolerances: dict
    distribution: str = "uniform"
    samples: int = 2000
    seed: int = 0
    windows: dict = field(default_factory=lambda: {"f0": 0.02, "q": 0.05})




@dataclass(frozen=True)
class Spec:
    """A validated spec file."""

    path: str
    title: str
    target: object | None
    ordering: str
    gain_distribution: str
    parts: PartsSpec
    candidates: tuple | None
    folder: str | None
    tolerance: ToleranceSpec
    amplifier: AmplifierSpec
    loop: dict | None
    raw: dict


def load_spec(path):
    """Read and validate a spec file.

    Raises
    ------
    SpecError
        A missing or unreadable file, bad TOML, or a bad field (the message
        names the file and the field and says what is accepted).
    """
    path = Path(path)
    if not path.is_file():
        raise SpecError(f"spec file {str(path)!r} does not exist")
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as error:
        raise SpecError(f"{path}: not valid TOML ({error})") from None
    except (OSError, UnicodeDecodeError) as error:
        raise SpecError(f"{path}: cannot be read ({error})") from None
    return spec_from_dict(data, source=str(path))


def _unknown(keys, valid, where):
    for key in keys:
        if key not in valid:
            close = difflib.get_close_matches(key, valid, n=1)
            hint = f"; did you mean {close[0]!r}?" if close else ""
            raise SpecError(f"{where}: unknown key {key!r}{hint} (accepted: {', '.join(valid)})")


def _table(data, name, source):
    value = data.get(name, {})
    if not isinstance(value, dict):
        raise SpecError(f"{source}: [{name}] must be a table")
    return value


def spec_from_dict(data, *, source="spec"):
    """Validate a parsed spec (see the module docstring for the keys)."""
    _unknown(data, TABLES, source)
    target = None
    if "target" in data:
        target = target_from_table(_table(data, "target", source), source=source)
    cascade = _table(data, "cascade", source)
    _unknown(cascade, ("ordering", "gain_distribution"), f"{source}: [cascade]")
    ordering = cascade.get("ordering", "ascending-q")
    _choice(ordering, ("ascending-q", "descending-q", "as-given"), f"{source}: cascade.ordering")
    distribution = cascade.get("gain_distribution", "headroom")
    _choice(distribution, ("headroom", "first", "equal"), f"{source}: cascade.gain_distribution")
    parts = _parts(_table(data, "parts", source), source)
    candidates, folder = _candidates(_table(data, "candidates", source), source)
    if candidates:
        _check_named_parts(parts, candidates, folder, source)
    tolerance = _tolerance(_table(data, "tolerance", source), parts, source)
    amplifier = amplifier_from_table(_table(data, "amplifier", source), source=source)
    loop = data.get("loop")
    if loop is not None and not isinstance(loop, dict):
        raise SpecError(f"{source}: [loop] must be a table")
    if target is None and loop is None:
        raise SpecError(f"{source}: a spec needs a [target] table (or a [loop] table)")
    title = data.get("title", Path(source).stem)
    if not isinstance(title, str):
        raise SpecError(f"{source}: title must be a string")
    return Spec(
        path=source, title=title, target=target, ordering=ordering,
        gain_distribution=distribution, parts=parts, candidates=candidates,
        folder=folder, tolerance=tolerance, amplifier=amplifier, loop=loop, raw=data,
    )


def _choice(value, valid, where):
    if value not in valid:
        close = difflib.get_close_matches(str(value), valid, n=1)
        hint = f"; did you mean {close[0]!r}?" if close else ""
        raise SpecError(f"{where} must be one of {', '.join(valid)}, not {value!r}{hint}")
    return value


def _range(raw, kind, where):
    if not isinstance(raw, list) or len(raw) != 2:
        raise SpecError(f"{where} must be two values [low, high], not {raw!r}")
    low, high = (_value(v, _UNITS[kind], where) for v in raw)
    if not (low > 0 and high > 0):
        raise SpecError(f"{where} = {raw!r}: values must be positive")
    if low >= high:
        raise SpecError(f"{where} = {raw!r}: low must be below high (the range is empty)")
    return (low, high)


def _value(raw, unit, where):
    if isinstance(raw, bool):
        raise SpecError(f"{where}: expected a number, not {raw!r}")
    if isinstance(raw, (int, float)):
        return float(raw)
    if isinstance(raw, str):
        return parse_value(raw, unit=unit, field=where)
    raise SpecError(f"{where}: expected a number or a string such as '10k', not {raw!r}")


def _parts(table, source):
    valid = ("resistor_series", "capacitor_series", "inductor_series", "resistor_range",
             "capacitor_range", "inductor_range", "fixed", "constraints")
    _unknown(table, valid, f"{source}: [parts]")
    series = dict(_DEFAULT_SERIES)
    ranges = dict(_DEFAULT_RANGES)
    for kind in ("resistor", "capacitor", "inductor"):
        key = f"{kind}_series"
        if key in table:
            series[kind] = check_series(table[key], field=f"{source}: parts.{key}")
        key = f"{kind}_range"
        if key in table:
            ranges[kind] = _range(table[key], kind, f"{source}: parts.{key}")
    fixed = {}
    raw_fixed = table.get("fixed", {})
    if not isinstance(raw_fixed, dict):
        raise SpecError(f"{source}: parts.fixed must be a table such as {{ R3 = \"10k\" }}")
    for name, raw in raw_fixed.items():
        value = _value(raw, None, f"{source}: parts.fixed.{name}")
        if not value > 0:
            raise SpecError(f"{source}: parts.fixed.{name} = {raw!r} must be positive")
        fixed[name] = value
    raw_constraints = table.get("constraints", [])
    if not isinstance(raw_constraints, list):
        raise SpecError(f"{source}: parts.constraints must be a list such as [\"C1 = C2\"]")
    constraints = tuple(
        parse_constraint(text, where=f"{source}: parts.constraints") for text in raw_constraints
    )
    return PartsSpec(series=series, ranges=ranges, fixed=fixed, constraints=constraints)


def _candidates(table, source):
    _unknown(table, ("topologies", "folder"), f"{source}: [candidates]")
    topologies = table.get("topologies")
    if topologies is not None:
        if not isinstance(topologies, list) or not topologies or not all(
            isinstance(t, str) for t in topologies
        ):
            raise SpecError(
                f"{source}: candidates.topologies must be a non-empty list of topology ids"
            )
        base = Path(source).parent
        resolved = []
        for item in topologies:
            if item.endswith(".toml") and not Path(item).is_absolute():
                item = str(base / item)
            try:  # an unknown id or a bad file is bad input here, not at design time
                resolve_topology(item)
            except SpecError as error:
                raise SpecError(f"{source}: candidates.topologies: {error}") from None
            resolved.append(item)
        topologies = tuple(resolved)
    folder = table.get("folder")
    if folder is not None:
        if not isinstance(folder, str):
            raise SpecError(f"{source}: candidates.folder must be a path string")
        path = Path(folder)
        if not path.is_absolute():
            path = Path(source).parent / path
        if not path.is_dir():
            raise SpecError(f"{source}: candidates.folder {folder!r} does not exist")
        folder = str(path)
    return topologies, folder


def _check_named_parts(parts, candidates, folder, source):
    """Constraints and fixed parts must name parts of some named candidate."""
    topologies = [resolve_topology(item) for item in candidates]
    if folder is not None:
        topologies += list(load_folder(folder)["topologies"].values())
    where = ", ".join(f"{t.id} ({', '.join(t.symbols)})" for t in topologies)
    for constraint in parts.constraints:
        for name in (constraint.part, constraint.source):
            if not any(name in t.symbols for t in topologies):
                raise SpecError(
                    f"{source}: parts.constraints: '{constraint}' names {name!r}, which no "
                    f"candidate topology has (parts: {where})"
                )
    for name in parts.fixed:
        if not any(name in t.symbols for t in topologies):
            raise SpecError(
                f"{source}: parts.fixed.{name}: no candidate topology has a part {name!r} "
                f"(parts: {where})"
            )


def _fraction(raw, where):
    if isinstance(raw, str):
        quantity = parse_quantity(raw, field=where)
        if quantity.unit not in ("%", ""):
            raise SpecError(f"{where}: expected a percentage such as '1%', not {raw!r}")
        return quantity.value
    if isinstance(raw, (int, float)) and not isinstance(raw, bool):
        return float(raw)
    raise SpecError(f"{where}: expected a percentage such as '1%', not {raw!r}")


def _tolerance(table, parts, source):
    valid = ("resistor", "capacitor", "inductor", "distribution", "samples", "seed",
             "f0", "q", "gain", "rejection")
    _unknown(table, valid, f"{source}: [tolerance]")
    tolerances = {kind: usual_tolerance(parts.series[kind]) for kind in parts.series}
    for kind in ("resistor", "capacitor", "inductor"):
        if kind in table:
            value = _fraction(table[kind], f"{source}: tolerance.{kind}")
            if not 0 < value < 1:
                raise SpecError(
                    f"{source}: tolerance.{kind} = {table[kind]!r} must be between 0 and 100 %"
                )
            tolerances[kind] = value
    distribution = _choice(table.get("distribution", "uniform"), ("uniform", "gaussian"),
                           f"{source}: tolerance.distribution")
    samples = table.get("samples", 2000)
    if not isinstance(samples, int) or isinstance(samples, bool) or samples < 1:
        raise SpecError(f"{source}: tolerance.samples = {samples!r} must be a whole number >= 1")
    seed = table.get("seed", 0)
    if not isinstance(seed, int) or isinstance(seed, bool) or seed < 0:
        raise SpecError(f"{source}: tolerance.seed = {seed!r} must be a whole number >= 0")
    windows = {"f0": 0.02, "q": 0.05}
    for key in ("f0", "q"):
        if key in table:
            value = _fraction(table[key], f"{source}: tolerance.{key}")
            if not 0 < value < 1:
                raise SpecError(f"{source}: tolerance.{key} = {table[key]!r} must be between 0 and 100 %")
            windows[key] = value
    if "gain" in table:
        value = _value(table["gain"], "dB", f"{source}: tolerance.gain")
        if not value > 0:
            raise SpecError(f"{source}: tolerance.gain = {table['gain']!r} must be a positive dB window")
        windows["gain_db"] = value
    if "rejection" in table:
        value = _value(table["rejection"], "dB", f"{source}: tolerance.rejection")
        if not value > 0:
            raise SpecError(f"{source}: tolerance.rejection = {table['rejection']!r} must be a "
                            f"positive number of dB, such as '40 dB'")
        windows["rejection_db"] = value
    return ToleranceSpec(tolerances=tolerances, distribution=distribution,
                         samples=samples, seed=seed, windows=windows)


def amplifier_from_table(table, *, source="spec"):
    """Read an ``[amplifier]`` table into an :class:`AmplifierSpec`.

    ``gain`` in dB ("100 dB") or V/V (a plain number); ``gbw`` in Hz.

    Raises
    ------
    SpecError
        A non-positive GBW, a negative or zero gain, an unknown preset.
    """
    where = f"{source}: [amplifier]"
    _unknown(table, ("gbw", "gain", "output_resistance", "preset"), where)
    values = {}
    preset = table.get("preset", "")
    if preset:
        if preset not in AMPLIFIER_PRESETS:
            close = difflib.get_close_matches(str(preset), list(AMPLIFIER_PRESETS), n=1)
            hint = f"; did you mean {close[0]!r}?" if close else ""
            raise SpecError(
                f"{where} preset {preset!r} is unknown{hint} "
                f"(presets: {', '.join(repr(p) for p in AMPLIFIER_PRESETS)})"
            )
        values.update(AMPLIFIER_PRESETS[preset])
    if "gbw" in table:
        gbw = _value(table["gbw"], "Hz", f"{where} gbw")
        if not (gbw > 0 and math.isfinite(gbw)):
            raise SpecError(f"{where} gbw = {table['gbw']!r} must be a positive frequency in Hz")
        values["gbw"] = gbw
    if "gain" in table:
        raw = table["gain"]
        if isinstance(raw, str):
            quantity = parse_quantity(raw, field=f"{where} gain")
            if quantity.unit == "dB":
                gain = 10 ** (quantity.value / 20)
            elif quantity.unit == "":
                gain = quantity.value
            else:
                raise SpecError(f"{where} gain = {raw!r}: give dB ('100 dB') or V/V (a number)")
            negative = quantity.value <= 0 and quantity.unit == ""
        else:
            gain = _value(raw, None, f"{where} gain")
            negative = gain <= 0
        if negative:
            raise SpecError(
                f"{where} gain = {raw!r} must be a positive open-loop gain (V/V, or dB)"
            )
        values["gain"] = gain
    if "output_resistance" in table:
        resistance = _value(table["output_resistance"], "ohm", f"{where} output_resistance")
        if resistance < 0:
            raise SpecError(f"{where} output_resistance = {table['output_resistance']!r} must be >= 0")
        values["output_resistance"] = resistance
    return AmplifierSpec(
        gbw=values.get("gbw"), gain=values.get("gain"),
        output_resistance=values.get("output_resistance"), preset=preset,
    )
