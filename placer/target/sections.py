"""Sections: factoring a target into first- and second-order stages.

:func:`split_sections` pairs a :class:`placer.target.targets.Target`'s poles into
first- and second-order :class:`placer.target.targets.Section` s that single
op-amp stages realise, gives each its zeros, orders the cascade and
shares the overall gain among the stages. Frequencies are rad/s.

References
----------
.. [1] A. B. Williams and F. J. Taylor, *Electronic Filter Design
   Handbook*, 4th ed., McGraw-Hill, 2006 (section pairing and ordering).
.. [2] R. Schaumann and M. E. Van Valkenburg, *Design of Analog Filters*,
   Oxford University Press, 2001, ch. 6 (cascade design: pole-zero pairing,
   section ordering, dynamic-range scaling to equal internal peaks).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Iterable, Sequence
from typing import Any, cast

import numpy as np
from numpy.typing import ArrayLike, NDArray
from scipy import optimize

from placer.target.approximations import check_choice
from placer.errors import NumericalWarning, SpecError
from placer.target.targets import ROOT_RTOL, SECTION_KINDS, Section, Target, notch_kind

__all__ = [
    "ORDERINGS",
    "GAIN_RULES",
    "split_sections",
]

ORDERINGS = ("ascending-q", "descending-q", "as-given")
GAIN_RULES = ("headroom", "first", "equal")


class _Group:
    """Poles of one section-to-be and the zeros given to it."""

    def __init__(self, poles: Iterable[complex], index: int) -> None:
        self.poles: list[complex] = list(poles)
        self.index = index
        self.zeros: list[complex] = []
        self.zero_kind: str | None = None

    @property
    def free(self) -> bool:
        return self.zero_kind is None

    def merge(self, other: _Group) -> None:
        self.poles += other.poles
        self.index = min(self.index, other.index)


def _close(a: complex, b: complex) -> bool:
    return abs(a - b) <= ROOT_RTOL * max(abs(a), abs(b), 1e-300)


def _pole_groups(target: Target) -> list[_Group]:
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


def _take(zeros: list[complex], root: complex) -> complex | None:
    """Remove and return the zero equal to *root*, or None."""
    for i, z in enumerate(zeros):
        if _close(z, root):
            return zeros.pop(i)
    return None


def _assign_mirrors(groups: list[_Group], zeros: list[complex]) -> None:
    for group in groups:
        mirrors = [-p.conjugate() for p in group.poles]
        if all(any(_close(z, m) for z in zeros) for m in mirrors):
            # every mirror is among the zeros (checked just above)
            group.zeros = [cast(complex, _take(zeros, m)) for m in mirrors]
            group.zero_kind = "allpass"


def _merge_real(groups: list[_Group], free_real: list[_Group], target_omega: float) -> _Group:
    """Merge the two free real poles whose ω0 is nearest *target_omega*."""
    best = min(((a, b) for i, a in enumerate(free_real) for b in free_real[i + 1:]),
               key=lambda ab: abs(math.log(math.sqrt(ab[0].poles[0].real
                                                     * ab[1].poles[0].real)
                                           / target_omega)))
    best[0].merge(best[1])
    groups.remove(best[1])
    return best[0]


def _assign_notches(groups: list[_Group], zeros: list[complex]) -> None:
    notch = [z for z in zeros if z.imag > 0 and abs(z.real) <= ROOT_RTOL * abs(z)]
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
        # a target's zeros come in exact conjugate pairs
        group.zeros = [cast(complex, _take(zeros, zero)),
                       cast(complex, _take(zeros, zero.conjugate()))]
        group.zero_kind = "notch"


def _assign_origin(groups: list[_Group], zeros: list[complex]) -> int:
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


def _unit_section(group: _Group) -> Section:
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
        zero_omega = abs(group.zeros[0].imag)
        kind = notch_kind(omega0, zero_omega)
    else:
        kind = "allpass"
    return Section(kind, len(poles), omega0, q, 1.0, zero_omega, poles,
                   tuple(group.zeros))


def _log_grid(sections: Sequence[Section]) -> NDArray[np.float64]:
    magnitudes = [abs(r) for s in sections for r in s.poles + s.zeros if r != 0]
    grid = np.logspace(math.log10(min(magnitudes)) - 3.0,
                       math.log10(max(magnitudes)) + 3.0, 2401)
    extra = [abs(p.imag) for s in sections for p in s.poles if p.imag] + \
        [s.omega0 for s in sections]
    return np.unique(np.concatenate([grid, extra]))


def _prefix_peaks(sections: Sequence[Section]) -> list[float]:
    """Peak |H| over frequency of each prefix product of *sections*."""
    grid = _log_grid(sections)

    def prefix(i: int, omega: ArrayLike) -> NDArray[Any]:
        return np.prod([s.frequency_response(omega) for s in sections[:i + 1]], axis=0)

    peaks: list[float] = []
    running, high = np.ones(len(grid), complex), 1.0
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


_ORDER_KEYS: dict[str, Callable[[Section], tuple[float, float]]] = {
    "ascending-q": lambda s: (s.q or 0.0, s.omega0),
    "descending-q": lambda s: (-(s.q or 0.0), -s.omega0),
}


def split_sections(target: Target, *, ordering: str = "ascending-q",
                   gain: str = "headroom") -> tuple[Section, ...]:
    """Factor a target into first- and second-order sections.

    Each complex pole pair becomes a second-order section and each real
    pole a first-order one; two real poles share a section only when a
    notch zero pair or a band-pass needs one (a band-pass of prototype
    order n gives n second-order band-pass sections). Zeros go to poles in
    this order: mirror images (allpass sections); jω-axis pairs to the
    nearest free pole pair (notch sections [2]: a low-pass notch when the
    zeros lie above the pole frequency, a high-pass notch below, a
    symmetric notch at it); zeros at the origin spread
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
        all-pole high-pass, allpass, the notch kinds); a band-pass's sections
        quote theirs at their own ω0, not at the band centre.

    Raises
    ------
    SpecError
        For an unknown option, a pole on or right of the jω axis, or a zero
        that fits no section kind (not at the origin, not on the jω axis,
        and not mirroring a pole).

    Examples
    --------
    >>> from placer.target.targets import design_target
    >>> t = design_target("butterworth", 5, frequency_hz=1000.0)
    >>> [(s.kind, s.order, None if s.q is None else round(s.q, 4)) for s in split_sections(t)]
    [('lowpass', 1, None), ('lowpass', 2, 0.618), ('lowpass', 2, 1.618)]
    """
    check_choice(ordering, ORDERINGS, "ordering")
    check_choice(gain, GAIN_RULES, "gain")
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


