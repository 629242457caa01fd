"""Targets: the poles, zeros and gain a block must realise, and its sections.

A :class:`Target` holds roots in rad/s and a linear gain at a reference
frequency; :func:`split_sections` factors it into first- and second-order
:class:`Section` s that single op-amp stages realise. Targets come from a
classical approximation (:func:`design_target`), from explicit roots
(:func:`target_from_roots`), from sections (:func:`target_from_sections`),
or from a spec file's ``[target]`` table (:func:`target_from_table`).
Frequencies are rad/s inside and hertz where a person reads or types them.

References
----------
.. [1] A. B. Williams and F. J. Taylor, *Electronic Filter Design
   Handbook*, 4th ed., McGraw-Hill, 2006 (section pairing and ordering).
.. [2] R. Schaumann and M. E. Van Valkenburg, *Design of Analog Filters*,
   Oxford University Press, 2001, ch. 6 (cascade design: pole-zero pairing,
   section ordering, dynamic-range scaling to equal internal peaks).
"""

import math
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import NamedTuple

import numpy as np
from scipy import optimize, signal

from placer.approximations import (
    APPROXIMATIONS,
    BESSEL_NORMS,
    MAX_ORDER,
    NORMALISATIONS,
    ZPK,
    _check_order,
    _choice,
    band_from_edges,
    estimate_order,
    lowpass_prototype,
    lowpass_to_bandpass,
    lowpass_to_bandstop,
    lowpass_to_highpass,
    scale_lowpass,
    suggest,
)
from placer.errors import NumericalWarning, SpecError
from placer.units import parse_value

__all__ = [
    "RESPONSES",
    "SECTION_KINDS",
    "ORDERINGS",
    "GAIN_RULES",
    "TARGET_KEYS",
    "Target",
    "Section",
    "TransferCoefficients",
    "reference_omega_for",
    "design_target",
    "target_from_roots",
    "make_section",
    "target_from_sections",
    "split_sections",
    "target_from_table",
    "target_to_dict",
]

RESPONSES = ("lowpass", "highpass", "bandpass", "bandstop", "allpass", "custom")
SECTION_KINDS = ("lowpass", "highpass", "bandpass", "notch", "allpass")
ORDERINGS = ("ascending-q", "descending-q", "as-given")
GAIN_RULES = ("headroom", "first", "equal")
ROOT_UNITS = ("Hz", "rad/s")
TARGET_KEYS = (
    "response", "approximation", "order", "cutoff", "center", "bandwidth",
    "passband_edge", "stopband_edge", "low_edge", "high_edge", "ripple",
    "attenuation", "gain", "bessel_norm", "poles", "zeros", "units",
    "sections", "complete_conjugates", "allow_unstable",
)
SECTION_KEYS = ("kind", "f0", "q", "zero_f0")

_TWO_PI = 2.0 * math.pi
_ROOT_RTOL = 1e-9   # roots this close (relative) are the same root


def _db(linear):
    return 20.0 * math.log10(linear)


def _unit_value(zeros, poles, omega):
    """Π(jω − z)/Π(jω − p), with ω = inf as the high-frequency limit."""
    if math.isinf(omega):
        excess = len(zeros) - len(poles)
        return complex(1.0 if excess == 0 else (0.0 if excess < 0 else math.inf))
    s = 1j * omega
    num = np.prod([s - z for z in zeros]) if zeros else 1.0
    den = np.prod([s - p for p in poles]) if poles else 1.0
    return complex(num / den) if den != 0 else complex(math.inf)


def _pair_conjugates(roots):
    """Clean near-real roots to real and conjugate pairs to exact pairs.

    Returns the cleaned roots (order kept) and the complex roots left alone.
    """
    roots = [complex(r) for r in roots]
    for i, r in enumerate(roots):
        if abs(r.imag) <= _ROOT_RTOL * abs(r):
            roots[i] = complex(r.real, 0.0)
    lone, used = [], [False] * len(roots)
    for i, r in enumerate(roots):
        if used[i] or r.imag == 0.0:
            used[i] = True
            continue
        used[i] = True
        tol = _ROOT_RTOL * max(abs(r), 1e-300)
        match = next((j for j in range(len(roots)) if not used[j]
                      and abs(roots[j] - r.conjugate()) <= tol), None)
        if match is None:
            lone.append(r)
            continue
        used[match] = True
        mean = (r + roots[match].conjugate()) / 2.0
        roots[i], roots[match] = mean, mean.conjugate()
    return tuple(roots), lone


def _lone_message(kind, root, units):
    return (f"{kind} {root!r} {units} has no conjugate; give both or set "
            "complete_conjugates = true")


def reference_omega_for(response, poles, zeros):
    """Where a response's gain is quoted, rad/s.

    DC for lowpass, bandstop and allpass; infinity (the high-frequency
    gain) for highpass; the geometric mean of the pole magnitudes (the band
    centre of a transformed band-pass) for bandpass. A custom response uses
    DC if its DC gain is finite and non-zero, else the high-frequency gain,
    else the geometric mean.

    Examples
    --------
    >>> reference_omega_for("highpass", [-1.0], [0.0])
    inf
    >>> round(reference_omega_for("bandpass", [-1 + 10j, -1 - 10j], [0.0]), 6)
    10.049876
    """
    poles, zeros = list(poles), list(zeros)
    if response in ("lowpass", "bandstop", "allpass"):
        return 0.0
    if response == "highpass":
        return math.inf
    if response == "custom":
        for omega in (0.0, math.inf):
            value = abs(_unit_value(zeros, poles, omega))
            if 0.0 < value < math.inf:
                return omega
    magnitudes = [abs(p) for p in poles if p != 0]
    if not magnitudes:
        raise SpecError(f"a {response} target needs at least one non-zero pole")
    return float(math.exp(np.mean(np.log(magnitudes))))


@dataclass(frozen=True)
class Target:
    """Poles, zeros and gain that a block must realise.

    Attributes
    ----------
    poles, zeros : tuple of complex
        Roots of H(s), rad/s; complex roots in conjugate pairs.
    gain : float
        Linear gain magnitude at ``reference_omega`` (> 0).
    response : {"lowpass", "highpass", "bandpass", "bandstop", "allpass", \
"custom"}
    approximation : str or None
        The classical family it came from, if any.
    reference_omega : float
        Where ``gain`` is quoted, rad/s: 0 (DC) for lowpass, bandstop and
        allpass, ``inf`` (the high-frequency gain) for highpass, the band
        centre for bandpass (see :func:`reference_omega_for`).

    Examples
    --------
    >>> t = Target(poles=(-1 + 1j, -1 - 1j), zeros=(), gain=2.0, response="lowpass")
    >>> round(t.gain_db, 4), t.zpk().k
    (6.0206, 4.0)
    >>> float(abs(t.frequency_response([0.0])[0]))
    2.0
    """

    poles: tuple[complex, ...]
    zeros: tuple[complex, ...]
    gain: float
    response: str
    approximation: str | None = None
    reference_omega: float = 0.0

    def __post_init__(self):
        poles, lone_poles = _pair_conjugates(self.poles)
        zeros, lone_zeros = _pair_conjugates(self.zeros)
        for kind, lone in (("pole", lone_poles), ("zero", lone_zeros)):
            if lone:
                raise SpecError(_lone_message(kind, lone[0], "rad/s"))
        object.__setattr__(self, "poles", poles)
        object.__setattr__(self, "zeros", zeros)
        _choice(self.response, RESPONSES, "response")
        if self.approximation is not None:
            _choice(self.approximation, APPROXIMATIONS, "approximation")
        gain = float(self.gain)
        if not (math.isfinite(gain) and gain > 0):
            raise SpecError(f"gain = {self.gain!r} must be a positive finite "
                            "linear gain")
        object.__setattr__(self, "gain", gain)
        reference = float(self.reference_omega)
        if not reference >= 0:
            raise SpecError(f"reference_omega = {self.reference_omega!r} rad/s "
                            "must be zero, positive or inf")
        object.__setattr__(self, "reference_omega", reference)
        value = abs(_unit_value(zeros, poles, reference))
        if not 0 < value < math.inf:
            raise SpecError(
                f"the {self.response} target's gain is {'zero' if value == 0 else 'infinite'} "
                f"at its reference frequency {reference:g} rad/s, so gain "
                "cannot be quoted there")

    @property
    def order(self):
        """Number of poles."""
        return len(self.poles)

    @property
    def gain_db(self):
        """``gain`` in dB."""
        return _db(self.gain)

    def zpk(self):
        """Zeros, poles (rad/s) and k with |H(j·reference_omega)| = gain.

        k is real; its sign makes H real and positive at the reference
        whenever H is real there (so an odd-order allpass has k < 0).

        Returns
        -------
        ZPK
        """
        value = _unit_value(self.zeros, self.poles, self.reference_omega)
        if abs(value.imag) <= 1e-9 * abs(value):
            k = self.gain / value.real
        else:
            k = self.gain / abs(value)
        return ZPK(np.array(self.zeros, complex), np.array(self.poles, complex),
                   float(k))

    def frequency_response(self, omega):
        """Complex H(jω) at angular frequencies *omega* (rad/s)."""
        z, p, k = self.zpk()
        return signal.freqs_zpk(z, p, k, worN=np.atleast_1d(np.asarray(omega, float)))[1]


class TransferCoefficients(NamedTuple):
    """Numerator and monic denominator in descending powers of s."""

    numerator: np.ndarray
    denominator: np.ndarray


_FIRST_ORDER_KINDS = ("lowpass", "highpass", "allpass")


@dataclass(frozen=True)
class Section:
    """A first- or second-order factor of a target.

    Attributes
    ----------
    kind : {"lowpass", "highpass", "bandpass", "notch", "allpass"}
    order : {1, 2}
        First-order sections are lowpass, highpass or allpass, with q None.
    omega0 : float
        Pole frequency |p|, rad/s (sqrt(p1·p2) for two real poles).
    q : float or None
        Pole quality factor ω0 / (2·|Re p|); None for a first-order section.
    gain : float
        Linear gain magnitude at the section's reference: DC for lowpass,
        notch and allpass, ω0 for bandpass, high frequency for highpass.
    zero_omega : float or None
        Notch zero frequency, rad/s (zeros at ±j·zero_omega); None otherwise.
    poles, zeros : tuple of complex
        The section's roots, rad/s.

    Examples
    --------
    >>> s = make_section("lowpass", 1000.0, 0.7071, gain=2.0)
    >>> round(s.f0_hz, 3), round(s.gain_db, 3)
    (159.155, 6.021)
    >>> num, den = s.transfer_coefficients()
    >>> [round(float(c), 3) for c in den], round(float(num[-1]), 1)
    ([1.0, 1414.227, 1000000.0], 2000000.0)
    """

    kind: str
    order: int
    omega0: float
    q: float | None
    gain: float
    zero_omega: float | None
    poles: tuple[complex, ...]
    zeros: tuple[complex, ...]

    def __post_init__(self):
        _choice(self.kind, SECTION_KINDS, "kind")
        if self.order not in (1, 2):
            raise SpecError(f"order = {self.order!r}: a section is of order 1 or 2")
        if self.order == 1 and (self.kind not in _FIRST_ORDER_KINDS or self.q is not None):
            raise SpecError(f"a first-order section is lowpass, highpass or "
                            f"allpass with q None, not kind = {self.kind!r}, "
                            f"q = {self.q!r}")
        if self.order == 2 and not (self.q is not None and self.q > 0):
            raise SpecError(f"q = {self.q!r} must be positive for a second-order section")
        if not (math.isfinite(self.omega0) and self.omega0 > 0):
            raise SpecError(f"omega0 = {self.omega0!r} rad/s must be positive")
        if not (math.isfinite(self.gain) and self.gain > 0):
            raise SpecError(f"gain = {self.gain!r} must be a positive linear gain")
        if (self.kind == "notch") != (self.zero_omega is not None):
            raise SpecError(f"zero_omega = {self.zero_omega!r} is for notch "
                            f"sections only, and required there (kind = {self.kind!r})")
        object.__setattr__(self, "poles", tuple(complex(p) for p in self.poles))
        object.__setattr__(self, "zeros", tuple(complex(z) for z in self.zeros))
        if len(self.poles) != self.order or len(self.zeros) > self.order:
            raise SpecError(f"a section of order {self.order} has {self.order} "
                            f"poles and at most as many zeros, not "
                            f"{len(self.poles)} and {len(self.zeros)}")

    @property
    def reference_omega(self):
        """Where ``gain`` is quoted, rad/s (0, omega0 or inf)."""
        return {"bandpass": self.omega0, "highpass": math.inf}.get(self.kind, 0.0)

    @property
    def k(self):
        """Leading numerator coefficient: H(s) = k·Π(s−z)/Π(s−p)."""
        value = _unit_value(self.zeros, self.poles, self.reference_omega)
        if abs(value.imag) <= 1e-9 * abs(value):
            return self.gain / value.real
        return self.gain / abs(value)

    @property
    def f0_hz(self):
        """Pole frequency, Hz."""
        return self.omega0 / _TWO_PI

    @property
    def zero_f0_hz(self):
        """Notch zero frequency, Hz, or None."""
        return None if self.zero_omega is None else self.zero_omega / _TWO_PI

    @property
    def gain_db(self):
        """``gain`` in dB."""
        return _db(self.gain)

    def transfer_coefficients(self):
        """H(s) = num(s)/den(s), den monic, num padded to den's length.

        Returns
        -------
        TransferCoefficients
            ``(numerator, denominator)`` float arrays, descending powers of s.
        """
        den = np.real(np.poly(self.poles))
        num = np.real(np.poly(self.zeros)) if self.zeros else np.ones(1)
        num = num * self.k
        num = np.concatenate([np.zeros(len(den) - len(num)), num])
        return TransferCoefficients(num, den)

    def frequency_response(self, omega):
        """Complex H(jω) at angular frequencies *omega* (rad/s)."""
        num, den = self.transfer_coefficients()
        s = 1j * np.atleast_1d(np.asarray(omega, float))
        return np.polyval(num, s) / np.polyval(den, s)


def _poles_from(omega0, q):
    if q is None:
        return (complex(-omega0),)
    sigma = omega0 / (2.0 * q)
    disc = 1.0 - 1.0 / (4.0 * q * q)
    if disc >= 0:
        root = complex(-sigma, omega0 * math.sqrt(disc))
        return (root, root.conjugate())
    spread = omega0 * math.sqrt(-disc)
    return (complex(-sigma + spread), complex(-sigma - spread))


def make_section(kind, omega0, q=None, *, gain=1.0, zero_omega=None):
    """Build a section from its pole frequency, Q and (notch) zero.

    Parameters
    ----------
    kind : {"lowpass", "highpass", "bandpass", "notch", "allpass"}
    omega0 : float
        Pole frequency, rad/s.
    q : float, optional
        Pole Q; omit for a first-order lowpass, highpass or allpass.
    gain : float
        Linear gain at the section's reference (see :class:`Section`).
    zero_omega : float, optional
        Notch zero frequency, rad/s (notch only).

    Returns
    -------
    Section

    Examples
    --------
    >>> make_section("notch", 1.0, 2.0, zero_omega=3.0).zeros
    (3j, -3j)
    """
    _choice(kind, SECTION_KINDS, "kind")
    if q is not None and not (math.isfinite(q) and q > 0):
        raise SpecError(f"q = {q!r} must be positive")
    if not (isinstance(omega0, (int, float)) and math.isfinite(omega0) and omega0 > 0):
        raise SpecError(f"omega0 = {omega0!r} rad/s must be positive")
    poles = _poles_from(float(omega0), q)
    order = len(poles)
    if kind == "lowpass":
        zeros = ()
    elif kind == "highpass":
        zeros = (0j,) * order
    elif kind == "bandpass":
        zeros = (0j,)
    elif kind == "allpass":
        zeros = tuple(-p.conjugate() for p in poles)
    else:
        if zero_omega is None or not zero_omega > 0:
            raise SpecError(f"zero_omega = {zero_omega!r} rad/s must be positive "
                            "for a notch")
        zeros = (complex(0, zero_omega), complex(0, -zero_omega))
    return Section(kind, order, float(omega0), q, float(gain),
                   None if zero_omega is None else float(zero_omega), poles, zeros)


# --------------------------------------------------------------------------
# Building targets


def design_target(approximation, order, *, response="lowpass", frequency_hz=None,
                  normalisation="cutoff", center_hz=None, bandwidth_hz=None,
                  ripple_db=None, attenuation_db=None, bessel_norm="mag",
                  gain_db=0.0):
    """Target from a classical approximation.

    Parameters
    ----------
    approximation : {"butterworth", "chebyshev1", "chebyshev2", "bessel", \
"elliptic", "linkwitz-riley"}
    order : int
        Prototype order, 1–12 (a band response has twice as many poles).
    response : {"lowpass", "highpass", "bandpass", "bandstop", "allpass"}
        ``"allpass"`` borrows the low-pass prototype's poles and mirrors
        them as zeros (a delay equaliser; with Bessel poles the group delay
        at DC is twice the low-pass's).
    frequency_hz : float
        Low-/high-pass and allpass: the frequency, Hz, that
        *normalisation* names. By default the −3 dB cutoff of the final
        response, for every family including Linkwitz–Riley (whose −6 dB
        point then sits (√2+1)^(1/n) higher). For an allpass it is the −3 dB
        cutoff of the borrowed low-pass.
    normalisation : {"cutoff", "passband_edge", "stopband_edge", "natural"}
        See :func:`placer.approximations.lowpass_prototype`; ``"natural"``
        with ``bessel_norm="delay"`` makes the DC group delay of a Bessel
        low-pass 1/(2π·frequency_hz).
    center_hz, bandwidth_hz : float
        Band responses: geometric centre and −3 dB width, Hz.
    ripple_db, attenuation_db : float, optional
        As the family needs, dB.
    bessel_norm : {"mag", "delay", "phase"}
    gain_db : float
        Pass-band level, dB: the top of the ripple band, so an even-order
        Chebyshev I or elliptic has its DC (or centre) gain ripple_db lower.

    Returns
    -------
    Target

    Examples
    --------
    >>> t = design_target("butterworth", 2, frequency_hz=1000.0)
    >>> h = t.frequency_response([2 * math.pi * 1000.0])
    >>> round(float(20 * np.log10(abs(h[0]))), 4)
    -3.0103
    """
    _choice(response, ("lowpass", "highpass", "bandpass", "bandstop", "allpass"),
            "response")
    _check_order(order, approximation)
    _choice(normalisation, NORMALISATIONS, "normalisation")
    proto = lowpass_prototype(approximation, order, ripple_db=ripple_db,
                              attenuation_db=attenuation_db,
                              bessel_norm=bessel_norm, normalisation=normalisation)
    if response in ("bandpass", "bandstop"):
        for name, value in (("center", center_hz), ("bandwidth", bandwidth_hz)):
            if value is None or not (math.isfinite(value) and value > 0):
                raise SpecError(f"{name} = {value!r} Hz must be a positive "
                                f"frequency for a {response} target")
        center, width = _TWO_PI * center_hz, _TWO_PI * bandwidth_hz
        transform = lowpass_to_bandpass if response == "bandpass" else lowpass_to_bandstop
        zeros, poles, _ = transform(proto, center, width)
        reference = center if response == "bandpass" else 0.0
    else:
        if frequency_hz is None or not (math.isfinite(frequency_hz) and frequency_hz > 0):
            name = "cutoff" if normalisation in ("cutoff", "natural") else normalisation
            raise SpecError(f"{name} = {frequency_hz!r} Hz must be a positive frequency")
        omega = _TWO_PI * frequency_hz
        if response == "highpass":
            zeros, poles, _ = lowpass_to_highpass(proto, omega)
            reference = math.inf
        else:
            zeros, poles, _ = scale_lowpass(proto, omega)
            reference = 0.0
        if response == "allpass":
            zeros = -np.conj(poles)
    level = 10.0 ** (gain_db / 20.0)
    if response != "allpass":
        level *= abs(_unit_value(list(proto.zeros), list(proto.poles), 0.0) * proto.k)
    return Target(tuple(poles), tuple(zeros), level, response, approximation,
                  reference)


def target_from_roots(poles, zeros=(), *, gain_db=0.0, response="custom",
                      units="rad/s", complete_conjugates=False,
                      allow_unstable=False):
    """Target from explicit poles and zeros.

    Parameters
    ----------
    poles, zeros : sequence of complex
        Roots in *units*.
    gain_db : float
        Gain at the response's reference (see :func:`reference_omega_for`), dB.
    response : str
        One of :data:`RESPONSES`; an allpass given no zeros gets the poles'
        mirror images.
    units : {"Hz", "rad/s"}
        Hz roots are multiplied by 2π.
    complete_conjugates : bool
        Add the missing conjugate of a lone complex root instead of failing.
    allow_unstable : bool
        Accept right-half-plane poles.

    Returns
    -------
    Target

    Raises
    ------
    SpecError
        A lone complex root, a right-half-plane pole, no poles.

    Examples
    --------
    >>> target_from_roots([-1 + 2j], complete_conjugates=True).poles
    ((-1+2j), (-1-2j))
    >>> target_from_roots([-1 + 2j])
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: pole (-1+2j) rad/s has no conjugate; give both or set complete_conjugates = true
    """
    _choice(units, ROOT_UNITS, "units")
    _choice(response, RESPONSES, "response")
    scale = _TWO_PI if units == "Hz" else 1.0
    roots = {}
    for kind, given in (("pole", poles), ("zero", zeros)):
        cleaned, lone = _pair_conjugates([complex(r) for r in given])
        if lone and not complete_conjugates:
            raise SpecError(_lone_message(kind, lone[0], units))
        completed = list(cleaned)
        for r in lone:
            completed.insert(completed.index(r) + 1, r.conjugate())
        roots[kind] = [r * scale for r in completed]
    if not roots["pole"]:
        raise SpecError("poles = [] : a target needs at least one pole")
    unstable = [p for p in roots["pole"] if p.real > 0]
    if unstable and not allow_unstable:
        raise SpecError(f"pole {unstable[0] / scale!r} {units} lies in the right "
                        "half-plane (unstable); set allow_unstable = true to accept it")
    if response == "allpass" and not roots["zero"]:
        roots["zero"] = [-p.conjugate() for p in roots["pole"]]
    reference = reference_omega_for(response, roots["pole"], roots["zero"])
    return Target(tuple(roots["pole"]), tuple(roots["zero"]), 10.0 ** (gain_db / 20.0),
                  response, None, reference)


def target_from_sections(sections, *, gain_db=0.0, response="custom"):
    """Target whose roots are those of *sections*, with *gain_db* overall.

    Examples
    --------
    >>> t = target_from_sections([make_section("lowpass", 1.0), make_section("lowpass", 2.0, 0.8)],
    ...                          gain_db=6.0, response="lowpass")
    >>> t.order, round(t.gain_db, 6)
    (3, 6.0)
    """
    _choice(response, RESPONSES, "response")
    if not sections:
        raise SpecError("sections = [] : give at least one section")
    poles = tuple(p for s in sections for p in s.poles)
    zeros = tuple(z for s in sections for z in s.zeros)
    reference = reference_omega_for(response, poles, zeros)
    return Target(poles, zeros, 10.0 ** (gain_db / 20.0), response, None, reference)


# --------------------------------------------------------------------------
# Factoring into sections


class _Group:
    """Poles of one section-to-be and the zeros given to it."""

    def __init__(self, poles, index):
        self.poles, self.index, self.zeros, self.zero_kind = list(poles), index, [], None

    @property
    def free(self):
        return self.zero_kind is None

    def merge(self, other):
        self.poles += other.poles
        self.index = min(self.index, other.index)


def _close(a, b):
    return abs(a - b) <= _ROOT_RTOL * max(abs(a), abs(b), 1e-300)


def _pole_groups(target):
    groups = []
    for index, p in enumerate(target.poles):
        if p.real >= 0:
            raise SpecError(f"pole {p!r} rad/s is not in the left half-plane; "
                            "only stable targets factor into sections")
        if p.imag > 0:
            # Target keeps conjugates exact, so the partner is found by equality.
            partner = target.poles.index(p.conjugate())
            groups.append(_Group([p, p.conjugate()], min(index, partner)))
        elif p.imag == 0:
            groups.append(_Group([p], index))
    return groups


def _take(zeros, root):
    """Remove and return the zero equal to *root*, or None."""
    for i, z in enumerate(zeros):
        if _close(z, root):
            return zeros.pop(i)
    return None


def _assign_mirrors(groups, zeros):
    for group in groups:
        mirrors = [-p.conjugate() for p in group.poles]
        if all(any(_close(z, m) for z in zeros) for m in mirrors):
            group.zeros = [_take(zeros, m) for m in mirrors]
            group.zero_kind = "allpass"


def _merge_real(groups, free_real, target_omega):
    """Merge the two free real poles whose ω0 is nearest *target_omega*."""
    best = min(((a, b) for i, a in enumerate(free_real) for b in free_real[i + 1:]),
               key=lambda ab: abs(math.log(math.sqrt(ab[0].poles[0].real
                                                     * ab[1].poles[0].real)
                                           / target_omega)))
    best[0].merge(best[1])
    groups.remove(best[1])
    return best[0]


def _assign_notches(groups, zeros):
    notch = [z for z in zeros if z.imag > 0 and abs(z.real) <= _ROOT_RTOL * abs(z)]
    while notch:
        free = [g for g in groups if g.free and len(g.poles) == 2]
        if free:
            # Nearest pole-zero pair first [2]: it keeps each section's
            # peaking, and so its internal signal swing, smallest.
            zero, group = min(((z, g) for z in notch for g in free),
                              key=lambda zg: abs(zg[0] - zg[1].poles[0]))
        else:
            free_real = [g for g in groups if g.free and len(g.poles) == 1]
            if len(free_real) < 2:
                return
            zero = notch[0]
            group = _merge_real(groups, free_real, zero.imag)
        notch.remove(zero)
        group.zeros = [_take(zeros, zero), _take(zeros, zero.conjugate())]
        group.zero_kind = "notch"


def _assign_origin(groups, zeros):
    origin = [z for z in zeros if z == 0]
    for z in origin:
        zeros.remove(z)
    for capacity in (1, 2):
        for group in sorted(groups, key=lambda g: g.index):
            if origin and group.zero_kind in (None, "origin") and \
                    len(group.zeros) < min(capacity, len(group.poles)):
                group.zeros.append(origin.pop())
                group.zero_kind = "origin"
    return len(origin)


def _unit_section(group):
    poles = tuple(group.poles)
    if len(poles) == 1:
        omega0, q = -poles[0].real, None
    elif poles[0].imag != 0:
        omega0 = abs(poles[0])
        q = omega0 / (-2.0 * poles[0].real)
    else:
        omega0 = math.sqrt(poles[0].real * poles[1].real)
        q = omega0 / -(poles[0].real + poles[1].real)
    zero_omega = None
    if group.zero_kind is None:
        kind = "lowpass"
    elif group.zero_kind == "origin":
        kind = "highpass" if len(group.zeros) == len(poles) else "bandpass"
    elif group.zero_kind == "notch":
        kind, zero_omega = "notch", abs(group.zeros[0].imag)
    else:
        kind = "allpass"
    return Section(kind, len(poles), omega0, q, 1.0, zero_omega, poles,
                   tuple(group.zeros))


def _log_grid(sections):
    magnitudes = [abs(r) for s in sections for r in s.poles + s.zeros if r != 0]
    grid = np.logspace(math.log10(min(magnitudes)) - 3.0,
                       math.log10(max(magnitudes)) + 3.0, 2401)
    extra = [abs(p.imag) for s in sections for p in s.poles if p.imag] + \
        [s.omega0 for s in sections]
    return np.unique(np.concatenate([grid, extra]))


def _prefix_peaks(sections):
    """Peak |H| over frequency of each prefix product of *sections*."""
    grid = _log_grid(sections)

    def prefix(i, omega):
        return np.prod([s.frequency_response(omega) for s in sections[:i + 1]], axis=0)

    peaks, running, high = [], np.ones(len(grid), complex), 1.0
    for i, section in enumerate(sections):
        running = running * section.frequency_response(grid)
        magnitude = np.abs(running)
        high *= abs(section.k) if len(section.zeros) == section.order else 0.0
        m = int(np.argmax(magnitude))
        peak = float(magnitude[m])
        if 0 < m < len(grid) - 1:
            # The grid brackets the peak; a bounded search on log ω polishes it.
            found = optimize.minimize_scalar(
                lambda u: -abs(prefix(i, [math.exp(u)])[0]),
                bounds=(math.log(grid[m - 1]), math.log(grid[m + 1])),
                method="bounded", options={"xatol": 1e-10})
            peak = max(peak, -float(found.fun))
        dc = abs(prefix(i, [0.0])[0]) if all(p != 0 for p in section.poles) else 0.0
        peaks.append(max(peak, high, dc))
    return peaks


_ORDER_KEYS = {
    "ascending-q": lambda s: (s.q or 0.0, s.omega0),
    "descending-q": lambda s: (-(s.q or 0.0), -s.omega0),
}


def split_sections(target, *, ordering="ascending-q", gain="headroom"):
    """Factor a target into first- and second-order sections.

    Each complex pole pair becomes a second-order section and each real
    pole a first-order one; two real poles share a section only when a
    notch zero pair or a band-pass needs one (a band-pass of prototype
    order n gives n second-order band-pass sections). Zeros go to poles in
    this order: mirror images (allpass sections); jω-axis pairs to the
    nearest free pole pair (notch sections) [2]; zeros at the origin spread
    one per section, then a second to second-order sections (band-pass,
    then high-pass).

    Parameters
    ----------
    target : Target
    ordering : {"ascending-q", "descending-q", "as-given"}
        Section order along the cascade; first-order sections count as
        Q = 0. ``"as-given"`` follows the target's pole order.
    gain : {"headroom", "first", "equal"}
        How the overall gain is shared: ``"headroom"`` (dynamic-range
        scaling [2]) makes every internal node's peak magnitude over
        frequency equal to the output's peak, found on a log grid and
        polished by a bounded search; ``"first"`` puts it all in the first
        section; ``"equal"`` gives each section the same factor.

    Returns
    -------
    tuple of Section
        The product of their transfer functions equals the target's. The
        product of their ``gain`` s equals the target's ``gain`` whenever
        every section quotes its gain where the target does (low-pass,
        all-pole high-pass, allpass, bandstop); a band-pass's sections
        quote theirs at their own ω0, not at the band centre.

    Raises
    ------
    SpecError
        For an unknown option, a pole on or right of the jω axis, or a zero
        that fits no section kind (not at the origin, not on the jω axis,
        and not mirroring a pole).

    Examples
    --------
    >>> t = design_target("butterworth", 5, frequency_hz=1000.0)
    >>> [(s.kind, s.order, None if s.q is None else round(s.q, 4)) for s in split_sections(t)]
    [('lowpass', 1, None), ('lowpass', 2, 0.618), ('lowpass', 2, 1.618)]
    """
    _choice(ordering, ORDERINGS, "ordering")
    _choice(gain, GAIN_RULES, "gain")
    groups = _pole_groups(target)
    zeros = list(target.zeros)
    _assign_mirrors(groups, zeros)
    _assign_notches(groups, zeros)
    if target.response == "bandpass":
        free_real = [g for g in groups if g.free and len(g.poles) == 1]
        while len(free_real) >= 2:
            merged = _merge_real(groups, free_real, target.reference_omega)
            free_real = [g for g in free_real if g is not merged and g in groups]
    extra_origin = _assign_origin(groups, zeros)
    if zeros or extra_origin:
        left = zeros[0] if zeros else 0j
        raise SpecError(f"zero {left!r} rad/s fits no section kind ({', '.join(SECTION_KINDS)}): "
                        "zeros must lie at the origin or on the jω axis, or "
                        "mirror a pole, and number no more than the poles")
    if ordering == "as-given":
        groups.sort(key=lambda g: g.index)
    sections = [_unit_section(g) for g in groups]
    if ordering != "as-given":
        sections.sort(key=_ORDER_KEYS[ordering])
    scale = target.zpk().k / math.prod(s.k for s in sections)
    if scale <= 0:
        warnings.warn("the sections realise the target inverted (180°); "
                      "gains are magnitudes", NumericalWarning, stacklevel=2)
        scale = abs(scale)
    n = len(sections)
    if gain == "first":
        gains = [scale] + [1.0] * (n - 1)
    elif gain == "equal":
        gains = [scale ** (1.0 / n)] * n
    else:
        peaks = _prefix_peaks(sections)
        if not all(0 < p < math.inf for p in peaks):
            raise SpecError("gain = 'headroom' needs finite, non-zero peaks; "
                            "use gain = 'first' for this target")
        levels = [scale * peaks[-1] / p for p in peaks]
        gains = [levels[0]] + [b / a for a, b in zip(levels, levels[1:])]
    return tuple(Section(s.kind, s.order, s.omega0, s.q, g, s.zero_omega,
                         s.poles, s.zeros) for s, g in zip(sections, gains))


# --------------------------------------------------------------------------
# The [target] table of a spec file


class _TableReader:
    """Reads a table's keys, naming source, key and value in every error."""

    def __init__(self, table, source, where, valid):
        if not isinstance(table, Mapping):
            raise SpecError(f"{source}: {where} must be a table, not {table!r}")
        for key in table:
            if key not in valid:
                raise SpecError(f"{source}: unknown key {where}.{key} = "
                                f"{table[key]!r}" + suggest(key, valid))
        self.table, self.source, self.where, self.used = table, source, where, set()

    def __contains__(self, key):
        return key in self.table

    def fail(self, key, detail):
        raise SpecError(f"{self.source}: {self.where}.{key} = "
                        f"{self.table.get(key)!r} {detail}")

    def raw(self, key, default=None):
        self.used.add(key)
        return self.table.get(key, default)

    def number(self, key, unit, *, positive=True):
        if key not in self.table:
            return None
        value = parse_value(self.raw(key), unit=unit,
                            field=f"{self.source}: {self.where}.{key}")
        if positive and not value > 0:
            self.fail(key, "must be positive")
        return value

    def flag(self, key):
        value = self.raw(key, False)
        if not isinstance(value, bool):
            self.fail(key, "must be true or false")
        return value

    def choice(self, key, valid, default=None, *, fold=False):
        value = self.raw(key, default)
        lookup = {v.lower(): v for v in valid} if fold else {v: v for v in valid}
        found = lookup.get(value.lower() if fold and isinstance(value, str) else value)
        if found is None:
            self.fail(key, f"is not one of {', '.join(valid)}" + suggest(value, valid))
        return found

    def check_all_used(self, context):
        for key in self.table:
            if key not in self.used:
                self.fail(key, f"has no meaning for {context}; remove it")


_SECTION_DEFAULT_KIND = {"lowpass": "lowpass", "highpass": "highpass",
                         "bandpass": "bandpass", "bandstop": "notch",
                         "allpass": "allpass", "custom": "lowpass"}


def _read_roots(reader, key, units):
    raw = reader.raw(key, [])
    if not isinstance(raw, Sequence) or isinstance(raw, str):
        reader.fail(key, "must be a list of numbers or [re, im] pairs")
    roots = []
    for i, item in enumerate(raw):
        field = f"{reader.source}: {reader.where}.{key}[{i}]"
        if isinstance(item, Sequence) and not isinstance(item, str):
            if len(item) != 2:
                raise SpecError(f"{field} = {item!r} must be a number or an [re, im] pair")
            roots.append(complex(*(parse_value(x, unit=units, field=field) for x in item)))
        else:
            roots.append(complex(parse_value(item, unit=units, field=field)))
    return roots


def _read_sections(reader, response):
    raw = reader.raw("sections")
    if not isinstance(raw, Sequence) or isinstance(raw, str) or not raw:
        reader.fail("sections", "must be a non-empty list of tables with f0, q, zero_f0")
    sections = []
    for i, table in enumerate(raw):
        entry = _TableReader(table, reader.source, f"{reader.where}.sections[{i}]",
                             SECTION_KEYS)
        if "f0" not in entry:
            raise SpecError(f"{reader.source}: {entry.where} needs f0 (Hz)")
        f0, q = entry.number("f0", "Hz"), entry.number("q", None)
        zero_f0 = entry.number("zero_f0", "Hz")
        default = "notch" if zero_f0 is not None else _SECTION_DEFAULT_KIND[response]
        kind = entry.choice("kind", SECTION_KINDS, default)
        if kind == "notch" and zero_f0 is None:
            zero_f0 = f0
        if kind != "notch" and zero_f0 is not None:
            entry.fail("zero_f0", f"applies to notch sections only, not kind = {kind!r}")
        if kind in ("bandpass", "notch") and q is None:
            raise SpecError(f"{reader.source}: {entry.where} is a {kind} section "
                            "and needs q")
        sections.append(make_section(kind, _TWO_PI * f0, q, zero_omega=(
            None if zero_f0 is None else _TWO_PI * zero_f0)))
    return sections


def _read_frequencies(reader, response):
    """Frequency keys → keyword arguments of design_target, plus a mask."""
    if response in ("bandpass", "bandstop"):
        present = {k for k in ("center", "bandwidth", "low_edge", "high_edge") if k in reader}
        if present == {"center", "bandwidth"}:
            return dict(center_hz=reader.number("center", "Hz"),
                        bandwidth_hz=reader.number("bandwidth", "Hz")), None
        if present == {"low_edge", "high_edge"}:
            low, high = reader.number("low_edge", "Hz"), reader.number("high_edge", "Hz")
            if not low < high:
                reader.fail("high_edge", f"must lie above low_edge = {low:g} Hz")
            center, width = band_from_edges(low, high)
            return dict(center_hz=center, bandwidth_hz=width), None
        raise SpecError(f"{reader.source}: a {response} target needs center and "
                        "bandwidth, or low_edge and high_edge (Hz, -3 dB); got "
                        f"{sorted(present) or 'none'}")
    edges = ("cutoff",) if response == "allpass" else ("cutoff", "passband_edge", "stopband_edge")
    present = {k for k in edges if k in reader}
    if present == {"passband_edge", "stopband_edge"}:
        mask = (reader.number("passband_edge", "Hz"), reader.number("stopband_edge", "Hz"))
        return dict(frequency_hz=mask[0], normalisation="passband_edge"), mask
    if len(present) != 1:
        raise SpecError(f"{reader.source}: a {response} target needs one of "
                        f"{', '.join(edges)}"
                        + ("" if response == "allpass" else
                           " (or passband_edge and stopband_edge as a mask)")
                        + f"; got {sorted(present) or 'none'}")
    (key,) = present
    return dict(frequency_hz=reader.number(key, "Hz"),
                normalisation="cutoff" if key == "cutoff" else key), None


def _approximation_target(reader, response, gain_db):
    approximation = reader.choice("approximation", APPROXIMATIONS)
    options, mask = _read_frequencies(reader, response)
    needs_ripple = approximation in ("chebyshev1", "elliptic") or mask or \
        options.get("normalisation") == "passband_edge"
    needs_attenuation = approximation in ("chebyshev2", "elliptic") or mask or \
        options.get("normalisation") == "stopband_edge"
    ripple = reader.number("ripple", "dB") if needs_ripple else None
    attenuation = reader.number("attenuation", "dB") if needs_attenuation else None
    if approximation == "bessel" and options.get("normalisation", "cutoff") == "cutoff":
        norm = reader.choice("bessel_norm", BESSEL_NORMS, "mag")
        options["bessel_norm"] = norm
        if norm != "mag":
            options["normalisation"] = "natural"
    order = reader.raw("order")
    try:
        if order is not None:
            _check_order(order, approximation)
        if mask:
            estimate = estimate_order(approximation, mask[0], ripple, mask[1],
                                      attenuation, response=response)
            needed = estimate.order
            if needed is None or needed > MAX_ORDER:
                raise SpecError(f"no {approximation} response of order 1–{MAX_ORDER} meets "
                                f"the mask (passband_edge = {mask[0]:g} Hz, "
                                f"stopband_edge = {mask[1]:g} Hz)")
            if order is not None and order < needed:
                raise SpecError(f"order = {order} does not meet the mask; "
                                f"{approximation} needs order {needed}")
            order = needed if order is None else order
        elif order is None:
            raise SpecError("order is required (or give passband_edge and "
                            "stopband_edge, with ripple and attenuation, to "
                            "estimate it)")
        target = design_target(approximation, order, response=response,
                               ripple_db=ripple, attenuation_db=attenuation,
                               gain_db=gain_db, **options)
    except SpecError as exc:
        raise SpecError(f"{reader.source}: [target] {exc}") from None
    reader.check_all_used(f"a {approximation} {response} target as given")
    return target


def target_from_table(table, *, source="spec"):
    """Read a spec file's ``[target]`` table into a :class:`Target`.

    Keys (numbers go through :func:`placer.units.parse_value`; bare
    numbers are Hz for frequencies and dB for levels):

    * ``response``: lowpass (default), highpass, bandpass, bandstop,
      allpass, custom (the default with explicit poles).
    * ``approximation``: butterworth, chebyshev1, chebyshev2, bessel,
      elliptic, linkwitz-riley; with ``order`` (prototype order, 1–12).
    * Low-/high-pass frequency, one of: ``cutoff`` (−3 dB, for every
      family); ``passband_edge`` (where the loss reaches ``ripple``: the
      ripple edge of a Chebyshev I or elliptic); ``stopband_edge`` (where
      it reaches ``attenuation``); or both edges as a mask, with ``ripple``
      and ``attenuation``, which sets the lowest order that meets it when
      ``order`` is absent. Allpass: ``cutoff`` (of the low-pass whose
      poles it borrows). Band responses: ``center`` and ``bandwidth``, or
      ``low_edge`` and ``high_edge`` (−3 dB).
    * ``ripple``, ``attenuation``: dB, as the family needs.
    * ``bessel_norm``: mag (default: ``cutoff`` is −3 dB), delay
      (``cutoff`` = 1/(2π·DC group delay)), phase (``cutoff`` is where
      the Butterworth-like high-frequency asymptote crosses the gain).
    * ``gain``: pass-band level, dB (``"6 dB"`` or 6); default 0 dB.
    * ``poles``, ``zeros``: numbers or ``[re, im]`` pairs in ``units``
      ("Hz" or "rad/s", required), with ``complete_conjugates`` and
      ``allow_unstable`` (default false).
    * ``sections``: tables with ``f0`` (Hz), ``q`` (absent: first order),
      ``zero_f0`` (Hz, notch) and ``kind`` (default from ``response``).

    Parameters
    ----------
    table : dict
        The ``[target]`` table as read from TOML.
    source : str
        Name of the file, for messages.

    Returns
    -------
    Target

    Raises
    ------
    SpecError
        Naming the key and its value: an unknown key (with the nearest
        valid one), an unknown name, an order outside 1–12 or odd for
        linkwitz-riley, a non-positive frequency or level, a stop-band
        edge on the wrong side, a lone complex root, a key that means
        nothing for the target given.

    Examples
    --------
    >>> t = target_from_table({"approximation": "chebyshev1", "order": 3,
    ...                        "ripple": "0.5 dB", "cutoff": "1 kHz", "gain": "6 dB"})
    >>> t.response, t.order, round(t.gain_db, 3)
    ('lowpass', 3, 6.0)
    >>> target_from_table({"approximation": "buterworth", "order": 2, "cutoff": 1e3})
    Traceback (most recent call last):
    ...
    placer.errors.SpecError: spec: target.approximation = 'buterworth' is not one of butterworth, chebyshev1, chebyshev2, bessel, elliptic, linkwitz-riley; did you mean 'butterworth'?
    """
    reader = _TableReader(table, source, "target", TARGET_KEYS)
    explicit = "poles" in reader or "zeros" in reader
    default = "custom" if explicit else "lowpass"
    response = reader.choice("response", RESPONSES, default)
    gain = reader.number("gain", "dB", positive=False)
    gain_db = 0.0 if gain is None else gain
    if explicit:
        if "units" not in reader:
            reader.fail("units", 'is required with poles or zeros: give units = "Hz" '
                                 'or "rad/s"')
        units = reader.choice("units", ROOT_UNITS, fold=True)
        poles, zeros = _read_roots(reader, "poles", units), _read_roots(reader, "zeros", units)
        complete, unstable = reader.flag("complete_conjugates"), reader.flag("allow_unstable")
        reader.check_all_used("a target given by poles and zeros")
        try:
            return target_from_roots(poles, zeros, gain_db=gain_db, response=response,
                                     units=units, complete_conjugates=complete,
                                     allow_unstable=unstable)
        except SpecError as exc:
            raise SpecError(f"{source}: [target] {exc}") from None
    if "sections" in reader:
        sections = _read_sections(reader, response)
        reader.check_all_used("a target given by sections")
        return target_from_sections(sections, gain_db=gain_db, response=response)
    if "approximation" not in reader:
        raise SpecError(f"{source}: [target] needs an approximation, poles, or sections")
    if response == "custom":
        reader.fail("response", "needs poles or sections; an approximation "
                                "gives lowpass, highpass, bandpass, bandstop or allpass")
    return _approximation_target(reader, response, gain_db)


def target_to_dict(target, sections=None):
    """The JSON shape of a target and its sections.

    Roots are ``[re, im]`` pairs in rad/s; ``reference_frequency_hz`` is
    where ``gain_db`` is quoted, null meaning the high-frequency gain.
    *sections* defaults to ``split_sections(target)``.

    Examples
    --------
    >>> d = target_to_dict(design_target("butterworth", 1, frequency_hz=1.0))
    >>> d["poles"], d["sections"][0]["kind"], d["sections"][0]["q"]
    ([[-6.283185307179586, 0.0]], 'lowpass', None)
    """
    if sections is None:
        sections = split_sections(target)
    reference = target.reference_omega
    return {
        "response": target.response,
        "approximation": target.approximation,
        "order": target.order,
        "poles": [[float(r.real), float(r.imag)] for r in target.poles],
        "zeros": [[float(r.real), float(r.imag)] for r in target.zeros],
        "gain_db": target.gain_db,
        "reference_frequency_hz": None if math.isinf(reference) else reference / _TWO_PI,
        "sections": [{
            "kind": s.kind,
            "order": s.order,
            "f0_hz": s.f0_hz,
            "q": s.q,
            "gain_db": s.gain_db,
            "zero_f0_hz": s.zero_f0_hz,
        } for s in sections],
    }
