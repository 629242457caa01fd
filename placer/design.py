"""Orchestration: spec → target → sections → candidates → a Design.

For each section of the target, every candidate topology is solved
(continuous values) and snapped (preferred values); the best candidate
wins: smallest error, then fewest parts, then smallest value spread.
Errors within 0.05 percentage points of the best count as equal, so a
simpler circuit is not passed over for a difference no one could measure.

Every candidate is placed by :func:`place_candidate`, the one placement
``placer compare`` uses too: seeded from its identity, corrected for the
spec's op-amp model when there is one, refused when its built circuit is
unstable.

The sections are then joined into one cascade circuit (a unity-gain
buffer is placed after a section whose output is not driven by an
amplifier, so the next section does not load it), and the cascade's poles,
zeros and gain at the target's reference frequency are computed from that
circuit on its own.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any, NamedTuple, Protocol, cast

import numpy as np

from .place.amplifier import AmplifiedCandidate, place_section_with_amplifier
from .circuit.drawing import DrawingSpec
from .circuit.elements import Circuit, Element
from .errors import SpecError, UnreachableTarget
from .circuit.library import find_topologies, load_folder, realises, resolve_topology
from .place.opamp import apply_amplifier, check_amplifier
from .analysis.pencil import circuit_roots
from .evidence.prelayout import level_rules_for
from .place.placement import (
    PART_KINDS,
    Candidate,
    candidate_seeds,
    parts_notes,
    place_ideal,
    require_stable,
)
from .target.sections import split_sections

if TYPE_CHECKING:
    from .analysis.pencil import CircuitRoots
    from .circuit.topology import Topology
    from .place.level import LevelRule
    from .place.opamp import AmplifierSpec
    from .place.snap import SnapResult
    from .place.solve import Goal, Problem, RootErrors
    from .spec.reader import PartsSpec, Spec
    from .target.targets import Section, Target

__all__ = [
    "rank_placements",
    "SectionDesign",
    "Design",
    "PartChoice",
    "candidate_topologies",
    "CandidatePlan",
    "place_section",
    "place_candidate",
    "real_amplifier",
    "check_part_names",
    "PoleSplit",
    "split_poles",
    "design",
    "cascade_circuit",
    "cascade_gain",
    "Progress",
    "PlaceCandidate",
]

ERROR_TIE_PCT = 0.05

Progress = Callable[[int, int, str], object]
"""``progress(done, total, label)``, called after each step."""


class PlaceCandidate(Protocol):
    """The placement of one candidate: :func:`place_candidate`'s signature."""

    def __call__(self, section: Section, topology: Topology, *, index: int,
                 parts: PartsSpec | None = None, amplifier: AmplifierSpec | None = None,
                 seed: int = 0, level: LevelRule | None = None) -> Candidate: ...


@dataclass(frozen=True)
class PartChoice:
    """One part of the built circuit: designator, value and where it came from."""

    name: str          # reference designator in the design (R1, C3, …)
    symbol: str        # the part's name in its topology
    kind: str
    value: float       # chosen value, SI
    series: str        # "E96", … or "" when not snapped (fixed, given)
    continuous: float  # the continuous solution's value, SI


@dataclass(frozen=True)
class SectionDesign:
    """The winning candidate of one section, with its built parts."""

    index: int
    section: Section
    goal: Goal
    candidate: Candidate
    candidates: tuple[Candidate, ...]
    parts: tuple[PartChoice, ...]
    circuit: Circuit        # the section alone, values in, designators as names

    @property
    def topology(self) -> Topology:
        return self.candidate.topology


@dataclass(frozen=True)
class Design:
    """A whole design: target, sections, the cascade circuit, achieved roots.

    ``gain`` is the built cascade's own gain at the target's reference
    frequency (DC, band centre or high frequency; see
    :func:`cascade_gain`), signed: negative when the cascade inverts. Each
    section quotes its own gain at its own reference, so their product is
    not the cascade's gain for a band-pass.
    ``poles`` and ``zeros`` are the cascade's roots that realise the
    target (each section's dominant roots, matched to the section's order);
    ``parasitic_poles`` and ``parasitic_zeros`` the ones the op-amp model
    adds (empty with ideal op-amps), rad/s.
    """

    spec: Spec
    target: Target
    sections: tuple[SectionDesign, ...]
    circuit: Circuit
    poles: tuple[complex, ...]
    zeros: tuple[complex, ...]
    gain: float
    parasitic_poles: tuple[complex, ...] = ()
    parasitic_zeros: tuple[complex, ...] = ()

    @property
    def parts(self) -> tuple[PartChoice, ...]:
        return tuple(p for s in self.sections for p in s.parts)

    # report/ sits above this module in the layering: the notebook view is
    # imported on use (see placer.report.notebook), so no plotting loads before.
    def _repr_html_(self) -> str:
        """The notebook view: tables and plots (inline SVG), self-contained."""
        from .report.notebook import design_html

        return design_html(self)

    def plot(self, **options: Any) -> Any:
        """The main figure: the Bode plot of target and built cascade, a matplotlib Figure (see :func:`placer.report.notebook.plot`)."""
        from .report.notebook import design_figure

        return design_figure(self, **options)


class CandidatePlan(NamedTuple):
    """The topologies to try for a section, and the user's files that failed to load."""

    topologies: list[Topology]
    load_errors: dict[str, str]     # path -> message


def candidate_topologies(section: Section, spec: Spec | None = None) -> CandidatePlan:
    """Topologies to try for a section, and files that failed to load.

    Returns
    -------
    CandidatePlan
    """
    errors: dict[str, str] = {}
    pool: dict[str, Topology] = {}
    names = spec.candidates if spec is not None else None
    if names:
        for name in names:
            topology = resolve_topology(name)
            pool[topology.id] = topology
    if spec is not None and spec.folder:
        loaded = load_folder(spec.folder)
        pool.update(loaded.topologies)
        errors.update(loaded.errors)
    if not names:
        for topology in find_topologies(response=section.kind, order=section.order):
            if topology.family != "ladder":  # a whole-filter ladder, with its -6 dB ends
                pool.setdefault(topology.id, topology)
    fitting = [t for t in pool.values() if realises(t, section.kind) and t.order == section.order]
    if names and not fitting:
        fitting = list(pool.values())  # let each say why it cannot
    return CandidatePlan(topologies=fitting, load_errors=errors)


def place_section(section: Section, topology: Topology, *, parts: PartsSpec | None = None,
                  seed: int = 0, level: LevelRule | None = None) -> Candidate:
    """Solve and snap one topology for one section, as a Candidate.

    The placement is :func:`placer.place.placement.place_ideal`'s (ideal op-amps;
    the same `parts` and `seed`); a topology that cannot reach the section
    becomes an unreachable candidate instead of an error.

    Parameters
    ----------
    section : placer.target.targets.Section
    topology : Topology
    parts : placer.spec.reader.PartsSpec, optional
        Series, ranges, fixed parts and constraints.
    seed : int
    level : placer.place.level.LevelRule, optional
        The impedance level rule (see :func:`placer.place.level.choose_level`).

    Returns
    -------
    Candidate
        ``reachable`` False with the reason when the topology cannot.
    """
    try:
        placed = place_ideal(section, topology, parts=parts, seed=seed, level=level)
    except UnreachableTarget as reason:
        return Candidate(topology=topology, reachable=False, reason=reason.reason)
    return Candidate(
        topology=topology, reachable=True, problem=placed.problem, solution=placed.solution,
        snapped=placed.snapped, errors=placed.errors, continuous_errors=placed.continuous_errors,
    )


def place_candidate(section: Section, topology: Topology, *, index: int,
                    parts: PartsSpec | None = None, amplifier: AmplifierSpec | None = None,
                    seed: int = 0, level: LevelRule | None = None) -> Candidate:
    """Place one candidate topology for one section: the step design and compare share.

    The solver seed comes from the candidate's identity
    (:func:`placer.place.placement.candidate_seeds`); with a real op-amp model
    the placement is corrected for it
    (:func:`placer.place.amplifier.place_section_with_amplifier`), otherwise
    placed with ideal op-amps (:func:`place_section`). A placement whose
    circuit as built (with the model, if any) has a natural frequency in
    the right half-plane becomes unreachable
    (:func:`placer.place.placement.require_stable`).

    Parameters
    ----------
    section : placer.target.targets.Section
    topology : Topology
    index : int
        The section's index, from 1 in cascade order.
    parts : placer.spec.reader.PartsSpec, optional
    amplifier : AmplifierSpec, optional
        A real op-amp model (None: ideal op-amps).
    seed : int
        The run's seed.
    level : placer.place.level.LevelRule, optional
        How the section's impedance level is chosen (None: the solver's).

    Returns
    -------
    Candidate
        An :class:`placer.place.amplifier.AmplifiedCandidate` with a model;
        ``notes`` lists the spec's fixed parts and constraints that the
        topology has no part for (placed without them).
    """
    solver_seed = candidate_seeds(seed, index, topology.id).solver
    if amplifier is None:
        candidate = place_section(section, topology, parts=parts, seed=solver_seed, level=level)
    else:
        candidate = place_section_with_amplifier(section, topology, amplifier, parts=parts,
                                                 seed=solver_seed, level=level)
    candidate = replace(candidate, notes=parts_notes(topology, parts))
    built = (cast(Circuit, candidate.circuit) if isinstance(candidate, AmplifiedCandidate)
             else topology.circuit)
    return require_stable(candidate, built)


def rank_placements(candidates: Sequence[Candidate]) -> list[Candidate]:
    """Reachable candidates best first: error, then parts, then spread.

    Errors within :data:`ERROR_TIE_PCT` percentage points of the best count
    as equal — far below any part tolerance — so among those the circuit
    with the fewest parts and op-amps wins, then the smallest value spread.
    """
    if not candidates:
        return []
    best = min(c.error_pct for c in candidates)

    def key(candidate: Candidate) -> tuple[int, float, float, float, str]:
        topology = candidate.topology
        spread = sum(math.log(v) for v in candidate.spread.values())
        size = topology.part_count + topology.opamp_count
        if candidate.error_pct <= best + ERROR_TIE_PCT:
            return (0, size, spread, candidate.error_pct, topology.id)
        return (1, candidate.error_pct, size, spread, topology.id)

    return sorted(candidates, key=key)


def _alternatives_for(section: Section) -> list[str]:
    """Library topologies whose kind and order fit a section, for messages."""
    return [t.id for t in find_topologies(response=section.kind, order=section.order)
            if t.opamp_count or section.order == 1 or (section.q or 0) <= 0.5]


def design(spec: Spec, *, seed: int | None = None, progress: Progress | None = None,
           place: PlaceCandidate = place_candidate) -> Design:
    """Design every section of a spec's target and build the cascade.

    Parameters
    ----------
    spec : placer.spec.reader.Spec
    seed : int, optional
        Seed of the multi-start solver (default: the spec's tolerance seed).
    progress : callable, optional
        ``progress(done, total, label)`` after each candidate.
    place : callable, optional
        The placement of one candidate, with :func:`place_candidate`'s
        signature (the default); the explorer passes a memoised one.

    Returns
    -------
    Design

    Raises
    ------
    UnreachableTarget
        When no candidate reaches a section; the reason lists each
        candidate's reason and the library topologies that could.
    SpecError
        When the spec's [amplifier] has a GBW at or below a section's f0.

    Notes
    -----
    Each candidate is placed by :func:`place_candidate`, as ``placer
    compare`` places it. With a real op-amp model in ``spec.amplifier``
    (GBW and/or DC gain) the dominant roots are solved onto the target with
    every op-amp modelled, and the section circuits carry the model.
    """
    if spec.target is None:
        raise SpecError(f"{spec.path}: designing a filter needs a [target] table")
    seed = spec.tolerance.seed if seed is None else seed
    sections = split_sections(spec.target, ordering=spec.ordering, gain=spec.gain_distribution)
    amplifier = real_amplifier(spec)
    if amplifier is not None:
        for index, section in enumerate(sections, start=1):
            check_amplifier(amplifier, section, index=index)
    plans = [candidate_topologies(section, spec) for section in sections]
    levels = level_rules_for(spec, sections)      # the impedance level of each section
    check_part_names(spec, [t for p in plans for t in p.topologies])
    total = sum(len(p.topologies) for p in plans)
    done = 0
    built: list[tuple[int, Section, list[Candidate]]] = []
    for index, (section, plan) in enumerate(zip(sections, plans), start=1):
        candidates: list[Candidate] = []
        for topology in plan.topologies:
            candidates.append(place(section, topology, index=index, parts=spec.parts,
                                    amplifier=amplifier, seed=seed, level=levels[index - 1]))
            done += 1
            if progress:
                progress(done, total, topology.id)
        for path, message in plan.load_errors.items():
            # an unreachable candidate: only its id and counts are read (_tried_id)
            candidates.append(Candidate(topology=cast("Topology", _FailedFile(path)), reachable=False,
                                        reason=message))
        reachable = [c for c in candidates if c.reachable]
        if not reachable:
            reasons = "; ".join(f"{_tried_id(c)}: {c.reason}" for c in candidates) or "no candidate topology"
            raise UnreachableTarget(
                f"section {index} ({section.kind}, f0 {section.f0_hz:.4g} Hz"
                + (f", Q {section.q:.4g}" if section.q else "") + f") cannot be reached — {reasons}",
                alternatives=[a for a in _alternatives_for(section)
                              if a not in {_tried_id(c) for c in candidates}],
            )
        ranked = rank_placements(reachable) + [c for c in candidates if not c.reachable]
        built.append((index, section, ranked))
    return _assemble(spec, built)


def real_amplifier(spec: Spec) -> AmplifierSpec | None:
    """The spec's op-amp model when it is not ideal, else None."""
    amplifier = spec.amplifier
    return None if amplifier is None or amplifier.is_ideal else amplifier


def check_part_names(spec: Spec, topologies: Sequence[Topology]) -> None:
    """A fixed part or constraint must name a part of some candidate (SpecError).

    ``placer design`` and ``placer compare`` both check it, over every
    candidate of every section.
    """
    names = {symbol for t in topologies for symbol in t.symbols}
    where = f"{spec.path}: parts"
    for name in spec.parts.fixed:
        if name not in names:
            raise SpecError(
                f"{where}.fixed.{name}: no candidate topology has a part {name!r} "
                f"(`placer topologies ID` shows a topology's parts)"
            )
    for constraint in spec.parts.constraints:
        for name in (constraint.part, constraint.source):
            if name not in names:
                raise SpecError(
                    f"{where}.constraints: '{constraint}' names {name!r}, which no candidate "
                    f"topology has (`placer topologies ID` shows a topology's parts)"
                )


@dataclass(frozen=True)
class _FailedFile:
    """Stands in for a user topology file that failed to load."""

    path: str

    @property
    def id(self) -> str:
        return self.path

    part_count = 0
    opamp_count = 0


def _tried_id(candidate: Candidate) -> str:
    """The id of a candidate's topology, or the path of a file that failed to load."""
    return cast("Topology | _FailedFile", candidate.topology).id


def _assemble(spec: Spec, built: Sequence[tuple[int, Section, Sequence[Candidate]]]) -> Design:
    counters: dict[str, int] = {}
    section_designs = []
    unmodelled = []
    for index, section, ranked in built:
        best = ranked[0]
        circuit, parts = _build_section(best, index, counters)
        unmodelled.append(circuit)
        if isinstance(best, AmplifiedCandidate) and best.amplifier is not None:
            # placed with a real op-amp model: the built circuit carries it
            circuit = apply_amplifier(circuit, best.amplifier)
        section_designs.append(SectionDesign(
            index=index, section=section, goal=cast("Problem", best.problem).goal, candidate=best,
            candidates=tuple(ranked), parts=tuple(parts), circuit=circuit,
        ))
    # buffers go where a section's own output is not driven, so join the
    # sections as designed, then model every op-amp (sections' and buffers')
    cascade = unmodelled_cascade = cascade_circuit(unmodelled, counters)
    amplifier = real_amplifier(spec)
    if amplifier is not None:
        cascade = apply_amplifier(cascade, amplifier)
    roots = circuit_roots(cascade)
    errors = [cast("RootErrors", s.candidate.errors) for s in section_designs]
    poles = split_poles(roots.poles, [p for e in errors for p in e.poles])
    zeros = split_poles(roots.zeros, [z for e in errors for z in e.zeros])
    target = cast("Target", spec.target)
    reference = target.reference_omega
    gain = cascade_gain(roots, reference)
    if gain == 0.0 and math.isinf(reference) and cascade is not unmodelled_cascade:
        # a real op-amp rolls every high-pass off at high frequency: quote the
        # plateau it would otherwise hold, that of the same parts with ideal op-amps
        gain = cascade_gain(circuit_roots(unmodelled_cascade), reference)
    return Design(spec=spec, target=target, sections=tuple(section_designs),
                  circuit=cascade, poles=poles.dominant, zeros=zeros.dominant, gain=gain,
                  parasitic_poles=poles.parasitic, parasitic_zeros=zeros.parasitic)


class PoleSplit(NamedTuple):
    """A cascade's poles: those that realise the target, and the op-amps' own."""

    dominant: tuple[complex, ...]
    parasitic: tuple[complex, ...]


def split_poles(poles: Iterable[complex], dominant: Iterable[complex]) -> PoleSplit:
    """The cascade's poles nearest the sections' dominant ones, and the rest.

    The same for zeros (finite zeros, the sections' dominant zeros).

    Parameters
    ----------
    poles : sequence of complex
        Every pole of the cascade circuit (rad/s).
    dominant : sequence of complex
        The sections' dominant poles (rad/s), one per order of each section.

    Returns
    -------
    PoleSplit
        The poles matched one by one to `dominant` (nearest first, each
        used once), and the others: the op-amps' parasitic poles, those of
        the buffers between sections included. With ideal op-amps the
        second is empty.
    """
    rest = [complex(p) for p in poles]
    matched = []
    for wanted in sorted(dominant, key=abs):
        if not rest:
            break
        i = int(np.argmin([abs(p - wanted) for p in rest]))
        matched.append(rest.pop(i))
    return PoleSplit(tuple(matched), tuple(rest))


def cascade_gain(roots: CircuitRoots, reference_omega: float) -> float:
    """The signed gain of a built circuit where its target quotes its own.

    Parameters
    ----------
    roots : placer.analysis.pencil.CircuitRoots
        Poles, zeros (rad/s) and gain constant of the whole circuit.
    reference_omega : float
        The target's reference frequency, rad/s: 0 (DC), a band centre, or
        ``inf`` (the high-frequency gain).

    Returns
    -------
    float
        ``|H(j·reference_omega)|``, negative when the real part of H is
        negative there (the circuit inverts).

    Examples
    --------
    >>> from placer.analysis.pencil import CircuitRoots
    >>> import numpy as np
    >>> lowpass = CircuitRoots(np.array([-1.0 + 1j, -1.0 - 1j]), np.array([], complex), -4.0)
    >>> cascade_gain(lowpass, 0.0)
    -2.0
    """
    poles = np.asarray(roots.poles, complex)
    zeros = np.asarray(roots.zeros, complex)
    if math.isinf(reference_omega):
        if zeros.size > poles.size:
            return math.inf
        return float(roots.gain) if zeros.size == poles.size else 0.0
    s = 1j * reference_omega
    value = complex(roots.gain * np.prod(s - zeros) / np.prod(s - poles))
    return math.copysign(abs(value), value.real) if value.real else abs(value)


_PREFIX = {"resistor": "R", "capacitor": "C", "inductor": "L", "opamp": "U",
           "vsource": "V", "isource": "I", "vcvs": "E", "vccs": "G", "cccs": "F", "ccvs": "H"}


def _build_section(candidate: Candidate, index: int,
                   counters: dict[str, int]) -> tuple[Circuit, list[PartChoice]]:
    """The section's circuit with values and board designators."""
    topology = candidate.topology
    snapped = cast("SnapResult", candidate.snapped)
    values = snapped.values
    renamed: dict[str, str] = {}
    for element in topology.circuit.elements:
        prefix = _PREFIX[element.kind]
        counters[prefix] = counters.get(prefix, 0) + 1
        renamed[element.name] = f"{prefix}{counters[prefix]}"
    elements = []
    parts = []
    for element in topology.circuit.elements:
        new = replace(element, name=renamed[element.name])
        if element.control:
            new = replace(new, control=renamed[element.control])
        if element.symbol is not None and element.symbol in values:
            new = new.with_parameter(values[element.symbol])
            new = replace(new, symbol=None)
        elements.append(new)
        if element.kind in PART_KINDS:
            value = cast(float, new.value)   # every part has its value by now
            symbol = element.symbol or element.name
            parts.append(PartChoice(
                name=new.name, symbol=symbol, kind=element.kind, value=float(value),
                series=snapped.series.get(symbol, ""),
                continuous=float(snapped.continuous.get(symbol, value)),
            ))
    drawing = topology.drawing
    circuit = Circuit(tuple(elements), reference=topology.circuit.reference,
                      input=topology.circuit.input, output=topology.circuit.output,
                      name=f"section {index}: {topology.id}",
                      drawing=(drawing.renamed(renamed) if isinstance(drawing, DrawingSpec)
                               else None))
    return circuit, parts


def _driven(circuit: Circuit) -> bool:
    """True when the output node is driven by an amplifier or a source."""
    for element in circuit.elements:
        if element.kind == "opamp" and element.nodes[2] == circuit.output:
            return True
        if element.kind in ("vcvs", "ccvs") and circuit.output in element.nodes[:2]:
            return True
    return False


def cascade_circuit(circuits: Sequence[Circuit], counters: dict[str, int] | None = None) -> Circuit:
    """Join section circuits in order into one circuit (buffers where needed).

    Node names get the section's number as a suffix; the first section's
    input is the cascade's ``vin``, the last one's output its ``vout``.
    """
    counters = counters if counters is not None else {}
    elements = []
    previous = "vin"
    count = len(circuits)
    for k, circuit in enumerate(circuits, start=1):
        last = k == count
        out_name = "vout" if last else f"s{k}_out"

        def rename(node: str, circuit: Circuit = circuit, k: int = k, out_name: str = out_name,
                   previous: str = previous) -> str:
            if node == circuit.reference:
                return "gnd"
            if node == circuit.input:
                return previous
            if node == circuit.output:
                return out_name
            return f"s{k}_{node}"

        for element in circuit.elements:
            elements.append(replace(element, nodes=tuple(rename(n) for n in element.nodes)))
        previous = out_name
        if not _driven(circuit) and not last:
            counters["U"] = counters.get("U", 0) + 1
            buffered = "vout" if last else f"s{k}_buf"
            elements.append(Element(f"U{counters['U']}", "opamp", (previous, buffered, buffered)))
            previous = buffered
    return Circuit(tuple(elements), reference="gnd", input="vin", output=previous, name="cascade")
