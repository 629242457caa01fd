"""Tests of placer.loops.compensator, placer.loops.tolerance, placer.spec.loop_table and placer.loops.plants.

K-factor design, margins, Monte Carlo, [loop] specs.
"""

import dataclasses
import json
import math
import tomllib
from pathlib import Path

import control
import numpy as np
import pytest

from placer.circuit.elements import Circuit, Element, circuit_from_dict
from placer.errors import SpecError, UnreachableTarget
from placer.eseries import nearest
from placer.circuit.library import find_topologies
from placer.loops.compensator import MAX_BOOST_DEG, design_compensator, k_factor, k_factor_placement
from placer.spec.loop_table import loop_from_table, loop_to_dict, run_loop
from placer.loops.tolerance import loop_monte_carlo
from placer.analysis.network import circuit_response
from placer.loops.plants import (
    boost_plant,
    buck_plant,
    plant_from_coefficients,
    plant_from_roots,
    plant_from_table,
)
from placer.evidence.verify import margins

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
TWO_PI = 2 * math.pi


def _buck(**changes):
    values = dict(vin=12.0, inductance=10e-6, capacitance=100e-6, esr=0.02, load=1.0, ramp=1.0)
    values.update(changes)
    return buck_plant(**values)


def _boost(**changes):
    values = dict(vout=12.0, inductance=4.7e-6, capacitance=220e-6, esr=0.05, load=12.0,
                  ramp=1.0)
    values.update(changes)
    return boost_plant(5.0, **values)


def _example(name):
    return tomllib.loads((EXAMPLES / name).read_text(encoding="utf-8"))


@pytest.fixture(scope="module")
def examples():
    return {name: run_loop(_example(name), source=name, samples=400, seed=3)
            for name in ("buck-loop.toml", "boost-loop.toml")}


# -- K factor (Venable, "The K Factor", Powercon 10, 1983; from memory) ------

def test_type2_k_factor_relations():
    # K = tan(boost/2 + 45°); boost 60° gives tan 75° = 2 + √3 exactly (hand-solved).
    assert k_factor(60.0, "type2") == pytest.approx(2 + math.sqrt(3), rel=1e-12)
    plant = plant_from_roots([-TWO_PI * 1e3], [], TWO_PI * 1e3 * 10.0)   # 10/(1 + s/2π·1k)
    placement = k_factor_placement(plant, 10e3, 60.0, compensator="type2")
    phase = -math.degrees(math.atan(10.0))             # the single pole's phase at 10 kHz
    boost = 60.0 - phase - 90.0
    k = math.tan(math.radians(boost / 2 + 45.0))
    assert placement.required_boost_deg == pytest.approx(boost, abs=1e-9)
    assert placement.k == pytest.approx(k, rel=1e-12)
    assert placement.zero_hz == pytest.approx(10e3 / k, rel=1e-12)
    assert placement.pole_hz == pytest.approx(10e3 * k, rel=1e-12)
    # The pair (1 + s/ωz)/(1 + s/ωp) adds exactly the boost at fc: atan K − atan(1/K).
    added = math.degrees(math.atan(k) - math.atan(1 / k))
    assert added == pytest.approx(boost, abs=1e-9)


def test_type3_k_factor_relations():
    # K = tan²(boost/4 + 45°); boost 90° gives tan² 67.5° = (1 + √2)² = 3 + 2√2 (hand-solved).
    assert k_factor(90.0, "type3") == pytest.approx(3 + 2 * math.sqrt(2), rel=1e-12)
    placement = k_factor_placement(_buck(), 20e3, 60.0, compensator="type3")
    boost = 60.0 - placement.plant_phase_deg - 90.0
    k = math.tan(math.radians(boost / 4 + 45.0)) ** 2
    assert placement.k == pytest.approx(k, rel=1e-12)
    assert placement.zero_hz == pytest.approx(20e3 / math.sqrt(k), rel=1e-12)
    assert placement.pole_hz == pytest.approx(20e3 * math.sqrt(k), rel=1e-12)


def test_designed_circuit_has_the_placed_roots():
    # The topology's symbolic network function (independent MNA) against the placement.
    design = design_compensator(_buck(), 20e3, 60.0, compensator="type3")
    placement = design.placement
    zeros = np.sort(np.abs(design.network.zeros(design.continuous)))
    poles = np.sort(np.abs(design.network.poles(design.continuous)))
    np.testing.assert_allclose(zeros, [placement.zero] * 2, rtol=1e-6)
    np.testing.assert_allclose(poles[0], 0.0, atol=1e-6 * placement.zero)
    np.testing.assert_allclose(poles[1:], [placement.pole] * 2, rtol=1e-6)


# -- margins against python-control (reference library) ----------------------

@pytest.mark.parametrize("ratio, pm, x", [(math.sqrt(2), 45.0, 1.0), (math.sqrt(12), 30.0, math.sqrt(3))])
def test_phase_margin_of_integrator_with_pole(ratio, pm, x):
    # L = k/(s(1 + s/p)). |L(jω)| = 1 ⇔ x²(1 + x²) = (k/p)², x = ω/p; PM = 90° − atan x.
    # k/p = √2 → x = 1, PM = 45°; k/p = √12 → x = √3, PM = 30° (hand-solved).
    p = 1e3
    loop = control.tf([ratio * p * p], [1.0, p, 0.0])
    found = margins(loop)
    gm, reference_pm, wg, wp = control.margin(loop)          # python-control as reference
    assert found.phase_margin_deg == pytest.approx(pm, abs=1e-9)
    assert found.phase_margin_deg == pytest.approx(reference_pm, abs=1e-9)
    assert found.crossover_hz * TWO_PI == pytest.approx(x * p, rel=1e-9)


# -- plants ----------------------------------------------------------------

def test_buck_dc_gain_and_double_pole():
    # DC gain Vin/Vramp; double pole at 1/(2π√(LC)) with no ESR (common practice).
    plant = _buck(esr=0.0)
    assert plant.low_frequency_gain == pytest.approx(12.0, rel=1e-12)
    assert abs(plant.response(1e-3)) == pytest.approx(12.0, rel=1e-9)
    np.testing.assert_allclose(np.abs(plant.poles), 1 / math.sqrt(10e-6 * 100e-6), rtol=1e-12)
    assert plant.zeros == ()
    # With ESR: its zero at 1/(2π·ESR·C) (common practice).
    assert abs(_buck().zeros[0]) == pytest.approx(1 / (0.02 * 100e-6), rel=1e-12)


def test_buck_matches_mna_of_the_averaged_circuit():
    # Vin·d drives L into R ∥ (ESR + C); placer's numeric MNA of that circuit
    # (an independent path), times Vin/Vramp, against the closed form.
    circuit = Circuit((
        Element("L", "inductor", ("vin", "vout"), value=10e-6),
        Element("R", "resistor", ("vout", "gnd"), value=1.0),
        Element("r", "resistor", ("vout", "n1"), value=0.02),
        Element("C", "capacitor", ("n1", "gnd"), value=100e-6),
    ))
    omega = TWO_PI * np.logspace(1, 6, 50)
    mna = 12.0 / 1.0 * circuit_response(circuit, omega)
    np.testing.assert_allclose(_buck().response(omega), mna, rtol=1e-9)


def test_boost_rhp_zero_double_pole_and_dc_gain():
    # ωz = R(1−D)²/L in the right half-plane, ω0 = (1−D)/√(LC), DC gain
    # Vin/((1−D)²·Vramp): Erickson & Maksimović, ch. 8 (from memory).
    plant = boost_plant(5.0, duty=0.5, inductance=10e-6, capacitance=100e-6, esr=0.0,
                        load=10.0, ramp=2.0)
    rhp = [z for z in plant.zeros if z.real > 0]
    assert len(rhp) == 1 and rhp[0].real == pytest.approx(10.0 * 0.25 / 10e-6, rel=1e-12)
    np.testing.assert_allclose(np.abs(plant.poles), 0.5 / math.sqrt(1e-9), rtol=1e-12)
    assert plant.low_frequency_gain == pytest.approx(5.0 / (0.25 * 2.0), rel=1e-12)
    # The RHP zero lags: phase at ωz is about −45° below the double pole's −180°.
    assert plant.phase_deg(1e9) == pytest.approx(-180.0 - 90.0, abs=0.1)
    with pytest.raises(SpecError, match="vout"):
        boost_plant(5.0, vout=3.3, inductance=1e-6, capacitance=1e-6, esr=0.0, load=1.0, ramp=1.0)


def test_plant_transfer_function_matches_product_form():
    plant = _boost()
    omega = TWO_PI * np.logspace(1, 6, 40)
    response = control.frequency_response(plant.transfer_function(), omega)
    np.testing.assert_allclose(response.complex.ravel(), plant.response(omega), rtol=1e-9)


def test_plant_tables_and_coefficients():
    plant = plant_from_table({"type": "roots", "poles": [[-100, 1000], [-100, -1000]],
                              "dc_gain": 4.0, "units": "Hz"})
    assert plant.low_frequency_gain == pytest.approx(4.0, rel=1e-12)
    np.testing.assert_allclose(sorted(p.imag for p in plant.poles), [-TWO_PI * 1e3, TWO_PI * 1e3])
    same = plant_from_coefficients([2.0, 2.0], [1.0, 3.0, 2.0])            # 2(s+1)/((s+1)(s+2))
    assert same.gain == 2.0 and sorted(p.real for p in same.poles) == pytest.approx([-2.0, -1.0])
    with pytest.raises(SpecError, match=r"\[-100, 1000\].*conjugate"):
        plant_from_table({"type": "roots", "poles": [[-100, 1000]], "gain": 1.0})
    with pytest.raises(SpecError, match="'inductnce'.*'inductance'"):
        plant_from_table({"type": "buck", "vin": 12, "inductnce": "10u"}, source="loop.plant")
    with pytest.raises(SpecError, match="'buk'.*'buck'"):
        plant_from_table({"type": "buk"})


# -- the examples ----------------------------------------------------------

@pytest.mark.parametrize("name", ["buck-loop.toml", "boost-loop.toml"])
def test_example_loops_meet_their_targets(examples, name):
    result = examples[name]
    design, spec = result.design, result.spec
    assert design.continuous_margins.phase_margin_deg == pytest.approx(spec.phase_margin_deg,
                                                                       abs=1e-6)
    assert design.continuous_margins.crossover_hz == pytest.approx(spec.crossover_hz, rel=1e-6)
    snapped = design.snapped_margins
    assert snapped.stable
    assert spec.phase_margin_deg <= snapped.phase_margin_deg <= spec.phase_margin_deg + 1.0
    assert snapped.crossover_hz == pytest.approx(spec.crossover_hz, rel=0.05)
    for symbol, value in design.snapped.items():   # on the series: IEC 60063
        assert nearest(value, design.series[symbol]) == pytest.approx(value, rel=1e-12)
        low, high = (1e3, 1e6) if design.topology.kind_of(symbol) == "resistor" else (1e-10, 1e-5)
        assert low <= value <= high


@pytest.mark.parametrize("name", ["buck-loop.toml", "boost-loop.toml"])
def test_json_circuit_reanalyses_to_the_same_margins(examples, name):
    # The JSON circuit, read back and solved by numeric MNA (no symbols), gives
    # the reported crossover and phase margin.
    data = json.loads(json.dumps(loop_to_dict(examples[name]), allow_nan=False))
    for key in ("crossover_hz", "phase_margin_deg", "gain_margin_db", "continuous", "plant",
                "compensator", "parts", "monte_carlo"):
        assert key in data
    circuit = circuit_from_dict(data["compensator"]["circuit"])
    assert {e.name for e in circuit.elements if e.kind != "opamp"} == {
        p["name"] for p in data["parts"]}
    plant = plant_from_roots([complex(*r) for r in data["plant"]["poles"]],
                             [complex(*r) for r in data["plant"]["zeros"]], data["plant"]["gain"])
    fc = data["crossover_hz"]
    omega = TWO_PI * fc * np.linspace(0.98, 1.02, 4001)
    loop = -circuit_response(circuit, omega) * plant.response(omega)
    i = int(np.argmin(np.abs(np.abs(loop) - 1)))
    assert omega[i] / TWO_PI == pytest.approx(fc, rel=1e-4)
    assert 180 + math.degrees(np.angle(loop[i])) == pytest.approx(data["phase_margin_deg"],
                                                                  abs=0.02)


def test_example_files_carry_the_safety_line():
    for name in ("buck-loop.toml", "boost-loop.toml"):
        text = (EXAMPLES / name).read_text(encoding="utf-8")
        assert "Power converters can hurt" in " ".join(text.replace("#", " ").split())


# -- Monte Carlo -------------------------------------------------------------

@pytest.mark.parametrize("name", ["buck-loop.toml", "boost-loop.toml"])
def test_monte_carlo_with_zero_tolerance_is_the_nominal(examples, name):
    design = examples[name].design
    result = loop_monte_carlo(design, {"resistor": 0.0, "capacitor": 0.0}, samples=5)
    nominal = design.snapped_margins                     # python-control, exact crossings
    np.testing.assert_allclose(result.phase_margin_deg, nominal.phase_margin_deg, atol=0.01)
    np.testing.assert_allclose(result.crossover_hz, nominal.crossover_hz, rtol=1e-4)
    if nominal.gain_margin_db is None:
        assert np.all(np.isnan(result.gain_margin_db))
    else:
        np.testing.assert_allclose(result.gain_margin_db, nominal.gain_margin_db, atol=0.01)
    assert result.yield_fraction == 1.0


def test_monte_carlo_stability_agrees_with_closed_loop_poles(examples):
    design = examples["boost-loop.toml"].design
    for factor in (0.05, 1.0, 10.0, 20.0):       # R2 moves the crossover toward the RHP zero
        values = dict(design.snapped, R2=design.snapped["R2"] * factor)
        changed = dataclasses.replace(design, snapped=values)
        reference = margins(changed.loop_transfer_function())
        result = loop_monte_carlo(changed, {"resistor": 0.0, "capacitor": 0.0}, samples=2)
        assert bool(result.stable[0]) == reference.stable
        assert result.phase_margin_deg[0] == pytest.approx(reference.phase_margin_deg, abs=0.01)


def test_monte_carlo_spread_and_yield(examples):
    design = examples["buck-loop.toml"].design
    result = loop_monte_carlo(design, samples=300, seed=7, margin_floor_deg=59.0)
    again = loop_monte_carlo(design, samples=300, seed=7, margin_floor_deg=59.0)
    np.testing.assert_array_equal(result.phase_margin_deg, again.phase_margin_deg)
    summary = result.summary()
    nominal = design.snapped_margins
    assert summary["phase_margin_worst_deg"] < nominal.phase_margin_deg
    assert summary["crossover_min_hz"] < nominal.crossover_hz < summary["crossover_max_hz"]
    assert result.yield_fraction == pytest.approx(np.mean(result.phase_margin_deg >= 59.0))
    assert 0 < result.yield_fraction < 1
    gaussian = loop_monte_carlo(design, samples=300, seed=7, distribution="gaussian")
    assert np.std(gaussian.phase_margin_deg) < np.std(result.phase_margin_deg)
    with pytest.raises(SpecError, match="'R9'"):
        loop_monte_carlo(design, {"R9": 0.01})
    with pytest.raises(SpecError, match="'normal'"):
        loop_monte_carlo(design, distribution="normal")


def test_monte_carlo_in_worker_processes_gives_the_same_builds(examples, monkeypatch):
    # The requirement: the same result with 1 or N workers (seeded). The
    # threshold is lowered so a small run uses the workers (forked, they see it).
    import placer.loops.tolerance as loop_tolerance

    monkeypatch.setattr(loop_tolerance, "PARALLEL_MIN_SAMPLES", 1000)
    design = examples["boost-loop.toml"].design
    one = loop_monte_carlo(design, samples=3000, seed=5, workers=1)
    two = loop_monte_carlo(design, samples=3000, seed=5, workers=2)
    for name in ("crossover_hz", "phase_margin_deg", "gain_margin_db", "stable"):
        np.testing.assert_array_equal(getattr(one, name), getattr(two, name))
    with pytest.raises(SpecError, match="workers must be a whole number"):
        loop_monte_carlo(design, samples=3000, workers=0)


# -- type II on a simple plant -----------------------------------------------

def test_type2_design_meets_its_margin():
    plant = plant_from_roots([-TWO_PI * 1e3], [], TWO_PI * 1e3 * 10.0)
    design = design_compensator(plant, 10e3, 60.0, compensator="type2")
    assert design.continuous_margins.phase_margin_deg == pytest.approx(60.0, abs=1e-6)
    assert design.snapped_margins.phase_margin_deg >= 60.0
    assert design.snapped_margins.crossover_hz == pytest.approx(10e3, rel=0.05)
    assert design.topology.family == "type2"
    assert design.topology.id in {t.id for t in find_topologies(family="type2")}


# -- bad inputs --------------------------------------------------------------

def test_no_crossover_with_parts_in_range():
    with pytest.raises(UnreachableTarget, match=r"5 MHz.*cannot cross"):
        design_compensator(_buck(), 5e6, 60.0, compensator="type3")


def test_boost_beyond_the_type_suggests_type3_or_lower_crossover():
    with pytest.raises(UnreachableTarget) as error:
        design_compensator(_buck(), 20e3, 60.0, compensator="type2")
    message = str(error.value)
    assert "type3" in message and "lower crossover" in message
    assert f"{MAX_BOOST_DEG['type2']:g}°" in message and "20 kHz" in message
    # A low-ESR boost at 20 kHz: the RHP zero's lag asks for more than Type III gives.
    with pytest.raises(UnreachableTarget, match=r"157\.8° of phase boost.*lower the crossover"):
        design_compensator(_boost(esr=0.005), 20e3, 60.0, compensator="type3")


def test_crossover_near_the_rhp_zero_gets_a_note():
    design = design_compensator(_boost(), 40e3, 60.0, compensator="type3")
    assert any("right-half-plane zero" in note for note in design.notes)


def test_crossing_spoiled_by_the_resonance_is_reported():
    # Below a buck's LC resonance the peak makes a second crossing, unstable.
    with pytest.raises(UnreachableTarget, match=r"crosses 0 dB at .* choose another crossover"):
        design_compensator(_buck(), 3e3, 45.0, compensator="type2")


def test_unknown_compensator_is_named():
    with pytest.raises(SpecError, match=r"compensator.*'type4'"):
        design_compensator(_buck(), 20e3, 60.0, compensator="type4")
    table = _example("buck-loop.toml")
    table["loop"]["compensator"] = "typ3"
    with pytest.raises(SpecError, match=r"loop\.compensator.*'typ3'.*did you mean 'type3'"):
        loop_from_table(table, source="buck.toml")


@pytest.mark.parametrize("key, value, pattern", [
    ("crossver", "20 kHz", r"unknown key 'crossver'.*did you mean 'crossover'"),
    ("crossover", "ten kHz", r"loop\.crossover.*'ten kHz'"),
    ("crossover", "20 uF", r"loop\.crossover.*'20 uF'"),
    ("phase_margin", "200 deg", r"loop\.phase_margin.*'200 deg'"),
    ("resistor_series", "E7", r"loop\.resistor_series.*'E7'"),
])
def test_bad_spec_values_are_named(key, value, pattern):
    table = _example("buck-loop.toml")
    table["loop"][key] = value
    with pytest.raises(SpecError, match=pattern):
        loop_from_table(table, source="buck.toml")


def test_spec_reads_the_examples():
    spec = loop_from_table(_example("boost-loop.toml"), source="boost-loop.toml")
    assert (spec.crossover_hz, spec.phase_margin_deg, spec.compensator) == (5e3, 50.0, "type3")
    assert spec.margin_floor_deg == 40.0 and spec.r1 == 10e3
    assert any(z.real > 0 for z in spec.plant.zeros)
    with pytest.raises(SpecError, match="no \\[loop\\] table"):
        loop_from_table({"filter": {}}, source="x.toml")
