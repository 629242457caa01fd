"""Tests of topology files: placer.circuit.topology parsing and placer.circuit.library loading.

Every error must name the file and the key or element at fault
(docs/architecture.md, "Errors").
"""

import json
import textwrap

import pytest

from placer.errors import SpecError, TopologyError
from placer.circuit.library import LIBRARY_DIR, get_topology, load_folder, resolve_topology
from placer.circuit.topology import (
    DEFAULT_RANGES,
    Constraint,
    load_topology,
    parse_constraint,
    topology_from_text,
)

HEADER = """\
id = "demo-lowpass"
title = "Demo RC low-pass"
response = "lowpass"
order = 1
"""

ELEMENTS = """\
[[elements]]
name = "R1"
kind = "resistor"
nodes = ["vin", "vout"]
symbol = "R1"

[[elements]]
name = "C1"
kind = "capacitor"
nodes = ["vout", "gnd"]
symbol = "C1"
"""


def write(folder, name, text):
    path = folder / name
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


def load_text(tmp_path, text, name="bad.toml"):
    """Load `text` from a file and return the error message it raises."""
    path = write(tmp_path, name, text)
    with pytest.raises(SpecError) as info:
        load_topology(path)
    message = str(info.value)
    assert str(path) in message, message  # every message names the file
    return message


def test_load_from_an_arbitrary_path(tmp_path):
    folder = tmp_path / "my topologies" / "deep"
    folder.mkdir(parents=True)
    path = write(folder, "demo.toml", HEADER + 'ranges = { R1 = ["1k", "100k"] }\n' + ELEMENTS)
    topology = load_topology(path)
    assert topology.id == "demo-lowpass"
    assert topology.path == str(path)
    assert topology.free == ("R1", "C1")
    assert topology.ranges["R1"] == (1e3, 1e5)
    assert topology.ranges["C1"] == DEFAULT_RANGES["capacitor"]
    assert topology.kind_of("C1") == "capacitor"
    assert topology.circuit.name == "demo-lowpass"


def test_values_constraints_and_metadata(tmp_path):
    text = HEADER + textwrap.dedent("""\
        free = ["R1"]
        constraints = []
        inverting = false
        family = "rc"
        description = "one pole"
        [values]
        C1 = "10n"
        """) + ELEMENTS
    topology = load_topology(write(tmp_path, "ok.toml", text))
    assert topology.free == ("R1",)
    assert topology.values == {"C1": pytest.approx(10e-9, rel=1e-12)}
    assert "C1" not in topology.ranges
    assert topology.family == "rc" and topology.description == "one pole"


def test_missing_file_names_it(tmp_path):
    path = tmp_path / "absent.toml"
    with pytest.raises(SpecError, match="absent.toml.*does not exist"):
        load_topology(path)


def test_invalid_toml_names_the_file(tmp_path):
    message = load_text(tmp_path, HEADER + "order = = 2\n")
    assert "not valid TOML" in message


def test_unknown_key(tmp_path):
    message = load_text(tmp_path, HEADER + 'colour = "red"\n' + ELEMENTS)
    assert "unknown key 'colour'" in message
    assert "response" in message  # lists the accepted keys


@pytest.mark.parametrize("key", ["id", "title", "response", "order", "elements"])
def test_missing_required_key(tmp_path, key):
    lines = [line for line in HEADER.splitlines() if not line.startswith(f"{key} ")]
    body = "\n".join(lines) + "\n" + ("" if key == "elements" else ELEMENTS)
    message = load_text(tmp_path, body)
    assert f"missing required key {key!r}" in message


@pytest.mark.parametrize("value", ['"Demo_LowPass"', '"-x"', "3"])
def test_bad_id(tmp_path, value):
    text = HEADER.replace('id = "demo-lowpass"', f"id = {value}") + ELEMENTS
    message = load_text(tmp_path, text)
    assert "id" in message and "lowercase" in message


def test_bad_response_kind(tmp_path):
    text = HEADER.replace('"lowpass"', '"bandstop"') + ELEMENTS
    message = load_text(tmp_path, text)
    assert "unknown response kind 'bandstop'" in message
    assert "notch" in message  # lists the accepted kinds


@pytest.mark.parametrize("value", ["-1", "25", '"two"', "true", "1.5"])
def test_bad_order(tmp_path, value):
    text = HEADER.replace("order = 1", f"order = {value}") + ELEMENTS
    message = load_text(tmp_path, text)
    assert "order = " in message and "must be a whole number" in message


def test_unknown_free_part(tmp_path):
    message = load_text(tmp_path, HEADER + 'free = ["R1", "C1", "R7"]\n' + ELEMENTS)
    assert "free part 'R7' is not a symbol of any element" in message


def test_free_not_a_list(tmp_path):
    message = load_text(tmp_path, HEADER + 'free = "R1"\n' + ELEMENTS)
    assert "free = 'R1' must be a list of strings" in message


def test_part_neither_free_nor_valued(tmp_path):
    message = load_text(tmp_path, HEADER + 'free = ["R1"]\n' + ELEMENTS)
    assert "part 'C1' is neither free nor given a value" in message


def test_free_part_with_no_range(tmp_path):
    # A symbolic source voltage has no default range (DEFAULT_RANGES covers
    # passive parts and controlled-source gains only).
    text = HEADER + ELEMENTS + textwrap.dedent("""\
        [[elements]]
        name = "V1"
        kind = "vsource"
        nodes = ["vout", "n9"]
        symbol = "Vb"

        [[elements]]
        name = "R9"
        kind = "resistor"
        nodes = ["n9", "gnd"]
        value = "1k"
        """)
    message = load_text(tmp_path, text)
    assert "free part 'Vb' (vsource) has no range" in message
    assert "ranges.Vb" in message  # says what to add


@pytest.mark.parametrize("ranges", ['["1k"]', '"1k"', '["1k", "2k", "3k"]'])
def test_range_not_a_pair(tmp_path, ranges):
    message = load_text(tmp_path, HEADER + f"ranges = {{ R1 = {ranges} }}\n" + ELEMENTS)
    assert "ranges.R1 = " in message and "[low, high]" in message


@pytest.mark.parametrize("ranges", ['["100k", "1k"]', '["1k", "1k"]'])
def test_range_out_of_order(tmp_path, ranges):
    message = load_text(tmp_path, HEADER + f"ranges = {{ R1 = {ranges} }}\n" + ELEMENTS)
    assert "ranges.R1 must satisfy 0 < low < high" in message


def test_range_at_zero_is_outside_the_bounds(tmp_path):
    message = load_text(tmp_path, HEADER + 'ranges = { R1 = ["0", "1k"] }\n' + ELEMENTS)
    assert "ranges.R1: a resistor value of 0 is outside 1 mΩ to 1 TΩ" in message


def test_range_for_a_non_part(tmp_path):
    message = load_text(tmp_path, HEADER + 'ranges = { R8 = ["1k", "2k"] }\n' + ELEMENTS)
    assert "ranges: 'R8' is not a part" in message


def test_value_for_a_non_part(tmp_path):
    message = load_text(tmp_path, HEADER + "[values]\nC9 = 1e-9\n" + ELEMENTS)
    assert "values: 'C9' is not a part" in message


def test_unreadable_value(tmp_path):
    message = load_text(tmp_path, HEADER + 'free = ["R1"]\n[values]\nC1 = "ten nano"\n' + ELEMENTS)
    assert "values.C1" in message


def test_constraint_naming_a_non_free_part(tmp_path):
    text = HEADER + 'free = ["R1"]\nconstraints = ["R1 = 2*C1"]\n[values]\nC1 = 1e-9\n' + ELEMENTS
    message = load_text(tmp_path, text)
    assert "constraint 'R1 = 2*C1' names 'C1', which is not a free part" in message


@pytest.mark.parametrize("constraint", ["R1 == C1", "R1 = exp(C1)", "R1 = -2*C1", "R1 = R1",
                                        "R1 = C1 + 1", "__import__('os')"])
def test_bad_constraint_text(tmp_path, constraint):
    text = HEADER + f"constraints = [{json.dumps(constraint)}]\n" + ELEMENTS
    message = load_text(tmp_path, text)
    assert "constraints: " in message and repr(constraint) in message


def test_constraint_parser():
    assert parse_constraint("C1 = C2") == Constraint("C1", 1.0, "C2")
    assert parse_constraint(" R2=4.7*R1 ") == Constraint("R2", 4.7, "R1")
    assert parse_constraint("R2 = 1e3*C1") == Constraint("R2", 1000.0, "C1")
    assert str(Constraint("R2", 4.0, "R1")) == "R2 = 4*R1"
    with pytest.raises(SpecError, match="accepted forms"):
        parse_constraint(42)


def test_malformed_element_names_file_and_element(tmp_path):
    text = HEADER + ELEMENTS.replace('kind = "capacitor"', 'kind = "condenser"')
    message = load_text(tmp_path, text)
    assert "element 'C1'" in message and "unknown kind 'condenser'" in message


def test_element_with_wrong_node_count(tmp_path):
    text = HEADER + ELEMENTS.replace('nodes = ["vout", "gnd"]', 'nodes = ["vout"]')
    message = load_text(tmp_path, text)
    assert "element 'C1'" in message and "connects 2 nodes" in message


def test_element_with_unknown_field(tmp_path):
    text = HEADER + ELEMENTS.replace('symbol = "C1"', 'symbol = "C1"\ntolerance = "5%"')
    message = load_text(tmp_path, text)
    assert "element 'C1'" in message and "unknown field 'tolerance'" in message


def test_element_without_name(tmp_path):
    text = HEADER + ELEMENTS.replace('name = "C1"\n', "")
    message = load_text(tmp_path, text)
    assert "element 2" in message and "'name'" in message


def test_element_with_unsafe_symbol(tmp_path):
    text = HEADER + ELEMENTS.replace('symbol = "C1"', 'symbol = "__import__(\'os\')"')
    message = load_text(tmp_path, text)
    assert "element 'C1'" in message and "not a valid symbol name" in message


def test_circuit_rule_broken_names_file_and_node(tmp_path):
    text = HEADER + ELEMENTS + textwrap.dedent("""\
        [[elements]]
        name = "R5"
        kind = "resistor"
        nodes = ["vout", "dangling"]
        value = "1k"
        """)
    message = load_text(tmp_path, text)
    assert "'R5'" in message and "'dangling'" in message


def test_string_metadata_must_be_strings(tmp_path):
    message = load_text(tmp_path, HEADER + "description = 5\n" + ELEMENTS)
    assert "description = 5 must be a string" in message


def test_text_source_names_the_source():
    with pytest.raises(TopologyError, match="^from-a-test: unknown key 'x'"):
        topology_from_text(HEADER + "x = 1\n" + ELEMENTS, source="from-a-test")


# -- the library ----------------------------------------------------------------


def test_resolve_a_library_id():
    topology = resolve_topology("rc-lowpass")
    assert topology.id == "rc-lowpass"
    assert topology.path == str(LIBRARY_DIR / "rc-lowpass.toml")
    assert topology is get_topology("rc-lowpass")


def test_resolve_a_path(tmp_path):
    path = write(tmp_path, "mine.toml", HEADER + ELEMENTS)
    for given in (path, str(path)):
        topology = resolve_topology(given)
        assert topology.id == "demo-lowpass"
        assert topology.path == str(path)


def test_resolve_a_path_without_the_toml_suffix(tmp_path):
    path = write(tmp_path, "mine.topology", HEADER + ELEMENTS)
    assert resolve_topology(str(path)).id == "demo-lowpass"


def test_resolve_an_unknown_id_suggests_the_nearest():
    with pytest.raises(SpecError, match="unknown topology id 'rc-lowpas'.*'rc-lowpass'"):
        resolve_topology("rc-lowpas")


def test_resolve_a_missing_path(tmp_path):
    with pytest.raises(SpecError, match="does not exist"):
        resolve_topology(str(tmp_path / "nothing.toml"))


def test_load_folder_lists_the_bad_file_and_loads_the_others(tmp_path):
    write(tmp_path, "a-good.toml", HEADER + ELEMENTS)
    other = (HEADER.replace("demo-lowpass", "demo-two") + ELEMENTS)
    write(tmp_path, "c-good.toml", other)
    bad = write(tmp_path, "b-bad.toml", HEADER.replace('"lowpass"', '"bandstop"') + ELEMENTS)
    write(tmp_path, "notes.txt", "not a topology")
    result = load_folder(tmp_path)
    assert sorted(result.topologies) == ["demo-lowpass", "demo-two"]
    assert list(result.errors) == [str(bad)]
    assert "bandstop" in result.errors[str(bad)]
    assert str(bad) in result.errors[str(bad)]


def test_load_folder_that_does_not_exist(tmp_path):
    with pytest.raises(SpecError, match="topology folder .*nowhere.* does not exist"):
        load_folder(tmp_path / "nowhere")


def test_load_folder_given_a_file(tmp_path):
    path = write(tmp_path, "a.toml", HEADER + ELEMENTS)
    with pytest.raises(SpecError, match="is a file, not a folder"):
        load_folder(path)


@pytest.mark.parametrize("line, message", [
    ("capacitor_ratio_per_q2 = -4", "capacitor_ratio_per_q2 = -4 must be a positive number"),
    ("capacitor_ratio_per_q2 = true", "capacitor_ratio_per_q2"),
    ('gbw_rule = "yes"', "gbw_rule"),
])
def test_bad_stage_metadata_is_refused(tmp_path, line, message):
    path = write(tmp_path, "a.toml", HEADER + line + "\n" + ELEMENTS)
    with pytest.raises(TopologyError, match=message):
        load_topology(path)


def test_stage_metadata_of_the_library():
    # GBW >= 100·f0·Q is stated for Sallen–Key and multiple-feedback stages
    # (common practice): their files say so, the other biquads' do not
    rule = {t for t in ("sallen-key-lowpass-unity", "sallen-key-highpass-gain", "mfb-bandpass",
                        "tow-thomas-lowpass", "khn-lowpass") if get_topology(t).gbw_rule}
    assert rule == {"sallen-key-lowpass-unity", "sallen-key-highpass-gain", "mfb-bandpass"}
    assert get_topology("sallen-key-lowpass-unity").capacitor_ratio_per_q2 == 4.0
    assert get_topology("sallen-key-lowpass-equal").capacitor_ratio_per_q2 is None
