"""Doubly terminated LC ladders against the Butterworth prototype."""

import numpy as np
import pytest
from scipy.signal import buttap

from placer.errors import SpecError
from placer.circuit.ladders import (
    butterworth_ladder_values,
    generated_topologies,
    ladder_part_values,
    ladder_topology,
)
from placer.circuit.library import get_topology, library_topologies
from placer.analysis.network import circuit_response, network_function

# Matthaei, Young and Jones, Microwave Filters, Impedance-Matching Networks and
# Coupling Structures (1964), Butterworth low-pass prototype table, g1 ... gn at the
# table's 4 places (from memory).
BUTTERWORTH_TABLE = {
    1: (2.0000,),
    2: (1.4142, 1.4142),
    3: (1.0000, 2.0000, 1.0000),
    4: (0.7654, 1.8478, 1.8478, 0.7654),
    5: (0.6180, 1.6180, 2.0000, 1.6180, 0.6180),
    6: (0.5176, 1.4142, 1.9319, 1.9319, 1.4142, 0.5176),
    7: (0.4450, 1.2470, 1.8019, 2.0000, 1.8019, 1.2470, 0.4450),
}


def matched(actual, expected):
    """Order-independent root comparison: sort by imaginary then real part."""
    actual = np.asarray(actual, dtype=complex)
    expected = np.asarray(expected, dtype=complex)
    return (actual[np.lexsort((actual.real, actual.imag))],
            expected[np.lexsort((expected.real, expected.imag))])


@pytest.mark.parametrize("order", sorted(BUTTERWORTH_TABLE))
def test_g_values_match_the_table(order):
    # table precision: 4 decimal places
    np.testing.assert_allclose(butterworth_ladder_values(order), BUTTERWORTH_TABLE[order],
                               rtol=0, atol=5e-5)


@pytest.mark.parametrize("first", ["shunt", "series"])
@pytest.mark.parametrize("order", range(1, 9))
def test_butterworth_ladder_has_butterworth_poles(order, first):
    # scipy.signal.buttap (reference library): poles of the normalised Butterworth
    # low-pass; with RS = RL = 1 ohm the DC gain is 1/2, -6.02 dB (common practice).
    topology = ladder_topology(order, first=first)
    values = ladder_part_values(topology, butterworth_ladder_values(order))
    nf = network_function(topology.circuit)
    assert nf.denominator.degree() == order
    actual, expected = matched(nf.poles(values), buttap(order)[1])
    np.testing.assert_allclose(actual, expected, rtol=0, atol=1e-8)
    assert nf.zeros(values).size == 0
    dc = nf.response_at(values, 0.0)
    assert dc.real == pytest.approx(0.5, rel=1e-12)
    assert 20 * np.log10(abs(dc)) == pytest.approx(-6.02, abs=5e-3)
    # -3 dB below the DC level at the cutoff, 1 rad/s
    assert abs(nf.response_at(values, 1.0)) == pytest.approx(0.5 / np.sqrt(2), rel=1e-9)


def test_higher_orders_build_and_are_butterworth_numerically():
    # scipy.signal.buttap (reference library), orders up to 12 through the response:
    # |H(jw)|^2 = (1/4)/(1 + w^(2n)) for the equally terminated Butterworth ladder.
    omega = np.array([0.3, 0.9, 1.0, 1.1, 2.0])
    for order in (10, 12):
        topology = ladder_topology(order)
        values = ladder_part_values(topology, butterworth_ladder_values(order))
        h = circuit_response(topology.circuit, omega, values)
        np.testing.assert_allclose(np.abs(h) ** 2, 0.25 / (1 + omega ** (2 * order)), rtol=1e-8)


def test_ladder_structure():
    ladder = ladder_topology(4)
    assert ladder.id == "lc-ladder-lowpass-4"
    assert ladder.free == ("C1", "L2", "C3", "L4")
    assert ladder.circuit.element("C1").nodes == ("n1", "gnd")
    assert ladder.circuit.element("L4").nodes == ("n2", "vout")
    assert ladder.values == {"RS": 50.0, "RL": 50.0}
    series = ladder_topology(3, first="series")
    assert series.id == "lc-ladder-lowpass-3-series-first"
    assert series.free == ("L1", "C2", "L3")
    assert series.circuit.element("RS").nodes == ("vin", "n1")
    assert series.circuit.element("L3").nodes == ("n2", "vout")
    assert ladder_topology(1).circuit.element("C1").nodes == ("vout", "gnd")


def test_denormalised_values():
    # common practice: L = g R / w_c, C = g / (R w_c)
    ladder = ladder_topology(3)
    cutoff = 2 * np.pi * 10e6
    values = ladder_part_values(ladder, (1.0, 2.0, 1.0), cutoff=cutoff, resistance=50.0)
    assert values["L2"] == pytest.approx(2 * 50 / cutoff)
    assert values["C1"] == pytest.approx(1 / (50 * cutoff))
    assert values["RS"] == values["RL"] == 50.0


def test_library_lists_generated_ladders():
    topologies = library_topologies()
    for order in range(2, 8):
        assert f"lc-ladder-lowpass-{order}" in topologies
    assert [t.order for t in generated_topologies()] == list(range(2, 8))
    assert get_topology("lc-ladder-lowpass-5").response == "lowpass"


@pytest.mark.parametrize("call", [
    lambda: ladder_topology(0),
    lambda: ladder_topology(13),
    lambda: ladder_topology(2.0),
    lambda: ladder_topology(3, response="highpass"),
    lambda: ladder_topology(3, first="middle"),
    lambda: butterworth_ladder_values(0),
    lambda: ladder_part_values(ladder_topology(3), (1.0, 2.0)),
])
def test_bad_arguments_raise_spec_error(call):
    with pytest.raises(SpecError):
        call()
