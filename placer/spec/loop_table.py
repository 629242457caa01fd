"""The ``[loop]`` table of a spec file: read, design, check, report.

:func:`loop_from_table` reads and checks the table into a :class:`LoopSpec`;
:func:`run_loop` designs the compensator (:func:`placer.loops.compensator.design_compensator`)
and runs the tolerance Monte Carlo (:func:`placer.loops.tolerance.loop_monte_carlo`);
:func:`loop_to_dict` gives the result the JSON shape the ``loop`` command
writes.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any

from ..circuit.elements import check_part_value
from ..eseries import check_series
from ..errors import SpecError, brief
from ..loops.compensator import (DEFAULT_RANGES, RHP_ZERO_FRACTION, LoopDesign,
                                 check_compensator, design_compensator, rhp_zero_hz)
from ..loops.tolerance import LoopMonteCarlo, loop_monte_carlo
from ..loops.plants import Plant, plant_from_table
from ..schema import check_limit, check_table
from ..units import parse_value

if TYPE_CHECKING:
    from ..circuit.topology import Topology
    from ..evidence.verify import Margins
    from .reader import PartsSpec

__all__ = ["LoopSpec", "LoopResult", "loop_from_table", "run_loop", "loop_to_dict"]

@dataclass(frozen=True)
class LoopSpec:
    """A ``[loop]`` table, read and checked."""

    plant: Plant
    crossover_hz: float
    phase_margin_deg: float
    compensator: str = "type2"
    margin_floor_deg: float | None = None
    r1: float = 10e3
    resistor_series: str = "E96"
    capacitor_series: str = "E12"
    resistor_range: tuple[float, float] = DEFAULT_RANGES["resistor"]
    capacitor_range: tuple[float, float] = DEFAULT_RANGES["capacitor"]


@dataclass(frozen=True)
class LoopResult:
    """What :func:`run_loop` returns: the spec, the design, the Monte Carlo."""

    spec: LoopSpec
    design: LoopDesign
    monte_carlo: LoopMonteCarlo | None

    # report/ sits above this module in the layering: the notebook view is
    # imported on use (see placer.report.notebook), so no plotting loads before.
    def _repr_html_(self) -> str:
        """The notebook view: tables and plots (inline SVG), self-contained."""
        from ..report.notebook import loop_html

        return loop_html(self)

    def plot(self, **options: Any) -> Any:
        """The main figure: the loop gain with its margins, a matplotlib Figure (see :func:`placer.report.notebook.plot`)."""
        from ..report.notebook import loop_figure

        return loop_figure(self, **options)


def _parts_of(table: Mapping[str, Any], parts: PartsSpec | None, source: str) -> PartsSpec:
    """The spec's ``[parts]``: as given, else read from the file's own table.

    Read by :func:`placer.spec.reader.parts_from_table`, the reader of a
    design's ``[parts]``, so a loop and a design share defaults and checks.
    """
    if parts is not None:
        return parts
    from .reader import parts_from_table  # the reader imports this module

    raw = table.get("parts", {}) if "loop" in table else {}
    if not isinstance(raw, Mapping):
        raise SpecError(f"{source}: parts must be a table, not {brief(raw)}")
    return parts_from_table(dict(raw), source=source)


def _series_and_ranges(loop: Mapping[str, Any], parts: PartsSpec, where: str) -> dict[str, Any]:
    """The parts' series ([loop] or [parts], not both at odds) and [parts] ranges."""
    out: dict[str, Any] = {}
    for kind in ("resistor", "capacitor"):
        key = f"{kind}_series"
        from_parts = parts.series[kind] if key in parts.given else None
        if key in loop:
            series = check_series(loop[key], field=f"{where}.{key}")
            if from_parts is not None and from_parts != series:
                raise SpecError(f"{where}.{key} = {brief(loop[key])} differs from [parts] "
                                f"{key} = {from_parts!r}; give the series in one place")
        else:
            series = parts.series[kind]
        out[key] = series
        out[f"{kind}_range"] = tuple(parts.ranges[kind])
    return out


def loop_from_table(table: Mapping[str, Any], *, source: str = "spec",
                    parts: PartsSpec | None = None) -> LoopSpec:
    """Read the ``[loop]`` table of a parsed spec file.

    Parameters
    ----------
    table : mapping
        The parsed file (with a ``loop`` table) or the ``[loop]`` table
        itself. Keys: ``plant`` (see :func:`placer.loops.plants.plant_from_table`),
        ``crossover`` ("20 kHz"), ``phase_margin`` ("60 deg" or a number),
        and optional ``compensator`` {"type2", "type3"} (default "type2"),
        ``margin_floor`` (degrees), ``r1`` (Ω), ``resistor_series``,
        ``capacitor_series`` (:data:`placer.schema.SPEC_TABLES` ``"loop"``).
    source : str
        The file name, used in messages.
    parts : placer.spec.reader.PartsSpec, optional
        The spec's ``[parts]``: its ranges bound the loop's resistors and
        capacitors, and its series apply unless ``[loop]`` names them (the
        two may not differ). Default: the file's own ``[parts]`` table
        (when `table` is the whole file), read as a design reads it.

    Raises
    ------
    SpecError
        Naming the key and the value at fault.

    Examples
    --------
    >>> spec = loop_from_table({"loop": {"crossover": "2 kHz", "phase_margin": "45 deg",
    ...     "plant": {"type": "roots", "poles": [-100, -1000], "dc_gain": 10}}})
    >>> spec.crossover_hz, spec.phase_margin_deg, spec.compensator
    (2000.0, 45.0, 'type2')
    """
    where = f"{source}: loop"
    if not isinstance(table, Mapping):
        raise SpecError(f"{source}: a spec must be a table, not {type(table).__name__}")
    if "loop" in table:
        loop = table["loop"]
    elif "plant" in table or "crossover" in table:
        loop = table
    else:
        raise SpecError(f"{source}: no [loop] table (keys: {', '.join(map(str, table)) or 'none'})")
    if not isinstance(loop, Mapping):
        raise SpecError(f"{where} must be a table, not {brief(loop)}")
    check_table(dict(loop), "loop", source=source)
    for key in ("plant", "crossover", "phase_margin"):
        if key not in loop:
            raise SpecError(f"{where}: missing key {key!r}")
    crossover = parse_value(loop["crossover"], unit="Hz", field=f"{where}.crossover")
    if not crossover > 0:
        raise SpecError(f"{where}.crossover must be a positive frequency, "
                        f"not {brief(loop['crossover'])}")
    check_limit(crossover, "frequency", f"{where}.crossover", shown=loop["crossover"])
    pm = parse_value(loop["phase_margin"], unit="deg", field=f"{where}.phase_margin")
    if not 0 < pm < 180:
        raise SpecError(f"{where}.phase_margin must lie between 0 and 180 deg, "
                        f"not {brief(loop['phase_margin'])}")
    compensator = loop.get("compensator", "type2")
    try:
        check_compensator(compensator)
    except SpecError as error:
        raise SpecError(f"{where}.{error}") from None
    floor = loop.get("margin_floor")
    if floor is not None:
        floor = check_limit(parse_value(floor, unit="deg", field=f"{where}.margin_floor"),
                            "margin_deg", f"{where}.margin_floor", shown=floor)
    chosen = _series_and_ranges(loop, _parts_of(table, parts, source), where)
    if "r1" in loop:
        r1 = parse_value(loop["r1"], unit="ohm", field=f"{where}.r1")
        check_part_value("resistor", r1, f"{where}.r1")
    else:  # 10 kΩ, or the nearer end of a resistor range that leaves it out
        low, high = chosen["resistor_range"]
        r1 = min(max(10e3, low), high)
    return LoopSpec(plant_from_table(loop["plant"], source=f"{where}.plant"), crossover, pm,
                    compensator, floor, r1, **chosen)


def run_loop(spec_table: Mapping[str, Any], *, source: str = "spec", samples: int = 1000,
             seed: int = 0, tolerances: Mapping[str, float] | float | None = None,
             distribution: str = "uniform", topologies: Mapping[str, Topology] | None = None,
             workers: int | None = 1, parts: PartsSpec | None = None,
             progress: Callable[[int, int], None] | None = None) -> LoopResult:
    """Read a ``[loop]`` spec, design the compensator, run the Monte Carlo.

    Parameters
    ----------
    spec_table : mapping
        The parsed spec file, see :func:`loop_from_table`.
    source : str
        The file name, for messages.
    samples, seed : int
        Monte Carlo size (0 skips it) and seed.
    tolerances, distribution
        As for :func:`loop_monte_carlo` (default: each series' usual tolerance).
    topologies : mapping, optional
        Where to look the compensator up (default: the library).
    workers : int or None, optional
        Worker processes of the Monte Carlo (see :func:`loop_monte_carlo`).
    parts : placer.spec.reader.PartsSpec, optional
        The spec's ``[parts]`` (series and ranges), as for :func:`loop_from_table`.
    progress : callable, optional
        ``progress(done, total)`` after each block of Monte Carlo builds.

    Returns
    -------
    LoopResult
    """
    spec = loop_from_table(spec_table, source=source, parts=parts)
    design = design_compensator(
        spec.plant, spec.crossover_hz, spec.phase_margin_deg, compensator=spec.compensator,
        resistor_series=spec.resistor_series, capacitor_series=spec.capacitor_series,
        resistor_range=spec.resistor_range, capacitor_range=spec.capacitor_range,
        r1=spec.r1, topologies=topologies)
    monte_carlo = (loop_monte_carlo(design, tolerances, samples=samples, seed=seed,
                                    distribution=distribution, margin_floor_deg=spec.margin_floor_deg,
                                    workers=workers, progress=progress) if samples else None)
    return LoopResult(spec, design, monte_carlo)


def _rhp_dict(plant: Plant) -> dict[str, Any]:
    """A plant's lowest right-half-plane zero (Hz) and the crossover limit it sets."""
    zero = rhp_zero_hz(plant)
    if zero is None:
        return {}
    return {"rhp_zero_hz": zero, "rhp_zero_fraction": RHP_ZERO_FRACTION,
            "rhp_zero_limit_hz": RHP_ZERO_FRACTION * zero}


def _margins_dict(m: Margins) -> dict[str, Any]:
    return {"crossover_hz": m.crossover_hz, "phase_margin_deg": m.phase_margin_deg,
            "gain_margin_db": m.gain_margin_db, "phase_crossover_hz": m.phase_crossover_hz,
            "stable": m.stable}


def loop_to_dict(result: LoopResult) -> dict[str, Any]:
    """A LoopResult as JSON-ready data (SI units, Hz, degrees, dB, rad/s roots)."""
    design = result.design
    placement = design.placement
    zeros, poles = design.compensator_roots(snapped=True)
    parts = [{"name": e.name, "kind": e.kind, "value": design.snapped[e.symbol],
              "series": design.series[e.symbol], "continuous": design.continuous[e.symbol]}
             for e in design.topology.circuit.elements if e.symbol in design.series]
    return {
        **_margins_dict(design.snapped_margins),
        "target": {"crossover_hz": placement.crossover_hz,
                   "phase_margin_deg": placement.phase_margin_deg},
        "continuous": _margins_dict(design.continuous_margins),
        "plant": {**design.plant.to_dict(), **_rhp_dict(design.plant)},
        "k_factor": {"k": placement.k, "boost_deg": placement.boost_deg,
                     "required_boost_deg": placement.required_boost_deg,
                     "plant_phase_deg": placement.plant_phase_deg,
                     "plant_gain_db": 20 * math.log10(placement.plant_gain),
                     "zero_hz": placement.zero_hz, "pole_hz": placement.pole_hz,
                     "integrator_rad_s": placement.integrator},
        "compensator": {"family": placement.family, "topology": design.topology.id,
                        "zeros_hz": [float(abs(z)) / (2 * math.pi) for z in zeros],
                        "poles_hz": [float(abs(p)) / (2 * math.pi) for p in poles],
                        "circuit": design.circuit().to_dict()},
        "parts": parts,
        "monte_carlo": result.monte_carlo.summary() if result.monte_carlo else None,
        "notes": list(design.notes) + list(design.snapped_margins.notes),
    }
