"""How much op-amp GBW a section needs, with and without correction.

A design solved with ideal op-amps drifts when it is built with a finite
gain-bandwidth product; a design re-solved with the op-amp modelled
(:func:`placer.amplifier.place_section_with_amplifier`) does not, down to
a GBW of a few times f0 on paper. :func:`required_gbw` finds the smallest
GBW (Hz) at which each still meets an error bound; the corrected design
must also bear the op-amp's GBW spread (:data:`placer.amplifier.GBW_SPREAD`),
so the figure does not lean on the datasheet's typical GBW.

References
----------
R. Schaumann and M. E. Van Valkenburg, *Design of Analog Filters*, Oxford
University Press, 2001, the chapters on active-filter non-idealities
(Q enhancement by finite GBW; from memory).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from .amplifier import (
    GBW_SPREAD,
    AmplifierSpec,
    apply_amplifier,
    check_amplifier,
    place_section_with_amplifier,
)
from .dominant import DominantFunction
from .errors import SpecError, UnreachableTarget
from .network import network_function
from .placement import place_ideal, worst_error_pct
from .solve import root_errors
from .units import format_value

__all__ = [
    "GBWRequirement",
    "required_gbw",
]


@dataclass(frozen=True)
class GBWRequirement:
    """The smallest op-amp GBW (Hz) for a section within an error bound.

    Attributes
    ----------
    gbw_hz : float
        Smallest typical GBW for which the corrected (re-solved, snapped)
        design meets the bound, also when the op-amp's actual GBW is off by
        ± ``gbw_spread``; ``inf`` when none up to the search's top does.
    uncorrected_gbw_hz : float
        Smallest GBW for which the ideal-op-amp design, built as it is,
        meets the bound.
    parasitic_poles_hz : tuple of float
        The corrected design's parasitic poles at ``gbw_hz``, Hz.
    error_pct : float
        The bound, percent (worst of the f0, Q and gain errors).
    gbw_spread : float
        The relative GBW spread the corrected design was required to bear.
    note : str
    """

    gbw_hz: float
    uncorrected_gbw_hz: float
    parasitic_poles_hz: tuple
    error_pct: float
    gbw_spread: float = 0.0
    note: str = ""


def required_gbw(section, topology, *, error_pct=1.0, parts=None, amplifier_gain=None,
                 gbw_spread=GBW_SPREAD, seed=0, rtol=0.02, coarse_budget=400):
    """Smallest GBW (Hz) for which a corrected design meets `error_pct`.

    Bisection in log GBW over [2·f0, 1e4·f0·max(Q, 1)] (Hz): at each GBW the
    section is re-solved and snapped with the single-pole model, and the
    result must meet the bound at that GBW and at GBW·(1 ± `gbw_spread`).
    Without the spread the search would return designs that lean on the
    op-amp's exact GBW (a GBW of a few f0 can be "corrected" on paper; the
    built filter then moves with every op-amp). The quick uncorrected figure
    is found the same way on the ideal design's snapped values. Both
    searches assume the error falls as GBW rises.

    Parameters
    ----------
    section : placer.targets.Section
    topology : Topology
    error_pct : float
        Bound on the worst of the f0, Q and gain errors, percent.
    parts : placer.spec.PartsSpec, optional
    amplifier_gain : float, optional
        DC open-loop gain, V/V (None: infinite, the integrator model).
    gbw_spread : float
        Relative GBW spread in [0, 1) the corrected design must bear
        (default :data:`GBW_SPREAD`).
    seed : int
    rtol : float
        Relative width of the GBW bracket at which the bisection stops.
    coarse_budget : int
        Coarse combinations per snap (smaller is faster, see
        :func:`placer.snap.snap`).

    Returns
    -------
    GBWRequirement

    Raises
    ------
    SpecError
        For a non-positive bound or gain, or a spread outside [0, 1).

    Examples
    --------
    >>> from placer.library import get_topology
    >>> from placer.targets import make_section
    >>> need = required_gbw(make_section("lowpass", 2 * math.pi * 10e3, 2.0),
    ...                     get_topology("sallen-key-lowpass-unity"), rtol=0.1)
    >>> 10e3 < need.gbw_hz < need.uncorrected_gbw_hz
    True
    """
    if not (math.isfinite(error_pct) and error_pct > 0):
        raise SpecError(f"error_pct = {error_pct!r} must be a positive percentage")
    if not (math.isfinite(gbw_spread) and 0 <= gbw_spread < 1):
        raise SpecError(f"gbw_spread = {gbw_spread!r} must be a fraction in [0, 1), e.g. 0.25")
    check_amplifier(AmplifierSpec(gain=amplifier_gain), section)
    f0 = section.omega0 / (2 * math.pi)
    low, high = 2 * f0, 1e4 * f0 * max(section.q or 1.0, 1.0)
    try:
        ideal = place_ideal(section, topology, parts=parts, seed=seed)
    except UnreachableTarget as reason:
        return GBWRequirement(math.inf, math.inf, (), error_pct, gbw_spread,
                              note=f"the topology cannot reach the section: {reason.reason}")
    if worst_error_pct(ideal.errors) > error_pct:
        return GBWRequirement(
            math.inf, math.inf, (), error_pct, gbw_spread,
            note=f"even with ideal op-amps the snapped design misses by "
                 f"{worst_error_pct(ideal.errors):.3g} %, more than the bound",
        )
    if topology.circuit.opamp_count == 0:
        return GBWRequirement(0.0, 0.0, (), error_pct, gbw_spread, note="the topology has no op-amp")
    corrected_at = {}

    def model(gbw):
        return AmplifierSpec(gbw=gbw, gain=amplifier_gain)

    def worst_at(gbw, values):
        dominant = DominantFunction.for_goal(
            network_function(apply_amplifier(topology.circuit, model(gbw))), ideal.goal)
        return worst_error_pct(root_errors(dominant, values, ideal.goal))

    def corrected(gbw):
        if gbw not in corrected_at:
            corrected_at[gbw] = place_section_with_amplifier(
                section, topology, model(gbw), parts=parts, seed=seed,
                coarse_budget=coarse_budget, ideal=ideal)
        return corrected_at[gbw]

    def corrected_ok(gbw):
        candidate = corrected(gbw)
        if not candidate.reachable or candidate.error_pct > error_pct:
            return False
        edges = (gbw * (1 - gbw_spread), gbw * (1 + gbw_spread)) if gbw_spread else ()
        return all(worst_at(edge, candidate.snapped.values) <= error_pct for edge in edges)

    def uncorrected_ok(gbw):
        return worst_at(gbw, ideal.snapped.values) <= error_pct

    notes = []
    gbw = _bisect(corrected_ok, low, high, rtol)
    uncorrected = _bisect(uncorrected_ok, low, high, rtol)
    parasitic = ()
    if math.isfinite(gbw):
        parasitic = corrected(gbw).parasitic_poles_hz
        if gbw == low:
            notes.append(f"met already at the search's lowest GBW, 2·f0 = {format_value(low, 'Hz')}")
        if gbw_spread:
            notes.append(f"the corrected design holds for GBW within ±{100 * gbw_spread:.3g} %")
    else:
        notes.append(f"not met up to {format_value(high, 'Hz')}")
    if math.isfinite(gbw) and math.isfinite(uncorrected):
        notes.append(f"correcting for the op-amp lowers the GBW needed {uncorrected / gbw:.3g}-fold")
    return GBWRequirement(gbw, uncorrected, tuple(parasitic), error_pct, gbw_spread,
                          note="; ".join(notes))


def _bisect(ok, low, high, rtol):
    """Smallest x in [low, high] with ok(x), by bisection in log x (inf: none)."""
    if not ok(high):
        return math.inf
    if ok(low):
        return low
    while high / low > 1 + rtol:
        middle = math.sqrt(low * high)
        if ok(middle):
            high = middle
        else:
            low = middle
    return high
