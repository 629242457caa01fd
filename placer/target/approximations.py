"""Classical low-pass prototypes, frequency transforms and order estimates.

Every prototype here is analog and kept as zeros, poles and gain (never as
polynomial coefficients, which lose accuracy above order ~8). Frequencies
are angular (rad/s) unless a name ends in ``_hz``.

The word *cutoff* means one thing throughout placer: the half-power (−3 dB,
exactly ``10·log10(2)`` ≈ 3.0103 dB below the pass-band peak) frequency of
the final response. scipy.signal normalises each family differently
(Butterworth at −3 dB, Chebyshev I and elliptic at the ripple edge,
Chebyshev II at the stop-band edge, Bessel by its ``norm``); this module
finds the −3 dB point of each prototype with a root finder on ``|H|`` and
rescales, so targets of different families compare directly.

References
----------
.. [1] A. B. Williams and F. J. Taylor, *Electronic Filter Design
   Handbook*, 4th ed., McGraw-Hill, 2006.
.. [2] R. W. Daniels, *Approximation Methods for Electronic Filter
   Design*, McGraw-Hill, 1974 (order formulas, elliptic selectivity).
.. [3] S. H. Linkwitz, "Active crossover networks for noncoincident
   drivers", *J. Audio Eng. Soc.* 24(1), 1976.
"""

from __future__ import annotations

import difflib
import math
from dataclasses import dataclass
from collections.abc import Collection
from typing import Any, NamedTuple, cast

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import optimize, signal, special

from placer.errors import SpecError

__all__ = [
    "APPROXIMATIONS",
    "BESSEL_NORMS",
    "NORMALISATIONS",
    "MIN_ORDER",
    "MAX_ORDER",
    "HALF_POWER_LOSS_DB",
    "ZPK",
    "Band",
    "OrderEstimate",
    "lowpass_prototype",
    "frequency_at_loss",
    "band_from_edges",
    "scale_lowpass",
    "lowpass_to_highpass",
    "lowpass_to_bandpass",
    "lowpass_to_bandstop",
    "estimate_order",
    "estimate_orders",
    "suggest",
    "check_choice",
    "check_order",
]

APPROXIMATIONS = (
    "butterworth",
    "chebyshev1",
    "chebyshev2",
    "bessel",
    "elliptic",
    "linkwitz-riley",
)
BESSEL_NORMS = ("mag", "delay", "phase")
NORMALISATIONS = ("cutoff", "passband_edge", "stopband_edge", "natural")
MIN_ORDER, MAX_ORDER = 1, 12
HALF_POWER_LOSS_DB = 10.0 * math.log10(2.0)

# Losses within this many dB of a design level are taken as that level, so a
# Chebyshev ripple of exactly 10·log10(2) dB puts the cutoff on the edge.
_LEVEL_TOLERANCE_DB = 1e-9
_ESTIMATED = ("butterworth", "chebyshev1", "chebyshev2", "elliptic", "bessel")


#: A band edge, Hz: one frequency, or the (low, high) pair of a band-pass mask.
Edge = float | tuple[float, float]


class ZPK(NamedTuple):
    """Zeros, poles (rad/s) and gain ``k`` of H(s) = k·Π(s−z)/Π(s−p)."""

    zeros: np.ndarray
    poles: np.ndarray
    k: float


class Band(NamedTuple):
    """A band as its geometric centre and width (same unit as the edges)."""

    center: float
    bandwidth: float


def suggest(name: object, valid: Collection[str]) -> str:
    """Return ``"; did you mean 'x'?"`` naming the valid name(s) nearest *name*.

    Examples
    --------
    >>> suggest("chebychev", APPROXIMATIONS)
    "; did you mean 'chebyshev1' or 'chebyshev2'?"
    """
    def score(candidate: str) -> float:
        return difflib.SequenceMatcher(None, str(name), candidate).ratio()

    close = difflib.get_close_matches(str(name), list(valid), n=3)
    close = sorted(c for c in close if score(c) >= score(close[0]) - 1e-9)
    return f"; did you mean {' or '.join(map(repr, close))}?" if close else ""


def check_choice(value: Any, valid: Collection[str], field: str) -> str:
    """Return *value* if it is one of *valid*, else raise naming both.

    Parameters
    ----------
    value : object
        What was given.
    valid : sequence of str
        The accepted names.
    field : str
        The name of the option, for the message.

    Raises
    ------
    SpecError
        ``"<field> = <value> is not one of ..."``, with the nearest valid
        name (see :func:`suggest`).

    Examples
    --------
    >>> check_choice("bessel", APPROXIMATIONS, "approximation")
    'bessel'
    """
    if value not in valid:
        raise SpecError(
            f"{field} = {value!r} is not one of {', '.join(valid)}"
            + suggest(value, valid)
        )
    return value


def check_order(order: object, approximation: str) -> int:
    """Return *order* as an int if the family can have it, else raise.

    A prototype order is a whole number from :data:`MIN_ORDER` to
    :data:`MAX_ORDER`, and even for ``"linkwitz-riley"``.

    Parameters
    ----------
    order : int
        Prototype order.
    approximation : str
        One of :data:`APPROXIMATIONS`.

    Raises
    ------
    SpecError
        Naming the order and the range (or the evenness) accepted.

    Examples
    --------
    >>> check_order(4, "linkwitz-riley")
    4
    """
    if isinstance(order, bool) or not isinstance(order, (int, np.integer)):
        raise SpecError(f"order = {order!r} must be a whole number from "
                        f"{MIN_ORDER} to {MAX_ORDER}")
    if not MIN_ORDER <= order <= MAX_ORDER:
        raise SpecError(f"order = {order} is out of range; give a whole "
                        f"number from {MIN_ORDER} to {MAX_ORDER}")
    if approximation == "linkwitz-riley" and order % 2:
        raise SpecError(f"order = {order} is odd, but a linkwitz-riley "
                        "response is the square of a Butterworth, so its "
                        "order must be even (2, 4, 6, …)")
    return int(order)


def _check_level(value: float | None, name: str, needed_by: str) -> float:
    if value is None:
        raise SpecError(f"{name} is required for {needed_by}")
    if not (math.isfinite(value) and value > 0):
        raise SpecError(f"{name} = {value!r} dB must be a positive number of dB")
    return float(value)


def _natural_prototype(approximation: str, order: int, ripple_db: float | None,
                       attenuation_db: float | None, bessel_norm: str) -> ZPK:
    """The prototype as scipy.signal normalises it, with a pass-band peak of 1."""
    common = dict(analog=True, output="zpk")
    if approximation == "butterworth":
        z, p, k = signal.butter(order, 1.0, **common)
    elif approximation == "chebyshev1":
        z, p, k = signal.cheby1(order, ripple_db, 1.0, **common)
    elif approximation == "chebyshev2":
        z, p, k = signal.cheby2(order, attenuation_db, 1.0, **common)
    elif approximation == "elliptic":
        z, p, k = signal.ellip(order, ripple_db, attenuation_db, 1.0, **common)
    elif approximation == "bessel":
        z, p, k = signal.bessel(order, 1.0, norm=bessel_norm, **common)
    else:  # linkwitz-riley: a Butterworth of half the order, squared [3]
        z, p, k = signal.butter(order // 2, 1.0, **common)
        z, p, k = np.concatenate([z, z]), np.concatenate([p, p]), k * k
    return ZPK(np.asarray(z, complex), np.asarray(p, complex), float(k))


def _loss_db(zpk: ZPK, omega: ArrayLike) -> NDArray[np.float64]:
    _, h = signal.freqs_zpk(zpk.zeros, zpk.poles, zpk.k, worN=np.atleast_1d(omega))
    return -20.0 * np.log10(np.abs(h))


def frequency_at_loss(approximation: str, prototype: ZPK, loss_db: float, *,
                      ripple_db: float | None = None,
                      attenuation_db: float | None = None) -> float:
    """Find where a natural prototype's loss first settles at *loss_db*.

    The search is a bracketed root finder (Brent) on the interval where the
    family's magnitude falls monotonically: all of ``(0, ∞)`` for
    Butterworth, Bessel and Linkwitz–Riley; above the ripple edge for
    Chebyshev I; below the stop-band edge for Chebyshev II; between the
    ripple edge and the first transmission zero for elliptic.

    Parameters
    ----------
    approximation : str
        One of :data:`APPROXIMATIONS`.
    prototype : ZPK
        The prototype in scipy.signal's own normalisation
        (``lowpass_prototype(..., normalisation="natural")``).
    loss_db : float
        Loss below the pass-band peak, dB (positive).
    ripple_db, attenuation_db : float, optional
        The prototype's design ripple and attenuation, dB.

    Returns
    -------
    float
        The frequency, rad/s, on the prototype's scale.

    Raises
    ------
    SpecError
        If the loss is not reached on a monotonic stretch (for instance a
        −3 dB point asked of a Chebyshev I with 4 dB ripple).

    Examples
    --------
    >>> p = lowpass_prototype("butterworth", 4, normalisation="natural")
    >>> round(frequency_at_loss("butterworth", p, HALF_POWER_LOSS_DB), 9)
    1.0
    """
    level = 10.0 ** (-loss_db / 20.0)

    def excess(omega: float) -> float:
        return float(np.abs(signal.freqs_zpk(prototype.zeros, prototype.poles,
                                             prototype.k, worN=[omega])[1][0])) - level

    if approximation in ("chebyshev1", "elliptic"):
        ripple = cast(float, ripple_db)  # these families are designed with one
        if loss_db < ripple - _LEVEL_TOLERANCE_DB:
            raise SpecError(
                f"a loss of {loss_db:.4g} dB is reached inside the "
                f"{ripple:g} dB ripple band of a {approximation} response, "
                "so the frequency is ambiguous; with a ripple deeper than "
                "3 dB give passband_edge instead of cutoff")
        if loss_db <= ripple + _LEVEL_TOLERANCE_DB:
            return 1.0
        low = 1.0
        if approximation == "elliptic" and prototype.zeros.size:
            high = float(np.min(np.abs(prototype.zeros)))
        else:
            high = 2.0
            while excess(high) > 0:
                high *= 2.0
    elif approximation == "chebyshev2":
        attenuation = cast(float, attenuation_db)  # as the design has one
        if loss_db > attenuation + _LEVEL_TOLERANCE_DB:
            raise SpecError(
                f"a chebyshev2 response with attenuation = {attenuation:g} dB "
                f"never falls {loss_db:.4g} dB; its stop band sits at "
                f"-{attenuation:g} dB (attenuation must exceed the loss asked)")
        if loss_db >= attenuation - _LEVEL_TOLERANCE_DB:
            return 1.0
        low, high = 0.0, 1.0
    else:
        low, high = 0.5, 2.0
        while excess(low) < 0:
            low /= 2.0
        while excess(high) > 0:
            high *= 2.0
    if excess(low) * excess(high) > 0 or not math.isfinite(excess(low) * excess(high)):
        # Rounding in a degenerate design (attenuation a hair above the ripple, say)
        # leaves no sign change to bracket: no clean frequency to give.
        raise SpecError(
            f"no frequency where a {approximation} response loses {loss_db:.4g} dB "
            f"could be found (ripple {ripple_db} dB, attenuation {attenuation_db} dB); "
            "the design is too close to degenerate: widen the gap between ripple "
            "and attenuation")
    return float(optimize.brentq(excess, low, high, xtol=1e-15, rtol=1e-15,
                                 maxiter=500))


def lowpass_prototype(approximation: str, order: int, *, ripple_db: float | None = None,
                      attenuation_db: float | None = None, bessel_norm: str = "mag",
                      normalisation: str = "cutoff") -> ZPK:
    """Analog low-pass prototype of a classical approximation, as zpk.

    Parameters
    ----------
    approximation : {"butterworth", "chebyshev1", "chebyshev2", "bessel", \
"elliptic", "linkwitz-riley"}
        The family. Linkwitz–Riley of order n is a Butterworth of order n/2
        squared (n even); its −6 dB point sits at (√2 + 1)^(1/n) times its
        −3 dB cutoff (1.2465 for n = 4).
    order : int
        1 to 12.
    ripple_db : float, optional
        Pass-band ripple, dB (Chebyshev I, elliptic; and the loss that
        defines ``normalisation="passband_edge"`` for any family).
    attenuation_db : float, optional
        Minimum stop-band attenuation, dB (Chebyshev II, elliptic; and the
        loss that defines ``normalisation="stopband_edge"``).
    bessel_norm : {"mag", "delay", "phase"}
        Which scipy.signal Bessel normalisation ``"natural"`` means: −3 dB
        at 1 rad/s, unit group delay at DC, or the high-frequency asymptote
        of a Butterworth with a 1 rad/s cutoff (product of pole magnitudes
        1; the phase there is near, not exactly, −n·45°). Anything but
        ``"mag"`` needs ``normalisation="natural"``.
    normalisation : {"cutoff", "passband_edge", "stopband_edge", "natural"}
        What lands on 1 rad/s: the −3 dB point (default, every family
        alike); the frequency where the loss reaches ``ripple_db``; the
        frequency where it reaches ``attenuation_db``; or scipy.signal's own
        choice (Butterworth −3 dB, Chebyshev I / elliptic ripple edge,
        Chebyshev II stop-band edge, Bessel per ``bessel_norm``,
        Linkwitz–Riley −6 dB).

    Returns
    -------
    ZPK
        Zeros and poles in rad/s; ``k`` makes the pass-band peak 1 (so an
        even-order Chebyshev I or elliptic has DC gain −ripple dB).

    Raises
    ------
    SpecError
        For an unknown family or normalisation, an order outside 1–12, an
        odd Linkwitz–Riley order, a missing or non-positive ripple or
        attenuation, or a −3 dB point that does not exist (Chebyshev I or
        elliptic ripple above 3.0103 dB, Chebyshev II attenuation below it).

    Examples
    --------
    >>> z, p, k = lowpass_prototype("butterworth", 2)
    >>> [f"{r:.4f}" for r in sorted(p, key=lambda r: r.imag)]
    ['-0.7071-0.7071j', '-0.7071+0.7071j']
    >>> z, p, k = lowpass_prototype("bessel", 2, normalisation="natural", bessel_norm="delay")
    >>> sorted(f"{r:.4f}" for r in p)
    ['-1.5000+0.8660j', '-1.5000-0.8660j']
    """
    check_choice(approximation, APPROXIMATIONS, "approximation")
    order = check_order(order, approximation)
    check_choice(normalisation, NORMALISATIONS, "normalisation")
    check_choice(bessel_norm, BESSEL_NORMS, "bessel_norm")
    if approximation in ("chebyshev1", "elliptic"):
        ripple_db = _check_level(ripple_db, "ripple", f"a {approximation} response")
    if approximation in ("chebyshev2", "elliptic"):
        attenuation_db = _check_level(attenuation_db, "attenuation",
                                      f"a {approximation} response")
    # both checked just above for an elliptic response
    if approximation == "elliptic" and cast(float, attenuation_db) <= cast(float, ripple_db):
        raise SpecError(f"attenuation = {attenuation_db:g} dB must exceed "
                        f"ripple = {ripple_db:g} dB for an elliptic response")
    if bessel_norm != "mag" and (approximation != "bessel" or normalisation != "natural"):
        raise SpecError(f"bessel_norm = {bessel_norm!r} applies only to a bessel "
                        "response with normalisation 'natural' (other "
                        "normalisations fix the frequency scale themselves)")
    natural = _natural_prototype(approximation, order, ripple_db,
                                 attenuation_db, bessel_norm)
    if normalisation == "natural":
        return natural
    if normalisation == "cutoff":
        loss = HALF_POWER_LOSS_DB
    elif normalisation == "passband_edge":
        loss = _check_level(ripple_db, "ripple", "a passband_edge")
    else:
        loss = _check_level(attenuation_db, "attenuation", "a stopband_edge")
    edge = frequency_at_loss(approximation, natural, loss, ripple_db=ripple_db,
                             attenuation_db=attenuation_db)
    return scale_lowpass(natural, 1.0 / edge)


def band_from_edges(low_edge: float, high_edge: float) -> Band:
    """Geometric centre and width of a band from its two edges.

    Examples
    --------
    >>> band_from_edges(100.0, 400.0)
    Band(center=200.0, bandwidth=300.0)
    """
    if not 0 < low_edge < high_edge:
        raise SpecError(f"low_edge = {low_edge!r} and high_edge = {high_edge!r} "
                        "must satisfy 0 < low_edge < high_edge")
    return Band(math.sqrt(low_edge * high_edge), high_edge - low_edge)


def _as_zpk(z: ArrayLike, p: ArrayLike, k: complex) -> ZPK:
    return ZPK(np.asarray(z, complex), np.asarray(p, complex), float(np.real(k)))


def scale_lowpass(prototype: ZPK, cutoff: float) -> ZPK:
    """Move a 1 rad/s low-pass prototype to *cutoff* rad/s (k follows).

    Examples
    --------
    >>> [f"{p.real:g}" for p in scale_lowpass(lowpass_prototype("butterworth", 1), 10.0).poles]
    ['-10']
    """
    return _as_zpk(*signal.lp2lp_zpk(*prototype, wo=cutoff))


def lowpass_to_highpass(prototype: ZPK, cutoff: float) -> ZPK:
    """High-pass with its prototype's 1 rad/s point at *cutoff* rad/s.

    Examples
    --------
    >>> lowpass_to_highpass(lowpass_prototype("butterworth", 1), 10.0).zeros
    array([0.+0.j])
    """
    return _as_zpk(*signal.lp2hp_zpk(*prototype, wo=cutoff))


def lowpass_to_bandpass(prototype: ZPK, center: float, bandwidth: float) -> ZPK:
    """Band-pass: the prototype's ±1 rad/s map to edges *bandwidth* apart.

    The edges ω₁ < ω₂ satisfy ω₁·ω₂ = center² and ω₂ − ω₁ = bandwidth (rad/s).
    A prototype of order n gives order 2n.

    Examples
    --------
    >>> bp = lowpass_to_bandpass(lowpass_prototype("butterworth", 2), 100.0, 10.0)
    >>> len(bp.poles), len(bp.zeros)
    (4, 2)
    """
    return _as_zpk(*signal.lp2bp_zpk(*prototype, wo=center, bw=bandwidth))


def lowpass_to_bandstop(prototype: ZPK, center: float, bandwidth: float) -> ZPK:
    """Band-stop (notch) with edges *bandwidth* apart around *center* (rad/s).

    Examples
    --------
    >>> bs = lowpass_to_bandstop(lowpass_prototype("butterworth", 1), 100.0, 10.0)
    >>> sorted(float(z.imag) for z in bs.zeros)
    [-100.0, 100.0]
    """
    return _as_zpk(*signal.lp2bs_zpk(*prototype, wo=center, bw=bandwidth))


# --------------------------------------------------------------------------
# Order estimation


@dataclass(frozen=True)
class OrderEstimate:
    """Lowest order of one family that meets a mask, with the design found.

    Attributes
    ----------
    approximation : str
        The family.
    order : int or None
        Lowest order meeting the mask (may exceed 12 for the closed-form
        families); None for Bessel when no order 1–12 meets it.
    cutoff_hz : float or None
        −3 dB frequency, Hz, of that design scaled to lose exactly the
        ripple at the pass-band edge (low-/high-pass); None when the order
        is outside 1–12 or the −3 dB point is ambiguous (ripple > 3 dB).
    band_edges_hz : tuple of float or None
        The two −3 dB edges, Hz, for a band-pass mask.
    stopband_attenuation_db : float or None
        Least attenuation the design achieves over the mask's stop band, dB.
    """

    approximation: str
    order: int | None
    cutoff_hz: float | None = None
    band_edges_hz: tuple[float, float] | None = None
    stopband_attenuation_db: float | None = None


def _pow10m1(x: float) -> float:
    return math.expm1(x * math.log(10.0))


def _selectivity(passband: Any, stopband: Any, response: str) -> float:
    """Stop-to-pass ratio of the equivalent normalised low-pass mask."""
    if response == "lowpass":
        return stopband / passband
    if response == "highpass":
        return passband / stopband
    p_low, p_high = passband
    return min(abs((ws * ws - p_low * p_high) / (ws * (p_low - p_high)))
               for ws in stopband)


def _check_mask(passband: Any, ripple_db: float | None, stopband: Any,
                attenuation_db: float | None, response: str) -> tuple[Any, Any]:
    ripple_db = _check_level(ripple_db, "ripple", "an order estimate")
    attenuation_db = _check_level(attenuation_db, "attenuation", "an order estimate")
    if attenuation_db <= ripple_db:
        raise SpecError(f"attenuation = {attenuation_db:g} dB must exceed "
                        f"ripple = {ripple_db:g} dB")
    if response == "bandpass":
        try:
            (p_low, p_high), (s_low, s_high) = passband, stopband
        except (TypeError, ValueError):
            raise SpecError("a bandpass mask needs passband_edge and "
                            "stopband_edge as (low, high) pairs, not "
                            f"{passband!r} and {stopband!r}") from None
        values = (p_low, p_high, s_low, s_high)
        if not all(math.isfinite(v) and v > 0 for v in values):
            raise SpecError(f"band edges {values!r} must be positive frequencies")
        if not s_low < p_low < p_high < s_high:
            raise SpecError(
                f"stopband_edge = {stopband!r} Hz must lie outside "
                f"passband_edge = {passband!r} Hz (stop low < pass low < "
                "pass high < stop high)")
        return (float(p_low), float(p_high)), (float(s_low), float(s_high))
    for name, value in (("passband_edge", passband), ("stopband_edge", stopband)):
        if not (isinstance(value, (int, float)) and math.isfinite(value) and value > 0):
            raise SpecError(f"{name} = {value!r} Hz must be a positive frequency")
    wrong = stopband <= passband if response == "lowpass" else stopband >= passband
    if wrong:
        side = "above" if response == "lowpass" else "below"
        raise SpecError(
            f"stopband_edge = {stopband:g} Hz is on the wrong side of "
            f"passband_edge = {passband:g} Hz: a {response} stop band lies "
            f"{side} its pass band")
    return float(passband), float(stopband)


def _closed_form_order(approximation: str, nat: float, ripple_db: float,
                       attenuation_db: float) -> int:
    # Daniels [2]: Butterworth and Chebyshev order from the discrimination
    # ratio; elliptic from the ratio of complete elliptic integrals.
    discrimination = _pow10m1(0.1 * attenuation_db) / _pow10m1(0.1 * ripple_db)
    if approximation == "butterworth":
        exact = math.log10(discrimination) / (2.0 * math.log10(nat))
    elif approximation in ("chebyshev1", "chebyshev2"):
        exact = math.acosh(math.sqrt(discrimination)) / math.acosh(nat)
    else:
        m0, m1 = 1.0 / nat ** 2, 1.0 / discrimination
        exact = (special.ellipk(m0) * special.ellipkm1(m1)
                 / (special.ellipkm1(m0) * special.ellipk(m1)))
    return int(math.ceil(exact))


def _design_losses(approximation: str, order: int, ripple_db: float, attenuation_db: float,
                   nat: float) -> tuple[float | None, float]:
    """Passband-edge and stop-band-minimum of a design meeting the ripple."""
    proto = lowpass_prototype(approximation, order, ripple_db=ripple_db,
                              attenuation_db=attenuation_db,
                              normalisation="passband_edge")
    grid = nat * np.logspace(0.0, 4.0, 2001)
    stop_loss = float(np.min(_loss_db(proto, grid)))
    if len(proto.zeros) == len(proto.poles):
        stop_loss = min(stop_loss, -20.0 * math.log10(abs(proto.k)))
    try:
        natural = lowpass_prototype(approximation, order, ripple_db=ripple_db,
                                    attenuation_db=attenuation_db,
                                    normalisation="natural")
        edge_ratio = (frequency_at_loss(approximation, natural, HALF_POWER_LOSS_DB,
                                        ripple_db=ripple_db,
                                        attenuation_db=attenuation_db)
                      / frequency_at_loss(approximation, natural, ripple_db,
                                          ripple_db=ripple_db,
                                          attenuation_db=attenuation_db))
    except SpecError:
        edge_ratio = None
    return edge_ratio, stop_loss


def estimate_orders(passband_edge_hz: Edge, ripple_db: float, stopband_edge_hz: Edge,
                    attenuation_db: float, *,
                    response: str = "lowpass") -> tuple[OrderEstimate, ...]:
    """Lowest order of each classical family that meets a mask.

    The mask: at most *ripple_db* loss up to the pass-band edge, at least
    *attenuation_db* beyond the stop-band edge. Butterworth, Chebyshev I/II
    and elliptic orders come from their closed forms [2]; Bessel by search
    over orders 1–12 on its magnitude, scaled to lose exactly the ripple at
    the pass-band edge.

    Parameters
    ----------
    passband_edge_hz, stopband_edge_hz : float or (float, float)
        Edges, Hz; (low, high) pairs for ``response="bandpass"``.
    ripple_db, attenuation_db : float
        Allowed pass-band loss and required stop-band loss, dB (> 0).
    response : {"lowpass", "highpass", "bandpass"}
        The mask's kind; a band-pass mask is taken with its pass-band edges
        geometric about the centre, as scipy.signal's ``*ord`` do.

    Returns
    -------
    tuple of OrderEstimate
        One each for butterworth, chebyshev1, chebyshev2, elliptic, bessel.

    Raises
    ------
    SpecError
        For non-positive levels or edges, attenuation not above ripple, or
        a stop-band edge on the wrong side of the pass-band edge.

    Examples
    --------
    >>> for e in estimate_orders(1000.0, 1.0, 2000.0, 40.0):
    ...     print(e.approximation, e.order)
    butterworth 8
    chebyshev1 5
    chebyshev2 5
    elliptic 4
    bessel None
    """
    return tuple(estimate_order(approximation, passband_edge_hz, ripple_db,
                                stopband_edge_hz, attenuation_db,
                                response=response)
                 for approximation in _ESTIMATED)


def estimate_order(approximation: str, passband_edge_hz: Edge, ripple_db: float,
                   stopband_edge_hz: Edge, attenuation_db: float, *,
                   response: str = "lowpass") -> OrderEstimate:
    """Lowest order of one family that meets a mask.

    As :func:`estimate_orders`, for one family; Linkwitz–Riley is accepted
    too (searched over even orders 2–12, like Bessel).

    Returns
    -------
    OrderEstimate

    Examples
    --------
    >>> estimate_order("linkwitz-riley", 1000.0, 3.0, 3000.0, 30.0).order
    4
    """
    check_choice(approximation, APPROXIMATIONS, "approximation")
    check_choice(response, ("lowpass", "highpass", "bandpass"), "response")
    passband, stopband = _check_mask(passband_edge_hz, ripple_db,
                                     stopband_edge_hz, attenuation_db, response)
    nat = _selectivity(passband, stopband, response)
    if approximation in ("bessel", "linkwitz-riley"):
        order = _searched_order(approximation, nat, ripple_db, attenuation_db)
    else:
        order = _closed_form_order(approximation, nat, ripple_db, attenuation_db)
    return _describe(approximation, order, passband, nat, ripple_db,
                     attenuation_db, response)


def _searched_order(approximation: str, nat: float, ripple_db: float,
                    attenuation_db: float) -> int | None:
    """Lowest order of a monotonic family meeting the mask, or None."""
    step = 2 if approximation == "linkwitz-riley" else 1
    for order in range(step, MAX_ORDER + 1, step):
        natural = lowpass_prototype(approximation, order, normalisation="natural")
        pass_edge = frequency_at_loss(approximation, natural, ripple_db)
        # Monotonic magnitude: the stop band's least loss is at its edge.
        if _loss_db(natural, nat * pass_edge)[0] >= attenuation_db:
            return order
    return None


def _describe(approximation: str, order: int | None, passband: Any, nat: float,
              ripple_db: float, attenuation_db: float, response: str) -> OrderEstimate:
    if order is None or order > MAX_ORDER:
        return OrderEstimate(approximation, order)
    edge_ratio, stop_loss = _design_losses(approximation, order, ripple_db,
                                           attenuation_db, nat)
    cutoff = edges = None
    if edge_ratio is not None:
        if response == "lowpass":
            cutoff = passband * edge_ratio
        elif response == "highpass":
            cutoff = passband / edge_ratio
        else:
            half_width = edge_ratio * (passband[1] - passband[0]) / 2.0
            root = math.hypot(half_width, math.sqrt(passband[0] * passband[1]))
            edges = (root - half_width, root + half_width)
    return OrderEstimate(approximation, order, cutoff, edges, stop_loss)
