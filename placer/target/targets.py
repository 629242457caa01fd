"""Targets: the poles, zeros and gain a block must realise, and its sections.

A :class:`Target` holds roots in rad/s and a linear gain at a reference
frequency; a :class:`Section` is one first- or second-order factor of it,
the part a single op-amp stage realises. Targets come from a classical
approximation (:func:`design_target`), from explicit roots
(:func:`target_from_roots`) or from sections (:func:`target_from_sections`);
:func:`placer.target.sections.split_sections` factors a target into sections and
:func:`placer.spec.target_table.target_from_table` reads a spec file's
``[target]`` table. Frequencies are rad/s inside and hertz where a person
reads or types them.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, NamedTuple, cast

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import signal

from placer.target.approximations import (
    APPROXIMATIONS,
    NORMALISATIONS,
    ZPK,
    check_choice,
    check_order,
    lowpass_prototype,
    lowpass_to_bandpass,
    lowpass_to_bandstop,
    lowpass_to_highpass,
    scale_lowpass,
)
from placer.errors import SpecError
from placer.circuit.topology import NOTCH_KINDS  # symmetric, low-pass and high-pass notch sections

if TYPE_CHECKING:
    from placer.target.mask import Mask

__all__ = [
    "RESPONSES",
    "SECTION_KINDS",
    "NOTCH_KINDS",
    "SYMMETRIC_NOTCH_RTOL",
    "ROOT_UNITS",
    "ROOT_RTOL",
    "Target",
    "Section",
    "TransferCoefficients",
    "reference_omega_for",
    "notch_kind",
    "design_target",
    "target_from_roots",
    "make_section",
    "target_from_sections",
]

RESPONSES = ("lowpass", "highpass", "bandpass", "bandstop", "allpass", "custom")
SECTION_KINDS = ("lowpass", "highpass", "bandpass") + NOTCH_KINDS + ("allpass",)
#: A notch whose zero and pole frequencies agree this closely (relative) is symmetric.
SYMMETRIC_NOTCH_RTOL = 1e-6
ROOT_UNITS = ("Hz", "rad/s")
#: Roots this close (relative) are the same root.
ROOT_RTOL = 1e-9

_TWO_PI = 2.0 * math.pi


def _db(linear: float) -> float:
    return 20.0 * math.log10(linear)


def _unit_value(zeros: Sequence[complex], poles: Sequence[complex], omega: float) -> complex:
    """Π(jω − z)/Π(jω − p), with ω = inf as the high-frequency limit."""
    if math.isinf(omega):
        excess = len(zeros) - len(poles)
        return complex(1.0 if excess == 0 else (0.0 if excess < 0 else math.inf))
    s = 1j * omega
    num = np.prod([s - z for z in zeros]) if zeros else 1.0
    den = np.prod([s - p for p in poles]) if poles else 1.0
    return complex(num / den) if den != 0 else complex(math.inf)


def _pair_conjugates(roots: Iterable[complex]) -> tuple[tuple[complex, ...], list[complex]]:
    """Clean near-real roots to real and conjugate pairs to exact pairs.

    Returns the cleaned roots (order kept) and the complex roots left alone.
    """
    roots = [complex(r) for r in roots]
    for i, r in enumerate(roots):
        if abs(r.imag) <= ROOT_RTOL * abs(r):
            roots[i] = complex(r.real, 0.0)
    lone: list[complex] = []
    used = [False] * len(roots)
    for i, r in enumerate(roots):
        if used[i] or r.imag == 0.0:
            used[i] = True
            continue
        used[i] = True
        tol = ROOT_RTOL * max(abs(r), 1e-300)
        match = next((j for j in range(len(roots)) if not used[j]
                      and abs(roots[j] - r.conjugate()) <= tol), None)
        if match is None:
            lone.append(r)
            continue
        used[match] = True
        mean = (r + roots[match].conjugate()) / 2.0
        roots[i], roots[match] = mean, mean.conjugate()
    return tuple(roots), lone


def _lone_message(kind: str, root: complex, units: str) -> str:
    return (f"{kind} {root!r} {units} has no conjugate; give both or set "
            "complete_conjugates = true")


def notch_kind(omega0: float, zero_omega: float) -> str:
    """The kind of a notch section from its pole and zero frequencies.

    A symmetric notch has its zeros at the pole frequency; the trade calls
    a section whose zeros lie above the pole frequency a low-pass notch
    (its DC gain exceeds its high-frequency gain) and one whose zeros lie
    below a high-pass notch.

    Parameters
    ----------
    omega0, zero_omega : float
        Pole and zero frequencies, rad/s.

    Returns
    -------
    {"notch", "lowpass-notch", "highpass-notch"}

    Examples
    --------
    >>> notch_kind(1.0, 1.0), notch_kind(1.0, 3.0), notch_kind(3.0, 1.0)
    ('notch', 'lowpass-notch', 'highpass-notch')
    """
    if abs(zero_omega - omega0) <= SYMMETRIC_NOTCH_RTOL * omega0:
        return "notch"
    return "lowpass-notch" if zero_omega > omega0 else "highpass-notch"


def reference_omega_for(response: str, poles: Sequence[complex], zeros: Sequence[complex]) -> float:
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
    mask : placer.target.mask.Mask or None
        The pass- and stop-band requirements the built filter is judged
        against, when the spec sets any (not part of equality).

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
    mask: Mask | None = field(default=None, compare=False)

    def __post_init__(self) -> None:
        poles, lone_poles = _pair_conjugates(self.poles)
        zeros, lone_zeros = _pair_conjugates(self.zeros)
        for kind, lone in (("pole", lone_poles), ("zero", lone_zeros)):
            if lone:
                raise SpecError(_lone_message(kind, lone[0], "rad/s"))
        object.__setattr__(self, "poles", poles)
        object.__setattr__(self, "zeros", zeros)
        check_choice(self.response, RESPONSES, "response")
        if self.approximation is not None:
            check_choice(self.approximation, APPROXIMATIONS, "approximation")
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
    def order(self) -> int:
        """Number of poles."""
        return len(self.poles)

    @property
    def gain_db(self) -> float:
        """``gain`` in dB."""
        return _db(self.gain)

    def zpk(self) -> ZPK:
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

    def frequency_response(self, omega: ArrayLike) -> NDArray[np.complex128]:
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
    kind : {"lowpass", "highpass", "bandpass", "notch", "lowpass-notch", \
"highpass-notch", "allpass"}
        A notch kind follows from the zero and pole frequencies
        (:func:`notch_kind`).
    order : {1, 2}
        First-order sections are lowpass, highpass or allpass, with q None.
    omega0 : float
        Pole frequency |p|, rad/s (sqrt(p1·p2) for two real poles).
    q : float or None
        Pole quality factor ω0 / (2·|Re p|); None for a first-order section.
    gain : float
        Linear gain magnitude at the section's reference: DC for lowpass,
        the notch kinds and allpass, ω0 for bandpass, high frequency for
        highpass.
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

    def __post_init__(self) -> None:
        check_choice(self.kind, SECTION_KINDS, "kind")
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
        if (self.kind in NOTCH_KINDS) != (self.zero_omega is not None):
            raise SpecError(f"zero_omega = {self.zero_omega!r} is for notch "
                            f"sections only, and required there (kind = {self.kind!r})")
        # a notch section has a zero_omega (checked just above)
        if self.kind in NOTCH_KINDS and self.kind != notch_kind(self.omega0,
                                                                cast(float, self.zero_omega)):
            raise SpecError(
                f"kind = {self.kind!r} does not fit a zero at {self.zero_omega:.6g} rad/s "
                f"and poles at {self.omega0:.6g} rad/s: that is a "
                f"{notch_kind(self.omega0, cast(float, self.zero_omega))!r} section "
                "(a low-pass notch "
                "has its zeros above the pole frequency, a high-pass notch below)")
        object.__setattr__(self, "poles", tuple(complex(p) for p in self.poles))
        object.__setattr__(self, "zeros", tuple(complex(z) for z in self.zeros))
        if len(self.poles) != self.order or len(self.zeros) > self.order:
            raise SpecError(f"a section of order {self.order} has {self.order} "
                            f"poles and at most as many zeros, not "
                            f"{len(self.poles)} and {len(self.zeros)}")

    @property
    def reference_omega(self) -> float:
        """Where ``gain`` is quoted, rad/s (0, omega0 or inf)."""
        return {"bandpass": self.omega0, "highpass": math.inf}.get(self.kind, 0.0)

    @property
    def k(self) -> float:
        """Leading numerator coefficient: H(s) = k·Π(s−z)/Π(s−p)."""
        value = _unit_value(self.zeros, self.poles, self.reference_omega)
        if abs(value.imag) <= 1e-9 * abs(value):
            return self.gain / value.real
        return self.gain / abs(value)

    @property
    def f0_hz(self) -> float:
        """Pole frequency, Hz."""
        return self.omega0 / _TWO_PI

    @property
    def zero_f0_hz(self) -> float | None:
        """Notch zero frequency, Hz, or None."""
        return None if self.zero_omega is None else self.zero_omega / _TWO_PI

    @property
    def gain_db(self) -> float:
        """``gain`` in dB."""
        return _db(self.gain)

    def transfer_coefficients(self) -> TransferCoefficients:
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

    def frequency_response(self, omega: ArrayLike) -> NDArray[np.complex128]:
        """Complex H(jω) at angular frequencies *omega* (rad/s)."""
        num, den = self.transfer_coefficients()
        s = 1j * np.atleast_1d(np.asarray(omega, float))
        return np.polyval(num, s) / np.polyval(den, s)


def _poles_from(omega0: float, q: float | None) -> tuple[complex, ...]:
    if q is None:
        return (complex(-omega0),)
    sigma = omega0 / (2.0 * q)
    disc = 1.0 - 1.0 / (4.0 * q * q)
    if disc >= 0:
        root = complex(-sigma, omega0 * math.sqrt(disc))
        return (root, root.conjugate())
    spread = omega0 * math.sqrt(-disc)
    return (complex(-sigma + spread), complex(-sigma - spread))


def make_section(kind: str, omega0: float, q: float | None = None, *, gain: float = 1.0,
                 zero_omega: float | None = None) -> Section:
    """Build a section from its pole frequency, Q and (notch) zero.

    Parameters
    ----------
    kind : {"lowpass", "highpass", "bandpass", "notch", "lowpass-notch", \
"highpass-notch", "allpass"}
        ``"notch"`` stands for any notch: the section's kind then follows
        from `zero_omega` against `omega0` (:func:`notch_kind`); a named
        low- or high-pass notch must fit them.
    omega0 : float
        Pole frequency, rad/s.
    q : float, optional
        Pole Q; omit for a first-order lowpass, highpass or allpass.
    gain : float
        Linear gain at the section's reference (see :class:`Section`).
    zero_omega : float, optional
        Notch zero frequency, rad/s (notch kinds only).

    Returns
    -------
    Section

    Raises
    ------
    SpecError
        For an unknown kind, a non-positive frequency or Q, or a named
        low-/high-pass notch whose zero lies on the wrong side.

    Examples
    --------
    >>> s = make_section("notch", 1.0, 2.0, zero_omega=3.0)
    >>> s.kind, s.zeros
    ('lowpass-notch', (3j, -3j))
    """
    check_choice(kind, SECTION_KINDS, "kind")
    if q is not None and not (math.isfinite(q) and q > 0):
        raise SpecError(f"q = {q!r} must be positive")
    if not (isinstance(omega0, (int, float)) and math.isfinite(omega0) and omega0 > 0):
        raise SpecError(f"omega0 = {omega0!r} rad/s must be positive")
    poles = _poles_from(float(omega0), q)
    order = len(poles)
    zeros: tuple[complex, ...]
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
        if kind == "notch":
            kind = notch_kind(float(omega0), float(zero_omega))
    return Section(kind, order, float(omega0), q, float(gain),
                   None if zero_omega is None else float(zero_omega), poles, zeros)


# --------------------------------------------------------------------------
# Building targets


def design_target(approximation: str, order: int, *, response: str = "lowpass",
                  frequency_hz: float | None = None, normalisation: str = "cutoff",
                  center_hz: float | None = None, bandwidth_hz: float | None = None,
                  ripple_db: float | None = None, attenuation_db: float | None = None,
                  bessel_norm: str = "mag", gain_db: float = 0.0) -> Target:
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
        See :func:`placer.target.approximations.lowpass_prototype`; ``"natural"``
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
    check_choice(response, ("lowpass", "highpass", "bandpass", "bandstop", "allpass"),
            "response")
    check_order(order, approximation)
    check_choice(normalisation, NORMALISATIONS, "normalisation")
    proto = lowpass_prototype(approximation, order, ripple_db=ripple_db,
                              attenuation_db=attenuation_db,
                              bessel_norm=bessel_norm, normalisation=normalisation)
    if response in ("bandpass", "bandstop"):
        for name, value in (("center", center_hz), ("bandwidth", bandwidth_hz)):
            if value is None or not (math.isfinite(value) and value > 0):
                raise SpecError(f"{name} = {value!r} Hz must be a positive "
                                f"frequency for a {response} target")
        # both checked just above
        center, width = _TWO_PI * cast(float, center_hz), _TWO_PI * cast(float, bandwidth_hz)
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


def target_from_roots(poles: Iterable[complex], zeros: Iterable[complex] = (), *,
                      gain_db: float = 0.0, response: str = "custom",
                      units: str = "rad/s", complete_conjugates: bool = False,
                      allow_unstable: bool = False) -> Target:
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
    check_choice(units, ROOT_UNITS, "units")
    check_choice(response, RESPONSES, "response")
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


def target_from_sections(sections: Sequence[Section], *, gain_db: float = 0.0,
                         response: str = "custom") -> Target:
    """Target whose roots are those of *sections*, with *gain_db* overall.

    Examples
    --------
    >>> t = target_from_sections([make_section("lowpass", 1.0), make_section("lowpass", 2.0, 0.8)],
    ...                          gain_db=6.0, response="lowpass")
    >>> t.order, round(t.gain_db, 6)
    (3, 6.0)
    """
    check_choice(response, RESPONSES, "response")
    if not sections:
        raise SpecError("sections = [] : give at least one section")
    poles = tuple(p for s in sections for p in s.poles)
    zeros = tuple(z for s in sections for z in s.zeros)
    reference = reference_omega_for(response, poles, zeros)
    return Target(poles, zeros, 10.0 ** (gain_db / 20.0), response, None, reference)
