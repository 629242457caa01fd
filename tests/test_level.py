"""The impedance level: roots unmoved, noise and load as the level moves, the choice."""

import math

import numpy as np
import pytest

from placer.errors import UnreachableTarget
from placer.place.level import LevelRule, choose_level, level_steps
from placer.circuit.library import get_topology
from placer.analysis.pencil import circuit_poles
from placer.place.solve import goal_from_section, make_problem, solve
from placer.target.targets import make_section

SECTION = make_section("lowpass", 2 * math.pi * 5e3, 1.3066)
RULE = LevelRule(band_hz=(10.0, 100e3), analysis_hz=(500.0, 50e3))


def placed(topology_id):
    problem = make_problem(get_topology(topology_id), goal_from_section(SECTION))
    return problem, solve(problem)


def sorted_roots(roots):
    return np.array(sorted(roots, key=lambda r: (r.imag, r.real)))


@pytest.mark.parametrize("topology_id", ["sallen-key-lowpass-unity", "mfb-lowpass",
                                         "tow-thomas-lowpass"])
def test_level_leaves_every_root_unchanged(topology_id):
    # Impedance scaling (R·α, L·α, C/α) leaves every root where it was (frequency and
    # impedance scaling, standard network theory); the Tow–Thomas inverter's fixed pair
    # R5 = R6 sets a ratio only, so its level is free too.
    problem, solution = placed(topology_id)
    result = choose_level(problem, solution, RULE)
    assert result.choice.mode == "least noise"
    assert result.choice.chosen.factor != pytest.approx(1.0)       # the level did move
    before = sorted_roots(circuit_poles(problem.topology.circuit.with_values(solution.values)))
    after = sorted_roots(circuit_poles(problem.topology.circuit.with_values(result.solution.values)))
    np.testing.assert_allclose(after, before, rtol=1e-12)
    assert result.solution.error == solution.error


def test_noise_scales_with_the_level():
    # Johnson noise density ∝ √R (Johnson 1928): resistors alone, the output noise power
    # grows as α; an op-amp's current noise through the scaled network as α²; its voltage
    # noise not at all (dimensionless transfer).
    problem, solution = placed("sallen-key-lowpass-unity")
    one, two = level_steps(problem, solution.values, RULE, [1.0, 2.0])
    assert (two.noise_v / one.noise_v) ** 2 == pytest.approx(2.0, rel=1e-9)
    assert two.load_ohm == pytest.approx(2 * one.load_ohm, rel=1e-9)
    current = LevelRule(band_hz=RULE.band_hz, analysis_hz=RULE.analysis_hz, noise_current=1e-9,
                        temperature_k=1e-9)            # resistor noise made negligible
    one, two = level_steps(problem, solution.values, current, [1.0, 2.0])
    assert (two.noise_v / one.noise_v) ** 2 == pytest.approx(4.0, rel=1e-6)
    voltage = LevelRule(band_hz=RULE.band_hz, analysis_hz=RULE.analysis_hz, noise_voltage=1e-6,
                        temperature_k=1e-9)
    one, two = level_steps(problem, solution.values, voltage, [1.0, 2.0])
    assert two.noise_v == pytest.approx(one.noise_v, rel=1e-6)


def test_least_noise_takes_the_lowest_level_the_load_allows():
    problem, solution = placed("sallen-key-lowpass-unity")
    choice = choose_level(problem, solution, RULE).choice
    assert choice.chosen.passes and choice.chosen.load_ohm >= 2e3 * 1.05
    # one capacitor step lower breaks the load limit (2 kΩ, common practice, no source)
    assert choice.nearest_failing.factor < choice.chosen.factor
    assert "min_load" in choice.nearest_failing.fails
    assert choice.nearest_failing.noise_v < choice.chosen.noise_v


def test_target_takes_the_highest_level_that_meets_it():
    problem, solution = placed("sallen-key-lowpass-unity")
    rule = LevelRule(band_hz=RULE.band_hz, analysis_hz=RULE.analysis_hz, budget_v=6e-6,
                     target_v=6e-6)
    choice = choose_level(problem, solution, rule).choice
    assert choice.mode == "target"
    assert choice.chosen.noise_v <= 6e-6
    assert choice.nearest_failing.factor > choice.chosen.factor
    assert choice.nearest_failing.noise_v > 6e-6 or "range" in choice.nearest_failing.fails


def test_a_target_no_level_meets_names_what_stops_it():
    problem, solution = placed("sallen-key-lowpass-unity")
    rule = LevelRule(band_hz=RULE.band_hz, analysis_hz=RULE.analysis_hz, budget_v=1e-7,
                     target_v=1e-7, section=2)
    with pytest.raises(UnreachableTarget, match=r"section 2: .*cannot be met.*min_load"):
        choose_level(problem, solution, rule)
