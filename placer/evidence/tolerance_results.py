"""The results of a tolerance Monte Carlo: statistics, per-section and cascade.

The records :func:`placer.evidence.tolerance.monte_carlo` and
:func:`placer.evidence.tolerance.cascade_monte_carlo` return.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ..analysis.sensitivity import Sensitivities

__all__ = ["Statistics", "MonteCarloResult", "CascadeMonteCarloResult"]


def _db(x: np.ndarray | float) -> np.ndarray:
    with np.errstate(divide="ignore"):
        return 20.0 * np.log10(np.abs(x))


@dataclass(frozen=True)
class Statistics:
    """Summary of one Monte Carlo figure (population std, ddof = 0)."""

    mean: float
    std: float
    minimum: float
    maximum: float
    p01: float
    p99: float

    @classmethod
    def of(cls, samples: Any) -> Statistics:
        """Statistics of a sample array."""
        samples = np.asarray(samples, dtype=float)
        low, high = float(np.min(samples)), float(np.max(samples))
        if low == high:     # constant: exact, without summation round-off
            return cls(low, 0.0, low, high, low, high)
        p01, p99 = np.percentile(samples, [1.0, 99.0])
        return cls(float(np.mean(samples)), float(np.std(samples)), low, high,
                   float(p01), float(p99))


@dataclass(frozen=True, eq=False)
class MonteCarloResult:
    """Samples and statistics of f0, Q and gain under part tolerances.

    Attributes
    ----------
    samples, distribution, tolerances
        As applied (tolerances: part → fraction; parts absent are exact).
    nominal_f0_hz, nominal_q, nominal_gain : float
        Figures at the nominal values (``nominal_q`` None for first order).
    gain_reference : str
        Where the gain is read: "dc", "hf", "center" (signed), or
        "|H| at <f> Hz" when the network has none of those (e.g. 4th-order
        band-pass): the magnitude at the reference frequency.
    f0_hz, q, gain : ndarray
        One value per sample (read-only); ``q`` None for first order.
    statistics : dict
        "f0_hz", "q", "gain", "gain_db" → :class:`Statistics`.
    windows, window_yield, yield_fraction, passed
        The yield windows ("f0", "q" relative: 0.02 = ±2 % of nominal;
        "gain_db" absolute, dB; "rejection_db" a minimum, dB), the
        fraction inside each window alone,
        inside all at once, and the per-sample pass mask (None without
        windows).
    contributions, ranking : dict
        "f0", "q", "gain" → {part: share of the variance} from first-order
        sensitivity × tolerance (sums to 1; all 0 when nothing varies), and
        → parts sorted by falling share.
    sensitivities : Sensitivities
    reject_hz : float or None
        Frequency at which the rejection is read (Hz), when asked for.
    nominal_rejection_db : float or None
    rejection_db : ndarray or None
        Pass-band gain over |H(j2π·reject_hz)|, dB, per sample (read-only;
        each build against its own pass-band gain), capped at
        MAX_REJECTION_DB; ``statistics["rejection_db"]`` summarises it.
    """

    samples: int
    distribution: str
    tolerances: dict[str, float]
    nominal_f0_hz: float
    nominal_q: float | None
    nominal_gain: float
    gain_reference: str
    f0_hz: np.ndarray
    q: np.ndarray | None
    gain: np.ndarray
    statistics: dict[str, Statistics]
    windows: dict[str, float] | None
    window_yield: dict[str, float] | None
    yield_fraction: float | None
    passed: np.ndarray | None
    contributions: dict[str, dict[str, float]]
    ranking: dict[str, tuple[str, ...]]
    sensitivities: Sensitivities
    reject_hz: float | None = None
    nominal_rejection_db: float | None = None
    rejection_db: np.ndarray | None = None

    @property
    def gain_db(self) -> np.ndarray:
        """20·log10|gain| per sample, dB."""
        return _db(self.gain)

    @property
    def nominal_gain_db(self) -> float:
        """20·log10|nominal gain|, dB."""
        return float(_db(self.nominal_gain))

    # report/ sits above this module in the layering: the notebook view is
    # imported on use (see placer.report.notebook), so no plotting loads before.
    def _repr_html_(self) -> str:
        """The notebook view: tables and plots (inline SVG), self-contained."""
        from ..report.notebook import monte_carlo_html

        return monte_carlo_html(self)

    def plot(self, **options: Any) -> Any:
        """The main figure: the f0 histogram with the nominal and the window, a matplotlib Figure (see :func:`placer.report.notebook.plot`)."""
        from ..report.notebook import monte_carlo_figure

        return monte_carlo_figure(self, **options)


@dataclass(frozen=True, eq=False)
class CascadeMonteCarloResult:
    """Monte Carlo of a cascade: per-section results and the overall gain.

    Attributes
    ----------
    sections : tuple of MonteCarloResult
    gain : ndarray
        Product of the section gains per sample (signed).
    nominal_gain : float
    statistics : dict
        "gain", "gain_db" → :class:`Statistics` of the overall gain.
    yield_fraction : float or None
        Fraction of samples where every section is inside its "f0" and "q"
        windows and the *overall* gain inside the "gain_db" window.
    passed : ndarray of bool or None
    """

    sections: tuple[MonteCarloResult, ...]
    gain: np.ndarray
    nominal_gain: float
    statistics: dict[str, Statistics]
    windows: dict[str, float] | None
    yield_fraction: float | None
    passed: np.ndarray | None

    @property
    def gain_db(self) -> np.ndarray:
        """20·log10|overall gain| per sample, dB."""
        return _db(self.gain)
