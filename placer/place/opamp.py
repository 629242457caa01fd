"""Op-amp models applied to a circuit, and its network function at any GBW.

An op-amp with neither gain nor GBW is ideal (a nullor). A model gives
every op-amp of a circuit the DC gain A0 (V/V) and GBW (Hz) of the
single-pole model ``(s + ωt/A0)·v_out = ωt·(v+ − v−)``, ωt = 2π·GBW, of
:mod:`placer.analysis.mna` (:func:`apply_amplifier`); an output resistance becomes
an explicit resistor ``U1.ro`` from the op-amp's internal node ``U1.int``
to its output pin, so the symbolic and the numeric MNA paths both see it.
Because the GBW only enters through s/ωt, one symbolic derivation serves
every GBW (:func:`function_at_gbw`). Designing with the model is
:mod:`placer.place.amplifier`.

References
----------
R. Schaumann and M. E. Van Valkenburg, *Design of Analog Filters*, Oxford
University Press, 2001, the chapters on active-filter non-idealities
(from memory).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING, Any

import numpy as np

from ..circuit.elements import Circuit, Element
from ..errors import SpecError
from ..analysis.network import NetworkFunction, network_function
from ..units import format_value

if TYPE_CHECKING:
    from numpy.typing import ArrayLike

    from ..analysis.protocols import ComplexArray, FloatArray, PartFunction, PartValues
    from ..target.targets import Section

__all__ = [
    "AMPLIFIER_PRESETS",
    "AmplifierSpec",
    "GBW_SPREAD",
    "apply_amplifier",
    "check_amplifier",
    "describe_amplifier",
    "function_at_gbw",
    "ScaledFunction",
]

#: Generic op-amp models named by their figures only.
AMPLIFIER_PRESETS = {
    "1 MHz general purpose": {"gbw": 1e6, "gain": 10 ** (100 / 20), "output_resistance": 75.0},
    "10 MHz": {"gbw": 10e6, "gain": 10 ** (110 / 20), "output_resistance": 50.0},
    "100 MHz": {"gbw": 100e6, "gain": 10 ** (90 / 20), "output_resistance": 30.0},
}


@dataclass(frozen=True)
class AmplifierSpec:
    """A real op-amp model: GBW in Hz, DC gain in V/V, output resistance in ohm.

    The pre-layout checks (:mod:`placer.evidence.prelayout`) also read the input
    noise densities ``noise_voltage`` (V/√Hz) and ``noise_current``
    (A/√Hz), the peak ``output_swing`` (V), the ``slew_rate`` (V/s), the
    ``load_capacitance`` each op-amp drives (F) and the least resistive
    load it may drive, ``min_load`` (ohm; None: 2 kΩ). None of them makes
    the op-amp non-ideal for the placement.
    """

    gbw: float | None = None
    gain: float | None = None
    output_resistance: float | None = None
    preset: str = ""
    noise_voltage: float | None = None
    noise_current: float | None = None
    output_swing: float | None = None
    slew_rate: float | None = None
    load_capacitance: float | None = None
    min_load: float | None = None

    @property
    def is_ideal(self) -> bool:
        return self.gbw is None and self.gain is None

#: Relative spread of an op-amp's GBW around its typical value (process and
#: temperature) that a corrected design should bear (common practice, no source).
GBW_SPREAD = 0.25


# -- the model ---------------------------------------------------------------

def _check_model(amplifier: AmplifierSpec) -> tuple[float | None, float | None, float]:
    """Reject model figures no op-amp has; return (gain, gbw, resistance)."""
    gain, gbw = amplifier.gain, amplifier.gbw
    resistance = amplifier.output_resistance
    if gain is not None and not (math.isfinite(gain) and gain > 0):
        raise SpecError(
            f"amplifier gain = {gain!r} V/V must be a positive open-loop gain "
            "(V/V, for example 1e5; or '100 dB' in a spec file)"
        )
    if gbw is not None and not (math.isfinite(gbw) and gbw > 0):
        raise SpecError(
            f"amplifier gbw = {gbw!r} Hz must be a positive frequency "
            "(for example 1e6 for 1 MHz)"
        )
    if resistance is not None and not (math.isfinite(resistance) and resistance >= 0):
        raise SpecError(
            f"amplifier output_resistance = {resistance!r} ohm must be zero or positive"
        )
    return gain, gbw, resistance or 0.0


def describe_amplifier(amplifier: AmplifierSpec) -> str:
    """The op-amp model in words, as every output shows it.

    >>> describe_amplifier(AmplifierSpec(gbw=10e6, gain=10 ** (110 / 20), output_resistance=50.0))
    'GBW 10 MHz, DC gain 110 dB (3.16e+05 V/V), output resistance 50 Ω'
    >>> describe_amplifier(AmplifierSpec())
    'ideal'
    """
    words = []
    if amplifier.gbw is not None:
        words.append(f"GBW {format_value(amplifier.gbw, 'Hz')}")
    if amplifier.gain is not None:
        words.append(f"DC gain {20 * math.log10(amplifier.gain):.0f} dB ({amplifier.gain:.3g} V/V)")
    if amplifier.output_resistance:
        words.append(f"output resistance {format_value(amplifier.output_resistance, 'ohm')}")
    return ", ".join(words) or "ideal"


def apply_amplifier(circuit: Circuit, amplifier: AmplifierSpec) -> Circuit:
    """Give every op-amp of a circuit the amplifier model.

    Parameters
    ----------
    circuit : Circuit
    amplifier : AmplifierSpec
        ``gbw`` (Hz), ``gain`` (DC open-loop, V/V), ``output_resistance``
        (ohm); None fields stay ideal.

    Returns
    -------
    Circuit
        Op-amps carry ``gain`` and ``gbw``. With ``output_resistance`` > 0,
        op-amp ``U1`` drives a new node ``U1.int`` and a resistor ``U1.ro``
        joins it to the op-amp's output node. A circuit with no op-amp and
        no controlled source comes back unchanged.

    Raises
    ------
    SpecError
        For a non-positive gain or GBW, a negative output resistance, or a
        circuit whose only amplifiers are controlled sources (the model
        applies to op-amps only).

    Examples
    --------
    >>> from placer.circuit.library import get_topology
    >>> model = AmplifierSpec(gbw=1e6, gain=1e5, output_resistance=50.0)
    >>> built = apply_amplifier(get_topology("sallen-key-lowpass-unity").circuit, model)
    >>> [(e.name, e.nodes) for e in built.elements if e.name.startswith("U1")]
    [('U1', ('n2', 'vout', 'U1.int')), ('U1.ro', ('U1.int', 'vout'))]
    """
    gain, gbw, resistance = _check_model(amplifier)
    opamps = [e for e in circuit.elements if e.kind == "opamp"]
    if not opamps:
        sources = [e.name for e in circuit.elements if e.kind in ("vcvs", "ccvs", "cccs", "vccs")]
        if sources and (gain is not None or gbw is not None or resistance > 0):
            label = f"circuit {circuit.name!r}" if circuit.name else "the circuit"
            raise SpecError(
                f"the amplifier model ({describe_amplifier(amplifier)}) applies to op-amps only, and "
                f"{label} has none: its gain comes from {sources[0]!r}, an ideal controlled "
                "source; write the amplifier as an 'opamp' element (with its gain-setting "
                "resistors) to model it, or leave [amplifier] out"
            )
        return circuit
    names = {e.name for e in circuit.elements}
    nodes = set(circuit.nodes)
    elements = []
    for element in circuit.elements:
        if element.kind != "opamp":
            elements.append(element)
            continue
        modelled = replace(element, gain=gain, gbw=gbw)
        if resistance > 0:
            internal, resistor = f"{element.name}.int", f"{element.name}.ro"
            if internal in nodes or resistor in names:
                raise SpecError(
                    f"op-amp {element.name!r}: the names {internal!r} and {resistor!r} for its "
                    "output resistance are already used in the circuit; rename that node or element"
                )
            output = element.nodes[2]
            modelled = replace(modelled, nodes=(element.nodes[0], element.nodes[1], internal))
            elements.append(modelled)
            elements.append(Element(resistor, "resistor", (internal, output), value=float(resistance)))
        else:
            elements.append(modelled)
    return replace(circuit, elements=tuple(elements), _graph=None)


# -- the modelled network function at any GBW, from one derivation -----------

#: The GBW (Hz) of the one derivation the others are scaled from: ωt = 1 rad/s,
#: so the op-amp stamps stay integers.
_REFERENCE_GBW = 1 / (2 * math.pi)
_REACTIVE_KINDS = ("capacitor", "inductor")


@dataclass(frozen=True)
class ScaledFunction:
    """H(s) of the modelled circuit at one GBW, by frequency scaling.

    Every frequency-dependent entry of the MNA matrix is s·C, s·L or an
    op-amp row ``(s + ωt/A0)·v_out = ωt·(v+ − v−)``. Dividing the op-amp
    rows by ωt leaves them functions of s/ωt, and s·C = (s/ωt)·(C·ωt), so
    ``H(s; R, C, L, ωt) = H(s/ωt; R, C·ωt, L·ωt, 1)``: the function at
    ``ωt = 1 rad/s`` (`reference`) evaluated at scaled reactances and a
    scaled s. The DC gain A0 and every resistance are untouched. It offers
    the evaluator interface of :class:`placer.analysis.network.NetworkFunction` that
    :class:`placer.analysis.dominant.DominantFunction`, the solver and the snapper use.
    """

    reference: NetworkFunction
    omega_t: float          # rad/s, over the reference's (which is 1 rad/s)
    reactive: frozenset[str]   # the part symbols of capacitors and inductors
    opamp_count: int

    @property
    def symbols(self) -> Mapping[str, Any]:
        return self.reference.symbols

    @property
    def gain_kind(self) -> str:
        return self.reference.gain_kind

    @property
    def order(self) -> int:
        return self.reference.order

    def _scaled(self, values: PartValues) -> dict[str, ArrayLike]:
        t = self.omega_t
        return {name: (np.asarray(value, dtype=float) * t if name in self.reactive else value)
                for name, value in values.items()}

    def coefficients(self, values: PartValues) -> tuple[FloatArray, FloatArray]:
        """Coefficients of N and D, highest power of s first (as NetworkFunction's)."""
        numerator, denominator = self.reference.coefficients(self._scaled(values))
        # D(s) = ωt^m·D_ref(s/ωt) with m op-amp rows, the size the direct
        # derivation's coefficients have; the common factor cancels in H.
        return self._powers(numerator), self._powers(denominator)

    def _powers(self, rows: FloatArray) -> FloatArray:
        powers = np.arange(rows.shape[0] - 1, -1, -1, dtype=float)
        factor = self.omega_t ** (self.opamp_count - powers)
        return rows * factor.reshape((-1,) + (1,) * (rows.ndim - 1))

    def poles(self, values: PartValues) -> ComplexArray:
        """Poles in rad/s for one set of part values."""
        return self.reference.poles(self._scaled(values)) * self.omega_t

    def zeros(self, values: PartValues) -> ComplexArray:
        """Finite zeros in rad/s for one set of part values."""
        return self.reference.zeros(self._scaled(values)) * self.omega_t


def function_at_gbw(circuit: Circuit, amplifier: AmplifierSpec) -> Callable[[float], PartFunction]:
    """GBW (Hz) → the network function of `circuit` with that op-amp model.

    Parameters
    ----------
    circuit : Circuit
    amplifier : AmplifierSpec
        The model; its DC gain and output resistance are kept, its GBW is
        the one asked for.

    Returns
    -------
    callable
        ``gbw → network function``: one symbolic derivation scaled to every
        GBW (:class:`ScaledFunction`) when every capacitor and inductor
        carries a symbol; otherwise (a fixed reactance would need scaling
        inside the derivation) one derivation per GBW.

    Examples
    --------
    >>> from placer.circuit.library import get_topology
    >>> circuit = get_topology("sallen-key-lowpass-unity").circuit
    >>> family = function_at_gbw(circuit, AmplifierSpec(gain=1e5))
    >>> values = {"R1": 1e4, "R2": 1e4, "C1": 2e-8, "C2": 1e-8}
    >>> direct = network_function(apply_amplifier(circuit, AmplifierSpec(gbw=1e6, gain=1e5)))
    >>> bool(np.allclose(np.sort_complex(family(1e6).poles(values)),
    ...                  np.sort_complex(direct.poles(values)), rtol=1e-9))
    True
    """
    fixed_reactance = any(e.kind in _REACTIVE_KINDS and not e.is_symbolic
                          for e in circuit.elements)
    if fixed_reactance:
        def direct(gbw: float) -> PartFunction:
            return network_function(apply_amplifier(circuit, replace(amplifier, gbw=gbw)))
        return direct
    reference = network_function(
        apply_amplifier(circuit, replace(amplifier, gbw=_REFERENCE_GBW)))
    omega_reference = 2 * math.pi * _REFERENCE_GBW
    # every capacitor and inductor is symbolic here (no fixed reactance)
    reactive = frozenset(e.symbol for e in circuit.elements
                         if e.kind in _REACTIVE_KINDS and e.symbol is not None)
    count = circuit.opamp_count

    def scaled(gbw: float) -> PartFunction:
        return ScaledFunction(reference, 2 * math.pi * gbw / omega_reference, reactive, count)
    return scaled



def check_amplifier(amplifier: AmplifierSpec, section: Section, *, index: int | None = None) -> None:
    """Reject a GBW at or below a section's f0; check the model's figures.

    Parameters
    ----------
    amplifier : AmplifierSpec
    section : placer.target.targets.Section
    index : int, optional
        The section's number in the cascade, for the message.

    Raises
    ------
    SpecError
        Naming the GBW, the section and its f0 (both in Hz).
    """
    _check_model(amplifier)
    if amplifier.gbw is None:
        return
    f0 = section.omega0 / (2 * math.pi)
    if amplifier.gbw <= f0:
        where = f"section {index}'s" if index is not None else "the section's"
        q = section.q if section.q is not None else 0.5
        raise SpecError(
            f"gbw {format_value(amplifier.gbw, 'Hz')} is at or below {where} f0 "
            f"{format_value(f0, 'Hz', digits=2)}; an op-amp needs GBW well above f0, "
            f"typically ≥ 100·f0·Q ({format_value(100 * f0 * q, 'Hz')} here)"
        )
