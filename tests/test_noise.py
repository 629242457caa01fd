"""Noise on the MNA: thermal noise, op-amp noise, integration, bad input."""

import math

import numpy as np
import pytest

from placer.circuit.elements import Circuit, Element
from placer.errors import SpecError
from placer.analysis.mna import numeric_system
from placer.analysis.noise import BOLTZMANN, analyse_noise, noise_sources, noise_spectrum
from placer.place.opamp import AmplifierSpec, apply_amplifier


def rc_lowpass(r, c):
    return Circuit((Element("R1", "resistor", ("vin", "vout"), value=r),
                    Element("C1", "capacitor", ("vout", "gnd"), value=c)))


def non_inverting(r1, r2):
    return Circuit((Element("U1", "opamp", ("vin", "n1", "vout")),
                    Element("R1", "resistor", ("n1", "gnd"), value=r1),
                    Element("R2", "resistor", ("n1", "vout"), value=r2)))


@pytest.mark.parametrize("resistance", [1e3, 100e3])
def test_rc_lowpass_integrates_to_kt_over_c(resistance):
    # v² = kT/C over all frequencies, whatever R is (Johnson 1928, Nyquist 1928; standard
    # electronics texts): 10 nF at 300 K gives 0.643 µV rms; a band five decades either side
    # of the corner leaves out 2/(π·1e5) of it.
    c = 10e-9
    corner = 1 / (2 * math.pi * resistance * c)
    result = analyse_noise(rc_lowpass(resistance, c), (corner * 1e-5, corner * 1e5), temperature=300.0)
    assert result.rms_v == pytest.approx(0.643e-6, rel=5e-3)
    assert result.contributions[0].source == "R1" and result.contributions[0].share == pytest.approx(1.0)


def test_two_resistors_in_parallel_seen_from_their_common_node():
    # √(4kT·R1‖R2) at the node two resistors share (Johnson 1928; standard electronics texts):
    # with the input source shorted, R1 and R2 both join vout to the reference.
    r1, r2 = 10e3, 4.7e3
    circuit = Circuit((Element("R1", "resistor", ("vin", "vout"), value=r1),
                       Element("R2", "resistor", ("vout", "gnd"), value=r2)))
    spectrum = noise_spectrum(circuit, [1.0, 1e3, 1e6], temperature=290.0)
    expected = math.sqrt(4 * BOLTZMANN * 290.0 * r1 * r2 / (r1 + r2))
    np.testing.assert_allclose(spectrum.density, expected, rtol=1e-12)


@pytest.mark.parametrize("model", [AmplifierSpec(), AmplifierSpec(gbw=10e6, gain=1e6)])
def test_non_inverting_amplifier_voltage_noise_gain(model):
    # A non-inverting amplifier's output noise from the op-amp's e_n is e_n·(1 + R2/R1) at low
    # frequency (op-amp noise application notes; common practice, no source); its current noise
    # at the inverting input flows through R2: i_n·R2 (same source).
    r1, r2, en, i_n = 1e3, 9e3, 8e-9, 0.5e-12
    circuit = apply_amplifier(non_inverting(r1, r2), model)
    spectrum = noise_spectrum(circuit, [1.0], noise_voltage=en, noise_current=i_n)
    by_name = dict(zip(spectrum.names, np.sqrt(spectrum.source_psd[:, 0])))
    assert by_name["U1 voltage noise"] == pytest.approx(en * (1 + r2 / r1), rel=1e-5)
    assert by_name["U1 current noise"] == pytest.approx(i_n * r2, rel=1e-5)


def test_adjoint_transfers_match_direct_solves():
    # Each source's transfer from a forward solve with that source alone as the right-hand
    # side (the definition) equals the adjoint network's (Director and Rohrer 1969).
    circuit = apply_amplifier(non_inverting(2.2e3, 6.8e3), AmplifierSpec(gbw=1e6, gain=1e5))
    frequency = np.array([10.0, 1e4, 3e5])
    spectrum = noise_spectrum(circuit, frequency, noise_voltage=5e-9, noise_current=1e-12)
    system = numeric_system(circuit)
    sources = noise_sources(circuit, noise_voltage=5e-9, noise_current=1e-12)
    for k, f in enumerate(frequency):
        matrix = system.G + 2j * math.pi * f * system.C
        direct = np.zeros(len(sources.names))
        for column in range(sources.columns.shape[1]):
            x = np.linalg.solve(matrix, sources.columns[:, column].astype(complex))
            direct[sources.group[column]] += abs(x[system.output]) ** 2 * sources.psd[column]
        np.testing.assert_allclose(spectrum.source_psd[:, k], direct, rtol=1e-10)


def test_input_referred_figure_is_the_output_over_the_gain():
    # Input-referred noise = output noise / gain (common practice, no source): a gain of 10.
    result = analyse_noise(non_inverting(1e3, 9e3), (10.0, 1e4), noise_voltage=8e-9)
    assert result.peak_gain == pytest.approx(10.0, rel=1e-12)
    assert result.input_referred_rms_v == pytest.approx(result.rms_v / 10.0, rel=1e-12)
    # e_n alone over 10 Hz – 10 kHz: (8 nV·10)²·(9990 Hz), plus the resistors' 4kT·(R1‖R2)·100
    resistors = 4 * BOLTZMANN * 300.0 * (1e3 * 9e3 / 1e4) * 100.0
    expected = math.sqrt(((80e-9) ** 2 + resistors) * 9990.0)
    assert result.rms_v == pytest.approx(expected, rel=1e-6)


def test_model_output_resistance_makes_no_noise():
    # An op-amp's output resistance belongs to its model; its noise is in e_n (common practice).
    circuit = apply_amplifier(non_inverting(1e3, 9e3), AmplifierSpec(gbw=1e6, output_resistance=50.0))
    assert "U1.ro" not in noise_sources(circuit).names


@pytest.mark.parametrize("kwargs, match", [
    ({"temperature": 0.0}, "temperature"),
    ({"temperature": -10.0}, "temperature"),
    ({"noise_voltage": -1e-9}, "noise_voltage"),
    ({"noise_current": 0.0}, "noise_current"),
])
def test_bad_noise_settings(kwargs, match):
    with pytest.raises(SpecError, match=match):
        noise_sources(rc_lowpass(1e3, 1e-9), **kwargs)


@pytest.mark.parametrize("band", [(1e3, 1e3), (1e4, 1e3), (0.0, 1e3)])
def test_bad_band(band):
    with pytest.raises(SpecError, match="upper edge above the lower"):
        analyse_noise(rc_lowpass(1e3, 1e-9), band)
