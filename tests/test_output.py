"""What a designer reads: console width, wording, labels, the BOM's op-amp model.

Every command runs on every bundled example (few Monte Carlo samples); its
console text must fit 100 columns (``compare --wide`` excepted), and the
JSON and HTML it writes must not show internal module or function names.
The numbers behind the labels are checked against facts outside the
project: sympy's algebra for the polynomial text, the equal-component
Sallen–Key's gain K = 3 − 1/Q (handbook fact, from memory) for an error
labelled as a gain in dB.
"""

import contextlib
import csv
import html
import io
import json
import math
import pathlib
import re

import pytest
import sympy

from placer.circuit.library import library_topologies
from placer.analysis.network import network_function
from placer.cli import main
from placer.compare import CandidateResult, SectionComparison
from placer.evidence.tolerance import DEFAULT_WINDOWS
from placer.place.opamp import AmplifierSpec
from placer.report.bom import bom_csv, bom_rows, opamp_model_text
from placer.report.comparison import why_first
from placer.report.console import WIDTH, fmt_error, table, why_chosen, wrap_text
from placer.report.polynomial import polynomial_text
from placer.spec.reader import load_spec

EXAMPLES = pathlib.Path(__file__).resolve().parents[1] / "examples"
FILTERS = sorted(p for p in EXAMPLES.glob("*.toml") if "[target]" in p.read_text())
LOOPS = sorted(p for p in EXAMPLES.glob("*.toml") if "[loop]" in p.read_text())
SAMPLES = "60"

#: Dotted internal names (placer.place.gbw...) and private function names (_target_yield).
INTERNAL = re.compile(r"\bplacer\.[a-z_]+|(?<![\w.])_[a-z][a-z0-9]*(?:_[a-z0-9]+)+\b")
#: Words the user-facing vocabulary replaced ("preferred values", "quantity",
#: "common practice", "target").
OLD_WORDS = re.compile(r"\bsnapped\b|\bfigure\b|rule of thumb|\bTARGET\b")


def _run(*argv):
    out = io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(io.StringIO()):
        status = main([str(a) for a in argv])
    return status, out.getvalue()


@pytest.fixture(scope="module")
def outputs(tmp_path_factory):
    """Console text, JSON and HTML of every command on every example."""
    folder = tmp_path_factory.mktemp("outputs")
    runs = {}
    for path in FILTERS:
        name = path.stem
        runs[("target", name)] = _run("target", path)
        for command in ("design", "compare"):
            extra = ("--bom", folder / f"{name}.csv") if command == "design" else ()
            runs[(command, name)] = _run(command, path, "--samples", SAMPLES, "--quiet",
                                         "--json", folder / f"{command}-{name}.json",
                                         "--report", folder / f"{command}-{name}.html", *extra)
    for path in LOOPS:
        name = path.stem
        runs[("loop", name)] = _run("loop", path, "--samples", SAMPLES, "--quiet",
                                    "--json", folder / f"loop-{name}.json",
                                    "--report", folder / f"loop-{name}.html")
    runs[("topologies", "")] = _run("topologies")
    return folder, runs


def _long_lines(text, width=WIDTH):
    return [line for line in text.splitlines() if len(line) > width]


def test_every_command_fits_100_columns(outputs):
    _, runs = outputs
    assert len(runs) == 3 * len(FILTERS) + len(LOOPS) + 1
    for (command, name), (status, text) in runs.items():
        assert status in (0, 1), (command, name)
        assert text.strip(), (command, name)
        assert _long_lines(text) == [], (command, name)


def test_topology_show_and_analyze_fit_100_columns():
    for topology_id in ("twin-t-notch", "type3-error-amplifier", "lc-ladder-lowpass-5",
                        "khn-notch"):
        for command in ("topologies", "analyze"):
            status, text = _run(command, topology_id)
            assert status == 0
            assert "D(s) = " in text
            assert _long_lines(text) == [], (command, topology_id)


def test_compare_wide_keeps_each_candidate_on_one_line():
    spec = next(p for p in FILTERS if p.stem == "crossover-lowpass")
    status, text = _run("compare", spec, "--samples", "20", "--quiet", "--wide")
    assert status == 0
    rows = [line for line in text.splitlines() if line.lstrip().startswith("1  ")]
    # one line holds the rank, the yield and the op-amp phase margin columns
    assert rows and all(len(line) > WIDTH for line in rows)
    assert "GBW drift (%)" in text and "yield (%)" in text


def _strings(value):
    if isinstance(value, dict):
        for key, item in value.items():
            yield str(key)
            yield from _strings(item)
    elif isinstance(value, list):
        for item in value:
            yield from _strings(item)
    elif isinstance(value, str):
        yield value


def _html_text(path):
    text = path.read_text()
    for tag in ("svg", "style", "script"):
        text = re.sub(rf"<{tag}\b.*?</{tag}>", " ", text, flags=re.S)
    return html.unescape(re.sub(r"<[^>]+>", " ", text))


def test_no_internal_names_or_old_words_in_json_html_and_console(outputs):
    folder, runs = outputs
    files = sorted(folder.glob("*.json")) + sorted(folder.glob("*.html"))
    assert len(files) == 2 * (2 * len(FILTERS) + len(LOOPS))
    for path in files:
        if path.suffix == ".json":
            data = json.loads(path.read_text())
            values = [s for s in _strings(data)]
            text = "\n".join(values)
            # JSON keys (e.g. "snapped") are the data's names; only the text is wording
            words = "\n".join(_strings_only(data))
        else:
            text = words = _html_text(path)
        assert INTERNAL.findall(text) == [], path.name
        assert OLD_WORDS.findall(words) == [], path.name
    for key, (_, text) in runs.items():
        assert INTERNAL.findall(text) == [], key
        assert OLD_WORDS.findall(text) == [], key


def _strings_only(value):
    if isinstance(value, dict):
        for item in value.values():
            yield from _strings_only(item)
    elif isinstance(value, list):
        for item in value:
            yield from _strings_only(item)
    elif isinstance(value, str):
        yield value


def test_the_internal_name_pattern_catches_what_it_should():
    assert INTERNAL.findall("op-amp model (placer.place.gbw.as_built_gbw)") == ["placer.place"]
    assert INTERNAL.findall("see _target_yield(x)") == ["_target_yield"]
    assert INTERNAL.findall("node s1_out, f0_hz, R1 = 10k, ±2 %") == []


def test_windows_are_one_set_stated_in_design_and_compare(outputs):
    folder, runs = outputs
    assert DEFAULT_WINDOWS == {"f0": 0.02, "q": 0.05, "gain_db": 0.5}
    spec = load_spec(str(next(p for p in FILTERS if p.stem == "crossover-lowpass")))
    assert spec.tolerance.windows == DEFAULT_WINDOWS       # the spec sets no window
    design = runs[("design", "crossover-lowpass")][1]
    compare = runs[("compare", "crossover-lowpass")][1]
    assert "within f0 ±2 %, Q ±5 %, gain ±0.5 dB of nominal" in design
    assert "within f0 ±2 %, Q ±5 %, gain ±0.5 dB of the target" in " ".join(compare.split())
    compared = json.loads((folder / "compare-crossover-lowpass.json").read_text())
    designed = json.loads((folder / "design-crossover-lowpass.json").read_text())
    assert compared["windows"] == DEFAULT_WINDOWS
    section_windows = [s["monte_carlo"]["windows"] for s in designed["evidence"]["sections"]]
    assert section_windows and all(w == DEFAULT_WINDOWS for w in section_windows)


def test_equal_component_sallen_key_error_is_a_gain_in_db(outputs):
    """Equal-component Sallen–Key: Q = 1/(3 − K), so K = 3 − 1/Q (handbook, from memory)."""
    folder, runs = outputs
    data = json.loads((folder / "compare-crossover-lowpass.json").read_text())
    section = data["sections"][0]
    q = section["target"]["q"]
    equal = next(c for c in section["candidates"] if c["topology"] == "sallen-key-lowpass-equal")
    assert equal["error_of"] == "gain"
    assert equal["gain_error_db"] == pytest.approx(20 * math.log10(3 - 1 / q), abs=0.1)
    assert equal["error_pct"] == pytest.approx(100 * (3 - 1 / q - 1), rel=0.03)
    text = " ".join(runs[("compare", "crossover-lowpass")][1].split())
    assert f"{equal['gain_error_db']:+.2f} dB in gain" in text
    for other in section["candidates"]:
        if other["reachable"] and other["error_of"] != "gain":
            assert f"{other['error_pct']:.3f} % in {other['error_of']}" in text


def test_fmt_error_labels_the_quantity():
    assert fmt_error(0.324, "Q") == "0.324 % in Q"
    assert fmt_error(58.6, "gain", 4.0) == "+4.00 dB in gain"
    assert fmt_error(math.inf, "f0") == "-"


def test_design_says_why_a_higher_error_topology_was_chosen():
    cands = [
        {"topology": "simple", "reachable": True, "error_pct": 0.039, "error_of": "f0",
         "parts": 4, "opamps": 1, "spread": {"resistor": 1.2, "capacitor": 1.2}},
        {"topology": "biquad", "reachable": True, "error_pct": 0.038, "error_of": "Q",
         "parts": 8, "opamps": 3, "spread": {"resistor": 2.0}},
    ]
    line = why_chosen(cands)
    assert "chosen over biquad" in line and "0.038 % in Q" in line
    assert "fewer parts (4 parts + 1 op-amp against 8 parts + 3 op-amps)" in line
    assert why_chosen(cands[::-1]) is None           # the lowest error was chosen
    same = [dict(cands[0], parts=8, opamps=3), cands[1]]
    assert "lower value spread (R ratio × C ratio 1.44 against 2)" in why_chosen(same)


def test_design_example_states_the_choice(outputs):
    _, runs = outputs
    text = " ".join(runs[("design", "adc-antialias")][1].split())
    data_lines = [line for line in runs[("design", "adc-antialias")][1].splitlines()
                  if "chosen over" in line]
    # section 1 picks the 4-part Sallen–Key over a lower-error three-op-amp biquad
    assert data_lines, "no 'chosen over' line"
    assert "fewer parts" in text or "lower value spread" in text


def test_compare_says_why_rank_one_is_first():
    def result(name, **kw):
        return CandidateResult(1, name, reachable=True, **kw)

    lower_error = result("biquad", parts=8, opamps=3, error_pct=0.02, yield_pct=60.0)
    better_yield = result("single", parts=4, opamps=1, error_pct=0.05, yield_pct=75.0)
    tied = result("single", parts=4, opamps=1, error_pct=0.05, yield_pct=59.0)
    section = SectionComparison(1, None, (better_yield, lower_error))
    assert "higher yield (75.0 % against 60.0 %)" in why_first(section, "yield")
    section = SectionComparison(1, None, (tied, lower_error))
    assert "fewer op-amps (1 against 3)" in why_first(section, "yield")
    assert "fewer parts (4 against 8)" in why_first(section, "parts")
    assert why_first(SectionComparison(1, None, (lower_error, better_yield)), "yield") is None


def test_polynomials_print_in_descending_powers_with_grouped_coefficients():
    topologies = dict(library_topologies())
    nf = network_function(topologies["sallen-key-lowpass-unity"].circuit)
    assert polynomial_text(nf.denominator) == "R1*R2*C1*C2*s**2 + (R1*C2 + R2*C2)*s + 1"
    for topology in topologies.values():
        nf = network_function(topology.circuit)
        for poly in (nf.numerator, nf.denominator):
            text = polynomial_text(poly)
            names = {str(x): x for x in poly.as_expr().free_symbols}
            # sympy's algebra: the text is the same polynomial
            assert sympy.expand(sympy.sympify(text, locals=names) - poly.as_expr()) == 0, topology.id
            powers = [int(p or 1) for p in re.findall(r"\bs(?:\*\*(\d+))?\b", text)]
            assert powers == sorted(powers, reverse=True), (topology.id, text)


def test_polynomial_signs_and_numbers():
    s, r1, c1 = sympy.symbols("s R1 C1")
    assert polynomial_text(sympy.Poly(-r1 * c1 * s**2 - (r1 + c1) * s - 1, s)) == \
        "-R1*C1*s**2 - (R1 + C1)*s - 1"
    assert polynomial_text(sympy.Poly(sympy.Rational(1, 1000) * s + 2, s)) == "1/1000*s + 2"
    assert polynomial_text(sympy.Poly(0 * s, s)) == "0"


def test_table_wraps_one_column_to_fit():
    rows = [["a", "word " * 30, "1.0"], ["b", "short", "2.0"]]
    text = table(["id", "title", "value"], rows, width=60, wrap=1)
    assert max(len(line) for line in text.splitlines()) <= 60
    assert " ".join(text.split()).count("word") == 30
    assert wrap_text("x " * 80, 50).count("\n") == 3


def test_bom_records_the_op_amp_model(outputs):
    folder, _ = outputs
    for path in sorted(folder.glob("*.csv")):
        rows = list(csv.DictReader(path.read_text().splitlines()))
        opamps = [r for r in rows if r["kind"] == "opamp"]
        assert opamps, path.name
        # the examples give no [amplifier]: the design assumed ideal op-amps
        assert all(r["opamp_model"].startswith("ideal") for r in opamps)
        assert all(r["opamp_model"] == "" for r in rows if r["kind"] != "opamp")
    model = AmplifierSpec(gbw=1e6, gain=1e5, output_resistance=50.0)
    assert opamp_model_text(model) == ("single-pole model: GBW 1 MHz, DC gain 100 dB (1e+05 V/V), "
                                       "output resistance 50 Ω")
    text = bom_csv(bom_rows([], opamps=[("U1", "op-amp")], amplifier=model))
    assert "GBW 1 MHz" in text.splitlines()[1]


# -- readable w0 and Q; the tolerances of the kinds present ----------------------

def _figure_line(text, name):
    line = next(line for line in text.splitlines() if line.strip().startswith(f"{name} "))
    return line.split("=", 1)[1].split("(rad/s)")[0].strip()


def test_analyze_prints_w0_and_q_under_one_square_root():
    """Unity-gain Sallen–Key low-pass: ω0 = 1/√(R1·R2·C1·C2), Q = √(R1·R2·C1·C2)/(C2·(R1 + R2))
    (textbook, e.g. Horowitz & Hill, from memory); the Q text is that one with C2 moved under the root."""
    status, text = _run("analyze", "sallen-key-lowpass-unity")
    assert status == 0
    assert "w0 = 1/sqrt(R1*R2*C1*C2)   (rad/s)" in text
    assert "Q  = sqrt(R1*R2*C1/C2)/(R1 + R2)" in text
    assert "sqrt(C1)*" not in text
    R1, R2, C1, C2 = sympy.symbols("R1 R2 C1 C2", positive=True)
    names = {"R1": R1, "R2": R2, "C1": C1, "C2": C2, "sqrt": sympy.sqrt}
    omega0 = sympy.sympify(_figure_line(text, "w0"), locals=names)
    q = sympy.sympify(_figure_line(text, "Q"), locals=names)
    assert sympy.simplify(omega0 - 1 / sympy.sqrt(R1 * R2 * C1 * C2)) == 0
    assert sympy.simplify(q - sympy.sqrt(R1 * R2 * C1 * C2) / (C2 * (R1 + R2))) == 0


def test_readable_w0_and_q_equal_sympy_for_every_library_function():
    """The text of ω0 and Q reads back (sympy) as the function's own ω0 = √(a0/a2), Q = √(a0·a2)/a1."""
    from placer.report.commands import readable_figures

    checked = 0
    for topology in library_topologies().values():
        nf = network_function(topology.circuit)
        if nf.order not in (1, 2):
            continue
        omega0_text, q_text = readable_figures(nf)
        names = {n: sympy.Symbol(n, positive=True) for n in nf.symbols}
        positive = {sympy.Symbol(n): names[n] for n in nf.symbols}
        for shown, exact in ((omega0_text, nf.omega0), (q_text, nf.q)):
            if exact is None:
                assert shown is None
                continue
            assert "sqrt(" not in shown or shown.count("sqrt(") == 1, (topology.id, shown)
            value = sympy.sympify(shown, locals={**names, "sqrt": sympy.sqrt})
            assert sympy.simplify(value - exact.subs(positive)) == 0, (topology.id, shown)
            checked += 1
    assert checked > 40


_BANDPASS = """
title = "kinds"
[target]
response = "bandpass"
approximation = "butterworth"
order = 1
low_edge = "1 kHz"
high_edge = "2 kHz"
[candidates]
topologies = ["series-rlc-bandpass", "mfb-bandpass"]
"""


def test_compare_tolerance_line_lists_only_the_kinds_present(tmp_path, outputs):
    """No "inductor 10 %" for RC candidates (the spec's default inductor tolerance, E12's 10 %
    per IEC 60063), and the inductor's once a candidate has one."""
    from placer.compare import Comparison
    from placer.report.comparison import comparison_text
    from placer.target.sections import split_sections

    folder, runs = outputs
    text = " ".join(runs[("compare", "crossover-lowpass")][1].split())
    assert "(uniform; resistor 1 %, capacitor 2 %) within" in text
    assert "inductor" not in text
    page = (folder / "compare-crossover-lowpass.html").read_text()
    assert "resistor 1 %, capacitor 2 %)" in page and "inductor" not in page

    path = tmp_path / "kinds.toml"
    path.write_text(_BANDPASS)
    spec = load_spec(str(path))
    assert spec.tolerance.tolerances["inductor"] == pytest.approx(0.10)
    section = split_sections(spec.target)[0]

    def heading(*topologies):
        sections = (SectionComparison(index=1, section=section, candidates=tuple(
            CandidateResult(section=1, topology=t, reason="not run") for t in topologies)),)
        comparison = Comparison(spec=spec, rank_by="yield", samples=20, seed=0, gbw="built",
                                sections=sections)
        return " ".join(comparison_text(comparison).split())

    rc = heading("mfb-bandpass")
    assert "(uniform; resistor 1 %, capacitor 10 %) within" in rc and "inductor" not in rc
    rlc = heading("mfb-bandpass", "series-rlc-bandpass")
    assert "(uniform; resistor 1 %, capacitor 10 %, inductor 10 %) within" in rlc
