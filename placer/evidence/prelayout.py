"""Before layout: noise, signal swing and slew, and every op-amp's own loop.

A design that sits on its poles can still fail on the bench. These checks
run on the built circuits, from the same MNA:

* noise (:mod:`placer.analysis.noise`): each section's and the cascade's output
  noise density over the band, its integrated rms, the input-referred
  figure and the sources that dominate it, ranked; and the impedance level
  each section was given (:mod:`placer.place.level`) with the nearest level that
  fails;
* swing and slew: for a full-scale input (``[signal] amplitude``, default
  1 V peak) the peak voltage at every op-amp output and internal node of
  the cascade over frequency, against ``[amplifier] output_swing``: which
  clips first and at what input level; the slew rate each op-amp output
  needs, 2π·f·V_peak at its largest over the pass band (common practice,
  no source), against ``slew_rate``; and the load each op-amp drives,
  against ``min_load``;
* every op-amp's own loop (:mod:`placer.analysis.return_ratio`), with the spec's
  op-amp model and ``load_capacitance``; with no GBW in the spec, the
  "10 MHz" preset of :data:`placer.place.opamp.AMPLIFIER_PRESETS` (GBW 10 MHz,
  110 dB, 50 Ω), said in every output. Phase margins below 45° are flagged.

The pass band is where the cascade's gain is within 3 dB of its largest
on the analysis grid (a decade below the lowest target pole to a decade
above the highest, 50 points a decade).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any, cast

import numpy as np

from ..circuit.elements import Circuit
from ..eseries import series_values
from ..place.level import DEFAULT_MIN_LOAD, LevelChoice, LevelStep, describe_level, level_rules
from ..analysis.mna import numeric_system
from ..analysis.noise import NoiseAnalysis, analyse_noise
from ..place.opamp import AMPLIFIER_PRESETS, AmplifierSpec, apply_amplifier, describe_amplifier
from ..analysis.pencil import circuit_poles
from ..analysis.return_ratio import PHASE_MARGIN_FLOOR_DEG, OpampLoop, opamp_loops, output_pin, with_load_capacitance
from ..units import finite_or_none, format_value

if TYPE_CHECKING:
    from ..design import Design
    from ..place.level import LevelRule
    from ..place.snap import SnapResult
    from ..place.solve import Problem
    from ..spec.reader import Spec
    from ..target.targets import Section, Target

__all__ = [
    "DEFAULT_LOOP_PRESET",
    "DEFAULT_AMPLITUDE",
    "PrelayoutSettings",
    "NodeSwing",
    "SlewNeed",
    "OpampLoad",
    "SectionChecks",
    "Prelayout",
    "default_band",
    "settings_for",
    "level_rules_for",
    "loop_model",
    "checked_circuit",
    "check_design",
    "compensator_loops",
    "loop_to_dict",
]

#: The op-amp model of the loop check when the spec gives no GBW.
DEFAULT_LOOP_PRESET = "10 MHz"
#: Full-scale input, V peak, when the spec names none.
DEFAULT_AMPLITUDE = 1.0
_GRID_PER_DECADE = 50


def default_band(poles: Iterable[complex]) -> tuple[float, float]:
    """A decade below the lowest pole to a decade above the highest, Hz."""
    magnitudes = [abs(p) / (2 * math.pi) for p in poles if abs(p) > 0]
    return (min(magnitudes) / 10, max(magnitudes) * 10)


@dataclass(frozen=True)
class PrelayoutSettings:
    """What the checks were run with, and which figures are defaults."""

    band_hz: tuple[float, float]
    band_default: bool
    analysis_hz: tuple[float, float]
    temperature_k: float
    temperature_default: bool
    amplitude_v: float
    amplitude_default: bool
    target_v: float | None
    noise_voltage: float | None
    noise_current: float | None
    min_load_ohm: float
    output_swing_v: float | None
    slew_rate_v_per_s: float | None
    load_capacitance_f: float | None
    loop_model: AmplifierSpec
    loop_model_default: bool


def loop_model(amplifier: AmplifierSpec | None) -> tuple[AmplifierSpec, bool]:
    """(model, is_default): the spec's op-amp when it has a GBW, else the default preset."""
    if amplifier is not None and amplifier.gbw is not None:
        return amplifier, False
    return AmplifierSpec(**AMPLIFIER_PRESETS[DEFAULT_LOOP_PRESET], preset=DEFAULT_LOOP_PRESET), True


def settings_for(spec: Spec) -> PrelayoutSettings:
    """The checks' settings from a spec's [noise], [signal] and [amplifier] tables."""
    noise, signal = spec.noise, spec.signal
    amplifier = spec.amplifier or AmplifierSpec()
    analysis = default_band(cast("Target", spec.target).poles)
    band = cast("tuple[float, float] | None", noise.band_hz)
    model, is_default = loop_model(amplifier)
    return PrelayoutSettings(
        band_hz=band or analysis, band_default=band is None, analysis_hz=analysis,
        temperature_k=noise.temperature_k,
        temperature_default=not noise.temperature_given,
        amplitude_v=signal.amplitude_v,
        amplitude_default=not signal.amplitude_given,
        target_v=noise.target_v, noise_voltage=amplifier.noise_voltage,
        noise_current=amplifier.noise_current,
        min_load_ohm=amplifier.min_load or DEFAULT_MIN_LOAD,
        output_swing_v=amplifier.output_swing, slew_rate_v_per_s=amplifier.slew_rate,
        load_capacitance_f=amplifier.load_capacitance, loop_model=model,
        loop_model_default=is_default)


def level_rules_for(spec: Spec, sections: Sequence[Section]) -> tuple[LevelRule, ...]:
    """The impedance-level rule of every section of a spec's cascade."""
    settings = settings_for(spec)
    series = spec.parts.series or {}
    steps = len(series_values(series.get("capacitor", "E12"), 1.0, 9.999))
    return level_rules(sections, band_hz=settings.band_hz, analysis_hz=settings.analysis_hz,
                       temperature_k=settings.temperature_k, noise_voltage=settings.noise_voltage,
                       noise_current=settings.noise_current, min_load_ohm=settings.min_load_ohm,
                       target_v=settings.target_v, steps_per_decade=steps)


@dataclass(frozen=True)
class NodeSwing:
    """The peak voltage a node reaches over frequency for the full-scale input."""

    node: str
    section: int
    opamp: str               # the op-amp driving it, "" for a passive node
    peak_v: float            # V peak, at the full-scale input
    at_hz: float
    clips_at_input_v: float | None   # input V peak at which it reaches output_swing
    exceeds: bool


@dataclass(frozen=True)
class SlewNeed:
    """The slew rate an op-amp output needs over the pass band."""

    opamp: str
    section: int
    need_v_per_s: float
    at_hz: float
    short: bool              # above the spec's slew_rate


@dataclass(frozen=True)
class OpampLoad:
    """The load an op-amp drives: its largest output voltage over its largest current."""

    opamp: str
    section: int
    load_ohm: float
    below: bool              # under min_load


@dataclass(frozen=True)
class SectionChecks:
    """Every check of one section (noise of the section alone at its own output)."""

    index: int
    noise: NoiseAnalysis
    level: LevelChoice | None
    swing: tuple[NodeSwing, ...]
    slew: tuple[SlewNeed, ...]
    loads: tuple[OpampLoad, ...]
    loops: tuple[OpampLoop, ...]


@dataclass(frozen=True)
class Prelayout:
    """The pre-layout checks of a design.

    Attributes
    ----------
    settings : PrelayoutSettings
    sections : tuple of SectionChecks
    cascade_noise : NoiseAnalysis
        At the cascade's output.
    first_clip : NodeSwing or None
        The op-amp output that reaches its swing first (the largest peak
        without a swing limit); None with no op-amp.
    pass_band_hz : (float, float)
    stable : bool
        Every pole of the checked circuit (op-amps modelled) in the left half-plane.
    flags : tuple of str
    """

    settings: PrelayoutSettings
    sections: tuple[SectionChecks, ...]
    cascade_noise: NoiseAnalysis
    first_clip: NodeSwing | None
    pass_band_hz: tuple[float, float]
    stable: bool
    flags: tuple[str, ...]

    @property
    def worst_phase_margin_deg(self) -> float | None:
        margins = [loop.phase_margin_deg for s in self.sections for loop in s.loops
                   if loop.phase_margin_deg is not None]
        return min(margins) if margins else None

    @property
    def largest_slew_v_per_s(self) -> float | None:
        needs = [n.need_v_per_s for s in self.sections for n in s.slew]
        return max(needs) if needs else None

    def to_dict(self) -> dict[str, Any]:
        return _prelayout_dict(self)


def checked_circuit(circuit: Circuit, model: AmplifierSpec, load_capacitance: float | None) -> Circuit:
    """`circuit` with every op-amp modelled (unless it already is) and its load capacitance."""
    modelled = any(e.kind == "opamp" and (e.gbw is not None or e.gain is not None)
                   for e in circuit.elements)
    if not modelled:
        circuit = apply_amplifier(circuit, replace(model, preset=""))
    return with_load_capacitance(circuit, load_capacitance)


def _section_of(node: str, count: int) -> int:
    if node == "vout":
        return count
    if node.startswith("s") and "_" in node and node[1:node.index("_")].isdigit():
        return int(node[1:node.index("_")])
    return 0


def _signal_checks(circuit: Circuit, settings: PrelayoutSettings, count: int
                   ) -> tuple[tuple[NodeSwing, ...], tuple[SlewNeed, ...], tuple[OpampLoad, ...],
                              tuple[float, float]]:
    """(swings, slews, loads, pass band) on the as-built cascade."""
    frequency = np.geomspace(settings.analysis_hz[0], settings.analysis_hz[1], int(_GRID_PER_DECADE * math.log10(
        settings.analysis_hz[1] / settings.analysis_hz[0])) + 1)
    system = numeric_system(circuit)
    omega = 2 * math.pi * frequency
    matrices = system.G[None] + 1j * omega[:, None, None] * system.C[None]
    x = np.abs(np.linalg.solve(matrices, np.broadcast_to(system.b.astype(complex),
                                                         (omega.size, system.b.size))[..., None])[..., 0])
    gain = x[:, system.output]
    band = gain >= gain.max() / math.sqrt(2)
    pass_band = (float(frequency[band].min()), float(frequency[band].max()))
    node_index = system.layout.node_index
    pins = {output_pin(circuit, e.name): e.name for e in circuit.elements if e.kind == "opamp"}
    amplitude, swing_limit = settings.amplitude_v, settings.output_swing_v
    swings = []
    for node, index in node_index.items():
        if node == circuit.input or node.endswith(".int"):
            continue
        per_volt = x[:, index]
        k = int(np.argmax(per_volt))
        opamp = pins.get(node, "")
        clips = (swing_limit / per_volt[k]) if (opamp and swing_limit and per_volt[k] > 0) else None
        swings.append(NodeSwing(node=node, section=_section_of(node, count), opamp=opamp,
                                peak_v=float(amplitude * per_volt[k]), at_hz=float(frequency[k]),
                                clips_at_input_v=None if clips is None else float(clips),
                                exceeds=bool(clips is not None and clips < amplitude)))
    slews: list[SlewNeed] = []
    loads: list[OpampLoad] = []
    for pin, name in pins.items():
        section = _section_of(pin, count)
        rate = 2 * math.pi * frequency * amplitude * x[:, node_index[pin]]
        k = int(np.argmax(np.where(band, rate, -1.0)))
        need = float(rate[k])
        limit = settings.slew_rate_v_per_s
        slews.append(SlewNeed(name, section, need, float(frequency[k]),
                              bool(limit is not None and need > limit)))
        current = float(np.max(x[:, system.layout.branch_index[name]]))
        load = float(np.max(x[:, node_index[pin]])) / current if current > 0 else math.inf
        loads.append(OpampLoad(name, section, load, bool(load < settings.min_load_ohm)))
    return tuple(swings), tuple(slews), tuple(loads), pass_band


def _first_clip(swings: Sequence[NodeSwing]) -> NodeSwing | None:
    driven = [s for s in swings if s.opamp]
    if not driven:
        return None
    clipping = [(s.clips_at_input_v, s) for s in driven if s.clips_at_input_v is not None]
    if clipping:
        return min(clipping, key=lambda pair: pair[0])[1]
    return max(driven, key=lambda s: s.peak_v)


def check_design(design: Design) -> Prelayout:
    """Run every pre-layout check on a design.

    Parameters
    ----------
    design : placer.design.Design
        Its spec's [noise], [signal] and [amplifier] tables set the checks
        (see :func:`settings_for`).

    Returns
    -------
    Prelayout
    """
    spec = design.spec
    settings = settings_for(spec)
    count = len(design.sections)
    noise_args: dict[str, Any] = dict(temperature=settings.temperature_k, noise_voltage=settings.noise_voltage,
                      noise_current=settings.noise_current)
    cascade_noise = analyse_noise(design.circuit, settings.band_hz, poles=design.poles, **noise_args)
    swings, slews, loads, pass_band = _signal_checks(design.circuit, settings, count)
    checked = checked_circuit(design.circuit, settings.loop_model, settings.load_capacitance_f)
    loops = opamp_loops(checked)
    pins = {e.name: _section_of(output_pin(design.circuit, e.name), count)
            for e in design.circuit.elements if e.kind == "opamp"}
    rules = level_rules_for(spec, [s.section for s in design.sections])
    sections = []
    for s, rule in zip(design.sections, rules):
        problem = cast("Problem", s.candidate.problem)   # a design's candidates are reachable
        level = describe_level(problem, cast("SnapResult", s.candidate.snapped).values, rule,
                               mode=rule.mode)
        sections.append(SectionChecks(
            index=s.index, noise=analyse_noise(s.circuit, settings.band_hz, **noise_args),
            level=level, swing=tuple(w for w in swings if w.section == s.index),
            slew=tuple(n for n in slews if n.section == s.index),
            loads=tuple(load for load in loads if load.section == s.index),
            loops=tuple(loop for loop in loops if pins.get(loop.opamp) == s.index)))
    stable = bool(np.all(np.real(circuit_poles(checked)) < 0))
    first = _first_clip(swings)
    result = Prelayout(settings=settings, sections=tuple(sections), cascade_noise=cascade_noise,
                       first_clip=first, pass_band_hz=pass_band, stable=stable, flags=())
    return replace(result, flags=_flags(result))


def _flags(result: Prelayout) -> tuple[str, ...]:
    settings = result.settings
    out: list[str] = []
    if settings.target_v is not None and result.cascade_noise.rms_v > settings.target_v:
        out.append(f"output noise {format_value(result.cascade_noise.rms_v, 'V')} rms is above "
                   f"the target {format_value(settings.target_v, 'V')}")
    for s in result.sections:
        for loop in s.loops:
            if loop.low_margin:
                out.append(f"{loop.opamp}: phase margin {loop.phase_margin_deg:.1f}° is below "
                           f"{PHASE_MARGIN_FLOOR_DEG:g}°")
        swing = settings.output_swing_v
        for w in s.swing:
            if w.exceeds and swing is not None:   # exceeds only against a given swing
                out.append(f"{w.opamp} output ({w.node}) reaches {format_value(w.peak_v, 'V')} "
                           f"peak, past the swing {format_value(swing, 'V')}")
        limit = settings.slew_rate_v_per_s
        for n in s.slew:
            if n.short and limit is not None:   # short only against a given slew rate
                out.append(f"{n.opamp} needs {_slew(n.need_v_per_s)}, above the slew rate "
                           f"{_slew(limit)}")
        for load in s.loads:
            if load.below:
                out.append(f"{load.opamp} drives {format_value(load.load_ohm, 'ohm')}, below "
                           f"min_load {format_value(settings.min_load_ohm, 'ohm')}")
    if not result.stable:
        out.append("the circuit with the op-amp model has a pole in the right half-plane")
    return tuple(out)


def _slew(rate: float) -> str:
    return f"{rate / 1e6:.3g} V/µs"


def compensator_loops(circuit: Circuit, amplifier: AmplifierSpec | None
                      ) -> tuple[tuple[OpampLoop, ...], AmplifierSpec, bool]:
    """(loops, model, is_default) of a compensator's op-amps, for ``placer loop``."""
    model, is_default = loop_model(amplifier)
    capacitance = amplifier.load_capacitance if amplifier is not None else None
    return opamp_loops(checked_circuit(circuit, model, capacitance)), model, is_default


def loop_to_dict(loop: OpampLoop) -> dict[str, Any]:
    """One op-amp loop's figures as JSON-ready data (Hz, degrees, dB)."""
    return {"opamp": loop.opamp, "crossover_hz": finite_or_none(loop.crossover_hz),
            "phase_margin_deg": finite_or_none(loop.phase_margin_deg),
            "gain_margin_db": finite_or_none(loop.gain_margin_db),
            "phase_crossover_hz": finite_or_none(loop.phase_crossover_hz),
            "low_frequency_gain_db": finite_or_none(loop.low_frequency_gain_db),
            "low_margin": loop.low_margin, "margin_floor_deg": PHASE_MARGIN_FLOOR_DEG}


def _noise_dict(noise: NoiseAnalysis, *, arrays: bool = True) -> dict[str, Any]:
    out: dict[str, Any] = {"band_hz": list(noise.band_hz), "rms_v": noise.rms_v,
           "input_referred_rms_v": finite_or_none(noise.input_referred_rms_v),
           "peak_gain": noise.peak_gain,
           "dominant": [{"source": c.source, "kind": c.kind, "rms_v": c.rms_v, "share": c.share}
                        for c in noise.contributions]}
    if arrays:
        spectrum = noise.spectrum
        out["frequency_hz"] = spectrum.frequency_hz.tolist()
        out["density_v_per_rthz"] = spectrum.density.tolist()
        out["input_referred_density_v_per_rthz"] = [finite_or_none(float(v))
                                                    for v in noise.input_referred_density]
    return out


def _level_dict(level: LevelChoice | None) -> dict[str, Any] | None:
    if level is None:
        return None

    def step(s: LevelStep | None) -> dict[str, Any] | None:
        return None if s is None else {"factor": s.factor, "noise_v": s.noise_v,
                                       "least_load_ohm": finite_or_none(s.load_ohm),
                                       "fails": s.fails}
    return {"mode": level.mode, "chosen": step(level.chosen),
            "nearest_failing": step(level.nearest_failing), "note": level.note}


def _prelayout_dict(result: Prelayout) -> dict[str, Any]:
    st = result.settings
    model = st.loop_model
    sections = []
    for s in result.sections:
        sections.append({
            "index": s.index, "noise": _noise_dict(s.noise), "level": _level_dict(s.level),
            "swing": [{"node": w.node, "opamp": w.opamp, "peak_v": w.peak_v, "at_hz": w.at_hz,
                       "clips_at_input_v": w.clips_at_input_v, "exceeds": w.exceeds}
                      for w in s.swing],
            "slew": [{"opamp": n.opamp, "need_v_per_s": n.need_v_per_s, "at_hz": n.at_hz,
                      "short": n.short} for n in s.slew],
            "loads": [{"opamp": x.opamp, "load_ohm": finite_or_none(x.load_ohm), "below": x.below}
                      for x in s.loads],
            "opamp_loops": [loop_to_dict(loop) for loop in s.loops],
        })
    first = result.first_clip
    return {
        "settings": {
            "band_hz": list(st.band_hz),
            "band_source": "default: a decade below the lowest target pole to a decade above "
                           "the highest" if st.band_default else "spec",
            "temperature_k": st.temperature_k,
            "temperature_source": "default" if st.temperature_default else "spec",
            "amplitude_v": st.amplitude_v,
            "amplitude_source": "default" if st.amplitude_default else "spec",
            "target_v": st.target_v, "noise_voltage_v_per_rthz": st.noise_voltage,
            "noise_current_a_per_rthz": st.noise_current, "min_load_ohm": st.min_load_ohm,
            "output_swing_v": st.output_swing_v, "slew_rate_v_per_s": st.slew_rate_v_per_s,
            "load_capacitance_f": st.load_capacitance_f,
            "loop_model": {"gbw_hz": model.gbw, "gain": model.gain,
                           "output_resistance_ohm": model.output_resistance,
                           "description": describe_amplifier(model),
                           "source": (f"default: the {DEFAULT_LOOP_PRESET!r} preset (the spec "
                                      "gives no GBW)") if st.loop_model_default else "spec"},
            "pass_band_hz": list(result.pass_band_hz),
        },
        "cascade": {
            "noise": _noise_dict(result.cascade_noise),
            "first_clip": None if first is None else {
                "node": first.node, "opamp": first.opamp, "peak_v": first.peak_v,
                "at_hz": first.at_hz, "clips_at_input_v": first.clips_at_input_v},
            "largest_slew_v_per_s": result.largest_slew_v_per_s,
            "worst_phase_margin_deg": result.worst_phase_margin_deg,
            "stable": result.stable,
        },
        "sections": sections,
        "flags": list(result.flags),
        "units": {"frequency": "Hz", "noise density": "V/√Hz", "noise": "V rms",
                  "swing": "V peak", "slew": "V/s", "angles": "degrees"},
    }
