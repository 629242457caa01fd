"""Evidence for a design: responses, sensitivities and tolerance spread.

Everything is computed on the designed circuit's network functions with
the chosen values, never on the target: python-control step and
frequency figures of the snapped and the continuous designs beside the
target's, the classical sensitivities of every section, and a Monte Carlo
of every section over the part tolerances (plus a magnitude envelope of
the whole cascade for the plots).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, cast

import numpy as np
import scipy.optimize

from ..target.mask import MASK_TOLERANCE_DB, Mask, band_points, grid_figures, mask_bands, mask_grid
from ..analysis.dominant import DominantFunction
from ..analysis.network import NetworkFunction, polynomial_values
from ..analysis.response import Response
from .tolerance import cascade_magnitude_blocks, monte_carlo
from ..units import finite_or_none
from .verify import verify

if TYPE_CHECKING:
    from ..analysis.sensitivity import Sensitivities
    from ..circuit.topology import Topology
    from ..design import Design
    from ..place.placement import Candidate
    from ..place.snap import SnapResult
    from ..place.solve import Problem
    from .tolerance import MonteCarloResult
    from ..spec.reader import Spec
    from .figures import Figures
    from .verify import Deviation, Verification

    Progress = Callable[[int, int, str], object]

__all__ = ["SectionEvidence", "Evidence", "MaskFigures", "MaskVerdict", "gather_evidence",
           "part_tolerances", "check_mask", "mask_verdict"]

ENVELOPE_SAMPLES = 200


def part_tolerances(topology: Topology, symbols: Iterable[str],
                    by_kind: Mapping[str, float]) -> dict[str, float]:
    """Part symbol → tolerance fraction, from per-kind tolerances."""
    out = {}
    for symbol in symbols:
        kind = topology.kind_of(symbol)
        if kind in by_kind and by_kind[kind]:
            out[symbol] = float(by_kind[kind])
    return out


@dataclass(frozen=True, eq=False)
class SectionEvidence:
    """Sensitivities and Monte Carlo of one section."""

    index: int
    sensitivities: Sensitivities
    monte_carlo: MonteCarloResult
    tolerances: dict[str, float]
    designators: dict[str, str]   # part symbol -> reference designator


@dataclass(frozen=True, eq=False)
class Evidence:
    """All evidence for a design.

    Attributes
    ----------
    verification : placer.evidence.verify.Verification
    sections : tuple of SectionEvidence
    envelope : dict
        ``frequency_hz``, ``low_db``, ``high_db``: the cascade's magnitude
        range over Monte Carlo builds.
    samples, seed, distribution
    mask : MaskVerdict or None
        The target's mask against target, snapped and continuous designs,
        and the fraction of Monte Carlo builds that meet it.
    """

    verification: Verification
    sections: tuple[SectionEvidence, ...]
    envelope: dict[str, np.ndarray] = field(repr=False)
    samples: int = 0
    seed: int = 0
    distribution: str = "uniform"
    mask: MaskVerdict | None = None

    def to_dict(self) -> dict[str, Any]:
        v = self.verification

        def step(f: Figures) -> dict[str, Any]:
            s = f.step
            return {"overshoot_pct": finite_or_none(s.overshoot_pct), "rise_time_s": finite_or_none(s.rise_time_s),
                    "settling_time_s": finite_or_none(s.settling_time_s), "final_value": finite_or_none(s.final_value),
                    "peak": finite_or_none(s.peak), "peak_time_s": finite_or_none(s.peak_time_s), "notes": list(s.notes)}

        def freq(f: Figures) -> dict[str, Any]:
            q = f.frequency
            return {"kind": q.kind, "gain_db": finite_or_none(q.gain_db), "f3db_hz": finite_or_none(q.f3db_hz),
                    "band_low_hz": finite_or_none(q.band_low_hz), "band_high_hz": finite_or_none(q.band_high_hz),
                    "bandwidth_hz": finite_or_none(q.bandwidth_hz),
                    "peak_db": finite_or_none(q.peak_db), "peak_hz": finite_or_none(q.peak_hz), "notes": list(q.notes)}

        def dev(d: Deviation | None) -> dict[str, Any] | None:
            if d is None:
                return None
            return {"magnitude_db": finite_or_none(d.magnitude_db), "magnitude_at_hz": finite_or_none(d.magnitude_at_hz),
                    "phase_deg": finite_or_none(d.phase_deg), "phase_at_hz": finite_or_none(d.phase_at_hz),
                    "inverted": bool(d.inverted), "band_hz": [float(b) for b in d.band_hz]}

        sections: list[dict[str, Any]] = []
        out: dict[str, Any] = {
            "responses": {
                name: {"step": step(fig), "frequency": freq(fig)}
                for name, fig in (("target", v.target), ("snapped", v.design), ("continuous", v.continuous))
                if fig is not None
            },
            "deviation": dev(v.deviation),
            "continuous_deviation": dev(v.continuous_deviation),
            "snapping_deviation": dev(v.snapping_deviation),
            "band_hz": [float(b) for b in v.band_hz],
            "monte_carlo": {"samples": self.samples, "seed": self.seed,
                            "distribution": self.distribution},
            "mask": None if self.mask is None else self.mask.to_dict(),
            "sections": sections,
        }
        for s in self.sections:
            sens = s.sensitivities
            mc = s.monte_carlo
            rows: dict[str, dict[str, Any]] = {}
            for symbol in sens.omega0:
                rows[s.designators.get(symbol, symbol)] = {
                    "symbol": symbol,
                    "w0": finite_or_none(sens.omega0[symbol]),
                    "q": None if sens.q is None else finite_or_none(sens.q.get(symbol)),
                    "gain": finite_or_none(sens.gain.get(symbol)),
                    "tolerance": s.tolerances.get(symbol, 0.0),
                }
            stats = {k: {"mean": finite_or_none(st.mean), "std": finite_or_none(st.std), "min": finite_or_none(st.minimum), "max": finite_or_none(st.maximum),
                         "p01": finite_or_none(st.p01), "p99": finite_or_none(st.p99)} for k, st in mc.statistics.items()}
            sections.append({
                "index": s.index,
                "sensitivity_method": sens.method,
                "sensitivities": rows,
                "monte_carlo": {
                    "nominal_f0_hz": finite_or_none(mc.nominal_f0_hz), "nominal_q": finite_or_none(mc.nominal_q),
                    "nominal_gain_db": finite_or_none(mc.nominal_gain_db), "statistics": stats,
                    "reject_hz": mc.reject_hz,
                    "nominal_rejection_db": finite_or_none(mc.nominal_rejection_db),
                    "windows": mc.windows, "window_yield_pct": (
                        {k: 100 * float(v) for k, v in mc.window_yield.items()} if mc.window_yield else None),
                    "yield_pct": None if mc.yield_fraction is None else 100 * float(mc.yield_fraction),
                    "dominant": {k: [s.designators.get(p, p) for p in v[:3]] for k, v in mc.ranking.items()},
                },
            })
        return out


def _full(candidate: Candidate) -> NetworkFunction:
    """The section's whole network function (with a real op-amp: its parasitic poles too)."""
    nf = _own_order(candidate)
    return cast(NetworkFunction, nf.full) if isinstance(nf, DominantFunction) else nf


def _own_order(candidate: Candidate) -> NetworkFunction | DominantFunction:
    """The section's function matched to its own order.

    With a real op-amp model, the dominant part of the modelled function
    (:class:`placer.analysis.dominant.DominantFunction`): its roots are the ones
    nearest the section's target, as many as the section's order, so a
    first-order section's f0, sensitivities and yield are read off its one
    pole, not off a pair the op-amps' parasitic poles form. With ideal
    op-amps, the network function itself.
    """
    return cast("NetworkFunction | DominantFunction", cast("Problem", candidate.problem).nf)


def _response(sections_tf: Sequence[Any]) -> Response:
    return Response.from_sections(sections_tf)


def _snapped(candidate: Candidate) -> SnapResult:
    return cast("SnapResult", candidate.snapped)


def _topology(candidate: Candidate) -> Topology:
    return candidate.topology


def gather_evidence(design: Design, *, samples: int | None = None, seed: int | None = None,
                    progress: Progress | None = None, band_hz: tuple[float, float] | None = None,
                    workers: int | None = 1) -> Evidence:
    """Verify a design and run its tolerance analysis.

    Parameters
    ----------
    design : placer.design.Design
    samples : int, optional
        Monte Carlo samples per section (default: the spec's).
    seed : int, optional
        Default: the spec's tolerance seed.
    progress : callable, optional
        ``progress(done, total, label)``.
    band_hz : (float, float), optional
        Band of the deviation check, Hz (default: verify's).
    workers : int or None, optional
        Worker processes for each section's Monte Carlo (None: every core);
        see :func:`placer.evidence.tolerance.monte_carlo`. The result does not
        depend on it.

    Returns
    -------
    Evidence
    """
    spec = design.spec
    samples = spec.tolerance.samples if samples is None else samples
    seed = spec.tolerance.seed if seed is None else seed
    zeros, poles, k = design.target.zpk()
    target = Response.from_zpk(zeros, poles, k)
    snapped = _response([_full(s.candidate).transfer_function(_snapped(s.candidate).values)
                         for s in design.sections])
    continuous = _response([_full(s.candidate).transfer_function(_snapped(s.candidate).continuous)
                            for s in design.sections])
    verification = verify(snapped, target, band_hz=band_hz, continuous=continuous)
    seeds = np.random.SeedSequence(seed).spawn(len(design.sections) + 1)
    sections = []
    total = len(design.sections)
    for i, s in enumerate(design.sections):
        candidate = s.candidate
        nf = _own_order(candidate)
        values = _snapped(candidate).values
        varied = [p for p in nf.symbols if _is_part(_topology(candidate), p)]
        tolerances = part_tolerances(_topology(candidate), varied, spec.tolerance.tolerances)
        windows = dict(spec.tolerance.windows)
        if nf.order == 1:
            windows.pop("q", None)
        reject_hz = s.section.zero_f0_hz          # a notch's zero; None for the other kinds
        if reject_hz is None:
            windows.pop("rejection_db", None)
        mc = monte_carlo(nf, values, tolerances, samples=samples,
                         distribution=spec.tolerance.distribution, seed=seeds[i], windows=windows,
                         reject_hz=reject_hz, workers=workers)
        sens = mc.sensitivities
        designators = {p.symbol: p.name for p in s.parts}
        sections.append(SectionEvidence(index=s.index, sensitivities=sens, monte_carlo=mc,
                                        tolerances=tolerances, designators=designators))
        if progress:
            progress(i + 1, total, f"section {s.index}")
    envelope = _envelope(design, spec, verification, seeds[-1])
    verdict = None
    mask = design.target.mask
    if isinstance(mask, Mask):                # None: the target sets no mask
        # one more child of the same seed: the envelope's and sections' draws stay as they were
        mask_seed = np.random.SeedSequence(seed).spawn(len(design.sections) + 2)[-1]
        verdict = mask_verdict(design, mask, target=target, snapped=snapped,
                               continuous=continuous, samples=samples, seed=mask_seed)
    return Evidence(verification=verification, sections=tuple(sections), envelope=envelope,
                    samples=samples, seed=seed, distribution=spec.tolerance.distribution,
                    mask=verdict)


def _is_part(topology: Topology, symbol: str) -> bool:
    try:
        return topology.kind_of(symbol) in ("resistor", "capacitor", "inductor")
    except KeyError:
        return False


def _envelope(design: Design, spec: Spec, verification: Verification,
              seed: np.random.SeedSequence) -> dict[str, np.ndarray]:
    """Min and max cascade magnitude (dB) over Monte Carlo builds."""
    frequency = np.asarray(verification.design.frequency.frequency_hz, float)
    omega = 2 * np.pi * frequency
    s = 1j * omega
    rng = np.random.default_rng(seed)
    total = np.ones((ENVELOPE_SAMPLES, omega.size), dtype=complex)
    for section in design.sections:
        candidate = section.candidate
        nf = _full(candidate)
        values = dict(_snapped(candidate).values)
        topology = _topology(candidate)
        tolerances = part_tolerances(topology, [p for p in nf.symbols if _is_part(topology, p)],
                                     spec.tolerance.tolerances)
        sampled = {}
        for name, value in values.items():
            t = tolerances.get(name, 0.0)
            if spec.tolerance.distribution == "gaussian":
                factor = 1 + rng.normal(0.0, t / 3, ENVELOPE_SAMPLES)
            else:
                factor = 1 + rng.uniform(-t, t, ENVELOPE_SAMPLES)
            sampled[name] = value * factor
        numerator, denominator = nf.coefficients(sampled)
        total *= (polynomial_values(numerator[:, :, None], s[None, :])
                  / polynomial_values(denominator[:, :, None], s[None, :]))
    magnitude = 20 * np.log10(np.maximum(np.abs(total), 1e-300))
    return {"frequency_hz": frequency, "low_db": magnitude.min(axis=0), "high_db": magnitude.max(axis=0)}


# -- the mask ---------------------------------------------------------------

@dataclass(frozen=True)
class MaskFigures:
    """One response against a mask (dB; margins ≥ 0 meet it).

    Attributes
    ----------
    passband_deviation_db, passband_margin_db : float or None
        Highest minus lowest pass-band level; the ripple allowed less it.
    passband_low_hz : float or None
        Where the pass band is lowest.
    stopband_attenuation_db, stopband_margin_db : float or None
        Pass-band peak less the highest stop-band level; that less the
        attenuation required.
    stopband_worst_hz : float or None
        Where the stop band is highest.
    meets : bool
        Every margin at or above −MASK_TOLERANCE_DB.
    extremes_hz : tuple of float
        The response's crests and troughs in the bands, Hz (where a Monte
        Carlo of its builds looks closely).
    """

    passband_deviation_db: float | None
    passband_margin_db: float | None
    passband_low_hz: float | None
    stopband_attenuation_db: float | None
    stopband_margin_db: float | None
    stopband_worst_hz: float | None
    meets: bool
    extremes_hz: tuple = field(default=(), repr=False)

    def to_dict(self) -> dict:
        return {"passband_deviation_db": finite_or_none(self.passband_deviation_db),
                "passband_margin_db": finite_or_none(self.passband_margin_db),
                "passband_low_hz": finite_or_none(self.passband_low_hz),
                "stopband_attenuation_db": finite_or_none(self.stopband_attenuation_db),
                "stopband_margin_db": finite_or_none(self.stopband_margin_db),
                "stopband_worst_hz": finite_or_none(self.stopband_worst_hz),
                "meets": bool(self.meets)}


@dataclass(frozen=True, eq=False)
class MaskVerdict:
    """Does the built filter meet its mask? Nominal designs and Monte Carlo.

    Attributes
    ----------
    mask : placer.target.mask.Mask
    target, snapped, continuous : MaskFigures
        The target (on the mask by construction), the preferred-value
        design and the continuous one.
    samples : int
        Monte Carlo builds of the whole cascade.
    yield_fraction : float
        Fraction of builds that meet the whole mask.
    passband_yield, stopband_yield : float or None
        Fraction meeting the pass-band (stop-band) requirement alone.
    passband_margin_p01_db, stopband_margin_p01_db : float or None
        The margin 99 % of builds keep (1st percentile), dB.
    """

    mask: Mask
    target: MaskFigures
    snapped: MaskFigures
    continuous: MaskFigures | None
    samples: int
    yield_fraction: float
    passband_yield: float | None
    stopband_yield: float | None
    passband_margin_p01_db: float | None
    stopband_margin_p01_db: float | None

    def to_dict(self) -> dict:
        return {**self.mask.to_dict(),
                "tolerance_db": MASK_TOLERANCE_DB,
                "target": self.target.to_dict(), "snapped": self.snapped.to_dict(),
                "continuous": None if self.continuous is None else self.continuous.to_dict(),
                "monte_carlo": {
                    "samples": self.samples, "yield_pct": 100 * self.yield_fraction,
                    "passband_yield_pct": (None if self.passband_yield is None
                                           else 100 * self.passband_yield),
                    "stopband_yield_pct": (None if self.stopband_yield is None
                                           else 100 * self.stopband_yield),
                    "passband_margin_p01_db": finite_or_none(self.passband_margin_p01_db),
                    "stopband_margin_p01_db": finite_or_none(self.stopband_margin_p01_db)}}


def _band_extreme(evaluate_db: Callable, frequency: np.ndarray, values: np.ndarray,
                  sign: int) -> tuple:
    """(level dB, Hz, grid extremes Hz): the band's highest (sign +1) or lowest (−1) level.

    Every local extremum within 0.05 dB of the grid's best is refined by a
    bounded search between its neighbours; the band's ends count as they
    are (they are exact: an edge, DC, or the far end).
    """
    signed = sign * values
    inner = np.nonzero((signed[1:-1] >= signed[:-2]) & (signed[1:-1] > signed[2:]))[0] + 1
    extremes = tuple(float(f) for f in frequency[inner[:64]])
    best_index = int(np.argmax(signed))
    best, where = float(signed[best_index]), float(frequency[best_index])
    for i in inner[signed[inner] >= best - 0.05]:
        found = scipy.optimize.minimize_scalar(
            lambda f: -sign * float(evaluate_db(f)), bounds=(frequency[i - 1], frequency[i + 1]),
            method="bounded", options={"xatol": 1e-11 * frequency[i]})
        if -found.fun > best:
            best, where = float(-found.fun), float(found.x)
    return sign * best, where, extremes


def check_mask(evaluate: Callable, mask: Mask) -> MaskFigures:
    """One response's figures against a mask, with refined extremes.

    Parameters
    ----------
    evaluate : callable
        ``evaluate(omega)`` → complex H(jω) for an array of rad/s.
    mask : placer.target.mask.Mask

    Returns
    -------
    MaskFigures

    Examples
    --------
    A Butterworth pair at √2 rad/s loses 10·log10(1 + (0.5/√2)⁴) dB at
    0.5 rad/s:

    >>> from placer.target.mask import Mask
    >>> lowpass = Response.from_zpk([], [-1 + 1j, -1 - 1j], 2.0)
    >>> m = Mask("lowpass", ((0.0, 0.5 / 6.283185307179586),), (), 0.1, None)
    >>> f = check_mask(lowpass.evaluate, m)
    >>> round(f.passband_deviation_db, 6), f.meets
    (0.067334, True)
    """
    def evaluate_db(f: float) -> float:
        with np.errstate(divide="ignore"):
            return 20 * np.log10(np.abs(evaluate(2 * math.pi * np.atleast_1d(f))))[0]
    found: dict[str, list[tuple[int, float, float]]] = {"pass": [], "stop": [], "outside": []}
    extremes: list[float] = []
    for kind, band in mask_bands(mask):
        frequency = band_points(band)
        with np.errstate(divide="ignore"):
            values = 20 * np.log10(np.abs(evaluate(2 * math.pi * frequency)))
        signs = (1, -1) if kind == "pass" else (1,)
        for sign in signs:
            level, where, grid_extremes = _band_extreme(evaluate_db, frequency, values, sign)
            found[kind].append((sign, level, where))
            extremes += grid_extremes
    highs = [(level, where) for sign, level, where in found["pass"] if sign > 0]
    lows = [(level, where) for sign, level, where in found["pass"] if sign < 0]
    peak = max(highs)[0] if highs else max(level for _, level, _ in found["outside"])
    deviation = pass_margin = low_at = attenuation = stop_margin = worst_at = None
    if mask.ripple_db is not None and highs:
        low, low_at = min(lows)
        deviation = peak - low
        pass_margin = mask.ripple_db - deviation
    if mask.attenuation_db is not None and found["stop"]:
        top, worst_at = max((level, where) for _, level, where in found["stop"])
        attenuation = peak - top
        stop_margin = attenuation - mask.attenuation_db
    meets = all(m is None or m >= -MASK_TOLERANCE_DB for m in (pass_margin, stop_margin))
    return MaskFigures(deviation, pass_margin, low_at, attenuation, stop_margin, worst_at,
                       meets, tuple(sorted(set(extremes))))


def mask_verdict(design: Design, mask: Mask, *, target: Response, snapped: Response,
                 continuous: Response | None = None, samples: int,
                 seed: int | np.random.SeedSequence = 0) -> MaskVerdict:
    """The mask against the designs and over Monte Carlo builds of the cascade.

    Parameters
    ----------
    design : placer.design.Design
    mask : placer.target.mask.Mask
    target, snapped, continuous : Response
        The target and the design with preferred and continuous values.
    samples : int
        Builds of the whole cascade, every toleranced part of every section
        drawn (the spec's tolerances and distribution).
    seed : int or SeedSequence

    Returns
    -------
    MaskVerdict
    """
    spec = design.spec
    nominal = check_mask(snapped.evaluate, mask)
    grid = mask_grid(mask, focus_hz=nominal.extremes_hz)
    omega = 2 * math.pi * grid.frequency_hz
    parts = []
    for s in design.sections:
        nf = _full(s.candidate)
        topology = _topology(s.candidate)
        varied = [p for p in nf.symbols if _is_part(topology, p)]
        parts.append((nf, _snapped(s.candidate).values,
                      part_tolerances(topology, varied, spec.tolerance.tolerances)))
    figures = [grid_figures(mask, grid, block) for block in cascade_magnitude_blocks(
        parts, cast("Sequence[float]", omega), samples=samples,
        distribution=spec.tolerance.distribution, seed=seed)]

    def joined(values: list[np.ndarray | None]) -> np.ndarray | None:
        present = [v for v in values if v is not None]
        return None if values[0] is None else np.concatenate(present)
    meets = np.concatenate([f.meets for f in figures])
    pass_margin = joined([f.passband_margin_db for f in figures])
    stop_margin = joined([f.stopband_margin_db for f in figures])

    def share(margin: np.ndarray | None) -> float | None:
        return None if margin is None else float(np.mean(margin >= -MASK_TOLERANCE_DB))

    def p01(margin: np.ndarray | None) -> float | None:
        return None if margin is None else float(np.percentile(margin, 1.0))
    return MaskVerdict(mask, check_mask(target.evaluate, mask), nominal,
                       None if continuous is None else check_mask(continuous.evaluate, mask),
                       samples, float(np.mean(meets)), share(pass_margin), share(stop_margin),
                       p01(pass_margin), p01(stop_margin))
