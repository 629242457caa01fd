"""Noise of a circuit with numbers for every part, from its MNA system.

Every resistor is a thermal (Johnson) noise current of one-sided density
4kT/R A²/Hz across it; every op-amp, when densities are given, a voltage
noise e_n in series with its non-inverting input and a current noise i_n
from each input to the reference (the two uncorrelated). Each source is
carried to the output by the MNA system (G + jωC) x = b with the source
as the right-hand side, and the output densities of the sources, being
uncorrelated, add in power.

All transfers come from one solve per frequency: with y the solution of
the transposed system (G + jωC)ᵀ y = e_out (the adjoint, or
interreciprocal, network), the output a right-hand side b produces is
yᵀb, so every source's transfer is a dot product with the same y — and
so is the input-to-output response, with b the input excitation.

Op-amp output resistances that :func:`placer.place.opamp.apply_amplifier` adds
(``U1.ro``) are part of the op-amp model, not resistors on the board:
their noise is the op-amp's own and is left out.

Examples
--------
>>> from placer.circuit.elements import Circuit, Element
>>> rc = Circuit((Element("R1", "resistor", ("vin", "vout"), value=1e3),
...               Element("C1", "capacitor", ("vout", "gnd"), value=10e-9)))
>>> result = analyse_noise(rc, (1.0, 1e9))
>>> round(result.rms_v * 1e6, 3)          # sqrt(kT/C) at 300 K
0.644

References
----------
J. B. Johnson, "Thermal agitation of electricity in conductors",
Phys. Rev. 32, 97, 1928, doi:10.1103/PhysRev.32.97.
H. Nyquist, "Thermal agitation of electric charge in conductors",
Phys. Rev. 32, 110, 1928, doi:10.1103/PhysRev.32.110.
S. W. Director and R. A. Rohrer, "The generalized adjoint network and
network sensitivities", IEEE Trans. Circuit Theory 16(3), 1969,
doi:10.1109/TCT.1969.1082965.
"""

from __future__ import annotations

import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike, NDArray

from ..circuit.elements import Circuit, Element
from ..errors import SpecError, TopologyError
from .mna import Layout, NumericSystem, layout, numeric_system
from .pencil import circuit_poles

__all__ = [
    "BOLTZMANN",
    "DEFAULT_TEMPERATURE",
    "NoiseSources",
    "NoiseSpectrum",
    "NoiseContribution",
    "NoiseAnalysis",
    "noise_sources",
    "noise_spectrum",
    "noise_grid",
    "integrate_density",
    "analyse_noise",
    "is_model_resistor",
    "opamp_input_coefficient",
]

#: Boltzmann constant, J/K (exact since the 2019 SI redefinition).
BOLTZMANN = 1.380649e-23
#: Temperature (K) when the spec names none.
DEFAULT_TEMPERATURE = 300.0

_RESISTOR = "resistor"
_VOLTAGE = "op-amp voltage noise"
_CURRENT = "op-amp current noise"


@dataclass(frozen=True)
class NoiseSources:
    """Every noise generator of a circuit as MNA right-hand sides.

    Attributes
    ----------
    names : tuple of str
        One per physical source: "R3", "U1 voltage noise", "U1 current noise".
    kinds : tuple of str
        "resistor", "op-amp voltage noise" or "op-amp current noise".
    columns : ndarray, shape (n, m)
        One excitation vector per generator column (an op-amp's current
        noise has two columns, one per input).
    psd : ndarray, shape (m,)
        One-sided density of each column, A²/Hz or V²/Hz.
    group : ndarray of int, shape (m,)
        The source (index into `names`) each column belongs to.
    """

    names: tuple[str, ...]
    kinds: tuple[str, ...]
    columns: NDArray[np.float64]
    psd: NDArray[np.float64]
    group: NDArray[np.int64]


def is_model_resistor(element: Element, circuit: Circuit) -> bool:
    """True for an op-amp model's output resistance (``U1.ro`` to ``U1.int``)."""
    if element.kind != "resistor" or not element.name.endswith(".ro"):
        return False
    owner = element.name[:-3]
    return f"{owner}.int" in element.nodes and any(
        e.name == owner and e.kind == "opamp" for e in circuit.elements)


def opamp_input_coefficient(element: Element) -> float:
    """|∂(op-amp row)/∂v+|: how a voltage in series with v+ enters its MNA row.

    1 for a nullor, A0 for a gain-only model, ωt (rad/s) with a GBW (see
    :mod:`placer.analysis.mna`).
    """
    if element.gbw is not None:
        return 2 * math.pi * element.gbw
    if element.gain is not None:
        return float(element.gain)
    return 1.0


def _check_density(value: float | None, name: str) -> None:
    if value is not None and not (math.isfinite(value) and value > 0):
        raise SpecError(f"{name} = {value!r} must be a positive noise density")


def noise_sources(circuit: Circuit, *, temperature: float = DEFAULT_TEMPERATURE,
                  noise_voltage: float | None = None, noise_current: float | None = None,
                  lay: Layout | None = None) -> NoiseSources:
    """The noise generators of a numeric circuit, as MNA right-hand sides.

    Parameters
    ----------
    circuit : Circuit
        Every resistor with a value.
    temperature : float
        Kelvin.
    noise_voltage, noise_current : float, optional
        Every op-amp's input voltage noise (V/√Hz) and current noise
        (A/√Hz) densities, taken white; None leaves that source out.
    lay : Layout, optional
        The circuit's MNA layout (computed when absent).

    Returns
    -------
    NoiseSources

    Raises
    ------
    SpecError
        For a temperature or density that is not positive.
    """
    if not (math.isfinite(temperature) and temperature > 0):
        raise SpecError(f"temperature = {temperature!r} K must be positive")
    _check_density(noise_voltage, "noise_voltage")
    _check_density(noise_current, "noise_current")
    lay = lay or layout(circuit)
    node = lay.node_index
    names: list[str] = []
    kinds: list[str] = []
    columns: list[NDArray[np.float64]] = []
    psd: list[float] = []
    group: list[int] = []

    def column(entries: dict[int | None, float]) -> NDArray[np.float64]:
        vector = np.zeros(lay.size)
        for index, value in entries.items():
            if index is not None:
                vector[index] += value
        return vector

    for element in circuit.elements:
        if element.kind == "resistor" and not is_model_resistor(element, circuit):
            if element.value is None:
                raise TopologyError(f"element {element.name!r}: noise needs a resistor value")
            a, b = (node.get(n) for n in element.nodes)
            if a is None and b is None:
                continue
            group.append(len(names))
            names.append(element.name)
            kinds.append(_RESISTOR)
            columns.append(column({a: 1.0, b: -1.0}))
            psd.append(4 * BOLTZMANN * temperature / element.value)
        elif element.kind == "opamp":
            if noise_voltage is not None:
                group.append(len(names))
                names.append(f"{element.name} voltage noise")
                kinds.append(_VOLTAGE)
                row = lay.branch_index[element.name]
                columns.append(column({row: opamp_input_coefficient(element)}))
                psd.append(noise_voltage ** 2)
            inputs = [node.get(n) for n in element.nodes[:2]]
            if noise_current is not None and any(i is not None for i in inputs):
                for index in inputs:
                    if index is not None:
                        group.append(len(names))
                        columns.append(column({index: 1.0}))
                        psd.append(noise_current ** 2)
                names.append(f"{element.name} current noise")
                kinds.append(_CURRENT)
    matrix = np.array(columns).T if columns else np.zeros((lay.size, 0))
    return NoiseSources(names=tuple(names), kinds=tuple(kinds), columns=matrix,
                        psd=np.array(psd, float), group=np.array(group, dtype=np.int64))


@dataclass(frozen=True)
class NoiseSpectrum:
    """Output noise of every source over frequency.

    Attributes
    ----------
    frequency_hz : ndarray, shape (F,)
    names, kinds : tuple of str
        The sources (see :class:`NoiseSources`).
    source_psd : ndarray, shape (S, F)
        Each source's one-sided output density, V²/Hz.
    gain : ndarray, shape (F,)
        |H(j2πf)|, input to output, V/V.
    """

    frequency_hz: NDArray[np.float64]
    names: tuple[str, ...]
    kinds: tuple[str, ...]
    source_psd: NDArray[np.float64]
    gain: NDArray[np.float64]

    @property
    def psd(self) -> NDArray[np.float64]:
        """Total output density, V²/Hz (the sources add in power)."""
        return self.source_psd.sum(axis=0)

    @property
    def density(self) -> NDArray[np.float64]:
        """Total output density, V/√Hz."""
        return np.sqrt(self.psd)


def _adjoint(system: NumericSystem, omega: NDArray[np.float64]) -> NDArray[np.complex128]:
    """y(ω) with (G + jωC)ᵀ y = e_out, one row per frequency."""
    matrices = system.G.T[None, :, :] + 1j * omega[:, None, None] * system.C.T[None, :, :]
    rhs = np.zeros((omega.size, system.G.shape[0], 1), dtype=complex)
    rhs[:, system.output, 0] = 1.0
    try:
        return np.linalg.solve(matrices, rhs)[..., 0]
    except np.linalg.LinAlgError:
        raise TopologyError("the MNA matrix is singular at some frequency of the grid") from None


def transfers_to_output(adjoint: NDArray[np.complex128], sources: NoiseSources,
                        count: int) -> NDArray[np.float64]:
    """Per-source output density (S, F) from adjoint solutions (F, n)."""
    columns = np.abs(adjoint @ sources.columns) ** 2 * sources.psd[None, :]
    out = np.zeros((count, adjoint.shape[0]))
    np.add.at(out, sources.group, columns.T)
    return out


def noise_spectrum(circuit: Circuit, frequency_hz: ArrayLike, *,
                   temperature: float = DEFAULT_TEMPERATURE,
                   noise_voltage: float | None = None,
                   noise_current: float | None = None) -> NoiseSpectrum:
    """Every source's output noise density over frequency, by one adjoint solve each.

    Parameters
    ----------
    circuit : Circuit
        Every part with a number (op-amp models allowed).
    frequency_hz : array_like
        Hz.
    temperature, noise_voltage, noise_current
        As for :func:`noise_sources` (K, V/√Hz, A/√Hz).

    Returns
    -------
    NoiseSpectrum
    """
    frequency = np.atleast_1d(np.asarray(frequency_hz, dtype=float))
    system = numeric_system(circuit)
    sources = noise_sources(circuit, temperature=temperature, noise_voltage=noise_voltage,
                            noise_current=noise_current, lay=system.layout)
    y = _adjoint(system, 2 * math.pi * frequency)
    return NoiseSpectrum(frequency_hz=frequency, names=sources.names, kinds=sources.kinds,
                         source_psd=transfers_to_output(y, sources, len(sources.names)),
                         gain=np.abs(y @ system.b))


def noise_grid(band_hz: Sequence[float], poles: Iterable[complex] = (), *,
               points_per_decade: int = 100) -> NDArray[np.float64]:
    """Frequencies (Hz) over a band: log-spaced, denser around sharp poles.

    Parameters
    ----------
    band_hz : (float, float)
        Lower and upper edge, Hz.
    poles : sequence of complex
        Poles (rad/s); around each pole with Q above 1 a cluster of points
        spans ±6 half-bandwidths, so a narrow peak is integrated well.
    points_per_decade : int

    Returns
    -------
    ndarray
        Sorted, unique, within the band (both edges included).
    """
    low, high = float(band_hz[0]), float(band_hz[1])
    count = max(int(math.ceil(points_per_decade * math.log10(high / low))) + 1, 3)
    parts = [np.geomspace(low, high, count)]
    for pole in poles:
        pole = complex(pole)
        if pole.real >= 0 or abs(pole) < 2 * abs(pole.real):
            continue
        centre, half = abs(pole.imag) / (2 * math.pi), abs(pole.real) / (2 * math.pi)
        cluster = np.linspace(centre - 6 * half, centre + 6 * half, 61)
        parts.append(cluster[(cluster > low) & (cluster < high)])
    return np.unique(np.concatenate(parts))


def integrate_density(frequency_hz: ArrayLike, psd: ArrayLike) -> float:
    """∫ psd df over the grid, the density a power law between grid points.

    Between two grid points the density is taken as S_i·(f/f_i)^b (a
    straight line on log-log axes), integrated exactly: exact for a flat
    density and for the f^−2 slope above a pole, where trapezoids in f or
    in ln f are not; intervals where the density is zero fall back to
    trapezoids.

    Parameters
    ----------
    frequency_hz : array_like
        Sorted, positive, Hz.
    psd : array_like
        One-sided density on the grid (V²/Hz, or any unit per Hz).

    Returns
    -------
    float
        The integral (V², for V²/Hz).
    """
    f = np.asarray(frequency_hz, float)
    s = np.asarray(psd, float)
    f0, f1, s0, s1 = f[:-1], f[1:], s[:-1], s[1:]
    trapezoid = 0.5 * (s0 + s1) * (f1 - f0)
    positive = (s0 > 0) & (s1 > 0)
    ratio = f1 / f0
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = np.where(positive, np.log(np.where(positive, s1 / np.where(s0 > 0, s0, 1), 1.0))
                         / np.log(ratio), 0.0)
        p = slope + 1.0
        power = np.where(np.abs(p) > 1e-9, s0 * f0 * np.expm1(p * np.log(ratio)) / np.where(
            np.abs(p) > 1e-9, p, 1.0), s0 * f0 * np.log(ratio))
    return float(np.sum(np.where(positive, power, trapezoid)))


@dataclass(frozen=True)
class NoiseContribution:
    """One source's share of the integrated output noise."""

    source: str
    kind: str
    rms_v: float      # this source alone, integrated over the band, V rms
    share: float      # fraction of the output noise power, 0..1


@dataclass(frozen=True)
class NoiseAnalysis:
    """Output noise of a circuit over a band, with the dominant sources.

    Attributes
    ----------
    spectrum : NoiseSpectrum
        On the integration grid (`spectrum.frequency_hz`).
    band_hz : (float, float)
    temperature_k : float
    rms_v : float
        Integrated output noise over the band, V rms.
    peak_gain : float
        The largest |H| over the band, V/V.
    contributions : tuple of NoiseContribution
        Largest first.
    """

    spectrum: NoiseSpectrum
    band_hz: tuple[float, float]
    temperature_k: float
    rms_v: float
    peak_gain: float
    contributions: tuple[NoiseContribution, ...]

    @property
    def input_referred_rms_v(self) -> float:
        """The output rms over the largest gain in the band, V rms."""
        return self.rms_v / self.peak_gain if self.peak_gain > 0 else math.inf

    @property
    def input_referred_density(self) -> NDArray[np.float64]:
        """Output density over |H| at each frequency, V/√Hz (inf where H = 0)."""
        with np.errstate(divide="ignore"):
            return self.spectrum.density / self.spectrum.gain


def check_band(band_hz: Iterable[float]) -> tuple[float, float]:
    """(low, high) in Hz, both positive and finite, high above low."""
    low, high = (float(x) for x in band_hz)
    if not (math.isfinite(low) and math.isfinite(high) and low > 0 and high > low):
        raise SpecError(f"noise band {list(band_hz)!r} Hz: give two positive frequencies "
                        "with the upper edge above the lower")
    return low, high


def analyse_noise(circuit: Circuit, band_hz: Iterable[float], *,
                  temperature: float = DEFAULT_TEMPERATURE,
                  noise_voltage: float | None = None, noise_current: float | None = None,
                  poles: Iterable[complex] | None = None,
                  points_per_decade: int = 100) -> NoiseAnalysis:
    """Output noise density, integrated rms and dominant sources over a band.

    Parameters
    ----------
    circuit : Circuit
        Every part with a number.
    band_hz : (float, float)
        Integration band, Hz.
    temperature, noise_voltage, noise_current
        K, V/√Hz, A/√Hz (see :func:`noise_sources`).
    poles : sequence of complex, optional
        The circuit's poles (rad/s) for the grid (default: from the pencil).
    points_per_decade : int

    Returns
    -------
    NoiseAnalysis

    Raises
    ------
    SpecError
        For a band whose upper edge is not above the lower, or a
        non-positive temperature or density.
    """
    band = check_band(band_hz)
    if poles is None:
        poles = circuit_poles(circuit)
    grid = noise_grid(band, poles, points_per_decade=points_per_decade)
    spectrum = noise_spectrum(circuit, grid, temperature=temperature,
                              noise_voltage=noise_voltage, noise_current=noise_current)
    powers = np.array([integrate_density(grid, row) for row in spectrum.source_psd])
    total = float(powers.sum())
    order = np.argsort(-powers, kind="stable")
    contributions = tuple(
        NoiseContribution(source=spectrum.names[i], kind=spectrum.kinds[i],
                          rms_v=math.sqrt(max(powers[i], 0.0)),
                          share=float(powers[i] / total) if total > 0 else 0.0)
        for i in order)
    return NoiseAnalysis(spectrum=spectrum, band_hz=band, temperature_k=float(temperature),
                         rms_v=math.sqrt(max(total, 0.0)), peak_gain=float(spectrum.gain.max()),
                         contributions=contributions)
