"""Tests of placer.circuit.elements: the element schema, validation and views.

Expected transfer functions of the one-kind circuits below are the
textbook results for each element (common practice, no source).
"""

import json
import math

import networkx as nx
import numpy as np
import pytest

from placer.circuit.elements import Circuit, Element, circuit_from_dict
from placer.errors import SpecError, TopologyError
from placer.analysis.network import circuit_response, network_function
from placer.units import parse_value


def R(name, a, b, value=1e3):
    return Element(name, "resistor", (a, b), value=value)


def C(name, a, b, value=1e-9):
    return Element(name, "capacitor", (a, b), value=value)


def rc_elements():
    return (R("R1", "vin", "vout"), C("C1", "vout", "gnd"))


# -- Element ------------------------------------------------------------------

def test_unknown_kind_names_element_and_kind():
    with pytest.raises(TopologyError) as info:
        Element("D1", "diode", ("a", "b"), value=1.0)
    message = str(info.value)
    assert "'D1'" in message and "'diode'" in message
    assert "resistor" in message  # lists what is accepted


@pytest.mark.parametrize(
    "kind, nodes",
    [
        ("resistor", ("a", "b", "c")),
        ("capacitor", ("a",)),
        ("vcvs", ("a", "b")),
        ("opamp", ("a", "b")),
        ("cccs", ("a", "b", "c", "d")),
    ],
)
def test_wrong_node_count_names_element(kind, nodes):
    extra = {"gain": 2.0} if kind in ("vcvs", "cccs") else {}
    if kind == "cccs":
        extra["control"] = "V1"
    if kind in ("resistor", "capacitor"):
        extra["value"] = 1.0
    with pytest.raises(TopologyError) as info:
        Element("X7", kind, nodes, **extra)
    message = str(info.value)
    assert "'X7'" in message
    assert f"{len(nodes)} were given" in message


@pytest.mark.parametrize("kind", ["resistor", "capacitor", "inductor"])
@pytest.mark.parametrize("value", [0.0, -1.0, -1e-9])
def test_non_positive_passive_value_names_element(kind, value):
    with pytest.raises(TopologyError) as info:
        Element("P3", kind, ("a", "b"), value=value)
    message = str(info.value)
    assert "'P3'" in message and "positive" in message
    assert repr(value) in message


@pytest.mark.parametrize("value", [math.inf, math.nan])
def test_non_finite_passive_value_is_rejected(value):
    with pytest.raises(TopologyError, match="'R5'"):
        Element("R5", "resistor", ("a", "b"), value=value)


def test_passive_without_value_or_symbol():
    with pytest.raises(TopologyError, match="'C4'.*value or a symbol"):
        Element("C4", "capacitor", ("a", "b"))


def test_empty_element_name():
    with pytest.raises(TopologyError, match="non-empty string"):
        Element("", "resistor", ("a", "b"), value=1.0)


def test_empty_node_name_names_element():
    with pytest.raises(TopologyError, match="'R2'.*node names"):
        Element("R2", "resistor", ("a", ""), value=1.0)


@pytest.mark.parametrize("symbol", ["1R", "R 1", "__import__('os')", ""])
def test_unsafe_symbol_is_rejected(symbol):
    with pytest.raises(SpecError) as info:
        Element("R1", "resistor", ("a", "b"), symbol=symbol)
    assert "'R1'" in str(info.value)
    assert repr(symbol) in str(info.value)


def test_controlled_source_without_gain():
    with pytest.raises(TopologyError, match="'E1'.*gain or a symbol"):
        Element("E1", "vcvs", ("a", "b", "c", "d"))


@pytest.mark.parametrize("kind", ["cccs", "ccvs"])
def test_current_controlled_source_without_control(kind):
    with pytest.raises(TopologyError, match=f"'F1'.*{kind} needs 'control'"):
        Element("F1", kind, ("a", "b"), gain=2.0)


def test_control_on_other_kind_names_element():
    with pytest.raises(TopologyError, match="'E2'.*only cccs and ccvs"):
        Element("E2", "vcvs", ("a", "b", "c", "d"), gain=2.0, control="V1")


def test_gbw_on_non_opamp_names_element():
    with pytest.raises(TopologyError, match="'R1'.*only op-amps take 'gbw'"):
        Element("R1", "resistor", ("a", "b"), value=1.0, gbw=1e6)


@pytest.mark.parametrize("field", ["gain", "gbw"])
@pytest.mark.parametrize("number", [0.0, -10.0])
def test_opamp_non_positive_gain_or_gbw_names_element(field, number):
    with pytest.raises(TopologyError) as info:
        Element("U3", "opamp", ("a", "b", "c"), **{field: number})
    assert "'U3'" in str(info.value) and repr(number) in str(info.value)


def test_element_nodes_become_a_tuple():
    element = Element("R1", "resistor", ["a", "b"], value=1.0)
    assert element.nodes == ("a", "b")


def test_vsource_defaults_to_zero_volts():
    assert Element("V1", "vsource", ("a", "b")).value == 0.0


def test_with_parameter_sets_value_or_gain():
    r = Element("R1", "resistor", ("a", "b"), symbol="R1")
    e = Element("E1", "vcvs", ("a", "b", "c", "d"), symbol="K")
    assert r.is_symbolic and e.is_symbolic
    assert r.with_parameter(4700).value == 4700.0
    assert e.with_parameter(3).gain == 3.0
    assert not r.with_parameter(4700).is_symbolic


# -- Circuit validation ---------------------------------------------------------

def test_valid_circuit_nodes_in_order_reference_first():
    circuit = Circuit(rc_elements())
    assert circuit.nodes == ["gnd", "vin", "vout"]


def test_duplicate_element_name():
    with pytest.raises(TopologyError, match="'R1' is used twice"):
        Circuit((R("R1", "vin", "vout"), C("R1", "vout", "gnd")))


def test_no_elements():
    with pytest.raises(TopologyError, match="no elements"):
        Circuit(())


def test_circuit_name_prefixes_messages():
    with pytest.raises(TopologyError, match="^circuit 'demo': element name 'R1' is used twice"):
        Circuit((R("R1", "vin", "vout"), C("R1", "vout", "gnd")), name="demo")


def test_node_only_one_element_touches():
    with pytest.raises(TopologyError) as info:
        Circuit(rc_elements() + (R("R9", "vout", "n9"),))
    assert str(info.value) == "element 'R9' connects node 'n9', which nothing else touches"


def test_node_with_no_path_to_reference():
    island = (R("R3", "n5", "n6"), R("R4", "n5", "n6"))
    with pytest.raises(TopologyError) as info:
        Circuit(rc_elements() + island)
    assert "'n5'" in str(info.value) and "no path to the reference 'gnd'" in str(info.value)


def test_output_node_not_connected():
    with pytest.raises(TopologyError, match="output node 'vx' is not connected"):
        Circuit((R("R1", "vin", "n1"), C("C1", "n1", "gnd")), output="vx")


def test_input_node_not_connected():
    with pytest.raises(TopologyError, match="input node 'vin' is not connected"):
        Circuit((R("R1", "va", "vout"), C("C1", "vout", "gnd"), R("R2", "va", "gnd")))


def test_reference_not_connected():
    with pytest.raises(TopologyError, match="reference node 'gnd' is not connected"):
        Circuit((R("R1", "vin", "vout"), R("R2", "vin", "vout")))


def test_vsource_across_the_input_is_a_loop():
    with pytest.raises(TopologyError) as info:
        Circuit(rc_elements() + (Element("V1", "vsource", ("vin", "gnd")),))
    message = str(info.value)
    assert "loop of voltage sources" in message
    assert "'V1'" in message and "the input source" in message


def test_two_parallel_vsources_are_a_loop():
    elements = rc_elements() + (
        Element("V1", "vsource", ("a", "gnd")),
        Element("V2", "vsource", ("a", "gnd")),
        R("R5", "a", "vout"),
    )
    with pytest.raises(TopologyError) as info:
        Circuit(elements)
    assert "'V1'" in str(info.value) and "'V2'" in str(info.value)


def test_loop_of_vsource_and_vcvs():
    elements = rc_elements() + (
        Element("V1", "vsource", ("a", "gnd")),
        Element("E1", "vcvs", ("a", "gnd", "vout", "gnd"), gain=2.0),
        R("R5", "a", "vout"),
    )
    with pytest.raises(TopologyError) as info:
        Circuit(elements)
    assert "'V1'" in str(info.value) and "'E1'" in str(info.value)


def test_two_opamp_outputs_on_one_node():
    elements = (
        R("R1", "vin", "n1"),
        R("R2", "n1", "vout"),
        Element("U1", "opamp", ("gnd", "n1", "vout")),
        Element("U2", "opamp", ("gnd", "n1", "vout")),
    )
    with pytest.raises(TopologyError) as info:
        Circuit(elements)
    message = str(info.value)
    assert "op-amp outputs" in message and "'U1'" in message and "'U2'" in message


def test_opamp_output_on_the_input_node():
    elements = rc_elements() + (Element("U1", "opamp", ("vout", "gnd", "vin")),)
    with pytest.raises(TopologyError) as info:
        Circuit(elements)
    assert "'U1'" in str(info.value) and "the input source" in str(info.value)


def test_vsource_with_both_ends_on_one_node():
    with pytest.raises(TopologyError, match="'V1' shorts its own output.*'vout'"):
        Circuit(rc_elements() + (Element("V1", "vsource", ("vout", "vout")),))


@pytest.mark.parametrize("kind", ["cccs", "ccvs"])
def test_control_names_a_missing_vsource(kind):
    source = Element("F1", kind, ("vout", "gnd"), gain=2.0, control="V9")
    with pytest.raises(TopologyError) as info:
        Circuit(rc_elements() + (source,))
    assert "'F1'" in str(info.value) and "'V9'" in str(info.value)


def test_control_naming_a_non_vsource_element():
    source = Element("F1", "cccs", ("vout", "gnd"), gain=2.0, control="R1")
    with pytest.raises(TopologyError, match="'F1': control 'R1' is not the name of a vsource"):
        Circuit(rc_elements() + (source,))


def test_output_at_the_reference_is_rejected():
    with pytest.raises(TopologyError, match="output node 'gnd' cannot be the reference node"):
        Circuit(rc_elements(), output="gnd")


def test_input_at_the_reference_is_rejected():
    elements = (R("R1", "gnd", "vout"), R("R2", "vout", "gnd"))
    with pytest.raises(TopologyError, match="input node 'gnd' cannot be the reference node"):
        Circuit(elements, input="gnd")


# -- circuit_from_dict ------------------------------------------------------------

def rc_dict():
    return {
        "reference": "gnd",
        "input": "vin",
        "output": "vout",
        "elements": [
            {"name": "R1", "kind": "resistor", "nodes": ["vin", "vout"], "value": "4k7"},
            {"name": "C1", "kind": "capacitor", "nodes": ["vout", "gnd"], "value": 2.2e-9},
        ],
    }


def test_from_dict_parses_strings_with_the_given_parser():
    circuit = circuit_from_dict(rc_dict(), parse=parse_value)
    assert circuit.element("R1").value == pytest.approx(4700.0, rel=1e-12)


def test_from_dict_string_value_without_parser_names_element():
    with pytest.raises(SpecError, match="^f.toml: element 'R1' value: expected a number"):
        circuit_from_dict(rc_dict(), source="f.toml")


def test_from_dict_not_a_table():
    with pytest.raises(SpecError, match="^f.toml: a circuit must be a table"):
        circuit_from_dict([1, 2], source="f.toml")


@pytest.mark.parametrize("elements", [None, [], "R1"])
def test_from_dict_elements_missing_or_empty(elements):
    data = {} if elements is None else {"elements": elements}
    with pytest.raises(SpecError, match="^f.toml: 'elements' must be a non-empty list"):
        circuit_from_dict(data, source="f.toml")


def test_from_dict_element_not_a_table():
    with pytest.raises(SpecError, match="^f.toml: element 2: each element must be a table"):
        circuit_from_dict({"elements": [rc_dict()["elements"][1], "C1"]}, source="f.toml")


def test_from_dict_element_without_name():
    data = rc_dict()
    del data["elements"][1]["name"]
    with pytest.raises(SpecError, match="^f.toml: element 2: 'name' is missing"):
        circuit_from_dict(data, source="f.toml", parse=parse_value)


def test_from_dict_unknown_field_names_element_and_field():
    data = rc_dict()
    data["elements"][1]["colour"] = "red"
    with pytest.raises(SpecError, match="^f.toml: element 'C1': unknown field 'colour'"):
        circuit_from_dict(data, source="f.toml", parse=parse_value)


def test_from_dict_nodes_not_a_list():
    data = rc_dict()
    data["elements"][0]["nodes"] = "vin vout"
    with pytest.raises(SpecError, match="^f.toml: element 'R1': 'nodes' must be a list"):
        circuit_from_dict(data, source="f.toml", parse=parse_value)


def test_from_dict_boolean_value_names_element():
    data = rc_dict()
    data["elements"][1]["value"] = True
    with pytest.raises(SpecError, match="^f.toml: element 'C1' value: expected a number, not True"):
        circuit_from_dict(data, source="f.toml", parse=parse_value)


def test_from_dict_unreadable_value_names_element():
    data = rc_dict()
    data["elements"][0]["value"] = "abc"
    with pytest.raises(SpecError, match="element 'R1' value"):
        circuit_from_dict(data, source="f.toml", parse=parse_value)


def test_from_dict_element_error_names_source_and_element():
    data = rc_dict()
    data["elements"][0]["kind"] = "diode"
    with pytest.raises(TopologyError, match="^f.toml: element 'R1': unknown kind 'diode'"):
        circuit_from_dict(data, source="f.toml", parse=parse_value)


def test_from_dict_negative_value_names_element():
    data = rc_dict()
    data["elements"][0]["value"] = "-1k"
    with pytest.raises(TopologyError, match="^f.toml: element 'R1': a resistor value must be a positive"):
        circuit_from_dict(data, source="f.toml", parse=parse_value)


def test_from_dict_circuit_error_names_source_and_node():
    data = rc_dict()
    data["output"] = "n5"
    with pytest.raises(TopologyError, match="^f.toml: output node 'n5' is not connected"):
        circuit_from_dict(data, source="f.toml", parse=parse_value)


def test_from_dict_integer_node_names_become_strings():
    data = {
        "reference": 0, "input": 1, "output": 2,
        "elements": [
            {"name": "R1", "kind": "resistor", "nodes": [1, 2], "value": 1e3},
            {"name": "C1", "kind": "capacitor", "nodes": [2, 0], "value": 1e-9},
        ],
    }
    circuit = circuit_from_dict(data)
    assert circuit.nodes == ["0", "1", "2"]
    assert circuit.element("C1").nodes == ("2", "0")


# -- every kind constructs and analyses -----------------------------------------------
#
# One small circuit per kind, with the transfer function any circuits
# textbook gives for it (common practice, no source). Each is checked on the
# symbolic path (network_function) and the numeric path (circuit_response).

A0, GBW = 2e5, 1e6
WT = 2 * math.pi * GBW

KIND_CASES = {
    "resistor": (
        (R("R1", "vin", "vout", 3e3), R("R2", "vout", "gnd", 1e3)),
        lambda s: 0.25 + 0 * s,
    ),
    "capacitor": (
        (R("R1", "vin", "vout", 1e3), C("C1", "vout", "gnd", 1e-6)),
        lambda s: 1 / (1 + s * 1e-3),
    ),
    "inductor": (
        (R("R1", "vin", "vout", 1e3), Element("L1", "inductor", ("vout", "gnd"), value=10e-3)),
        lambda s: s * 10e-3 / (1e3 + s * 10e-3),
    ),
    "vsource": (
        (Element("V1", "vsource", ("vin", "n1"), value=5.0),
         R("R1", "n1", "vout", 1e3), R("R2", "vout", "gnd", 3e3)),
        lambda s: 0.75 + 0 * s,
    ),
    "isource": (
        (R("R1", "vin", "vout", 1e3), R("R2", "vout", "gnd", 1e3),
         Element("I1", "isource", ("vout", "gnd"), value=1e-3)),
        lambda s: 0.5 + 0 * s,
    ),
    "vcvs": (
        (R("R1", "vin", "n1", 1e3), R("R2", "n1", "gnd", 1e3),
         Element("E1", "vcvs", ("vout", "gnd", "n1", "gnd"), gain=8.0), R("RL", "vout", "gnd")),
        lambda s: 4.0 + 0 * s,
    ),
    "vccs": (
        # Current gm*v(vin) flows gnd -> vout inside the source, into RL.
        (R("R1", "vin", "gnd"), Element("G1", "vccs", ("gnd", "vout", "vin", "gnd"), gain=2e-3),
         R("RL", "vout", "gnd", 5e3)),
        lambda s: 10.0 + 0 * s,
    ),
    "cccs": (
        # i(V1) = v(vin)/R1; 3*i flows gnd -> vout inside the source, into RL.
        (R("R1", "vin", "n1", 1e3), Element("V1", "vsource", ("n1", "gnd")),
         Element("F1", "cccs", ("gnd", "vout"), gain=3.0, control="V1"), R("RL", "vout", "gnd", 2e3)),
        lambda s: 6.0 + 0 * s,
    ),
    "ccvs": (
        (R("R1", "vin", "n1", 1e3), Element("V1", "vsource", ("n1", "gnd")),
         Element("H1", "ccvs", ("vout", "gnd"), gain=500.0, control="V1"), R("RL", "vout", "gnd")),
        lambda s: 0.5 + 0 * s,
    ),
    "opamp ideal": (
        # Non-inverting amplifier, gain 1 + R2/R1.
        (R("R1", "n1", "gnd", 1e3), R("R2", "n1", "vout", 4e3),
         Element("U1", "opamp", ("vin", "n1", "vout")), R("RS", "vin", "gnd")),
        lambda s: 5.0 + 0 * s,
    ),
    "opamp with gain": (
        # Follower with open-loop gain A0: A0/(1 + A0).
        (Element("U1", "opamp", ("vin", "vout", "vout"), gain=A0), R("RS", "vin", "gnd"),
         R("RL", "vout", "gnd")),
        lambda s: A0 / (1 + A0) + 0 * s,
    ),
    "opamp with gbw": (
        # Integrator model follower: wt/(s + wt).
        (Element("U1", "opamp", ("vin", "vout", "vout"), gbw=GBW), R("RS", "vin", "gnd"),
         R("RL", "vout", "gnd")),
        lambda s: WT / (s + WT),
    ),
    "opamp with both": (
        # Single-pole model follower: wt/(s + wt/A0 + wt).
        (Element("U1", "opamp", ("vin", "vout", "vout"), gain=A0, gbw=GBW),
         R("RS", "vin", "gnd"), R("RL", "vout", "gnd")),
        lambda s: WT / (s + WT / A0 + WT),
    ),
}


@pytest.mark.parametrize("case", list(KIND_CASES))
def test_every_kind_constructs_and_analyses(case):
    elements, expected = KIND_CASES[case]
    circuit = Circuit(elements)
    omega = np.array([1.0, 1e3, 1e5, 1e7])
    s = 1j * omega
    np.testing.assert_allclose(circuit_response(circuit, omega), expected(s), rtol=1e-9)
    nf = network_function(circuit)
    np.testing.assert_allclose(nf.response_at({}, omega), expected(s), rtol=1e-9)


# -- to_dict round trip and the graph view -------------------------------------------

def test_to_dict_round_trip_with_symbols():
    elements = (
        Element("R1", "resistor", ("vin", "n1"), symbol="R1"),
        Element("C1", "capacitor", ("n1", "gnd"), value=1e-9),
        Element("V1", "vsource", ("n1", "n2")),
        Element("F1", "cccs", ("n2", "gnd"), gain=2.0, control="V1"),
        Element("E1", "vcvs", ("vout", "gnd", "n2", "gnd"), symbol="K"),
        Element("U1", "opamp", ("n2", "n3", "n3"), gain=1e5, gbw=1e6),
        Element("L1", "inductor", ("n3", "vout"), value=1e-3),
        Element("G1", "vccs", ("vout", "gnd", "n1", "gnd"), gain=1e-3),
        Element("H1", "ccvs", ("n4", "gnd"), gain=10.0, control="V1"),
        R("R4", "n4", "vout"),
        Element("I1", "isource", ("n1", "gnd"), value=1e-6),
    )
    circuit = Circuit(elements, reference="gnd", input="vin", output="vout")
    data = circuit.to_dict()
    text = json.dumps(data)  # JSON-ready: plain types only
    again = circuit_from_dict(json.loads(text))
    assert again == circuit
    assert data["elements"][0] == {"name": "R1", "kind": "resistor", "nodes": ["vin", "n1"],
                                   "symbol": "R1"}
    assert data["elements"][5] == {"name": "U1", "kind": "opamp", "nodes": ["n2", "n3", "n3"],
                                   "gain": 1e5, "gbw": 1e6}


def test_to_dict_fields_of_a_valued_circuit():
    data = Circuit(rc_elements(), input="vin", output="vout").to_dict()
    assert data == {
        "reference": "gnd",
        "input": "vin",
        "output": "vout",
        "elements": [
            {"name": "R1", "kind": "resistor", "nodes": ["vin", "vout"], "value": 1e3},
            {"name": "C1", "kind": "capacitor", "nodes": ["vout", "gnd"], "value": 1e-9},
        ],
    }


def test_with_values_fills_symbols_and_keeps_the_rest():
    circuit = Circuit((Element("R1", "resistor", ("vin", "vout"), symbol="R"),
                       Element("C1", "capacitor", ("vout", "gnd"), symbol="C")))
    assert circuit.symbols == ("R", "C")
    filled = circuit.with_values({"R": 2e3})
    assert filled.element("R1").value == 2e3
    assert filled.element("C1").is_symbolic
    assert filled.symbols == ("C",)
    assert circuit.element("R1").is_symbolic  # the original is unchanged


def test_graph_is_a_multigraph_with_one_edge_per_branch():
    elements = (
        R("R1", "vin", "n1"),
        R("R2", "n1", "vout"),
        R("R3", "n1", "vout"),  # parallel with R2: a second edge, not merged
        C("C1", "n2", "gnd"),
        R("R4", "n1", "n2"),
        Element("U1", "opamp", ("n2", "vout", "vout")),
        Element("E1", "vcvs", ("n3", "gnd", "n1", "gnd"), gain=2.0),
        R("R5", "n3", "vout"),
    )
    graph = Circuit(elements).graph
    assert isinstance(graph, nx.MultiGraph)
    assert set(graph.nodes) == {"gnd", "vin", "n1", "n2", "n3", "vout"}
    edges = sorted(
        (data["element"], data["kind"], frozenset((a, b))) for a, b, data in graph.edges(data=True)
    )
    assert edges == sorted([
        ("R1", "resistor", frozenset({"vin", "n1"})),
        ("R2", "resistor", frozenset({"n1", "vout"})),
        ("R3", "resistor", frozenset({"n1", "vout"})),
        ("C1", "capacitor", frozenset({"n2", "gnd"})),
        ("R4", "resistor", frozenset({"n1", "n2"})),
        ("U1", "opamp", frozenset({"vout", "gnd"})),     # output to the reference
        ("U1", "opamp", frozenset({"n2", "vout"})),      # the nullator between the inputs
        ("E1", "vcvs", frozenset({"n3", "gnd"})),        # output port
        ("E1", "vcvs", frozenset({"n1", "gnd"})),        # control port
        ("R5", "resistor", frozenset({"n3", "vout"})),
    ])
    assert graph.number_of_edges("n1", "vout") == 2


def test_element_lookup_names_the_missing_element():
    with pytest.raises(KeyError, match="'R9'"):
        Circuit(rc_elements()).element("R9")
