"""Evidence for a design: responses, sensitivities and tolerance spread.

Everything is computed on the designed circuit's network functions with
the chosen values, never on the target: python-control step and
frequency figures of the snapped and the continuous designs beside the
target's, the classical sensitivities of every section, and a Monte Carlo
of every section over the part tolerances (plus a magnitude envelope of
the whole cascade for the plots).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from ..analysis.network import polynomial_values
from ..analysis.response import Response
from .tolerance import monte_carlo
from ..units import finite_or_none
from .verify import verify

__all__ = ["SectionEvidence", "Evidence", "gather_evidence", "part_tolerances"]

ENVELOPE_SAMPLES = 200


def part_tolerances(topology, symbols, by_kind):
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
    sensitivities: object
    monte_carlo: object
    tolerances: dict
    designators: dict   # part symbol -> reference designator


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
    """

    verification: object
    sections: tuple
    envelope: dict = field(repr=False)
    samples: int = 0
    seed: int = 0
    distribution: str = "uniform"

    def to_dict(self):
        v = self.verification

        def step(f):
            s = f.step
            return {"overshoot_pct": finite_or_none(s.overshoot_pct), "rise_time_s": finite_or_none(s.rise_time_s),
                    "settling_time_s": finite_or_none(s.settling_time_s), "final_value": finite_or_none(s.final_value),
                    "peak": finite_or_none(s.peak), "peak_time_s": finite_or_none(s.peak_time_s), "notes": list(s.notes)}

        def freq(f):
            q = f.frequency
            return {"kind": q.kind, "gain_db": finite_or_none(q.gain_db), "f3db_hz": finite_or_none(q.f3db_hz),
                    "band_low_hz": finite_or_none(q.band_low_hz), "band_high_hz": finite_or_none(q.band_high_hz),
                    "peak_db": finite_or_none(q.peak_db), "peak_hz": finite_or_none(q.peak_hz), "notes": list(q.notes)}

        def dev(d):
            if d is None:
                return None
            return {"magnitude_db": finite_or_none(d.magnitude_db), "magnitude_at_hz": finite_or_none(d.magnitude_at_hz),
                    "phase_deg": finite_or_none(d.phase_deg), "phase_at_hz": finite_or_none(d.phase_at_hz),
                    "inverted": bool(d.inverted), "band_hz": [float(b) for b in d.band_hz]}

        out = {
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
            "sections": [],
        }
        for s in self.sections:
            sens = s.sensitivities
            mc = s.monte_carlo
            rows = {}
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
            out["sections"].append({
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


def _full(candidate):
    """The section's whole network function (with a real op-amp: its parasitic poles too)."""
    return getattr(candidate.problem.nf, "full", candidate.problem.nf)


def _response(sections_tf):
    return Response.from_sections(sections_tf)


def gather_evidence(design, *, samples=None, seed=None, progress=None, band_hz=None, workers=1):
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
    snapped = _response([_full(s.candidate).transfer_function(s.candidate.snapped.values)
                         for s in design.sections])
    continuous = _response([_full(s.candidate).transfer_function(s.candidate.snapped.continuous)
                            for s in design.sections])
    verification = verify(snapped, target, band_hz=band_hz, continuous=continuous)
    seeds = np.random.SeedSequence(seed).spawn(len(design.sections) + 1)
    sections = []
    total = len(design.sections)
    for i, s in enumerate(design.sections):
        candidate = s.candidate
        nf = _full(candidate)
        values = candidate.snapped.values
        varied = [p for p in nf.symbols if _is_part(candidate.topology, p)]
        tolerances = part_tolerances(candidate.topology, varied, spec.tolerance.tolerances)
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
    return Evidence(verification=verification, sections=tuple(sections), envelope=envelope,
                    samples=samples, seed=seed, distribution=spec.tolerance.distribution)


def _is_part(topology, symbol):
    try:
        return topology.kind_of(symbol) in ("resistor", "capacitor", "inductor")
    except KeyError:
        return False


def _envelope(design, spec, verification, seed):
    """Min and max cascade magnitude (dB) over Monte Carlo builds."""
    frequency = np.asarray(verification.design.frequency.frequency_hz, float)
    omega = 2 * np.pi * frequency
    s = 1j * omega
    rng = np.random.default_rng(seed)
    total = np.ones((ENVELOPE_SAMPLES, omega.size), dtype=complex)
    for section in design.sections:
        candidate = section.candidate
        nf = _full(candidate)
        values = dict(candidate.snapped.values)
        tolerances = part_tolerances(candidate.topology,
                                     [p for p in nf.symbols if _is_part(candidate.topology, p)],
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
