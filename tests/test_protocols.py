"""The analysis stage's Protocols fit the four kinds of transfer function.

One real circuit, the unity-gain Sallen–Key low-pass of the library with
R1 = R2 = 10 kΩ, C1 = 20 nF, C2 = 10 nF, is held as each of:
NetworkFunction (ideal op-amp), the frequency-scaled function of the
circuit with a one-pole op-amp model (``place.opamp.ScaledFunction``), the
DominantFunction of that modelled function, and a Response. Each is checked
with ``isinstance`` against the runtime-checkable Protocols, and then used
only through the Protocol: its poles must give the handbook ω0 of the
Sallen–Key low-pass, ω0 = 1/√(R1·R2·C1·C2) (Sallen and Key, "A practical
method of designing RC active filters", IRE Trans. Circuit Theory, 1955;
common practice), whatever the object is.
"""

import math

import numpy as np
import pytest
import scipy.signal

from placer.analysis.dominant import DominantFunction
from placer.analysis.network import NetworkFunction, circuit_gain, network_function
from placer.analysis.protocols import PartFunction, RootedFunction
from placer.analysis.response import Response
from placer.circuit.library import get_topology
from placer.place.opamp import AmplifierSpec, ScaledFunction, function_at_gbw
from placer.place.solve import goal_from_roots

VALUES = {"R1": 10e3, "R2": 10e3, "C1": 20e-9, "C2": 10e-9}
#: 1/sqrt(R1 R2 C1 C2) = 1/(1e4 * sqrt(2e-16)) = 7071.07 rad/s
OMEGA0 = 1.0 / math.sqrt(10e3 * 10e3 * 20e-9 * 10e-9)


@pytest.fixture(scope="module")
def functions():
    circuit = get_topology("sallen-key-lowpass-unity").circuit
    ideal = network_function(circuit)
    # a 1 GHz op-amp with A0 = 1e5: its pole is five decades above ω0
    scaled = function_at_gbw(circuit, AmplifierSpec(gain=1e5))(1e9)
    goal = goal_from_roots(ideal.poles(VALUES), kind="lowpass")
    dominant = DominantFunction.for_goal(scaled, goal)
    response = Response.from_zpk(ideal.zeros(VALUES), ideal.poles(VALUES),
                                 circuit_gain(circuit, VALUES))
    return {"network": ideal, "scaled": scaled, "dominant": dominant, "response": response}


def _omega0_of_pair(function: RootedFunction, *args) -> float:
    """ω0 of the dominant pair: the geometric mean of the two smallest poles."""
    poles = sorted(np.asarray(function.poles(*args), complex), key=abs)[:2]
    return math.sqrt(abs(poles[0] * poles[1]))


def test_the_objects_are_what_they_claim(functions):
    assert type(functions["network"]) is NetworkFunction
    assert type(functions["scaled"]) is ScaledFunction
    assert type(functions["dominant"]) is DominantFunction
    assert type(functions["response"]) is Response


@pytest.mark.parametrize("name", ["network", "scaled", "dominant", "response"])
def test_every_function_is_a_rooted_function(functions, name):
    function = functions[name]
    assert isinstance(function, RootedFunction)
    args = () if name == "response" else (VALUES,)
    # ω0 read through the Protocol alone; the op-amp's finite gain and GBW
    # move it by about 1e-5 (A0 = 1e5) and ω0/ωt ~ 1e-6.
    assert _omega0_of_pair(function, *args) == pytest.approx(OMEGA0, rel=1e-4)


@pytest.mark.parametrize("name, order", [("network", 2), ("scaled", 3), ("dominant", 2)])
def test_functions_of_the_part_values_are_part_functions(functions, name, order):
    function = functions[name]
    assert isinstance(function, PartFunction)
    # the modelled circuit has the op-amp's pole besides the pair; the
    # dominant part keeps the pair only
    assert function.order == order
    assert set(function.symbols) == set(VALUES)
    assert function.gain_kind == "dc"
    numerator, denominator = function.coefficients(VALUES)
    assert denominator.shape == (order + 1,)
    # unity-gain Sallen–Key: H(0) = 1 (common practice), within A0 = 1e5
    assert numerator[-1] / denominator[-1] == pytest.approx(1.0, rel=2e-5)
    assert function.zeros(VALUES).size == 0


def test_a_response_is_not_a_part_function(functions):
    response = functions["response"]
    assert not isinstance(response, PartFunction)
    assert response.order == 2
    # its H(jω) against scipy.signal.freqs of the ideal function's coefficients
    numerator, denominator = functions["network"].coefficients(VALUES)
    omega = np.geomspace(1e2, 1e6, 41)
    _, expected = scipy.signal.freqs(numerator, denominator, worN=omega)
    np.testing.assert_allclose(response.evaluate(omega), expected, rtol=1e-9)


def test_an_object_without_the_interface_is_neither():
    assert not isinstance(object(), RootedFunction)
    assert not isinstance(VALUES, PartFunction)
