"""Regression tests of bad and odd input: spec, topology and circuit files, --set.

Each case here once crashed (a traceback) or gave a silent wrong answer.
Bad input must give one line ``error: ...`` naming the file and field and
exit 2 (the project's own contract, README "Bad input"); the physics cases
check the result against a handbook formula named beside the check.
"""

import json
import math
import textwrap
from pathlib import Path

import pytest

from placer.cli import main
from placer.errors import SpecError
from placer.circuit.library import LIBRARY_DIR, load_analysable
from placer.spec.loop_table import loop_from_table, run_loop
from placer.schema import SPEC_TABLES
from placer.spec.reader import load_spec
from placer.circuit.topology import load_topology

TARGET = """
[target]
approximation = "butterworth"
order = 2
cutoff = "1 kHz"
"""

RC = """
[[elements]]
name = "R1"
kind = "resistor"
nodes = ["vin", "vout"]
{r}

[[elements]]
name = "C1"
kind = "capacitor"
nodes = ["vout", "gnd"]
{c}
"""


def write(tmp_path: Path, text: str, name: str = "spec.toml") -> Path:
    path = tmp_path / name
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


def run(argv: list, capsys: pytest.CaptureFixture) -> tuple:
    """Exit status and stderr of the command; bad input is exactly one error line."""
    status = main([str(a) for a in argv])
    err = capsys.readouterr().err
    assert "Traceback" not in err
    if status == 2:
        assert len(err.strip().splitlines()) == 1 and err.startswith("error: ")
    return status, err


def spec_error(tmp_path: Path, text: str) -> str:
    path = write(tmp_path, text)
    with pytest.raises(SpecError) as caught:
        load_spec(path)
    message = str(caught.value)
    assert str(path) in message
    return message


# -- non-finite and extreme numbers -----------------------------------------------

@pytest.mark.parametrize("extra, field", [
    ('[parts]\ncapacitor_range = ["1n", inf]\n', "parts.capacitor_range"),
    ('[parts]\nresistor_range = [nan, "10k"]\n', "parts.resistor_range"),
    ('[parts]\nfixed = { R1 = inf }\n', "parts.fixed.R1"),
    ("[tolerance]\nresistor = nan\n", "tolerance.resistor"),
    ("[tolerance]\ngain = inf\n", "tolerance.gain"),
    ("[amplifier]\ngbw = inf\n", "[amplifier] gbw"),
    ("[amplifier]\noutput_resistance = nan\n", "[amplifier] output_resistance"),
])
def test_toml_inf_and_nan_are_refused_with_the_field_named(tmp_path, extra, field):
    message = spec_error(tmp_path, TARGET + extra)
    assert field in message and ("finite" in message or "outside" in message)


@pytest.mark.parametrize("key", ["cutoff", "gain"])
def test_toml_inf_in_the_target_is_refused(tmp_path, key):
    text = TARGET.replace('cutoff = "1 kHz"', 'cutoff = "1 kHz"\ngain = 0') \
        .replace(f"{key} = " + ('"1 kHz"' if key == "cutoff" else "0"), f"{key} = inf")
    assert f"target.{key}" in spec_error(tmp_path, text)


@pytest.mark.parametrize("key", ["gain", "output_resistance"])
def test_amplifier_denormal_figures_are_refused(tmp_path, key):
    # 5e-324 is the smallest double: it passed "> 0" and overflowed the MNA
    message = spec_error(tmp_path, TARGET + f'[amplifier]\ngbw = "1 MHz"\n{key} = 5e-324\n')
    assert f"[amplifier] {key} = 5e-324" in message and "outside" in message


@pytest.mark.parametrize("text, field, span", [
    ('approximation = "chebyshev1"\norder = 2\ncutoff = "1 kHz"\nripple = "4000 dB"',
     "target.ripple", "0.0001 to 20 dB"),
    ('approximation = "chebyshev2"\norder = 2\ncutoff = "1 kHz"\nattenuation = "1e6 dB"',
     "target.attenuation", "0.0001 to 200 dB"),
    ('approximation = "butterworth"\norder = 2\ncutoff = "1e15 Hz"',
     "target.cutoff", "0.001 to 1e+10 Hz"),
    ('sections = [{ f0 = "1 kHz", q = 1e6 }]', "target.sections[0].q", "0.01 to 1000"),
    ('approximation = "butterworth"\norder = 2\ncutoff = "1 kHz"\ngain = "900 dB"',
     "target.gain", "-200 to 200 dB"),
])
def test_target_figures_have_bounds_the_message_states(tmp_path, text, field, span):
    message = spec_error(tmp_path, "[target]\n" + text + "\n")
    assert field in message and span in message


def test_a_topology_range_must_be_finite(tmp_path):
    source = (LIBRARY_DIR / "rc-lowpass.toml").read_text(encoding="utf-8")
    path = write(tmp_path, source.replace('id = "rc-lowpass"', 'id = "mine"')
                 + "\n[ranges]\nC1 = [1e-9, inf]\n", "mine.toml")
    with pytest.raises(SpecError, match=r"ranges\.C1: inf is not a finite number"):
        load_topology(path)


def test_topologies_json_lists_a_bad_range_as_a_load_error(tmp_path, capsys):
    source = (LIBRARY_DIR / "rc-lowpass.toml").read_text(encoding="utf-8")
    write(tmp_path, source.replace('id = "rc-lowpass"', 'id = "mine"')
          + "\n[ranges]\nC1 = [1e-9, inf]\n", "mine.toml")
    assert main(["topologies", "--folder", str(tmp_path), "--json"]) == 0
    listing = json.loads(capsys.readouterr().out)      # JSON holds no inf: it parses
    assert any("error" in item and "finite" in item["error"] for item in listing)
    assert "mine" not in {item.get("id") for item in listing}


def test_a_drawn_shunt_part_off_the_path_is_a_load_error(tmp_path):
    # found by the fuzz test: a shunt leg whose node is not on the drawn path
    # (here R1 from gnd to gnd) ended in an internal error
    text = textwrap.dedent("""\
        id = "mine"
        title = "RLC with R1 shorted"
        response = "bandpass"
        order = 2
        elements = [{name = "L1", kind = "inductor", nodes = ["vin", "n1"], symbol = "L1"},
                    {name = "C1", kind = "capacitor", nodes = ["n1", "vout"], symbol = "C1"},
                    {name = "R1", kind = "resistor", nodes = ["gnd", "gnd"], symbol = "R1"}]
        drawing = {path = ["L1", "C1"], shunt = ["R1"]}
        """)
    path = write(tmp_path, text, "mine.toml")
    with pytest.raises(SpecError, match=r"drawing\.shunt: 'R1' hangs from node 'gnd'"):
        load_topology(path)


def test_analyze_refuses_huge_element_values(tmp_path, capsys):
    path = write(tmp_path, RC.format(r="value = 1e300", c="value = 1e300"), "big.toml")
    status, err = run(["analyze", path], capsys)
    assert status == 2 and "element 'R1'" in err and "1 mΩ to 1 TΩ" in err


@pytest.mark.parametrize("setting", ["R1=1e200", "R1=0", "R1=-159", "C1=1e200"])
def test_analyze_set_refuses_out_of_bounds_values(setting, capsys):
    other = "C1=1n" if setting.startswith("R1") else "R1=1k"
    status, err = run(["analyze", "rc-lowpass", "--set", setting, "--set", other], capsys)
    assert status == 2 and f"--set {setting[:2]}" in err and "outside" in err


def test_analyze_set_checks_the_unit_of_the_part(capsys):
    status, err = run(["analyze", "rc-lowpass", "--set", "C1=1 kHz", "--set", "R1=1k"], capsys)
    assert status == 2 and "'1 kHz' is in Hz, expected F" in err


def test_a_zero_gain_source_says_the_output_does_not_depend_on_the_input(tmp_path, capsys):
    path = write(tmp_path, """
        [[elements]]
        name = "R1"
        kind = "resistor"
        nodes = ["vin", "n1"]
        value = "1k"
        [[elements]]
        name = "C1"
        kind = "capacitor"
        nodes = ["n1", "gnd"]
        value = "1u"
        [[elements]]
        name = "E1"
        kind = "vcvs"
        nodes = ["vout", "gnd", "n1", "gnd"]
        gain = 0
        [[elements]]
        name = "RL"
        kind = "resistor"
        nodes = ["vout", "gnd"]
        value = "1k"
        """, "zero.toml")
    status, err = run(["analyze", path], capsys)
    assert status == 2 and "does not depend on the input" in err and str(path) in err


# -- wrong types ------------------------------------------------------------------

@pytest.mark.parametrize("text, words", [
    ('[target]\nresponse = ["lowpass"]\napproximation = "butterworth"\norder = 2\ncutoff = 1e3',
     "target.response = ['lowpass'] must be a string"),
    ('[target]\napproximation = "bessel"\nbessel_norm = {}\norder = 2\ncutoff = 1e3',
     "target.bessel_norm = {} must be a string"),
    (TARGET + "[tolerance]\nsamples = 1.5", "tolerance.samples = 1.5 must be a whole number"),
    (TARGET + "[cascade]\nordering = 3", "cascade.ordering = 3 must be a string"),
    (TARGET + "[parts]\nconstraints = 5", "parts.constraints = 5 must be a list of strings"),
    (TARGET + "title = 5", "unknown key target.title"),   # a key after a table is in it
    ("title = 5\n" + TARGET, "title = 5 must be a string"),
    (TARGET + "[parts]\nfixed = { R1 = [1] }", "parts.fixed.R1 = [1] must be a number"),
])
def test_every_field_type_is_checked(tmp_path, text, words):
    message = spec_error(tmp_path, text)
    assert words in message


def test_an_element_kind_of_the_wrong_type(tmp_path, capsys):
    path = write(tmp_path, RC.format(r='value = "1k"', c='value = "1n"')
                 .replace('kind = "resistor"', 'kind = ["resistor"]'), "kind.toml")
    status, err = run(["analyze", path], capsys)
    assert status == 2 and "element 'R1': kind = ['resistor'] must be a string" in err


def test_a_topology_constraints_of_the_wrong_type(tmp_path, capsys):
    source = (LIBRARY_DIR / "sallen-key-lowpass-equal.toml").read_text(encoding="utf-8")
    lines = [("constraints = 5" if line.startswith("constraints") else line)
             for line in source.splitlines()]
    path = write(tmp_path, "\n".join(lines) + "\n", "c5.toml")
    status, err = run(["analyze", path], capsys)
    assert status == 2 and "constraints = 5 must be a list of strings" in err


# -- files ------------------------------------------------------------------------

@pytest.mark.parametrize("text", [
    'id = "x"\ntitle = "caf\xe9"\n',                         # a topology file
    RC.format(r='value = "1k"', c='value = "1n"') + '# caf\xe9\n',  # a circuit file
])
def test_analyze_on_a_file_that_is_not_utf8(tmp_path, capsys, text):
    path = tmp_path / "latin1.toml"
    path.write_bytes(text.encode("latin-1"))
    status, err = run(["analyze", path], capsys)
    assert status == 2 and "not UTF-8" in err and "0xe9" in err


@pytest.mark.parametrize("command", ["target", "analyze"])
def test_deep_nesting_is_one_line(tmp_path, capsys, command):
    path = write(tmp_path, "title = " + "[" * 500 + "]" * 500 + "\n" + TARGET)
    status, err = run([command, path], capsys)
    assert status == 2 and "nested too deeply" in err


@pytest.mark.parametrize("argv", [
    ["target", "{long}.toml"],
    ["design", "{long}.toml"],
    ["analyze", "{long}.toml"],
    ["analyze", "{long}"],
    ["topologies", "--folder", "{long}"],
])
def test_paths_longer_than_the_file_system_allows(tmp_path, capsys, argv):
    long = str(tmp_path / ("a" * 5000))
    status, err = run([a.format(long=long) for a in argv], capsys)
    assert status == 2
    assert len(err) < 500                   # the path is cut in the message


def test_a_path_too_long_inside_a_spec(tmp_path):
    message = spec_error(tmp_path, TARGET + f'[candidates]\nfolder = "{"a" * 5000}"\n')
    assert "candidates.folder" in message and "too long" in message
    message = spec_error(tmp_path, TARGET + f'[candidates]\ntopologies = ["{"a" * 5000}"]\n')
    assert "candidates.topologies" in message and len(message) < 500


def test_a_spec_path_that_is_a_directory(tmp_path, capsys):
    status, err = run(["target", tmp_path], capsys)
    assert status == 2 and "is a directory" in err and "does not exist" not in err


# -- internal symbols never meet a user's ------------------------------------------

def test_a_symbol_named_like_a_conductance_does_not_collide(tmp_path, capsys):
    path = write(tmp_path, RC.format(r='symbol = "R1"', c='symbol = "G__R1"'), "rc.toml")
    status = main(["analyze", str(path), "--set", "R1=1k", "--set", "G__R1=1u", "--json"])
    data = json.loads(capsys.readouterr().out)
    assert status == 0
    # RC low-pass: one pole at -1/(R·C) = -1000 rad/s (circuit theory, common practice)
    assert data["poles"] == [[pytest.approx(-1000.0, rel=1e-9), 0.0]]
    assert data["denominator"] == "R1*G__R1*s + 1"


def test_a_symbol_named_s_is_refused(tmp_path, capsys):
    path = write(tmp_path, RC.format(r='symbol = "R1"', c='symbol = "s"'), "rc.toml")
    status, err = run(["analyze", path], capsys)
    assert status == 2 and "'s' is reserved for the Laplace variable" in err


# -- units on element values ------------------------------------------------------------

@pytest.mark.parametrize("r, c, words", [
    ('value = "1k"', 'value = "1 kHz"', "element 'C1' value: '1 kHz' is in Hz, expected F"),
    ('value = "1 H"', 'value = "1n"', "element 'R1' value: '1 H' is in H, expected ohm"),
])
def test_an_element_value_carries_its_kinds_unit(tmp_path, capsys, r, c, words):
    path = write(tmp_path, RC.format(r=r, c=c), "units.toml")
    status, err = run(["analyze", path], capsys)
    assert status == 2 and words in err


def test_an_element_value_in_its_own_unit_is_read(tmp_path):
    path = write(tmp_path, RC.format(r='value = "1 kΩ"', c='value = "1 uF"'), "units.toml")
    circuit = load_analysable(str(path)).circuit
    assert circuit.element("R1").value == pytest.approx(1e3, rel=1e-12)
    assert circuit.element("C1").value == pytest.approx(1e-6, rel=1e-12)


# -- candidates, loop and unknown keys ---------------------------------------------

def test_a_topology_of_the_folder_is_chosen_by_its_id(tmp_path):
    (tmp_path / "topos").mkdir()
    source = (LIBRARY_DIR / "sallen-key-lowpass-unity.toml").read_text(encoding="utf-8")
    write(tmp_path / "topos", source.replace('id = "sallen-key-lowpass-unity"', 'id = "my-id"'),
          "mine.toml")
    spec = load_spec(write(tmp_path, TARGET + '[candidates]\nfolder = "topos"\n'
                           'topologies = ["my-id"]\n'))
    assert spec.candidates == (str(tmp_path / "topos" / "mine.toml"),)


LOOP = """
[loop]
crossover = "20 kHz"
phase_margin = "60 deg"
compensator = "type3"

[loop.plant]
type = "buck"
vin = "12 V"
inductance = "10 uH"
capacitance = "100 uF"
esr = "20 mohm"
load = "1 ohm"
ramp = "1 V"
"""


def test_the_loop_reads_the_parts_table(tmp_path):
    spec = load_spec(write(tmp_path, LOOP + '[parts]\nresistor_series = "E24"\n'
                           'resistor_range = ["100k", "10M"]\ncapacitor_range = ["1p", "1u"]\n'))
    loop = loop_from_table(spec.loop, parts=spec.parts)
    assert loop.resistor_series == "E24"
    assert loop.resistor_range == (1e5, 1e7)
    result = run_loop(spec.loop, samples=0, parts=spec.parts)
    resistors = [v for s, v in result.design.snapped.items() if s.startswith("R")]
    assert resistors and all(1e5 * (1 - 1e-9) <= v <= 1e7 * (1 + 1e-9) for v in resistors)


def test_loop_and_parts_series_at_odds(tmp_path):
    message = spec_error(tmp_path, LOOP.replace('compensator = "type3"',
                                                'compensator = "type3"\nresistor_series = "E96"')
                         + '[parts]\nresistor_series = "E24"\n')
    assert "loop.resistor_series" in message and "one place" in message


def test_an_unknown_key_lists_the_accepted_ones(tmp_path):
    message = spec_error(tmp_path, TARGET + "q = 8\n")
    assert "unknown key target.q" in message
    assert "(accepted: " + ", ".join(SPEC_TABLES["target"]) + ")" in message


def test_a_stray_table_in_a_spec_or_circuit_file_is_an_error(tmp_path, capsys):
    assert "unknown key 'stray'" in spec_error(tmp_path, TARGET + "[stray]\nx = 1\n")
    assert "unknown key 'stray'" in spec_error(tmp_path, LOOP + "[loop.stray]\nx = 1\n")
    path = write(tmp_path, RC.format(r='value = "1k"', c='value = "1n"') + "[stray]\nx = 1\n",
                 "rc.toml")
    status, err = run(["analyze", path], capsys)
    assert status == 2 and "unknown key 'stray'" in err and "accepted: " in err


def test_a_huge_key_is_cut_in_the_message(tmp_path, capsys):
    path = write(tmp_path, TARGET + "k" * 1_000_000 + " = 1\n")
    status, err = run(["target", path], capsys)
    assert status == 2 and len(err) < 1000


def test_a_good_spec_still_gives_its_target(tmp_path, capsys):
    # second-order Butterworth at 1 kHz: Q = 1/sqrt(2) (handbook table, from memory)
    path = write(tmp_path, TARGET)
    assert main(["target", str(path), "--json"]) == 0
    section = json.loads(capsys.readouterr().out)["sections"][0]
    assert section["q"] == pytest.approx(1 / math.sqrt(2), rel=1e-9)
    assert section["f0_hz"] == pytest.approx(1e3, rel=1e-9)
