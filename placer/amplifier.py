"""Real op-amps: apply a model, and design with it so the roots stay put.

A design solved with ideal op-amps (nullors) drifts when it is built: a
finite gain-bandwidth product enhances Q and pulls ω0 down, most for
high-Q, high-frequency stages. This module

* applies an op-amp model (:func:`apply_amplifier`): every op-amp gets the
  model's DC gain A0 (V/V) and GBW (Hz), the single-pole model
  ``(s + ωt/A0)·v_out = ωt·(v+ − v−)``, ωt = 2π·GBW, of :mod:`placer.mna`;
  an output resistance becomes an explicit resistor ``U1.ro`` from the
  op-amp's internal node ``U1.int`` to its output pin, so the symbolic and
  the numeric MNA paths both see it;
* re-solves and re-snaps a section with the model in place, starting from
  the ideal-op-amp solution (:func:`place_section_with_amplifier`): the
  *dominant* roots of the now higher-order network function (those nearest
  the target, :class:`placer.dominant.DominantFunction`) are placed, the
  *parasitic* roots the model adds are left free;
* reports the drift the ideal design would have had beside the corrected
  design's, and the parasitic poles (:class:`Drift`,
  :func:`amplifier_summary`).

The smallest GBW for which a corrected design still meets an error bound
is :func:`placer.gbw.required_gbw`.

References
----------
R. Schaumann and M. E. Van Valkenburg, *Design of Analog Filters*, Oxford
University Press, 2001, the chapters on active-filter non-idealities
(Q enhancement by finite GBW; from memory).
A. S. Sedra and K. C. Smith, *Microelectronic Circuits*, the filter chapter
on the effect of finite op-amp bandwidth (from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, replace

import numpy as np

from .circuit import Element
from .dominant import DominantFunction, nearest_root_set
from .errors import SpecError, UnreachableTarget
from .network import network_function
from .pencil import circuit_poles
from .placement import Candidate, place_ideal, problem_options
from .snap import COARSE_BUDGET, snap
from .solve import make_problem, root_errors, solve
from .units import format_value

__all__ = [
    "AMPLIFIER_PRESETS",
    "AmplifierSpec",
    "apply_amplifier",
    "check_amplifier",
    "Drift",
    "AmplifiedCandidate",
    "place_section_with_amplifier",
    "amplifier_summary",
    "built_drift",
    "function_at_gbw",
    "ScaledFunction",
    "gbw_spread_error",
    "robust_first",
    "ROBUST_STARTS",
    "ROBUST_SLACK",
    "GBW_SPREAD",
]

#: Sobol starts of the re-solve with the op-amp modelled.
ROBUST_STARTS = 32
#: Error (fraction) a corrected design's snap may give up for robustness to
#: the GBW spread: small beside the percent the spread itself moves a design.
ROBUST_SLACK = 2e-3

#: Generic op-amp models named by their figures only.
AMPLIFIER_PRESETS = {
    "1 MHz general purpose": {"gbw": 1e6, "gain": 10 ** (100 / 20), "output_resistance": 75.0},
    "10 MHz": {"gbw": 10e6, "gain": 10 ** (110 / 20), "output_resistance": 50.0},
    "100 MHz": {"gbw": 100e6, "gain": 10 ** (90 / 20), "output_resistance": 30.0},
}


@dataclass(frozen=True)
class AmplifierSpec:
    """A real op-amp model: GBW in Hz, DC gain in V/V, output resistance in ohm."""

    gbw: float | None = None
    gain: float | None = None
    output_resistance: float | None = None
    preset: str = ""

    @property
    def is_ideal(self):
        return self.gbw is None and self.gain is None

#: Relative spread of an op-amp's GBW around its typical value (process and
#: temperature) that a corrected design should bear (common practice, no source).
GBW_SPREAD = 0.25


# -- the model ---------------------------------------------------------------

def _check_model(amplifier):
    """Reject model figures no op-amp has; return (gain, gbw, resistance)."""
    gain, gbw = amplifier.gain, amplifier.gbw
    resistance = amplifier.output_resistance
    if gain is not None and not (math.isfinite(gain) and gain > 0):
        raise SpecError(
            f"amplifier gain = {gain!r} V/V must be a positive open-loop gain "
            "(V/V, for example 1e5; or '100 dB' in a spec file)"
        )
    if gbw is not None and not (math.isfinite(gbw) and gbw > 0):
        raise SpecError(
            f"amplifier gbw = {gbw!r} Hz must be a positive frequency "
            "(for example 1e6 for 1 MHz)"
        )
    if resistance is not None and not (math.isfinite(resistance) and resistance >= 0):
        raise SpecError(
            f"amplifier output_resistance = {resistance!r} ohm must be zero or positive"
        )
    return gain, gbw, resistance or 0.0


def _describe(amplifier):
    words = []
    if amplifier.gbw is not None:
        words.append(f"gbw {format_value(amplifier.gbw, 'Hz')}")
    if amplifier.gain is not None:
        words.append(f"gain {amplifier.gain:.3g} V/V")
    if amplifier.output_resistance:
        words.append(f"output_resistance {format_value(amplifier.output_resistance, 'ohm')}")
    return ", ".join(words) or "ideal"


def apply_amplifier(circuit, amplifier):
    """Give every op-amp of a circuit the amplifier model.

    Parameters
    ----------
    circuit : Circuit
    amplifier : AmplifierSpec
        ``gbw`` (Hz), ``gain`` (DC open-loop, V/V), ``output_resistance``
        (ohm); None fields stay ideal.

    Returns
    -------
    Circuit
        Op-amps carry ``gain`` and ``gbw``. With ``output_resistance`` > 0,
        op-amp ``U1`` drives a new node ``U1.int`` and a resistor ``U1.ro``
        joins it to the op-amp's output node. A circuit with no op-amp and
        no controlled source comes back unchanged.

    Raises
    ------
    SpecError
        For a non-positive gain or GBW, a negative output resistance, or a
        circuit whose only amplifiers are controlled sources (the model
        applies to op-amps only).

    Examples
    --------
    >>> from placer.library import get_topology
    >>> model = AmplifierSpec(gbw=1e6, gain=1e5, output_resistance=50.0)
    >>> built = apply_amplifier(get_topology("sallen-key-lowpass-unity").circuit, model)
    >>> [(e.name, e.nodes) for e in built.elements if e.name.startswith("U1")]
    [('U1', ('n2', 'vout', 'U1.int')), ('U1.ro', ('U1.int', 'vout'))]
    """
    gain, gbw, resistance = _check_model(amplifier)
    opamps = [e for e in circuit.elements if e.kind == "opamp"]
    if not opamps:
        sources = [e.name for e in circuit.elements if e.kind in ("vcvs", "ccvs", "cccs", "vccs")]
        if sources and (gain is not None or gbw is not None or resistance > 0):
            label = f"circuit {circuit.name!r}" if circuit.name else "the circuit"
            raise SpecError(
                f"the amplifier model ({_describe(amplifier)}) applies to op-amps only, and "
                f"{label} has none: its gain comes from {sources[0]!r}, an ideal controlled "
                "source; write the amplifier as an 'opamp' element (with its gain-setting "
                "resistors) to model it, or leave [amplifier] out"
            )
        return circuit
    names = {e.name for e in circuit.elements}
    nodes = set(circuit.nodes)
    elements = []
    for element in circuit.elements:
        if element.kind != "opamp":
            elements.append(element)
            continue
        modelled = replace(element, gain=gain, gbw=gbw)
        if resistance > 0:
            internal, resistor = f"{element.name}.int", f"{element.name}.ro"
            if internal in nodes or resistor in names:
                raise SpecError(
                    f"op-amp {element.name!r}: the names {internal!r} and {resistor!r} for its "
                    "output resistance are already used in the circuit; rename that node or element"
                )
            output = element.nodes[2]
            modelled = replace(modelled, nodes=(element.nodes[0], element.nodes[1], internal))
            elements.append(modelled)
            elements.append(Element(resistor, "resistor", (internal, output), value=float(resistance)))
        else:
            elements.append(modelled)
    return replace(circuit, elements=tuple(elements), _graph=None)


# -- the modelled network function at any GBW, from one derivation -----------

#: The GBW (Hz) of the one derivation the others are scaled from: ωt = 1 rad/s,
#: so the op-amp stamps stay integers.
_REFERENCE_GBW = 1 / (2 * math.pi)
_REACTIVE_KINDS = ("capacitor", "inductor")


@dataclass(frozen=True)
class ScaledFunction:
    """H(s) of the modelled circuit at one GBW, by frequency scaling.

    Every frequency-dependent entry of the MNA matrix is s·C, s·L or an
    op-amp row ``(s + ωt/A0)·v_out = ωt·(v+ − v−)``. Dividing the op-amp
    rows by ωt leaves them functions of s/ωt, and s·C = (s/ωt)·(C·ωt), so
    ``H(s; R, C, L, ωt) = H(s/ωt; R, C·ωt, L·ωt, 1)``: the function at
    ``ωt = 1 rad/s`` (`reference`) evaluated at scaled reactances and a
    scaled s. The DC gain A0 and every resistance are untouched. It offers
    the evaluator interface of :class:`placer.network.NetworkFunction` that
    :class:`placer.dominant.DominantFunction`, the solver and the snapper use.
    """

    reference: object
    omega_t: float          # rad/s, over the reference's (which is 1 rad/s)
    reactive: frozenset     # the part symbols of capacitors and inductors
    opamp_count: int

    @property
    def symbols(self):
        return self.reference.symbols

    @property
    def gain_kind(self):
        return self.reference.gain_kind

    @property
    def order(self):
        return self.reference.order

    def _scaled(self, values):
        t = self.omega_t
        return {name: (np.asarray(value, dtype=float) * t if name in self.reactive else value)
                for name, value in values.items()}

    def coefficients(self, values):
        """Coefficients of N and D, highest power of s first (as NetworkFunction's)."""
        numerator, denominator = self.reference.coefficients(self._scaled(values))
        # D(s) = ωt^m·D_ref(s/ωt) with m op-amp rows, the size the direct
        # derivation's coefficients have; the common factor cancels in H.
        return self._powers(numerator), self._powers(denominator)

    def _powers(self, rows):
        powers = np.arange(rows.shape[0] - 1, -1, -1, dtype=float)
        factor = self.omega_t ** (self.opamp_count - powers)
        return rows * factor.reshape((-1,) + (1,) * (rows.ndim - 1))

    def poles(self, values):
        """Poles in rad/s for one set of part values."""
        return self.reference.poles(self._scaled(values)) * self.omega_t

    def zeros(self, values):
        """Finite zeros in rad/s for one set of part values."""
        return self.reference.zeros(self._scaled(values)) * self.omega_t


def function_at_gbw(circuit, amplifier):
    """GBW (Hz) → the network function of `circuit` with that op-amp model.

    Parameters
    ----------
    circuit : Circuit
    amplifier : AmplifierSpec
        The model; its DC gain and output resistance are kept, its GBW is
        the one asked for.

    Returns
    -------
    callable
        ``gbw → network function``: one symbolic derivation scaled to every
        GBW (:class:`ScaledFunction`) when every capacitor and inductor
        carries a symbol; otherwise (a fixed reactance would need scaling
        inside the derivation) one derivation per GBW.

    Examples
    --------
    >>> from placer.library import get_topology
    >>> circuit = get_topology("sallen-key-lowpass-unity").circuit
    >>> family = function_at_gbw(circuit, AmplifierSpec(gain=1e5))
    >>> values = {"R1": 1e4, "R2": 1e4, "C1": 2e-8, "C2": 1e-8}
    >>> direct = network_function(apply_amplifier(circuit, AmplifierSpec(gbw=1e6, gain=1e5)))
    >>> bool(np.allclose(np.sort_complex(family(1e6).poles(values)),
    ...                  np.sort_complex(direct.poles(values)), rtol=1e-9))
    True
    """
    fixed_reactance = any(e.kind in _REACTIVE_KINDS and not e.is_symbolic
                          for e in circuit.elements)
    if fixed_reactance:
        def direct(gbw):
            return network_function(apply_amplifier(circuit, replace(amplifier, gbw=gbw)))
        return direct
    reference = network_function(
        apply_amplifier(circuit, replace(amplifier, gbw=_REFERENCE_GBW)))
    omega_reference = 2 * math.pi * _REFERENCE_GBW
    reactive = frozenset(e.symbol for e in circuit.elements if e.kind in _REACTIVE_KINDS)
    count = circuit.opamp_count

    def scaled(gbw):
        return ScaledFunction(reference, 2 * math.pi * gbw / omega_reference, reactive, count)
    return scaled



def check_amplifier(amplifier, section, *, index=None):
    """Reject a GBW at or below a section's f0; check the model's figures.

    Parameters
    ----------
    amplifier : AmplifierSpec
    section : placer.targets.Section
    index : int, optional
        The section's number in the cascade, for the message.

    Raises
    ------
    SpecError
        Naming the GBW, the section and its f0 (both in Hz).
    """
    _check_model(amplifier)
    if amplifier.gbw is None:
        return
    f0 = section.omega0 / (2 * math.pi)
    if amplifier.gbw <= f0:
        where = f"section {index}'s" if index is not None else "the section's"
        q = section.q if section.q is not None else 0.5
        raise SpecError(
            f"gbw {format_value(amplifier.gbw, 'Hz')} is at or below {where} f0 "
            f"{format_value(f0, 'Hz', digits=2)}; an op-amp needs GBW well above f0, "
            f"typically ≥ 100·f0·Q ({format_value(100 * f0 * q, 'Hz')} here)"
        )



# -- designing with the model ------------------------------------------------

@dataclass(frozen=True)
class Drift:
    """How far a design's dominant roots sit from the target, percent.

    ``f0_pct`` and ``q_pct`` compare the design evaluated with the op-amp
    model against the target (what the built board shows); ``f0_shift_pct``
    and ``q_shift_pct`` isolate the op-amp's part: the same part values
    with the model against with ideal op-amps. ``q_*`` are None for a
    first-order section.
    """

    f0_pct: float | None
    q_pct: float | None
    f0_shift_pct: float | None
    q_shift_pct: float | None

    @property
    def worst_pct(self):
        return max(abs(x) for x in (self.f0_pct, self.q_pct) if x is not None)


@dataclass(frozen=True)
class AmplifiedCandidate(Candidate):
    """One topology placed for one section with a real op-amp model.

    A :class:`placer.placement.Candidate` (it ranks and builds the same
    way); ``problem``, ``solution``, ``snapped`` and
    ``errors`` belong to the corrected design, evaluated with the model.

    Attributes
    ----------
    amplifier : AmplifierSpec
    circuit : Circuit
        The topology's circuit with the model applied (parts symbolic).
    ideal_snapped : placer.snap.SnapResult
        The design solved and snapped with ideal op-amps.
    ideal_errors : placer.solve.RootErrors
        That design's errors with ideal op-amps.
    ideal_drift, drift : Drift
        The ideal design's and the corrected design's figures with the model.
    low_gbw_drift : Drift
        The corrected design's figures when the op-amp's GBW is
        :data:`GBW_SPREAD` below the model's (its shifts are against the
        corrected design at the model's GBW): how much the correction
        leans on the exact GBW.
    parasitic_poles : tuple of complex
        The poles the model adds, at the corrected values (rad/s).
    note : str
        Why nothing was modelled, when so (no op-amp in the topology).
    """

    amplifier: object = None
    circuit: object = None
    ideal_snapped: object = None
    ideal_errors: object = None
    ideal_drift: Drift | None = None
    drift: Drift | None = None
    low_gbw_drift: Drift | None = None
    parasitic_poles: tuple = ()
    note: str = ""

    @property
    def parasitic_poles_hz(self):
        """|p|/2π of each parasitic pole, Hz, smallest first."""
        return tuple(sorted(abs(p) / (2 * math.pi) for p in self.parasitic_poles))



def _drift(ideal_nf, modelled_nf, values, goal):
    modelled = root_errors(modelled_nf, values, goal)
    ideal = root_errors(ideal_nf, values, goal)

    def shift(a, b):
        if a is None or b is None:
            return None
        return float(100 * ((1 + a / 100) / (1 + b / 100) - 1))

    def number(x):
        return None if x is None else float(x)

    return Drift(
        f0_pct=number(modelled.f0_pct), q_pct=number(modelled.q_pct),
        f0_shift_pct=shift(modelled.f0_pct, ideal.f0_pct),
        q_shift_pct=shift(modelled.q_pct, ideal.q_pct),
    )


def _pair_figures(poles, goal):
    """ω0 (rad/s) and Q (None for one pole) of the poles nearest the goal's."""
    x = np.asarray(poles, dtype=complex)[None, :] / goal.omega_ref
    mask = nearest_root_set(x, np.asarray(goal.poles, dtype=complex) / goal.omega_ref)[0]
    chosen = np.asarray(poles, dtype=complex)[mask]
    if len(chosen) == 1:
        return abs(chosen[0]), None
    if len(chosen) != 2:
        return math.nan, math.nan
    omega0 = math.sqrt(abs(chosen[0] * chosen[1]))
    return omega0, omega0 / -float((chosen[0] + chosen[1]).real)


def built_drift(topology, values, goal, amplifier):
    """Drift of a design built with a real op-amp, from numeric MNA poles.

    Parameters
    ----------
    topology : Topology
    values : mapping of str to float
        Part values (as solved or snapped with ideal op-amps).
    goal : placer.solve.Goal
        The section's goal; its poles pick the dominant pair.
    amplifier : AmplifierSpec
        The op-amp model every op-amp gets.

    Returns
    -------
    Drift
        ``f0_pct``, ``q_pct`` against the goal; ``f0_shift_pct``,
        ``q_shift_pct`` the op-amp's part (the same values with ideal
        op-amps as reference).

    Examples
    --------
    A Tow–Thomas biquad's Q rises with a GBW of 100·f0·Q (Q enhancement):

    >>> from placer.library import get_topology
    >>> from placer.solve import goal_from_section
    >>> from placer.targets import make_section
    >>> section = make_section("lowpass", 2 * math.pi * 1e3, 5.0)
    >>> values = {"R1": 1e4, "R2": 5e4, "R3": 1e4, "R4": 1e4, "R5": 1e4, "R6": 1e4,
    ...           "C1": 1 / (2 * math.pi * 1e7), "C2": 1 / (2 * math.pi * 1e7)}
    >>> drift = built_drift(get_topology("tow-thomas-lowpass"), values,
    ...                     goal_from_section(section), AmplifierSpec(gbw=500e3))
    >>> round(drift.q_shift_pct, 1), round(drift.f0_shift_pct, 2)
    (4.3, -0.3)
    """
    ideal = _pair_figures(circuit_poles(topology.circuit.with_values(values)), goal)
    built = apply_amplifier(topology.circuit, amplifier).with_values(values)
    real = _pair_figures(circuit_poles(built), goal)

    def pct(a, b):
        return None if a is None or b is None else float(100 * (a / b - 1))

    return Drift(f0_pct=pct(real[0], goal.omega0), q_pct=pct(real[1], goal.q),
                 f0_shift_pct=pct(real[0], ideal[0]), q_shift_pct=pct(real[1], ideal[1]))


def _low_gbw_drift(topology, amplifier, values, goal):
    """Drift of a design when the GBW is GBW_SPREAD low, from numeric MNA poles."""
    if amplifier.gbw is None:
        return None
    figures = []
    for gbw in (amplifier.gbw, amplifier.gbw * (1 - GBW_SPREAD)):
        model = replace(amplifier, gbw=gbw)
        built = apply_amplifier(topology.circuit, model).with_values(values)
        figures.append(_pair_figures(circuit_poles(built), goal))
    (omega_nominal, q_nominal), (omega_low, q_low) = figures

    def pct(a, b):
        return None if a is None or b is None else float(100 * (a / b - 1))

    return Drift(
        f0_pct=pct(omega_low, goal.omega0), q_pct=pct(q_low, goal.q),
        f0_shift_pct=pct(omega_low, omega_nominal), q_shift_pct=pct(q_low, q_nominal),
    )


def place_section_with_amplifier(section, topology, amplifier, *, parts=None, seed=0,
                                 coarse_budget=COARSE_BUDGET, ideal=None):
    """Solve and snap one topology for one section with real op-amps.

    The section is first placed with ideal op-amps (as
    :func:`placer.design.place_section` does); then, with every op-amp
    modelled, the dominant poles (and zeros) are re-solved onto the target
    starting from the ideal solution, the parasitic roots left free, and
    the result is snapped to the preferred-value series.

    Parameters
    ----------
    section : placer.targets.Section
    topology : Topology
    amplifier : AmplifierSpec
        GBW in Hz, DC gain in V/V, output resistance in ohm.
    parts : placer.spec.PartsSpec, optional
    seed : int
    coarse_budget : int
        Coarse-part combinations the snapper may enumerate (see
        :func:`placer.snap.snap`).
    ideal : placer.placement.IdealPlacement, optional
        The section already placed on the topology with ideal op-amps (by
        :func:`placer.placement.place_ideal` with the same `parts` and
        `seed`), for a caller that corrects one placement for many models;
        default: placed here.

    Returns
    -------
    AmplifiedCandidate
        ``reachable`` False with the reason when the topology cannot reach
        the section, with ideal op-amps or with the model.

    Raises
    ------
    SpecError
        For a GBW at or below the section's f0, model figures no op-amp
        has, or a topology whose amplifiers are controlled sources.

    Examples
    --------
    >>> from placer.library import get_topology
    >>> from placer.targets import make_section
    >>> section = make_section("lowpass", 2 * math.pi * 10e3, 2.0)
    >>> c = place_section_with_amplifier(section, get_topology("sallen-key-lowpass-unity"),
    ...                                  AmplifierSpec(gbw=1e6), coarse_budget=200)
    >>> abs(c.drift.q_pct) < 1 < abs(c.ideal_drift.q_pct)
    True
    """
    check_amplifier(amplifier, section)
    modelled = apply_amplifier(topology.circuit, amplifier)
    if ideal is None:
        try:
            ideal = place_ideal(section, topology, parts=parts, seed=seed)
        except UnreachableTarget as reason:
            return AmplifiedCandidate(topology=topology, reachable=False, reason=reason.reason,
                                      amplifier=amplifier, circuit=modelled)
    return _correct(section, topology, amplifier, modelled, ideal, parts, seed, coarse_budget)


def _correct(section, topology, amplifier, modelled, ideal, parts, seed, coarse_budget):
    goal = ideal.goal
    full = network_function(modelled)
    dominant = DominantFunction.for_goal(full, goal)
    ideal_drift = _drift(ideal.problem.nf, dominant, ideal.snapped.values, goal)
    common = dict(topology=topology, amplifier=amplifier, circuit=modelled,
                  ideal_snapped=ideal.snapped, ideal_errors=ideal.errors, ideal_drift=ideal_drift)
    if modelled is topology.circuit:
        return AmplifiedCandidate(
            reachable=True, problem=ideal.problem, solution=ideal.solution, snapped=ideal.snapped,
            errors=ideal.errors, continuous_errors=ideal.continuous_errors,
            drift=ideal_drift, note="the topology has no op-amp: nothing to model", **common,
        )
    ranges, series, fixed, constraints = problem_options(topology, parts)
    try:
        problem = make_problem(topology, goal, ranges=ranges, fixed=fixed, constraints=constraints,
                               nf=dominant)
        starts = [ideal.solution.u, *ideal.solution.alternatives]
        # more starts than the ideal placement: the exact solutions differ a lot
        # in how they bear the GBW spread, and robust_first picks among them
        solution = solve(problem, seed=seed, initial=starts, starts=ROBUST_STARTS)
    except UnreachableTarget as reason:
        return AmplifiedCandidate(
            reachable=False,
            reason=f"with the op-amp model ({_describe(amplifier)}): {reason.reason}", **common,
        )
    prefer = None
    if amplifier.gbw is not None:
        prefer = gbw_spread_error(topology, goal, function_at_gbw(topology.circuit, amplifier),
                                  amplifier.gbw, ranges=ranges, fixed=fixed, constraints=constraints)
        solution = robust_first(problem, solution, prefer)
    snapped = snap(problem, solution, series=series, coarse_budget=coarse_budget, prefer=prefer,
                   **({} if prefer is None else {"spread_slack": ROBUST_SLACK}))
    return AmplifiedCandidate(
        reachable=True, problem=problem, solution=solution, snapped=snapped,
        errors=root_errors(dominant, snapped.values, goal),
        continuous_errors=root_errors(dominant, solution.values, goal),
        drift=_drift(ideal.problem.nf, dominant, snapped.values, goal),
        parasitic_poles=tuple(complex(p) for p in dominant.parasitic_poles(snapped.values)),
        low_gbw_drift=_low_gbw_drift(topology, amplifier, snapped.values, goal),
        **common,
    )


def gbw_spread_error(topology, goal, family, gbw, *, ranges=None, fixed=None, constraints=None,
                     spread=GBW_SPREAD):
    """A score for :func:`placer.snap.snap`'s `prefer`: the error at GBW·(1 ± spread).

    Designs corrected for an op-amp differ a great deal in how far they move
    when the op-amp's GBW is not the typical one (for a unity-gain
    Sallen–Key at GBW = 20·f0, from 0.7 % to 10 % for a GBW 25 % low among
    equally exact solutions); this scores each column of log part values by
    the worse of its worst figure errors at the two edges, as a fraction.

    Parameters
    ----------
    topology : Topology
    goal : placer.solve.Goal
    family : callable
        GBW (Hz) → network function, from :func:`function_at_gbw`.
    gbw : float
        The typical GBW, Hz.
    ranges, fixed, constraints
        As the corrected problem was made with (the columns must match).
    spread : float
        Relative GBW spread, default :data:`GBW_SPREAD`.

    Returns
    -------
    callable
        ``U → ndarray`` of errors, one per column.
    """
    problems = [
        make_problem(topology, goal, ranges=ranges, fixed=fixed, constraints=constraints,
                     nf=DominantFunction.for_goal(family(edge), goal))
        for edge in (gbw * (1 - spread), gbw * (1 + spread))
    ]

    def score(U):
        with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
            return np.maximum(*(p.worst_error(U) for p in problems))
    return score


def robust_first(problem, solution, prefer):
    """The solution with the best-scoring of its on-target alternatives first.

    The snapper starts from ``solution.u``; starting it from the most
    GBW-robust exact solution lets it find robust preferred values nearby.
    """
    options = [solution.u] + [u for u in solution.alternatives if u is not solution.u]
    scores = np.asarray(prefer(np.array(options).T), dtype=float)
    scores = np.where(np.isnan(scores), np.inf, scores)
    best = options[int(np.argmin(scores))]
    if best is solution.u:
        return solution
    rest = tuple(u for u in options if u is not best)
    values = {k: float(np.asarray(v)) for k, v in problem.values(best).items()}
    return replace(solution, u=best, values=values, alternatives=(best,) + rest,
                   error=float(problem.worst_error(best, with_gain=False)))


def amplifier_summary(candidate):
    """The op-amp figures of a placed candidate, JSON-ready; None when ideal.

    Parameters
    ----------
    candidate : AmplifiedCandidate or placer.design.SectionDesign
        (a SectionDesign's winning candidate is used).

    Returns
    -------
    dict or None
        ``amplifier`` (gbw_hz, gain, output_resistance_ohm, preset),
        ``ideal_design`` and ``corrected_design`` (f0_error_pct, q_error_pct
        against the target with the model; f0_shift_pct, q_shift_pct caused
        by the op-amp alone), ``corrected_design_at_low_gbw`` (the same with
        the GBW :data:`GBW_SPREAD` lower, its ``gbw_hz``; shifts against the
        corrected design at the model's GBW; None without a GBW),
        ``parasitic_poles_hz`` and ``parasitic_poles`` (``[re, im]`` in
        rad/s), ``note``.
    """
    candidate = getattr(candidate, "candidate", candidate)
    if not isinstance(candidate, AmplifiedCandidate) or not candidate.reachable:
        return None
    amplifier = candidate.amplifier

    def figures(drift):
        return {"f0_error_pct": drift.f0_pct, "q_error_pct": drift.q_pct,
                "f0_shift_pct": drift.f0_shift_pct, "q_shift_pct": drift.q_shift_pct}

    return {
        "amplifier": {"gbw_hz": amplifier.gbw, "gain": amplifier.gain,
                      "output_resistance_ohm": amplifier.output_resistance,
                      "preset": amplifier.preset},
        "ideal_design": figures(candidate.ideal_drift),
        "corrected_design": figures(candidate.drift),
        "corrected_design_at_low_gbw": None if candidate.low_gbw_drift is None else {
            "gbw_hz": amplifier.gbw * (1 - GBW_SPREAD), **figures(candidate.low_gbw_drift)},
        "parasitic_poles_hz": list(candidate.parasitic_poles_hz),
        "parasitic_poles": [[p.real, p.imag] for p in candidate.parasitic_poles],
        "note": candidate.note,
    }
