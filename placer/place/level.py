"""The impedance level of a section, chosen on purpose.

Multiplying every resistance and inductance of a network by α and dividing
every capacitance by α leaves every product RC, L/R and LC — and so every
pole, zero and gain of an active-RC section with ideal op-amps — where it
was (impedance scaling). What it moves is what happens on the board: the
resistors' thermal noise at the output grows as √α, the op-amps' current
noise as α, their voltage noise not at all, and the current each op-amp
drives falls as 1/α. So among the solver's solutions, one for every α,
this module picks one:

* with a noise target (the section's share of it at the cascade output),
  the highest level that meets it — the smallest capacitors and the
  lightest op-amp loads that still make the noise;
* without one, the level of least noise.

Either way every part stays inside its range and every op-amp drives at
least ``min_load`` (with :data:`LOAD_HEADROOM` for the snapping that
follows). A section is placed before its neighbours, so where two
sections meet the load is shared: the op-amp that drives the next section
keeps its own network at ``2·min_load`` or more, and a section driven by
the previous one presents ``2·min_load`` or more at its input, so that the
two together stay above ``min_load``. The load of an op-amp is its largest
output voltage over its largest output current across the signal band. The levels tried are a ladder ``α = 10^(k/N)`` from the solver's
solution (N: the capacitor series' values per decade, so each step is one
capacitor value). A section with a fixed part that does not scale (the
level would move a root) keeps the solver's level.

Each section gets an equal share of the output noise power of the whole
cascade, target²/n, carried to the cascade's output through the target's
later sections (a section's level moves none of its roots, so the later
sections' transfer is the target's).

References
----------
M. E. Van Valkenburg, *Analog Filter Design*, Holt, Rinehart and
Winston, 1982, the chapter on frequency and magnitude scaling (from memory).
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, cast

import numpy as np
from numpy.typing import NDArray

from ..circuit.elements import KIND_UNITS, Circuit
from ..errors import UnreachableTarget
from ..analysis.mna import layout, stamps
from ..analysis.network import network_function
from ..analysis.noise import noise_grid, noise_sources, transfers_to_output
from ..units import format_value

if TYPE_CHECKING:
    from ..target.targets import Section
    from .solve import Problem, Solution

#: A later section as (zeros, poles, gain factor k), roots in rad/s.
_Downstream = tuple[tuple[complex, ...], tuple[complex, ...], float]
#: Log bounds (low, high) of a problem's independent parts.
_Window = tuple[NDArray[np.float64], NDArray[np.float64]]

__all__ = [
    "LOAD_HEADROOM",
    "DEFAULT_MIN_LOAD",
    "LevelRule",
    "LevelStep",
    "LevelChoice",
    "LevelResult",
    "level_exponents",
    "level_steps",
    "choose_level",
    "describe_level",
    "level_rules",
    "within",
]

#: The least load an op-amp drives when the spec names none, ohm (common practice, no source).
DEFAULT_MIN_LOAD = 2e3
#: Margin over min_load kept on the continuous values, for the snapping that follows.
LOAD_HEADROOM = 1.05
_SCALED = {"resistor": 1, "inductor": 1, "capacitor": -1}
_LOAD_POINTS_PER_DECADE = 20


@dataclass(frozen=True)
class LevelRule:
    """What the level of one section is chosen for.

    Attributes
    ----------
    band_hz : (float, float)
        The noise band, Hz.
    analysis_hz : (float, float)
        Where the op-amp loads are read, Hz (the signal's frequencies).
    temperature_k : float
    noise_voltage, noise_current : float or None
        Op-amp input noise densities, V/√Hz and A/√Hz.
    min_load_ohm : float
    budget_v : float or None
        This section's share of the output noise target, V rms at the
        cascade's output; None: least noise.
    target_v : float or None
        The whole target, V rms (for messages).
    downstream : tuple of (zeros, poles, k)
        The later sections of the target (rad/s), which carry this
        section's noise to the cascade's output.
    steps_per_decade : int
    section : int
        The section's number (for messages).
    input_driven : bool
        An op-amp of the previous section (or a buffer) drives the input.
    output_loaded : bool
        A later section loads the section's output.
    """

    band_hz: tuple[float, ...]        # (low, high)
    analysis_hz: tuple[float, ...]    # (low, high)
    temperature_k: float = 300.0
    noise_voltage: float | None = None
    noise_current: float | None = None
    min_load_ohm: float = DEFAULT_MIN_LOAD
    budget_v: float | None = None
    target_v: float | None = None
    downstream: tuple[_Downstream, ...] = ()
    steps_per_decade: int = 12
    section: int = 0
    input_driven: bool = False
    output_loaded: bool = False

    @property
    def mode(self) -> str:
        return "target" if self.budget_v is not None else "least noise"


@dataclass(frozen=True)
class LevelStep:
    """One impedance level: α, its noise, its least load, and why it fails."""

    factor: float       # α, relative to the values it was scanned from
    noise_v: float      # integrated over the band at the cascade output, V rms
    load_ohm: float     # the least load an op-amp drives, ohm (inf: no op-amp)
    fails: str = ""     # "" when it passes, else the reason in words

    @property
    def passes(self) -> bool:
        return not self.fails


@dataclass(frozen=True)
class LevelChoice:
    """The level chosen and the nearest one that fails.

    ``mode`` is "target", "least noise" or "fixed" (the section's fixed
    parts pin its level).
    """

    mode: str
    chosen: LevelStep
    nearest_failing: LevelStep | None
    note: str = ""


@dataclass(frozen=True)
class LevelResult:
    """The solution at the chosen level, the choice, and the window for snapping.

    ``window`` is (low, high), log bounds of the problem's independent parts
    on the passing side of the chosen level (:func:`within`), and ``prefer``
    a score for :func:`placer.place.snap.snap` that ranks preferred-value sets by
    how near the chosen level they stay; both None when the level is the
    solver's.
    """

    solution: Solution
    choice: LevelChoice
    window: _Window | None = None
    prefer: LevelScore | None = None


def level_exponents(problem: Problem) -> dict[str, int]:
    """Independent part → +1 (resistor, inductor), −1 (capacitor); others left out."""
    out: dict[str, int] = {}
    for name in problem.independent:
        kind = problem.topology.kind_of(name)
        if kind in _SCALED:
            out[name] = _SCALED[kind]
    return out


def _scaled_u(problem: Problem, u: NDArray[np.float64], factor: float) -> NDArray[np.float64]:
    exponents = level_exponents(problem)
    shift = np.array([exponents.get(n, 0) for n in problem.independent], float)
    return np.asarray(u, float) + shift * math.log(factor)


def _level_free(problem: Problem, u: NDArray[np.float64]) -> bool:
    """True when scaling the independent parts leaves the roots where they were."""
    if not level_exponents(problem):
        return False
    nf = network_function(problem.topology.circuit)
    rows = []
    for factor in (1.0, 2.0):
        numerator, denominator = nf.coefficients(problem.values(_scaled_u(problem, u, factor)))
        numerator, denominator = np.ravel(numerator), np.ravel(denominator)
        lead = denominator[np.nonzero(denominator)[0][0]]
        rows.append(np.concatenate([numerator, denominator]) / lead)
    scale = max(np.max(np.abs(rows[0])), 1e-300)
    return bool(np.max(np.abs(rows[0] - rows[1])) <= 1e-9 * scale)


@dataclass(frozen=True)
class _Split:
    """G + sC of a circuit split by how each entry scales with α."""

    fixed_g: NDArray[np.float64]
    scaled_g: NDArray[np.float64]      # × 1/α (conductances of scaled resistors)
    fixed_c: NDArray[np.float64]
    capacitors: NDArray[np.float64]    # × 1/α
    inductors: NDArray[np.float64]     # × α

    def at(self, factor: float, omega: NDArray[np.float64]) -> NDArray[np.complex128]:
        g = self.fixed_g + self.scaled_g / factor
        c = self.fixed_c + self.capacitors / factor + self.inductors * factor
        return g[None, :, :] + 1j * omega[:, None, None] * c[None, :, :]


def _split(circuit: Circuit, scaled: set[str]) -> _Split:
    lay = layout(circuit)
    by_name = {e.name: e for e in circuit.elements}
    parts = {key: np.zeros((lay.size, lay.size)) for key in ("fg", "sg", "fc", "cc", "lc")}
    for stamp in stamps(circuit, lay):
        factor, key = stamp.factor, ("fc" if stamp.power else "fg")
        if stamp.parameter is not None:
            name, role = stamp.parameter
            element = by_name[name]
            number = cast(float, element.parameter)   # the circuit has its values (with_values)
            factor *= 1.0 / number if role == "conductance" else float(number)
            if name in scaled:
                key = {"conductance": "sg", "capacitance": "cc", "inductance": "lc"}.get(role, key)
        parts[key][stamp.row, stamp.col] += factor
    return _Split(parts["fg"], parts["sg"], parts["fc"], parts["cc"], parts["lc"])


def _downstream_weight(rule: LevelRule, omega: NDArray[np.float64]) -> NDArray[np.float64]:
    weight = np.ones(omega.size)
    s = 1j * omega
    for zeros, poles, k in rule.downstream:
        h = k * np.prod([s - z for z in zeros], axis=0) / np.prod([s - p for p in poles], axis=0)
        weight *= np.abs(h) ** 2
    return weight


def _grid(band: tuple[float, ...], points_per_decade: int) -> NDArray[np.float64]:
    count = max(int(math.ceil(points_per_decade * math.log10(band[1] / band[0]))) + 1, 3)
    return np.geomspace(band[0], band[1], count)


def _range_failure(problem: Problem, values: Mapping[str, float], scaled: Mapping[str, int]) -> str:
    for symbol in scaled:
        if symbol not in problem.topology.ranges:
            continue
        low, high = problem.topology.ranges[symbol]
        value = float(values[symbol])
        unit = KIND_UNITS[problem.topology.kind_of(symbol)]
        if value < low * (1 - 1e-9) or value > high * (1 + 1e-9):
            side = "below" if value < low else "above"
            return (f"{symbol} would be {format_value(value, unit)}, {side} its range "
                    f"{format_value(low, unit)}–{format_value(high, unit)}")
    return ""


def level_steps(problem: Problem, values: Mapping[str, float], rule: LevelRule,
                factors: Iterable[float]) -> tuple[LevelStep, ...]:
    """Noise, least load and failures at impedance levels α·`values`.

    Parameters
    ----------
    problem : placer.place.solve.Problem
        The section's problem: its topology (ranges), independent and tied parts.
    values : mapping
        Part symbol → value (SI) at α = 1.
    rule : LevelRule
    factors : sequence of float
        The levels α to evaluate.

    Returns
    -------
    tuple of LevelStep
        One per factor, in order.
    """
    scaled = {name: e for name, e in level_exponents(problem).items()}
    scaled.update({part: scaled[source] for part, (source, _) in problem.tied.items()
                   if source in scaled})
    circuit = problem.topology.circuit.with_values(values)
    names = {e.name for e in problem.topology.circuit.elements if e.symbol in scaled}
    split = _split(circuit, names)
    lay = layout(circuit)
    sources = noise_sources(circuit, temperature=rule.temperature_k,
                            noise_voltage=rule.noise_voltage, noise_current=rule.noise_current,
                            lay=lay)
    resistor_columns = np.array([sources.kinds[g] == "resistor" and sources.names[g] in names
                                 for g in sources.group], dtype=bool)
    frequency = noise_grid(rule.band_hz, problem.goal.poles)
    omega = 2 * math.pi * frequency
    weight = _downstream_weight(rule, omega)
    load_omega = 2 * math.pi * _grid(rule.analysis_hz, _LOAD_POINTS_PER_DECADE)
    opamps = [(e.name, lay.branch_index[e.name], lay.node_index[e.nodes[2]],
               2.0 if rule.output_loaded and e.nodes[2] == circuit.output else 1.0)
              for e in circuit.elements if e.kind == "opamp"]
    if rule.input_driven:
        opamps.append(("the section's input", lay.input_row, lay.node_index[circuit.input], 2.0))
    steps = []
    for factor in factors:
        factor = float(factor)
        psd = np.where(resistor_columns, sources.psd / factor, sources.psd)
        adjoint_rhs = np.zeros((omega.size, lay.size, 1), dtype=complex)
        adjoint_rhs[:, lay.output_index, 0] = 1.0
        y = cast("NDArray[np.complex128]",   # complex in, complex out
                 np.linalg.solve(np.swapaxes(split.at(factor, omega), 1, 2), adjoint_rhs)[..., 0])
        output = transfers_to_output(y, replace(sources, psd=psd), len(sources.names)).sum(axis=0)
        noise = float(np.trapezoid(output * weight * frequency, np.log(frequency)))
        loads = []
        if opamps:
            rhs = np.zeros((load_omega.size, lay.size, 1), dtype=complex)
            rhs[:, lay.input_row, 0] = 1.0
            x = np.abs(np.linalg.solve(split.at(factor, load_omega), rhs)[..., 0])
            for name, row, pin, share in opamps:
                current = float(np.max(x[:, row]))
                if current > 0:
                    loads.append((name, float(np.max(x[:, pin])) / current, share))
        steps.append(_judge(problem, values, scaled, rule, factor, math.sqrt(max(noise, 0.0)), loads))
    return tuple(steps)


def _load_failure(loads: list[tuple[str, float, float]], rule: LevelRule) -> str:
    for name, ohm, share in loads:
        need = share * rule.min_load_ohm
        if ohm < need * LOAD_HEADROOM:
            what = ("the section's input would load the previous op-amp with"
                    if name == "the section's input" else f"{name} would drive")
            shared = " (half the budget where two sections meet)" if share > 1 else ""
            return (f"{what} {format_value(ohm, 'ohm')}, below {format_value(need, 'ohm')}"
                    f"{shared}" + (" with 5 % headroom for snapping" if ohm >= need else "")
                    + f" for min_load {format_value(rule.min_load_ohm, 'ohm')}")
    return ""


def _judge(problem: Problem, values: Mapping[str, float], scaled: Mapping[str, int],
           rule: LevelRule, factor: float, noise: float,
           loads: list[tuple[str, float, float]]) -> LevelStep:
    moved = {name: (float(values[name]) * factor ** scaled[name] if name in scaled else values[name])
             for name in values}
    load = min((ohm for _, ohm, _ in loads), default=math.inf)
    fails = _range_failure(problem, moved, scaled) or _load_failure(loads, rule)
    if not fails and rule.budget_v is not None and noise > rule.budget_v:
        fails = (f"noise {format_value(noise, 'V')} rms above this section's share "
                 f"{format_value(rule.budget_v, 'V')}")
    return LevelStep(factor=factor, noise_v=noise, load_ohm=load, fails=fails)


def _ladder(problem: Problem, u: NDArray[np.float64], rule: LevelRule) -> NDArray[np.float64]:
    """α = 10^(k/N) covering the range-feasible levels, one step past each end."""
    low, high = -math.inf, math.inf     # log10 α bounds from the independent parts' ranges
    for i, name in enumerate(problem.independent):
        exponent = level_exponents(problem).get(name, 0)
        if exponent:
            a, b = (problem.low[i] - u[i]) * exponent, (problem.high[i] - u[i]) * exponent
            low, high = max(low, min(a, b) / math.log(10)), min(high, max(a, b) / math.log(10))
    n = rule.steps_per_decade
    first, last = math.floor(low * n + 1e-9) - 1, math.ceil(high * n - 1e-9) + 1
    first, last = max(first, -6 * n), min(last, 6 * n)
    return 10.0 ** (np.arange(first, last + 1) / n)


#: How far past the chosen level the snapping may go, in capacitor steps; resistors
#: and inductors, which the snapper re-solves, get a factor _FINE_SLACK more either way.
#: Within it the snapper takes, among the sets within its error slack of the best,
#: the one nearest the chosen level (:class:`LevelScore`).
_WINDOW_STEPS = 24
_FINE_SLACK = math.log(1.6)


@dataclass(frozen=True)
class LevelScore:
    """Snapping preference: how far a set of log values moved the level the failing way.

    The level of a column U of log part values is the least-squares α of
    ``U − u`` along the scaling direction (+1 for resistors and inductors,
    −1 for capacitors); the score is that level, signed so that moving
    towards the failing side (down without a target, up with one) scores
    lower — the chosen level itself scores 0, the best.
    """

    u: tuple[float, ...]
    direction: tuple[float, ...]
    sign: float

    def __call__(self, U: NDArray[np.float64]) -> NDArray[np.float64]:
        U = np.asarray(U, float)
        d = np.asarray(self.direction, float)
        shift = d @ (U - np.asarray(self.u, float).reshape((-1,) + (1,) * (U.ndim - 1)))
        return self.sign * shift / float(d @ d)


def _window(problem: Problem, u: NDArray[np.float64], rule: LevelRule) -> _Window:
    """Log bounds around `u` on the passing side of the level only.

    Lower levels fail without a target (a range or the load), higher ones
    with one (the noise): the snapper, which would otherwise pick its
    capacitors anywhere in their range, may move the level only the other way.
    """
    direction = -1.0 if rule.mode == "target" else 1.0
    reach = _WINDOW_STEPS * math.log(10) / rule.steps_per_decade
    low, high = problem.low.copy(), problem.high.copy()
    exponents = level_exponents(problem)
    for i, name in enumerate(problem.independent):
        sign = exponents.get(name, 0) * direction
        if not sign:
            continue
        slack = 0.0 if problem.topology.kind_of(name) == "capacitor" else _FINE_SLACK
        a, b = sorted((u[i] - sign * (slack + 1e-9), u[i] + sign * (reach + slack)))
        low[i], high[i] = max(low[i], a), min(high[i], b)
    return low, high


def within(problem: Problem, window: _Window | None) -> Problem:
    """`problem` with its independent parts' log bounds narrowed to `window`."""
    if window is None:
        return problem
    return replace(problem, low=np.maximum(problem.low, window[0]),
                   high=np.minimum(problem.high, window[1]))


def _scaled_solution(problem: Problem, solution: Solution, factor: float,
                     rule: LevelRule) -> tuple[Solution, _Window, LevelScore]:
    u = _scaled_u(problem, solution.u, factor)
    window = _window(problem, u, rule)
    exponents = level_exponents(problem)
    direction = np.array([exponents.get(n, 0) for n in problem.independent], float)
    weight = float(direction @ direction) or 1.0
    alternatives = []
    for a in solution.alternatives:   # each moved to the chosen level, then into the window
        shift = float(direction @ (u - np.asarray(a, float))) / weight
        alternatives.append(np.clip(a + shift * direction, window[0], window[1]))
    values = {k: float(v) for k, v in problem.values(u).items()}
    score = LevelScore(tuple(u), tuple(direction), -1.0 if rule.mode == "target" else 1.0)
    return replace(solution, values=values, u=u, alternatives=tuple(alternatives)), window, score


def choose_level(problem: Problem, solution: Solution, rule: LevelRule) -> LevelResult:
    """Scale a section's continuous solution to the level the rule asks for.

    Parameters
    ----------
    problem : placer.place.solve.Problem
    solution : placer.place.solve.Solution
        The solver's continuous solution (every root on target).
    rule : LevelRule

    Returns
    -------
    LevelResult
        The solution at the chosen level (same roots, same error) and the
        choice with the nearest level that fails.

    Raises
    ------
    UnreachableTarget
        With a noise target no level meets within the ranges and the load
        limit, naming the constraint that stops it.
    """
    if not _level_free(problem, solution.u):
        step = level_steps(problem, solution.values, rule, [1.0])[0]
        return LevelResult(solution, LevelChoice("fixed", step, None,
                           "the section's fixed parts set its impedance level"))
    factors = _ladder(problem, solution.u, rule)
    steps = level_steps(problem, solution.values, rule, factors)
    passing = [i for i, s in enumerate(steps) if s.passes]
    if rule.mode == "target":
        if not passing:
            raise UnreachableTarget(_unmet(steps, rule))
        chosen = max(passing)
        nearest = chosen + 1 if chosen + 1 < len(steps) else None
        note = "the highest level that meets this section's share of the noise target"
    elif passing:
        chosen = min(passing, key=lambda i: (steps[i].noise_v, -i))
        nearest = chosen - 1 if chosen > 0 else None
        note = "the level of least noise within the ranges and the load limit"
    else:
        in_range = [i for i, s in enumerate(steps) if "range" not in s.fails] or [len(steps) // 2]
        chosen = max(in_range, key=lambda i: (steps[i].load_ohm, i))
        nearest = None
        note = f"no level meets the load limit: {steps[chosen].fails}; the lightest load is kept"
    choice = LevelChoice(rule.mode, steps[chosen], None if nearest is None else steps[nearest], note)
    scaled, window, score = _scaled_solution(problem, solution, float(factors[chosen]), rule)
    return LevelResult(scaled, choice, window, score)


def _unmet(steps: Sequence[LevelStep], rule: LevelRule) -> str:
    where = f"section {rule.section}: " if rule.section else ""
    budget = cast(float, rule.budget_v)   # a target's rule (choose_level, mode "target")
    share = (f"its share {format_value(budget, 'V')} rms of the noise target "
             f"{format_value(rule.target_v or budget, 'V')}")
    allowed = [i for i, s in enumerate(steps) if s.passes or s.fails.startswith("noise")]
    if not allowed:
        reasons = sorted({s.fails for s in steps})
        return (f"{where}no impedance level keeps every part in range with every op-amp load "
                f"above min_load ({reasons[0]})")
    best = min(allowed, key=lambda i: steps[i].noise_v)
    below = steps[best - 1].fails if best > 0 else "the ladder's end"
    return (f"{where}{share} cannot be met: the least noise any level gives within the ranges "
            f"and the load limit is {format_value(steps[best].noise_v, 'V')} rms, and a lower "
            f"level is stopped because {below}")


def describe_level(problem: Problem, values: Mapping[str, float], rule: LevelRule, *, mode: str) -> LevelChoice:
    """The level of built values and the nearest level from it that fails.

    Parameters
    ----------
    problem : placer.place.solve.Problem
    values : mapping
        The section's parts as built (snapped), α = 1.
    rule : LevelRule
    mode : {"target", "least noise", "fixed"}
        How the level was chosen: the nearest failing level is looked for
        upward for a target (higher levels are noisier), downward for least
        noise (lower levels break a range or the load limit), not at all
        when fixed.

    Returns
    -------
    LevelChoice
    """
    n = rule.steps_per_decade
    u = np.log([float(values[name]) for name in problem.independent])
    if mode == "fixed" or not _level_free(problem, u):
        return LevelChoice("fixed", level_steps(problem, values, rule, [1.0])[0], None,
                           "the section's fixed parts set its impedance level")
    direction = 1 if mode == "target" else -1
    factors = 10.0 ** (direction * np.arange(0, 3 * n + 1) / n)
    steps = level_steps(problem, values, rule, factors)
    failing = next((s for s in steps[1:] if not s.passes), None)
    return LevelChoice(mode, steps[0], failing, "")


def level_rules(sections: Sequence[Section], *, band_hz: Iterable[float],
                analysis_hz: Iterable[float], temperature_k: float,
                noise_voltage: float | None, noise_current: float | None,
                min_load_ohm: float, target_v: float | None,
                steps_per_decade: int = 12) -> tuple[LevelRule, ...]:
    """One :class:`LevelRule` per section of a cascade (equal shares of the target's power).

    Parameters
    ----------
    sections : sequence of placer.target.targets.Section
        In cascade order.
    band_hz, analysis_hz : (float, float)
        Noise band and signal band, Hz.
    temperature_k, noise_voltage, noise_current, min_load_ohm
        K, V/√Hz, A/√Hz, ohm.
    target_v : float or None
        The output noise target of the whole cascade, V rms.
    steps_per_decade : int

    Returns
    -------
    tuple of LevelRule
    """
    count = len(sections)
    budget = None if target_v is None else target_v / math.sqrt(count)
    rules = []
    for i in range(count):
        downstream = tuple((tuple(s.zeros), tuple(s.poles), float(s.k))
                           for s in sections[i + 1:])
        rules.append(LevelRule(band_hz=tuple(band_hz), analysis_hz=tuple(analysis_hz),
                               temperature_k=temperature_k, noise_voltage=noise_voltage,
                               noise_current=noise_current, min_load_ohm=min_load_ohm,
                               budget_v=budget, target_v=target_v, downstream=downstream,
                               steps_per_decade=steps_per_decade, section=i + 1,
                               input_driven=i > 0, output_loaded=i + 1 < count))
    return tuple(rules)
