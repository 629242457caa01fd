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
    ``samples``, ``seed``, and yield windows ``f0``, ``q``, ``gain`` (±;
    default :data:`~placer.evidence.tolerance.DEFAULT_WINDOWS`, ±2 %, ±5 %, ±0.5 dB)
    and ``rejection`` (a notch section's least rejection at its target
    zero frequency, e.g. "40 dB").
``[amplifier]``
    The op-amp model: ``gbw`` (Hz), ``gain`` (DC, dB or V/V),
    ``output_resistance`` (ohm), or ``preset`` (see :data:`AMPLIFIER_PRESETS`).
    Pre-layout figures, all optional: ``noise_voltage`` ("8 nV/rtHz"),
    ``noise_current`` ("0.5 pA/rtHz"), ``output_swing`` (peak V),
    ``slew_rate`` ("0.5 V/us"), ``load_capacitance`` (F), ``min_load``
    (ohm, default 2 kΩ).
``[noise]``
    ``band`` (two frequencies; default: a decade below the lowest pole to a
    decade above the highest), ``temperature`` (K, default 300), ``target``
    (integrated output noise, V rms: the impedance level is chosen to meet it).
``[signal]``
    ``amplitude``: the full-scale input, V peak (default 1 V).
``[loop]``
    A control loop (see :func:`placer.spec.loop_table.loop_from_table`); it reads
    the same ``[parts]`` series and ranges as a design.

The accepted keys and their types are :data:`placer.schema.SPEC_TABLES`;
an unknown table or key is an error that lists the accepted ones, and
every number must be finite and within the bounds its field allows.
"""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from ..circuit.elements import KIND_UNITS, VALUE_LIMITS, check_part_value
from ..errors import SpecError, brief
from ..eseries import check_series, usual_tolerance
from ..evidence.tolerance import DEFAULT_WINDOWS
from ..circuit.library import load_folder, resolve_topology
from .loop_table import loop_from_table
from ..place.opamp import AMPLIFIER_PRESETS, AmplifierSpec
from ..schema import LIMITS, SPEC_TABLES, check_limit, check_path, check_table, read_toml
from .target_table import target_from_table
from ..circuit.topology import parse_constraint
from ..units import parse_quantity, parse_value

if TYPE_CHECKING:
    from ..circuit.topology import Constraint
    from ..target.targets import Target

__all__ = [
    "Spec",
    "PartsSpec",
    "parts_from_table",
    "ToleranceSpec",
    "AmplifierSpec",
    "AMPLIFIER_PRESETS",
    "load_spec",
    "spec_from_dict",
    "amplifier_from_table",
    "NoiseSpec",
    "SignalSpec",
    "noise_from_table",
    "signal_from_table",
]

#: The top-level keys of a spec file (see :data:`placer.schema.SPEC_TABLES`).
TABLES = tuple(SPEC_TABLES[""])


_DEFAULT_SERIES = {"resistor": "E96", "capacitor": "E12", "inductor": "E12"}
_DEFAULT_RANGES = {"resistor": (1e3, 1e6), "capacitor": (100e-12, 10e-6), "inductor": (1e-6, 1.0)}


@dataclass(frozen=True)
class PartsSpec:
    """Series, ranges, fixed parts and constraints for the parts.

    ``given`` holds the ``[parts]`` keys the spec wrote (the rest are
    defaults).
    """

    series: dict[str, str] = field(default_factory=lambda: dict(_DEFAULT_SERIES))
    ranges: dict[str, tuple[float, float]] = field(default_factory=lambda: dict(_DEFAULT_RANGES))
    fixed: dict[str, float] = field(default_factory=dict)
    constraints: tuple[Constraint, ...] = ()
    given: frozenset[str] = frozenset()


@dataclass(frozen=True)
class ToleranceSpec:
    """Part tolerances (fractions) and Monte Carlo settings."""

    tolerances: dict[str, float]
    distribution: str = "uniform"
    samples: int = 2000
    seed: int = 0
    windows: dict[str, float] = field(default_factory=lambda: dict(DEFAULT_WINDOWS))


@dataclass(frozen=True)
class Spec:
    """A validated spec file."""

    path: str
    title: str
    target: Target | None
    ordering: str
    gain_distribution: str
    parts: PartsSpec
    candidates: tuple[str, ...] | None
    folder: str | None
    tolerance: ToleranceSpec
    amplifier: AmplifierSpec
    loop: dict[str, Any] | None
    raw: dict[str, Any]
    noise: NoiseSpec = field(default_factory=lambda: NoiseSpec())
    signal: SignalSpec = field(default_factory=lambda: SignalSpec())


def load_spec(path: str | Path) -> Spec:
    """Read and validate a spec file.

    Raises
    ------
    SpecError
        A missing, unreadable or non-UTF-8 file, a directory, a path too
        long, bad TOML, or a bad field (the message names the file and the
        field and says what is accepted).
    """
    data = read_toml(path, what="spec file")
    return spec_from_dict(data, source=str(path))


def spec_from_dict(data: dict, *, source: str = "spec") -> Spec:
    """Validate a parsed spec (see the module docstring for the keys)."""
    check_table(data, "", source=source)
    target = None
    if "target" in data:
        target = target_from_table(data["target"], source=source)
    cascade = data.get("cascade", {})
    check_table(cascade, "cascade", source=source)
    ordering = cascade.get("ordering", "ascending-q")
    _choice(ordering, ("ascending-q", "descending-q", "as-given"), f"{source}: cascade.ordering")
    distribution = cascade.get("gain_distribution", "headroom")
    _choice(distribution, ("headroom", "first", "equal"), f"{source}: cascade.gain_distribution")
    parts = _parts(data.get("parts", {}), source)
    candidates, folder = _candidates(data.get("candidates", {}), source)
    if candidates:
        _check_named_parts(parts, candidates, folder, source)
    tolerance = _tolerance(data.get("tolerance", {}), parts, source)
    amplifier = amplifier_from_table(data.get("amplifier", {}), source=source)
    loop = data.get("loop")
    if loop is not None:
        loop_from_table(data, source=source, parts=parts)  # every key checked at load
    if target is None and loop is None:
        raise SpecError(f"{source}: a spec needs a [target] table (or a [loop] table)")
    title = data.get("title", Path(source).stem)
    return Spec(
        path=source, title=title, target=target, ordering=ordering,
        gain_distribution=distribution, parts=parts, candidates=candidates,
        folder=folder, tolerance=tolerance, amplifier=amplifier, loop=loop, raw=data,
        noise=noise_from_table(data.get("noise", {}), source=source),
        signal=signal_from_table(data.get("signal", {}), source=source),
    )


def _choice(value: Any, valid: tuple, where: str) -> str:
    if value not in valid:
        text = str(value)
        close = difflib.get_close_matches(text, valid, n=1) if len(text) <= 100 else []
        hint = f"; did you mean {close[0]!r}?" if close else ""
        raise SpecError(f"{where} must be one of {', '.join(valid)}, not {brief(value)}{hint}")
    return value


def _range(raw: Any, kind: str, where: str) -> tuple[float, float]:
    if not isinstance(raw, list) or len(raw) != 2:
        raise SpecError(f"{where} must be two values [low, high], not {brief(raw)}")
    low, high = (_value(v, KIND_UNITS[kind], where) for v in raw)
    if not (low > 0 and high > 0):
        raise SpecError(f"{where} = {brief(raw)}: values must be positive")
    if low >= high:
        raise SpecError(f"{where} = {brief(raw)}: low must be below high (the range is empty)")
    for value in (low, high):
        check_part_value(kind, value, where)
    return (low, high)


def _value(raw: Any, unit: str | None, where: str) -> float:
    """A finite number (TOML's inf and nan are refused) in `unit` or none."""
    if isinstance(raw, bool):
        raise SpecError(f"{where}: expected a number, not {raw!r}")
    if isinstance(raw, (int, float, str)):
        return parse_value(raw, unit=unit, field=where)
    raise SpecError(f"{where}: expected a number or a string such as '10k', not {brief(raw)}")


def _parts(table: dict, source: str) -> PartsSpec:
    check_table(table, "parts", source=source)
    series = dict(_DEFAULT_SERIES)
    ranges = dict(_DEFAULT_RANGES)
    for kind in ("resistor", "capacitor", "inductor"):
        key = f"{kind}_series"
        if key in table:
            series[kind] = check_series(table[key], field=f"{source}: parts.{key}")
        key = f"{kind}_range"
        if key in table:
            ranges[kind] = _range(table[key], kind, f"{source}: parts.{key}")
    fixed: dict[str, float] = {}
    lowest = min(low for low, _ in VALUE_LIMITS.values())
    highest = max(high for _, high in VALUE_LIMITS.values())
    for name, raw in table.get("fixed", {}).items():
        where = f"{source}: parts.fixed.{brief(name, quote=False)}"
        value = _value(raw, None, where)
        if not value > 0:
            raise SpecError(f"{where} = {brief(raw)} must be positive")
        if not lowest <= value <= highest:
            raise SpecError(f"{where} = {brief(raw)} lies outside {lowest:g} to {highest:g}")
        fixed[name] = value
    constraints = tuple(
        parse_constraint(text, where=f"{source}: parts.constraints")
        for text in table.get("constraints", [])
    )
    return PartsSpec(series=series, ranges=ranges, fixed=fixed, constraints=constraints,
                     given=frozenset(table))


def parts_from_table(table: dict, *, source: str = "spec") -> PartsSpec:
    """The ``[parts]`` table read and checked; defaults for the keys it leaves out."""
    return _parts(table, source)


def _folder(folder: str, source: str) -> str:
    """The candidates folder as a path (relative to the spec's folder)."""
    path = Path(folder)
    if not path.is_absolute():
        path = Path(source).parent / path
    check_path(path, what=f"{source}: candidates.folder", folder=True)
    return str(path)


def _candidates(table: dict, source: str) -> tuple:
    check_table(table, "candidates", source=source)
    folder = table.get("folder")
    own, failed = {}, {}
    if folder is not None:
        folder = _folder(folder, source)
        loaded = load_folder(folder)
        own, failed = loaded.topologies, loaded.errors
    topologies = table.get("topologies")
    if topologies is not None:
        if not topologies:
            raise SpecError(
                f"{source}: candidates.topologies must be a non-empty list of topology ids"
            )
        base = Path(source).parent
        resolved = []
        for item in topologies:
            if item in own:  # an id of one of the folder's files
                resolved.append(own[item].path)
                continue
            if item.endswith(".toml") and not Path(item).is_absolute():
                item = str(base / item)
            try:  # an unknown id or a bad file is bad input here, not at design time
                resolve_topology(item)
            except SpecError as error:
                why = "".join(f"; the folder's {Path(path).name} did not load: {message}"
                              for path, message in list(failed.items())[:1])
                raise SpecError(f"{source}: candidates.topologies: {error}{why}") from None
            resolved.append(item)
        topologies = tuple(resolved)
    return topologies, folder


def _check_named_parts(parts: PartsSpec, candidates: tuple, folder: str | None,
                       source: str) -> None:
    """Constraints and fixed parts must name parts of some named candidate."""
    topologies = [resolve_topology(item) for item in candidates]
    if folder is not None:
        topologies += list(load_folder(folder).topologies.values())
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
                f"{source}: parts.fixed.{brief(name, quote=False)}: no candidate topology has "
                f"a part {brief(name)} (parts: {where})"
            )


def _fraction(raw: Any, where: str) -> float:
    if isinstance(raw, str):
        quantity = parse_quantity(raw, field=where)
        if quantity.unit not in ("%", ""):
            raise SpecError(f"{where}: expected a percentage such as '1%', not {brief(raw)}")
        return quantity.value
    if isinstance(raw, (int, float)) and not isinstance(raw, bool):
        return parse_value(raw, field=where)
    raise SpecError(f"{where}: expected a percentage such as '1%', not {brief(raw)}")


def _percent_window(table: dict, key: str, source: str) -> float:
    value = _fraction(table[key], f"{source}: tolerance.{key}")
    if not 0 < value < 1:
        raise SpecError(
            f"{source}: tolerance.{key} = {brief(table[key])} must be between 0 and 100 %"
        )
    return value


def _db_window(table: dict, key: str, limit: str, source: str, words: str) -> float:
    where = f"{source}: tolerance.{key}"
    value = _value(table[key], "dB", where)
    if not value > 0:
        raise SpecError(f"{where} = {brief(table[key])} must be {words}")
    return check_limit(value, limit, where, shown=table[key])


def _tolerance(table: dict, parts: PartsSpec, source: str) -> ToleranceSpec:
    check_table(table, "tolerance", source=source)
    tolerances = {kind: usual_tolerance(parts.series[kind]) for kind in parts.series}
    for kind in ("resistor", "capacitor", "inductor"):
        if kind in table:
            tolerances[kind] = _percent_window(table, kind, source)
    distribution = _choice(table.get("distribution", "uniform"), ("uniform", "gaussian"),
                           f"{source}: tolerance.distribution")
    samples = table.get("samples", 2000)
    limit = LIMITS["samples"]
    if not limit.low <= samples <= limit.high:
        raise SpecError(f"{source}: tolerance.samples = {samples!r} must be a whole number "
                        f"from {limit.low:,} to {limit.high:,}")
    seed = table.get("seed", 0)
    if seed < 0:
        raise SpecError(f"{source}: tolerance.seed = {seed!r} must be a whole number >= 0")
    windows = dict(DEFAULT_WINDOWS)
    for key in ("f0", "q"):
        if key in table:
            windows[key] = _percent_window(table, key, source)
    if "gain" in table:
        windows["gain_db"] = _db_window(table, "gain", "window_db", source,
                                        "a positive dB window")
    if "rejection" in table:
        windows["rejection_db"] = _db_window(table, "rejection", "rejection_db", source,
                                             "a positive number of dB, such as '40 dB'")
    return ToleranceSpec(tolerances=tolerances, distribution=distribution,
                         samples=samples, seed=seed, windows=windows)


def _amplifier_gain(raw: Any, where: str) -> float:
    """An open-loop gain in dB ("100 dB") or V/V (a number), as V/V."""
    if isinstance(raw, str):
        quantity = parse_quantity(raw, field=f"{where} gain")
        if quantity.unit not in ("dB", ""):
            raise SpecError(f"{where} gain = {brief(raw)}: give dB ('100 dB') or V/V (a number)")
        if quantity.unit == "dB":
            limit = LIMITS["opamp_gain"]
            low, high = (20 * math.log10(x) for x in (limit.low, limit.high))
            if not low <= quantity.value <= high:
                raise SpecError(f"{where} gain = {brief(raw)} lies outside the accepted span "
                                f"of an op-amp DC gain, {low:g} to {high:g} dB")
            return 10 ** (quantity.value / 20)
        gain = quantity.value
    else:
        gain = _value(raw, None, f"{where} gain")
    if gain <= 0:
        raise SpecError(f"{where} gain = {brief(raw)} must be a positive open-loop gain "
                        "(V/V, or dB)")
    return check_limit(gain, "opamp_gain", f"{where} gain", shown=raw)


def amplifier_from_table(table: dict, *, source: str = "spec") -> AmplifierSpec:
    """Read an ``[amplifier]`` table into an :class:`AmplifierSpec`.

    ``gain`` in dB ("100 dB") or V/V (a plain number); ``gbw`` in Hz;
    ``output_resistance`` in ohm. Each must lie within its bounds in
    :data:`placer.schema.LIMITS` (``opamp_gbw``, ``opamp_gain``,
    ``opamp_output_resistance``; an output resistance may also be 0).

    Raises
    ------
    SpecError
        A figure out of bounds or not finite, an unknown key or preset.
    """
    where = f"{source}: [amplifier]"
    check_table(table, "amplifier", source=source)
    values = {}
    preset = table.get("preset", "")
    if preset:
        if preset not in AMPLIFIER_PRESETS:
            close = (difflib.get_close_matches(preset, list(AMPLIFIER_PRESETS), n=1)
                     if len(preset) <= 100 else [])
            hint = f"; did you mean {close[0]!r}?" if close else ""
            raise SpecError(
                f"{where} preset {brief(preset)} is unknown{hint} "
                f"(presets: {', '.join(repr(p) for p in AMPLIFIER_PRESETS)})"
            )
        values.update(AMPLIFIER_PRESETS[preset])
    if "gbw" in table:
        gbw = _value(table["gbw"], "Hz", f"{where} gbw")
        if not gbw > 0:
            raise SpecError(f"{where} gbw = {brief(table['gbw'])} must be a positive "
                            "frequency in Hz")
        values["gbw"] = check_limit(gbw, "opamp_gbw", f"{where} gbw", shown=table["gbw"])
    if "gain" in table:
        values["gain"] = _amplifier_gain(table["gain"], where)
    if "output_resistance" in table:
        raw = table["output_resistance"]
        resistance = _value(raw, "ohm", f"{where} output_resistance")
        if resistance < 0:
            raise SpecError(f"{where} output_resistance = {brief(raw)} must be >= 0")
        if resistance != 0:
            check_limit(resistance, "opamp_output_resistance", f"{where} output_resistance",
                        shown=raw)
        values["output_resistance"] = resistance
    return AmplifierSpec(
        gbw=values.get("gbw"), gain=values.get("gain"),
        output_resistance=values.get("output_resistance"), preset=preset,
        **_prelayout_amplifier(table, where),
    )



# -- pre-layout checks: [noise], [signal] and the [amplifier] figures they read --

#: The [amplifier] keys the pre-layout checks read (placer.evidence.prelayout), with their unit.
PRELAYOUT_AMPLIFIER_KEYS = ("noise_voltage", "noise_current", "output_swing", "slew_rate",
                            "load_capacitance", "min_load")
_PRELAYOUT_UNITS = {"noise_voltage": "V", "noise_current": "A", "output_swing": "V",
                    "slew_rate": "V", "load_capacitance": "F", "min_load": "ohm"}
_PRELAYOUT_EXAMPLES = {"noise_voltage": "'8 nV/rtHz'", "noise_current": "'0.5 pA/rtHz'",
                       "output_swing": "'10 V' (peak)", "slew_rate": "'0.5 V/us'",
                       "load_capacitance": "'100p'", "min_load": "'2k'"}
_PER_ROOT_HZ = ("/rtHz", "/√Hz", "/sqrt(Hz)", "/rt(Hz)")
_PER_TIME = {"/s": 1.0, "/ms": 1e3, "/us": 1e6, "/µs": 1e6, "/μs": 1e6, "/ns": 1e9}


@dataclass(frozen=True)
class NoiseSpec:
    """The ``[noise]`` table: band (Hz, or None for the default), K, target (V rms)."""

    band_hz: tuple | None = None
    temperature_k: float = 300.0
    target_v: float | None = None
    temperature_given: bool = False


@dataclass(frozen=True)
class SignalSpec:
    """The ``[signal]`` table: the full-scale input amplitude, V peak."""

    amplitude_v: float = 1.0
    amplitude_given: bool = False


def _positive(raw: object, unit: str, where: str, example: str) -> float:
    """A positive finite value of `unit` from a number or an engineering string."""
    text = raw
    factor = 1.0
    if isinstance(raw, str):
        text = raw.strip()
        if unit in ("V", "A"):
            for suffix in _PER_ROOT_HZ:
                if text.endswith(suffix):
                    text = text[: -len(suffix)].strip()
                    break
        if where.endswith("slew_rate"):
            for suffix, scale in _PER_TIME.items():
                if text.endswith(suffix):
                    text, factor = text[: -len(suffix)].strip(), scale
                    break
    value = _value(text, unit, where) * factor
    if not (math.isfinite(value) and value > 0):
        raise SpecError(f"{where} = {raw!r} must be positive (for example {example})")
    return value


def _prelayout_amplifier(table: dict, where: str) -> dict:
    out = {}
    for key in PRELAYOUT_AMPLIFIER_KEYS:
        if key in table:
            out[key] = _positive(table[key], _PRELAYOUT_UNITS[key], f"{where} {key}",
                                 _PRELAYOUT_EXAMPLES[key])
    return out


def _temperature(raw: object, where: str) -> float:
    """Kelvin from a number or "300 K"; "27 degC" / "27 °C" in Celsius."""
    value = None
    if isinstance(raw, (int, float)) and not isinstance(raw, bool):
        value = float(raw)
    elif isinstance(raw, str):
        text = raw.strip()
        for suffix, offset in (("degC", 273.15), ("°C", 273.15), ("K", 0.0)):
            if text.endswith(suffix):
                number = text[: -len(suffix)].strip()
                try:
                    value = float(number) + offset
                except ValueError:
                    value = None
                break
        else:
            try:
                value = float(text)
            except ValueError:
                value = None
    if value is None or not (math.isfinite(value) and value > 0):
        raise SpecError(f"{where} = {raw!r} must be a positive temperature in kelvin "
                        "(for example 300, '300 K' or '27 degC')")
    return value


def noise_from_table(table: dict, *, source: str = "spec") -> NoiseSpec:
    """Read a ``[noise]`` table into a :class:`NoiseSpec`.

    Raises
    ------
    SpecError
        An unknown key, a band whose upper edge is not above the lower, a
        non-positive temperature or target.
    """
    where = f"{source}: [noise]"
    check_table(table, "noise", source=source)
    band = None
    if "band" in table:
        raw = table["band"]
        if not isinstance(raw, list) or len(raw) != 2:
            raise SpecError(f"{where} band must be two frequencies [low, high], such as "
                            f"[\"10 Hz\", \"100 kHz\"], not {raw!r}")
        low, high = (_value(v, "Hz", f"{where} band") for v in raw)
        if not (low > 0 and math.isfinite(high) and high > low):
            raise SpecError(f"{where} band = {raw!r}: give two positive frequencies with the "
                            "upper edge above the lower")
        band = (low, high)
    temperature = 300.0
    if "temperature" in table:
        temperature = _temperature(table["temperature"], f"{where} temperature")
    target = None
    if "target" in table:
        target = _positive(table["target"], "V", f"{where} target", "'5 uV' rms at the output")
    return NoiseSpec(band_hz=band, temperature_k=temperature, target_v=target,
                     temperature_given="temperature" in table)


def signal_from_table(table: dict, *, source: str = "spec") -> SignalSpec:
    """Read a ``[signal]`` table into a :class:`SignalSpec`.

    Raises
    ------
    SpecError
        An unknown key or an amplitude that is not positive.
    """
    where = f"{source}: [signal]"
    check_table(table, "signal", source=source)
    if "amplitude" not in table:
        return SignalSpec()
    return SignalSpec(amplitude_v=_positive(table["amplitude"], "V", f"{where} amplitude",
                                            "'1 V' peak"), amplitude_given=True)
