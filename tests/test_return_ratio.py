"""Each op-amp's own loop by Bode's return ratio, against feedback-text formulas."""

import math

import numpy as np
import pytest

from placer.circuit.elements import Circuit, Element
from placer.errors import SpecError
from placer.place.opamp import AmplifierSpec, apply_amplifier
from placer.analysis.return_ratio import opamp_loop, opamp_loops, output_pin, return_ratio, with_load_capacitance


def buffer(capacitance=1e-9):
    """A unity-gain buffer driving a capacitor C_L from its output to the reference."""
    return Circuit((Element("U1", "opamp", ("vin", "vout", "vout")),
                    Element("CL", "capacitor", ("vout", "gnd"), value=capacitance)))


@pytest.mark.parametrize("resistance, capacitance", [(50.0, 1e-9), (100.0, 10e-9), (30.0, 100e-12)])
def test_unity_buffer_driving_a_capacitance(resistance, capacitance):
    # A unity-gain buffer of a single-pole op-amp (ωt, infinite DC gain) with output resistance
    # R_o driving C_L: T(s) = ωt/(s·(1 + s·R_o·C_L)) and PM = 90° − atan(ω_c·R_o·C_L) at the
    # crossover ω_c where |T| = 1 (standard feedback texts). Derivation: with the op-amp's
    # source set to 1 V, v_out = 1/(1 + sτ), τ = R_o·C_L, so v+ − v− = −1/(1 + sτ) and
    # T = −A(s)·(v+ − v−) = (ωt/s)/(1 + sτ). |T| = 1 gives ω²(1 + ω²τ²) = ωt², a quadratic in
    # ω²: ω_c² = (√(1 + 4τ²ωt²) − 1)/(2τ²).
    gbw = 10e6
    omega_t, tau = 2 * math.pi * gbw, resistance * capacitance
    circuit = apply_amplifier(buffer(capacitance), AmplifierSpec(gbw=gbw, output_resistance=resistance))
    frequency = np.array([1e3, 1e6, 3e7])
    s = 2j * math.pi * frequency
    np.testing.assert_allclose(return_ratio(circuit, "U1", frequency),
                               omega_t / (s * (1 + s * tau)), rtol=1e-9)
    omega_c = math.sqrt((math.sqrt(1 + 4 * tau ** 2 * omega_t ** 2) - 1) / (2 * tau ** 2))
    loop = opamp_loop(circuit, "U1")
    assert loop.crossover_hz == pytest.approx(omega_c / (2 * math.pi), rel=1e-8)
    assert loop.phase_margin_deg == pytest.approx(90.0 - math.degrees(math.atan(omega_c * tau)),
                                                  abs=1e-6)
    assert loop.gain_margin_db is None            # the phase tends to −180° but never crosses it
    assert loop.low_margin == (loop.phase_margin_deg < 45.0)


def test_heavy_load_is_flagged():
    # τ·ωt = 2π·10 MHz·100 Ω·10 nF ≈ 62.8: ω_c·τ ≫ 1, so PM ≈ 90° − atan(7.9) ≈ 7°, below the
    # 45° floor (common practice, no source).
    circuit = with_load_capacitance(
        apply_amplifier(buffer(1e-9), AmplifierSpec(gbw=10e6, output_resistance=100.0)), 9e-9)
    assert circuit.element("U1.cl").nodes == ("vout", "gnd")     # at the pin, past U1.ro
    loop = opamp_loop(circuit, "U1")
    assert loop.phase_margin_deg < 10.0 and loop.low_margin


def test_non_inverting_amplifier_loop_gain_is_a_times_beta():
    # T = A(s)·β with β = R1/(R1 + R2) (standard feedback texts): an integrating op-amp
    # A = ωt/s crosses over at ωt·β with 90° of margin; with A0 the low-frequency loop gain
    # is A0·β.
    r1, r2, gbw, a0 = 1e3, 9e3, 1e6, 1e5
    circuit = apply_amplifier(
        Circuit((Element("U1", "opamp", ("vin", "n1", "vout")),
                 Element("R1", "resistor", ("n1", "gnd"), value=r1),
                 Element("R2", "resistor", ("n1", "vout"), value=r2))),
        AmplifierSpec(gbw=gbw, gain=a0))
    beta = r1 / (r1 + r2)
    loop = opamp_loop(circuit, "U1")
    # |T| = 1 where ωt·β/|jω + ωt/A0| = 1: ω = √((ωt·β)² − (ωt/A0)²)
    omega_t = 2 * math.pi * gbw
    omega_c = math.sqrt((omega_t * beta) ** 2 - (omega_t / a0) ** 2)
    assert loop.crossover_hz == pytest.approx(omega_c / (2 * math.pi), rel=1e-8)
    assert loop.phase_margin_deg == pytest.approx(
        180.0 - math.degrees(math.atan2(omega_c, omega_t / a0)), abs=1e-6)
    assert 10 ** (loop.low_frequency_gain_db / 20) == pytest.approx(a0 * beta, rel=1e-3)


def test_every_op_amp_gets_its_loop_and_its_pin():
    circuit = apply_amplifier(buffer(), AmplifierSpec(gbw=1e6, output_resistance=50.0))
    assert output_pin(circuit, "U1") == "vout"
    assert [loop.opamp for loop in opamp_loops(circuit)] == ["U1"]


def test_ideal_op_amp_needs_a_model():
    with pytest.raises(SpecError, match="needs an op-amp model"):
        opamp_loop(buffer(), "U1")


def test_negative_load_capacitance():
    with pytest.raises(SpecError, match="load_capacitance"):
        with_load_capacitance(buffer(), -1e-12)
