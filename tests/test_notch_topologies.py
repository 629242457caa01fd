"""The state-variable notch topology against its published formulas.

Kerwin, Huelsman and Newcomb, "State-variable synthesis for insensitive
integrated circuit transfer functions", IEEE J. Solid-State Circuits SC-2,
1967: the biquad's low- and high-pass outputs summed give jω-axis zeros
(from memory). The expected values below are the closed forms, evaluated
with numpy, not with the code under test.
"""

import math

import numpy as np
import pytest

from placer.library import get_topology
from placer.network import circuit_poles, circuit_zeros, network_function
from placer.solve import goal_from_section, make_problem, solve
from placer.targets import make_section

RNG = np.random.default_rng(7)


def _values(names):
    return {n: float(10 ** RNG.uniform(3.5, 5.0)) if n.startswith("R") else float(10 ** RNG.uniform(-8.5, -7.0))
            for n in names}


@pytest.mark.parametrize("trial", range(4))
def test_khn_notch_zero_pole_and_gain_formulas(trial):
    topology = get_topology("khn-notch")
    nf = network_function(topology.circuit)
    v = _values(topology.symbols)
    R1, R2, R3, R4, R5, R6, R7, R8, R9 = (v[f"R{i}"] for i in range(1, 10))
    C1, C2 = v["C1"], v["C2"]
    # KHN: w0 = sqrt(R4/(R3 R5 R6 C1 C2)), Q = w0 R5 C1 R3 (R1+R2)/(R1 (R3+R4)) (from memory)
    w0 = math.sqrt(R4 / (R3 * R5 * R6 * C1 * C2))
    q = w0 * R5 * C1 * R3 * (R1 + R2) / (R1 * (R3 + R4))
    wz = math.sqrt(R7 / (R9 * R5 * R6 * C1 * C2))
    dc = -(R8 / R9) * R2 * (R3 + R4) / (R4 * (R1 + R2))
    figures = nf.second_order_figures(v)
    assert float(figures.omega0) == pytest.approx(w0, rel=1e-9)
    assert float(figures.q) == pytest.approx(q, rel=1e-9)
    assert float(figures.gain) == pytest.approx(dc, rel=1e-9)
    zeros = nf.zeros(v)
    np.testing.assert_allclose(sorted(np.abs(zeros)), [wz, wz], rtol=1e-9)
    np.testing.assert_allclose(np.real(zeros), 0.0, atol=1e-9 * wz)   # on the jw axis
    # the independent numeric path (matrix pencil) agrees
    circuit = topology.circuit.with_values(v)
    np.testing.assert_allclose(sorted(np.abs(circuit_zeros(circuit))), [wz, wz], rtol=1e-7)
    np.testing.assert_allclose(sorted(np.abs(circuit_poles(circuit))), [w0, w0], rtol=1e-7)


def test_khn_notch_reaches_a_high_q_hum_notch():
    # A 50 Hz notch with Q = 2 is beyond any passive RC notch (Q <= 0.5,
    # common practice); the active notch reaches it exactly.
    omega = 2 * math.pi * 50
    section = make_section("notch", omega, 2.0, gain=1.0, zero_omega=omega)
    problem = make_problem(get_topology("khn-notch"), goal_from_section(section))
    solution = solve(problem, seed=0)
    figures = problem.nf.second_order_figures(solution.values)
    assert float(figures.omega0) == pytest.approx(omega, rel=1e-6)
    assert float(figures.q) == pytest.approx(2.0, rel=1e-6)
    assert np.abs(problem.nf.zeros(solution.values)) == pytest.approx([omega, omega], rel=1e-6)
