"""Each op-amp's own loop by Bode's return ratio, against feedback-text formulas."""

import math
from pathlib import Path

import control
import numpy as np
import pytest

from placer.circuit.elements import Circuit, Element
from placer.design import design as run_design
from placer.errors import SpecError
from placer.evidence.prelayout import check_design, checked_circuit, settings_for
from placer.place.opamp import AmplifierSpec, apply_amplifier
from placer.analysis.pencil import natural_frequencies
from placer.analysis.return_ratio import (opamp_loop, opamp_loops, output_pin, phase_margin_of,
                                          return_ratio, return_ratio_coefficients,
                                          with_load_capacitance)
from placer.spec.reader import load_spec

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"


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


def control_margins(numerator, denominator):
    """python-control's phase margins and crossovers (Hz) of T = numerator/denominator.

    s = scale·x, the scale the roots' geometric mean, so the polynomial crossing search of
    ``stability_margins`` stays well conditioned; a phase margin does not change with the
    scale, a crossover scales with it.
    """
    roots = np.concatenate([np.roots(numerator), np.roots(denominator)])
    roots = roots[np.abs(roots) > 0]
    scale = float(np.exp(np.mean(np.log(np.abs(roots))))) if roots.size else 1.0
    num = numerator * scale ** np.arange(len(numerator) - 1, -1, -1.0)
    den = denominator * scale ** np.arange(len(denominator) - 1, -1, -1.0)
    top = np.max(np.abs(den))
    loop = control.tf(num / top, den / top)
    _, pm, _, _, wc, _ = control.stability_margins(loop, returnall=True)
    return np.asarray(pm, float), np.asarray(wc, float) * scale / (2 * math.pi)


def control_margin(numerator, denominator):
    """python-control's (margin, crossover Hz) at the one crossover of T."""
    pm, crossover = control_margins(numerator, denominator)
    assert len(pm) == 1
    return float(pm[0]), float(crossover[0])


@pytest.fixture(scope="module")
def notch():
    """The Fliege notch of examples/hum-notch.toml: the design and its checked circuit."""
    spec = load_spec(EXAMPLES / "hum-notch.toml")
    design = run_design(spec)
    settings = settings_for(spec)
    return design, checked_circuit(design.circuit, settings.loop_model, settings.load_capacitance_f)


def test_fliege_notch_margins_on_the_principal_branch(notch):
    # Each op-amp's return ratio starts at 180° (T(0) < 0: with the other op-amp's loop closed,
    # the feedback at DC is positive) and rises by 90° through a right-half-plane pole of T, so
    # the phase unwrapped from DC reads 270° at the crossover; the margin is 180° + ∠T read in
    # (−180°, 180°], and python-control's stability_margins of the same T (built from the
    # coefficients the module computes) is the outside reference, to 0.1°.
    design, circuit = notch
    reported = [loop for s in check_design(design).sections for loop in s.loops]
    assert [loop.opamp for loop in reported] == ["U1", "U2"]
    for loop in reported:
        assert -180.0 < loop.phase_margin_deg <= 180.0
        numerator, denominator = return_ratio_coefficients(circuit, loop.opamp)
        assert np.any(np.roots(denominator).real > 0)       # the loop's own RHP pole
        pm, crossover = control_margin(numerator, denominator)
        assert loop.phase_margin_deg == pytest.approx(pm, abs=0.1)
        assert loop.crossover_hz == pytest.approx(crossover, rel=1e-6)
    # At the crossover only the negative feedback through R2 = R1 is left: a follower of
    # β = 1/2 around a one-pole op-amp, PM ≈ 90° (common practice, from memory); the 50 Ω
    # output resistance costs a fraction of a degree.
    assert reported[0].phase_margin_deg == pytest.approx(90.0, abs=1.0)


def test_coefficients_give_the_solved_return_ratio(notch):
    # Internal consistency: N(jω)/D(jω) from the pencil's roots against the MNA solve.
    _, circuit = notch
    frequency = np.geomspace(1.0, 1e8, 17)
    s = 2j * math.pi * frequency
    for name in ("U1", "U2"):
        numerator, denominator = return_ratio_coefficients(circuit, name)
        np.testing.assert_allclose(np.polyval(numerator, s) / np.polyval(denominator, s),
                                   return_ratio(circuit, name, frequency), rtol=1e-8)


@pytest.mark.parametrize("gain", [None, 1e5])
def test_one_pole_follower_has_ninety_degrees(gain):
    # A one-pole op-amp as a voltage follower: T = A(s) = ωt/(s + ωt/A0), crossover at ≈ GBW,
    # PM = 180° − atan(ω_c·A0/ωt) = 90° for A0 → ∞ (common practice / textbook single-pole
    # result, from memory); with A0 = 1e5 the open-loop pole at 10 Hz adds 5.7e-4°.
    circuit = apply_amplifier(
        Circuit((Element("U1", "opamp", ("vin", "vout", "vout")),
                 Element("RL", "resistor", ("vout", "gnd"), value=10e3))),
        AmplifierSpec(gbw=1e6, gain=gain))
    loop = opamp_loop(circuit, "U1")
    assert loop.phase_margin_deg == pytest.approx(90.0, abs=1e-3)
    assert loop.crossover_hz == pytest.approx(1e6, rel=1e-6)
    pm, crossover = control_margin(*return_ratio_coefficients(circuit, "U1"))
    assert loop.phase_margin_deg == pytest.approx(pm, abs=0.1)
    assert loop.crossover_hz == pytest.approx(crossover, rel=1e-6)


def test_lagging_loop_margin_matches_python_control():
    # A follower through four RC sections of τ = 1 ms, each 10× the impedance of the one
    # before (little loading): T ≈ ωt/s·1/(1 + sτ)⁴ crosses over near (ωt/τ⁴)^(1/5) ≈ 9 krad/s,
    # where the lag is 90° + 4·atan(9) ≈ 425°: the phase unwrapped from DC lies past −360°.
    # The margin, read in (−180°, 180°], is python-control's (stability_margins, its PM
    # range), and, like python-control's, it says nothing of stability: this loop is unstable
    # (the circuit's natural frequencies judge that, as the pre-layout check does).
    elements = [Element("U1", "opamp", ("vin", "n0", "vout"))]
    node = "vout"
    for i in range(1, 5):
        nxt = "n0" if i == 4 else f"m{i}"
        elements += [Element(f"R{i}", "resistor", (node, nxt), value=1e3 * 10 ** i),
                     Element(f"C{i}", "capacitor", (nxt, "gnd"), value=1e-6 / 10 ** i)]
        node = nxt
    circuit = apply_amplifier(Circuit(tuple(elements)), AmplifierSpec(gbw=10e6))
    loop = opamp_loop(circuit, "U1")
    numerator, denominator = return_ratio_coefficients(circuit, "U1")
    pm, crossover = control_margin(numerator, denominator)
    assert -180.0 < loop.phase_margin_deg <= 180.0
    assert loop.phase_margin_deg == pytest.approx(pm, abs=0.1)
    assert loop.crossover_hz == pytest.approx(crossover, rel=1e-6)
    at = np.interp(math.log(loop.crossover_hz), np.log(loop.frequency_hz), loop.phase_deg)
    assert at < -360.0                             # the unwrapped phase is a turn away
    assert np.any(natural_frequencies(circuit).real > 0)


def test_phase_margin_range():
    # 180° + ∠T reduced by whole turns into (−180°, 180°]; python-control reads
    # np.remainder(∠T, 360) − 180, the same angle but for T(jω_c) = +1.
    for angle in (-90.0, -179.0, -181.0, 269.8, -450.2, 10.0, 179.0):
        assert phase_margin_of(angle) == pytest.approx(np.remainder(angle, 360.0) - 180.0, abs=1e-9)
    assert phase_margin_of(0.0) == 180.0 and phase_margin_of(360.0) == 180.0


def test_integrator_loop_ignores_the_rising_crossover():
    # An inverting integrator (R in, C feedback) of a one-pole op-amp: with the input grounded
    # β(s) = sτ/(1 + sτ), τ = RC, so T(s) = ωt/(s + ωt/A0)·sτ/(1 + sτ) vanishes at DC and
    # passes |T| = 1 twice (derivation as in the buffer test above; the formula built by hand
    # here, not by the module). python-control lists both crossovers: the rising one near
    # 1/(A0·τ) at ∠T = +90° (−90° in its range) and the falling one near ωt at about 90°; the
    # op-amp's own margin is the falling one's.
    r, c, gbw, a0 = 10e3, 10e-9, 1e6, 1e5
    circuit = apply_amplifier(
        Circuit((Element("U1", "opamp", ("gnd", "n1", "vout")),
                 Element("R1", "resistor", ("vin", "n1"), value=r),
                 Element("C1", "capacitor", ("n1", "vout"), value=c))),
        AmplifierSpec(gbw=gbw, gain=a0))
    omega_t, tau = 2 * math.pi * gbw, r * c
    numerator = np.array([omega_t * tau, 0.0])
    denominator = np.polymul([1.0, omega_t / a0], [tau, 1.0])
    pm, crossover = control_margins(numerator, denominator)
    assert len(pm) == 2
    low, high = np.argsort(crossover)
    assert crossover[low] == pytest.approx(1 / (a0 * tau) / (2 * math.pi), rel=1e-3)
    assert pm[low] == pytest.approx(-90.0, abs=0.1)
    loop = opamp_loop(circuit, "U1")
    assert loop.crossover_hz == pytest.approx(crossover[high], rel=1e-6)
    assert loop.phase_margin_deg == pytest.approx(pm[high], abs=0.1)
    assert 89.0 < loop.phase_margin_deg < 91.0 and not loop.low_margin
    module_pm, module_crossover = control_margins(*return_ratio_coefficients(circuit, "U1"))
    np.testing.assert_allclose(np.sort(module_crossover), np.sort(crossover), rtol=1e-6)
