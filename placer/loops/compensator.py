"""Loop compensation: K-factor placement, Type II/III parts, margins.

The job: a plant G(s) (:mod:`placer.loops.plants`), a crossover frequency fc and a
phase margin PM in; an op-amp error amplifier of the library (``family =
"type2"`` or ``"type3"``) with preferred-value parts out, with the gain and
phase margins of the loop before and after the parts are snapped. The
snapping search judges part sets by the loop itself, evaluated on a
frequency grid for many sets at once
(:func:`placer.loops.tolerance.grid_margins`, which also runs the
tolerance Monte Carlo of a designed loop); the ``[loop]`` table of a spec
file is :mod:`placer.spec.loop_table`.

Sign convention. The error amplifier inverts: H(s) = −Zf/Zin. That
inversion *is* the loop's negative-feedback sign, so the loop gain is
L(s) = −H(s)·G(s) and the closed loop is L/(1 + L). In general the sign is
chosen so that the compensator Gc = ±H integrates with a positive constant
(phase −90° at low frequency); it is read off the network function, not
off the topology's ``inverting`` flag.

K-factor placement (Venable 1983). With Gc(s) = (ωi/s)·B(s), where B is
the boost network, the loop phase at the crossover ωc is
∠G(jωc) − 90° + boost, and PM = 180° + that phase, so

    boost = PM − ∠G(jωc) − 90°,

with ∠G the plant phase continued from DC (for a buck above its LC
resonance, about −160°, so 60° of margin needs 130° of boost). Type II:
B = (1 + s/ωz)/(1 + s/ωp), ωz = ωc/K, ωp = ωc·K gives boost
2·atan K − 90°, so K = tan(boost/2 + 45°). Type III: the pair squared,
ωz = ωc/√K, ωp = ωc·√K, boost 4·atan √K − 180°, so K = tan²(boost/4 + 45°).
Either way |B(jωc)| = K, and ωi = ωc/(K·|G(jωc)|) puts |L(jωc)| = 1.

Examples
--------
>>> from placer.loops.plants import buck_plant
>>> plant = buck_plant(12.0, 10e-6, 100e-6, 0.02, 1.0, 1.0)
>>> design = design_compensator(plant, 20e3, 60.0, compensator="type3")
>>> round(design.continuous_margins.phase_margin_deg, 3)
60.0
>>> abs(design.snapped_margins.phase_margin_deg - 60.0) < 1.0
True

References
----------
H. D. Venable, "The K Factor: A New Mathematical Tool for Stability
Analysis and Synthesis", Proc. Powercon 10, 1983.
"""

from __future__ import annotations

import difflib
import itertools
import math
import numbers
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..eseries import check_series, series_values
from ..errors import SpecError, TopologyError, UnreachableTarget
from ..circuit.library import find_topologies
from .tolerance import GridLoop, GridMargins, frequency_grid, grid_margins
from ..analysis.network import NetworkFunction, network_function
from .plants import Plant
from ..circuit.elements import Circuit
from ..circuit.topology import Topology
from ..units import format_value
from ..evidence.verify import Margins, margins

__all__ = [
    "COMPENSATOR_FAMILIES", "MAX_BOOST_DEG", "MIN_BOOST_DEG", "LOW_GAIN_MARGIN_DB",
    "RHP_ZERO_FRACTION", "DEFAULT_RANGES", "rhp_zero_hz", "rhp_zero_note",
    "KFactorPlacement", "LoopDesign", "check_compensator", "k_factor", "k_factor_placement",
    "design_compensator",
]

COMPENSATOR_FAMILIES = ("type2", "type3")
#: Practical phase boost limits, degrees (theory: 90° and 180°, at K → ∞).
MAX_BOOST_DEG = {"type2": 70.0, "type3": 150.0}
#: Smallest boost placed when the plant already has phase to spare.
MIN_BOOST_DEG = 10.0
#: Gain margins below this get a note (common practice, no source).
LOW_GAIN_MARGIN_DB = 6.0
#: The crossover should stay below this fraction of a right-half-plane zero
#: (a boost's R(1−D)²/L): common practice, no source; a fifth is the usual
#: rule, some designers keep to a tenth.
RHP_ZERO_FRACTION = 1 / 5
#: Default ranges of the parts, Ω and F: the defaults of a spec's ``[parts]``
#: table (:class:`placer.spec.reader.PartsSpec`), which ``placer loop`` passes.
DEFAULT_RANGES = {"resistor": (1e3, 1e6), "capacitor": (100e-12, 10e-6)}
_ROLES = {"type2": ("R1", "R2", "C1", "C2"), "type3": ("R1", "R2", "R3", "C1", "C2", "C3")}
_KINDS = {"R": "resistor", "C": "capacitor"}


def k_factor(boost_deg: float, family: str) -> float:
    """Venable's K for a phase boost (degrees) and {"type2", "type3"}.

    Examples
    --------
    >>> round(k_factor(60.0, "type2"), 6), round(k_factor(90.0, "type3"), 6)
    (3.732051, 5.828427)
    """
    family = check_compensator(family)
    quarter = 2 if family == "type2" else 4
    return float(math.tan(math.radians(boost_deg / quarter + 45.0)) ** (quarter // 2))


@dataclass(frozen=True)
class KFactorPlacement:
    """Integrator, zero and pole of the compensator, in rad/s.

    Gc(s) = (ωi/s)·((1 + s/ωz)/(1 + s/ωp))**n with n = 1 (Type II) or 2
    (Type III, double zero and double pole). `boost_deg` is what was
    placed: `required_boost_deg`, or :data:`MIN_BOOST_DEG` when less.
    """

    family: str
    crossover: float
    phase_margin_deg: float
    plant_phase_deg: float
    plant_gain: float
    required_boost_deg: float
    boost_deg: float
    k: float
    zero: float
    pole: float
    integrator: float

    @property
    def crossover_hz(self) -> float:
        return self.crossover / (2 * math.pi)

    @property
    def zero_hz(self) -> float:
        return self.zero / (2 * math.pi)

    @property
    def pole_hz(self) -> float:
        return self.pole / (2 * math.pi)

    def response(self, omega: ArrayLike) -> NDArray[np.complex128]:
        """Gc(jω), `omega` in rad/s."""
        s = 1j * np.asarray(omega, dtype=float)
        n = 1 if self.family == "type2" else 2
        return self.integrator / s * ((1 + s / self.zero) / (1 + s / self.pole)) ** n


def k_factor_placement(plant: Plant, crossover_hz: float, phase_margin_deg: float, *,
                       compensator: str = "type2") -> KFactorPlacement:
    """K-factor placement for a plant, a crossover (Hz) and a PM (degrees).

    Parameters
    ----------
    plant : Plant
    crossover_hz : float
        Gain crossover, Hz.
    phase_margin_deg : float
        Phase margin, degrees.
    compensator : {"type2", "type3"}

    Returns
    -------
    KFactorPlacement
        With the integrator set so that |L(j2π·fc)| = 1.

    Raises
    ------
    SpecError
        For a crossover that is not a positive frequency, a phase margin
        outside (0°, 180°), or a plant whose low-frequency gain is negative.
    UnreachableTarget
        When the boost needed exceeds :data:`MAX_BOOST_DEG` for the type.

    References
    ----------
    H. D. Venable, "The K Factor", Proc. Powercon 10, 1983.
    """
    family = check_compensator(compensator)
    fc = _positive_number(crossover_hz, "crossover")
    pm = float(phase_margin_deg)
    if not 0 < pm < 180:
        raise SpecError(f"phase_margin must lie between 0 and 180 degrees, not {pm!r}")
    if plant.low_frequency_gain < 0:
        raise SpecError(
            f"the plant's low-frequency gain is negative ({plant.low_frequency_gain:g}); "
            "with an inverting error amplifier the loop would be positive feedback"
        )
    wc = 2 * math.pi * fc
    phase = float(plant.phase_deg(wc))
    gain = float(abs(plant.response(wc)))
    if not (math.isfinite(gain) and gain > 0):
        raise UnreachableTarget(f"the plant's gain at {format_value(fc, 'Hz')} is {gain}; "
                                "the loop cannot cross 0 dB there")
    required = pm - phase - 90.0
    limit = MAX_BOOST_DEG[family]
    if required > limit:
        other = ("use compensator = 'type3' or a lower crossover"
                 if family == "type2" else "lower the crossover or the phase margin")
        theory = 90 if family == "type2" else 180
        raise UnreachableTarget(
            f"crossing at {format_value(fc, 'Hz')} with {pm:g}° phase margin needs "
            f"{required:.1f}° of phase boost (the plant's phase there is {phase:.1f}°), but a "
            f"{family} compensator gives at most about {limit:g}° in practice ({theory}° in "
            f"theory); {other}"
        )
    boost = max(required, MIN_BOOST_DEG)
    k = k_factor(boost, family)
    spread = k if family == "type2" else math.sqrt(k)
    return KFactorPlacement(family, wc, pm, phase, gain, required, boost, k,
                            zero=wc / spread, pole=wc * spread, integrator=wc / (k * gain))


def _closed_form(placement: KFactorPlacement, r1: float) -> dict[str, float]:
    """Part values by role (R1, R2, C1, ...) with R1 given, ideal op-amp.

    H = −(1 + sR2C1)(1 + s(R1+R3)C3)/(sR1(C1+C2)(1 + sR2·C1C2/(C1+C2))(1 + sR3C3)):
    ωi = 1/(R1(C1+C2)), ωz = 1/(R2C1), ωp = (C1+C2)/(R2C1C2); and for Type
    III ωz = 1/((R1+R3)C3), ωp = 1/(R3C3).
    """
    wz, wp = placement.zero, placement.pole
    total = 1.0 / (r1 * placement.integrator)
    c2 = total * wz / wp
    values = {"R1": r1, "C1": total - c2, "C2": c2, "R2": 1.0 / (wz * (total - c2))}
    if placement.family == "type3":
        c3 = (1.0 / wz - 1.0 / wp) / r1
        values.update(C3=c3, R3=1.0 / (wp * c3))
    return values


def _fit_ranges(placement: KFactorPlacement, r1: float,
                ranges: Mapping[str, tuple[float, float]],
                resistor_series: str) -> tuple[dict[str, float], tuple[str, ...]]:
    """Closed-form values, impedance-scaled (R·a, C/a) into the ranges."""
    values = _closed_form(placement, r1)
    low, high = 0.0, math.inf
    for role, value in values.items():
        lo, hi = ranges[_KINDS[role[0]]]
        if role[0] == "R":
            low, high = max(low, lo / value), min(high, hi / value)
        else:
            low, high = max(low, value / hi), min(high, value / lo)
    if low <= 1.0 <= high:
        return values, ()
    if low > high * (1 + 1e-12):
        shown = ", ".join(f"{r} = {format_value(v, 'ohm' if r[0] == 'R' else 'F')}"
                          for r, v in values.items() if r != "R1")
        raise UnreachableTarget(
            f"no impedance level keeps every part inside the ranges (resistors "
            f"{_span(ranges['resistor'], 'ohm')}, capacitors {_span(ranges['capacitor'], 'F')}): "
            f"at R1 = {format_value(r1, 'ohm')} the network needs {shown}; the plant's gain at "
            f"{format_value(placement.crossover_hz, 'Hz')} is "
            f"{20 * math.log10(placement.plant_gain):.1f} dB — the loop cannot cross there with "
            "these parts; choose another crossover or widen the ranges"
        )
    scale = low if low > 1.0 else high
    choices = series_values(resistor_series, *ranges["resistor"])
    inside = choices[(choices >= r1 * low * (1 - 1e-9)) & (choices <= r1 * high * (1 + 1e-9))]
    new_r1 = float(inside[np.argmin(np.abs(np.log(inside / (r1 * scale))))]) if inside.size \
        else r1 * scale
    values = _closed_form(placement, new_r1)
    return values, (f"R1 moved from {format_value(r1, 'ohm')} to "
                    f"{format_value(new_r1, 'ohm')} so that every part fits its range",)


def _span(bounds: tuple[float, float], unit: str) -> str:
    return f"{format_value(bounds[0], unit)}–{format_value(bounds[1], unit)}"


# -- design --------------------------------------------------------------------

@dataclass(frozen=True)
class LoopDesign:
    """A designed compensator: placement, parts, margins before and after snapping.

    `continuous` and `snapped` map part symbols to values (SI); `roles`
    maps R1, R2, C1, ... to the topology's symbols; the loop gain is
    ``sign·H(s)·G(s)``.
    """

    plant: Plant
    topology: Topology
    placement: KFactorPlacement
    roles: dict[str, str]
    continuous: dict[str, float]
    snapped: dict[str, float]
    series: dict[str, str]
    sign: float
    continuous_margins: Margins
    snapped_margins: Margins
    notes: tuple[str, ...] = ()
    network: NetworkFunction | None = field(default=None, repr=False, compare=False)

    def loop_transfer_function(self, *, snapped: bool = True) -> Any:
        """L(s) as a python-control TransferFunction."""
        values = self.snapped if snapped else self.continuous
        if self.network is None:
            raise ValueError("this LoopDesign carries no network function")
        return _loop_tf(self.network, self.sign, self.plant, values)

    def circuit(self, *, snapped: bool = True) -> Circuit:
        """The compensator circuit with every part's value."""
        return self.topology.circuit.with_values(self.snapped if snapped else self.continuous)

    def compensator_roots(self, *, snapped: bool = True) -> tuple[np.ndarray, np.ndarray]:
        """Zeros and poles of the compensator H(s) with its parts, rad/s.

        Roots of the network function's numerator and denominator (an
        integrator is a pole at 0), each sorted by magnitude.
        """
        values = self.snapped if snapped else self.continuous
        if self.network is None:
            raise ValueError("this LoopDesign carries no network function")
        roots: list[np.ndarray] = []
        for coefficients in self.network.coefficients(values):
            c = np.trim_zeros(np.ravel(coefficients), "f")
            found = np.roots(c) if c.size > 1 else np.array([], complex)
            roots.append(found[np.argsort(np.abs(found))])
        return roots[0], roots[1]


def _loop_tf(nf: NetworkFunction, sign: float, plant: Plant, values: Mapping[str, float]) -> Any:
    return sign * nf.transfer_function(values) * plant.transfer_function()


def check_compensator(compensator: object) -> str:
    """Return *compensator* if it names a family, {"type2", "type3"}, else raise.

    Raises
    ------
    SpecError
        Naming the value and the families, with the nearest one.

    Examples
    --------
    >>> check_compensator("type3")
    'type3'
    """
    if isinstance(compensator, str) and compensator in COMPENSATOR_FAMILIES:
        return compensator
    close = difflib.get_close_matches(str(compensator), COMPENSATOR_FAMILIES, n=1)
    hint = f"; did you mean {close[0]!r}?" if close else ""
    raise SpecError(f"compensator must be one of {{'type2', 'type3'}}, not {compensator!r}{hint}")


def _positive_number(value: object, name: str) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real) \
            or not (math.isfinite(value) and float(value) > 0):
        raise SpecError(f"{name} must be a positive finite number, not {value!r}")
    return float(value)


def _range(bounds: Any, name: str) -> tuple[float, float]:
    try:
        low, high = (float(x) for x in bounds)
    except (TypeError, ValueError):
        raise SpecError(f"{name} must be a pair (low, high), not {bounds!r}") from None
    if not 0 < low < high < math.inf:
        raise SpecError(f"{name} must satisfy 0 < low < high, not {bounds!r}")
    return low, high


def _roles_of(topology: Topology, family: str) -> dict[str, str]:
    """Role (R1, R2, C1, ...) → symbol, by element name, then by symbol."""
    roles: dict[str, str] = {}
    for role in _ROLES[family]:
        element = next((e for e in topology.circuit.elements if e.name == role and e.symbol), None)
        symbol = element.symbol if element else (role if role in topology.symbols else None)
        if symbol is None:
            raise TopologyError(
                f"topology {topology.id!r}: a {family} compensator names its parts "
                f"{', '.join(_ROLES[family])}; there is no {role}"
            )
        roles[role] = symbol
    left = [s for s in topology.symbols if s not in roles.values() and s not in topology.values]
    if left:
        raise TopologyError(f"topology {topology.id!r}: part {left[0]!r} has no role in a "
                            f"{family} compensator and no value in [values]")
    return roles


def _compensator_topology(compensator: str | Topology,
                          topologies: Mapping[str, Topology] | None) -> tuple[Topology, str]:
    if isinstance(compensator, Topology):
        return compensator, check_compensator(compensator.family)
    family = check_compensator(compensator)
    found = sorted(find_topologies(response="compensator", family=family, topologies=topologies),
                   key=lambda t: (t.opamp_count, t.part_count, t.id))
    if not found:
        raise TopologyError(f"the topology library has no compensator with family = {family!r}")
    return found[0], family


def _sign_of(nf: NetworkFunction, values: Mapping[str, float]) -> float:
    """+1 or −1 so that sign·H integrates with a positive constant."""
    numerator, denominator = (np.trim_zeros(np.ravel(c), "b") for c in nf.coefficients(values))
    return 1.0 if numerator[-1] / denominator[-1] > 0 else -1.0


def _candidates(table: NDArray[np.float64], value: float, extra: int) -> NDArray[np.float64]:
    """Series values from `extra` steps below the floor to `extra` above the ceiling."""
    below = int(np.searchsorted(table, value * (1 + 1e-9), side="right")) - 1
    above = int(np.searchsorted(table, value * (1 - 1e-9), side="left"))
    low = max(min(below, above) - extra, 0)
    return table[low:min(max(below, above) + extra, table.size - 1) + 1]


def _choose(found: GridMargins, target_pm: float, target_wc: float) -> int:
    """Index of the stable candidate meeting the PM with crossover nearest ωc."""
    usable = found.stable & np.isfinite(found.phase_margin)
    with np.errstate(invalid="ignore"):
        meets = usable & (found.phase_margin >= target_pm - 1e-9)
    if meets.any():
        return int(np.argmin(np.where(meets, np.abs(np.log(found.crossover / target_wc)), np.inf)))
    pool = usable if usable.any() else np.isfinite(found.phase_margin)
    return int(np.argmax(np.where(pool, found.phase_margin, -np.inf)))


def _snap(parts: GridLoop, roles: Mapping[str, str], continuous: Mapping[str, float],
          series: Mapping[str, str], ranges: Mapping[str, tuple[float, float]],
          placement: KFactorPlacement) -> dict[str, float]:
    """Two-stage search over preferred values, judged by the loop itself."""
    tables = {s: series_values(series[s], *ranges[_KINDS[r[0]]]) for r, s in roles.items()}
    r1 = roles["R1"]
    fixed = {k: v for k, v in continuous.items() if k not in tables}
    options = {r1: tables[r1][[np.argmin(np.abs(np.log(tables[r1] / continuous[r1])))]]}
    for role, symbol in roles.items():
        if symbol != r1:
            options[symbol] = _candidates(tables[symbol], continuous[symbol],
                                          1 if role[0] == "C" else 0)
    target = (placement.phase_margin_deg, placement.crossover)
    best = _search(parts, options, fixed, target)
    refine = {s: (_candidates(tables[s], continuous[s], 5) if r[0] == "R" and s != r1
                  else np.array([best[s]])) for r, s in roles.items()}
    return _search(parts, refine, fixed, target)


def _search(parts: GridLoop, options: Mapping[str, NDArray[np.float64]],
            fixed: Mapping[str, float], target: tuple[float, float]) -> dict[str, float]:
    names = list(options)
    grid = np.array(list(itertools.product(*(options[n] for n in names))), dtype=float)
    arrays = {n: grid[:, i] for i, n in enumerate(names)}
    arrays.update({k: np.full(grid.shape[0], v) for k, v in fixed.items()})
    index = _choose(grid_margins(parts, arrays), *target)
    return {**fixed, **{n: float(grid[index, i]) for i, n in enumerate(names)}}


def design_compensator(plant: Plant, crossover_hz: float, phase_margin_deg: float, *,
                       compensator: str | Topology = "type2", resistor_series: str = "E96",
                       capacitor_series: str = "E12",
                       resistor_range: tuple[float, float] = DEFAULT_RANGES["resistor"],
                       capacitor_range: tuple[float, float] = DEFAULT_RANGES["capacitor"],
                       r1: float = 10e3,
                       topologies: Mapping[str, Topology] | None = None) -> LoopDesign:
    """Design a Type II or III error amplifier for a plant.

    Parameters
    ----------
    plant : Plant
    crossover_hz : float
        Target gain crossover, Hz.
    phase_margin_deg : float
        Target phase margin, degrees; the snapped design must meet it.
    compensator : {"type2", "type3"} or Topology
        A family looked up in the library (``response = "compensator"``),
        or a topology whose parts are named R1, R2, C1, C2 (and R3, C3).
    resistor_series, capacitor_series : str
        IEC 60063 series of the parts, {"E3", ..., "E192"}.
    resistor_range, capacitor_range : (float, float)
        Allowed values, Ω and F (default :data:`DEFAULT_RANGES`, the
        defaults of a spec's ``[parts]`` table; ``placer loop`` passes the
        spec's own).
    r1 : float
        Input resistor (the impedance level), Ω. If a part falls outside its
        range at this level, the network is impedance-scaled (R·a, C/a,
        H(s) unchanged) with R1 on the series, and the notes say so.
    topologies : mapping, optional
        The pool to look `compensator` up in (default: the library).

    Returns
    -------
    LoopDesign
        Continuous parts from the K-factor placement (closed form); snapped
        parts from a search over series neighbours (capacitors one step
        beyond, then resistors re-searched five steps around), picking the
        stable set that meets the phase margin with crossover nearest fc.

    Raises
    ------
    SpecError
        For bad arguments (naming the argument and value).
    UnreachableTarget
        When the boost needed exceeds what the type gives, no impedance
        level fits the ranges, or the continuous loop fails its own target;
        with a right-half-plane zero in the plant and the crossover above
        :data:`RHP_ZERO_FRACTION` of it, the message says so.
    """
    setup = _setup(compensator, topologies, resistor_series, capacitor_series, resistor_range,
                   capacitor_range, r1)
    try:
        placement = k_factor_placement(plant, crossover_hz, phase_margin_deg,
                                       compensator=setup.family)
        notes = _boost_notes(placement)
        continuous, nf, sign, more = _continuous_design(plant, placement, setup)
        notes += more
        cont = _continuous_margins(nf, sign, plant, continuous, placement)
    except UnreachableTarget as error:
        raise _with_rhp_zero(error, plant, crossover_hz) from None
    part_series = {s: setup.series[r[0]] for r, s in setup.roles.items()}
    grid = GridLoop(nf, sign, plant, frequency_grid(placement.crossover))
    snapped = _snap(grid, setup.roles, continuous, part_series, setup.ranges, placement)
    after = margins(_loop_tf(nf, sign, plant, snapped))
    notes += _snapped_notes(after, placement, plant)
    return LoopDesign(plant, setup.topology, placement, setup.roles, continuous, snapped,
                      part_series, sign, cont, after, tuple(notes), nf)


@dataclass(frozen=True)
class _Setup:
    """The checked arguments of :func:`design_compensator`."""

    topology: Topology
    family: str
    roles: dict[str, str]
    series: dict[str, str]
    ranges: dict[str, tuple[float, float]]
    r1: float


def _setup(compensator: str | Topology, topologies: Mapping[str, Topology] | None,
           resistor_series: str,
           capacitor_series: str, resistor_range: tuple[float, float],
           capacitor_range: tuple[float, float], r1: float) -> _Setup:
    """Check the arguments: topology and roles, series, ranges, R1 inside its range."""
    topology, family = _compensator_topology(compensator, topologies)
    roles = _roles_of(topology, family)
    series = {"R": check_series(resistor_series, field="resistor_series"),
              "C": check_series(capacitor_series, field="capacitor_series")}
    ranges = {"resistor": _range(resistor_range, "resistor_range"),
              "capacitor": _range(capacitor_range, "capacitor_range")}
    r1 = _positive_number(r1, "r1")
    if not ranges["resistor"][0] <= r1 <= ranges["resistor"][1]:
        raise SpecError(f"r1 = {format_value(r1, 'ohm')} lies outside resistor_range "
                        f"{_span(ranges['resistor'], 'ohm')}")
    return _Setup(topology, family, roles, series, ranges, r1)


def _boost_notes(placement: KFactorPlacement) -> list[str]:
    """A note when the plant needs less boost than the minimum placed."""
    if placement.boost_deg > placement.required_boost_deg:
        return [f"the plant has phase to spare at the crossover (the K factor asks for "
                f"{placement.required_boost_deg:.1f}° of boost): the minimum "
                f"{MIN_BOOST_DEG:g}° is placed, so the phase margin comes out above target"]
    return []


def _continuous_design(plant: Plant, placement: KFactorPlacement,
                       setup: _Setup) -> tuple[dict[str, float], NetworkFunction, float, list[str]]:
    """Closed-form parts fitted into the ranges, the network, its sign, and notes.

    With an ideal op-amp the network must respond as the placement's Gc.
    """
    by_role, fit_notes = _fit_ranges(placement, setup.r1, setup.ranges, setup.series["R"])
    notes = list(fit_notes)
    topology, roles, family = setup.topology, setup.roles, setup.family
    continuous = {**topology.values, **{roles[r]: v for r, v in by_role.items()}}
    nf = network_function(topology.circuit)
    sign = _sign_of(nf, continuous)
    if all(e.gain is None and e.gbw is None for e in topology.circuit.elements
           if e.kind == "opamp"):
        probe = placement.crossover * np.array([0.1, 1.0, 10.0])
        if not np.allclose(sign * nf.response_at(continuous, probe), placement.response(probe),
                           rtol=1e-6):
            raise TopologyError(f"topology {topology.id!r} does not respond as a {family} "
                                f"network with parts {', '.join(_ROLES[family])} (see its formula)")
    else:
        notes.append("the topology's op-amp is not ideal: the placement assumes an ideal one, "
                     "the margins include the op-amp model")
    return continuous, nf, sign, notes


def _continuous_margins(nf: NetworkFunction, sign: float, plant: Plant,
                        continuous: Mapping[str, float],
                        placement: KFactorPlacement) -> Margins:
    """Margins of the continuous loop; UnreachableTarget when it misses its own target."""
    cont = margins(_loop_tf(nf, sign, plant, continuous))
    if not cont.stable or cont.phase_margin_deg is None \
            or cont.phase_margin_deg < placement.phase_margin_deg - 0.5:
        where = (f"crosses 0 dB at {format_value(cont.crossover_hz, 'Hz')} with "
                 f"{cont.phase_margin_deg:.1f}° of phase margin" if cont.crossover_hz else
                 "never crosses 0 dB")
        raise UnreachableTarget(
            f"with the K-factor placement for {format_value(placement.crossover_hz, 'Hz')} the "
            f"loop {where}{'' if cont.stable else ' and is unstable'}: other 0 dB crossings "
            "(or an unstable plant) spoil the placement; choose another crossover"
        )
    return cont


def _snapped_notes(after: Margins, placement: KFactorPlacement, plant: Plant) -> list[str]:
    """Notes on the snapped loop: missed margin, instability, RHP zero, low gain margin."""
    notes: list[str] = []
    pm = placement.phase_margin_deg
    if after.phase_margin_deg is None or after.phase_margin_deg < pm:
        best = "no crossover" if after.phase_margin_deg is None else \
            f"{after.phase_margin_deg:.1f}°"
        notes.append(f"no preferred-value set meets {pm:g}° of phase margin; the best gives {best}")
    if not after.stable:
        notes.append("the snapped loop is unstable")
    rhp = rhp_zero_note(plant, placement.crossover_hz)
    if rhp:
        notes.append(rhp + "; expect little gain margin")
    # The gain margin and its phase crossover are found together (both or neither).
    if after.gain_margin_db is not None and after.phase_crossover_hz is not None \
            and after.gain_margin_db < LOW_GAIN_MARGIN_DB:
        notes.append(f"the gain margin is only {after.gain_margin_db:.1f} dB "
                     f"(at {format_value(after.phase_crossover_hz, 'Hz')})")
    return notes


def rhp_zero_hz(plant: Plant) -> float | None:
    """The plant's lowest right-half-plane zero, Hz (None without one).

    Examples
    --------
    >>> from placer.loops.plants import boost_plant
    >>> plant = boost_plant(5.0, vout=10.0, inductance=10e-6, capacitance=100e-6,
    ...                     esr=0.0, load=10.0, ramp=1.0)
    >>> round(rhp_zero_hz(plant))          # 250 krad/s
    39789
    """
    rhp = [abs(z) for z in plant.zeros if z.real > 0]
    return min(rhp) / (2 * math.pi) if rhp else None


def rhp_zero_note(plant: Plant, crossover_hz: float) -> str | None:
    """Why a crossover above :data:`RHP_ZERO_FRACTION` of the RHP zero is unwise, or None."""
    zero = rhp_zero_hz(plant)
    words = f"1/{1 / RHP_ZERO_FRACTION:g}"
    if zero is None or not crossover_hz > RHP_ZERO_FRACTION * zero:
        return None
    return (f"the crossover {format_value(crossover_hz, 'Hz', digits=4)} is above "
            f"{format_value(RHP_ZERO_FRACTION * zero, 'Hz', digits=4)}, {words} of the "
            f"right-half-plane zero at {format_value(zero, 'Hz', digits=4)} (common practice keeps "
            f"the crossover below {words} of the RHP zero, whose phase lag grows toward it)")


def _with_rhp_zero(error: UnreachableTarget, plant: Plant,
                   crossover_hz: float) -> UnreachableTarget:
    """The failure, with the RHP-zero limit added when the crossover passes it."""
    note = rhp_zero_note(plant, crossover_hz) if isinstance(crossover_hz, (int, float)) else None
    zero = rhp_zero_hz(plant)
    if note is None or zero is None:
        return error
    return UnreachableTarget(f"{error.reason}; {note}: lower the crossover below "
                             f"{format_value(RHP_ZERO_FRACTION * zero, 'Hz', digits=4)}",
                             error.alternatives)
