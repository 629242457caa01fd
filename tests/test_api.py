"""The Python API: the names `placer` exports, and results shown in a notebook.

A notebook calls ``_repr_html_`` on the value of a cell; the page must be
well-formed HTML that needs nothing from outside (no script, no external
style sheet, font, image or URL) and must carry the numbers it is about.
"""

import math
import re
from html.parser import HTMLParser
from pathlib import Path

import control
import numpy as np
import pytest
from matplotlib.figure import Figure
from scipy import signal

import placer
from placer.report import notebook
from placer.units import format_value

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
# HTML void elements (WHATWG HTML, "void elements"): no end tag
VOID = {"area", "base", "br", "col", "embed", "hr", "img", "input", "link", "meta", "source",
        "track", "wbr"}


class _Checker(HTMLParser):
    """Every start tag closed in order; every attribute and tag collected."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.stack, self.errors, self.tags, self.attributes, self.text = [], [], set(), [], []

    def handle_starttag(self, tag, attrs):
        self.tags.add(tag)
        self.attributes += attrs
        if tag not in VOID:
            self.stack.append(tag)

    def handle_startendtag(self, tag, attrs):
        self.tags.add(tag)
        self.attributes += attrs

    def handle_endtag(self, tag):
        if not self.stack or self.stack[-1] != tag:
            self.errors.append(f"</{tag}> closes {self.stack[-1:] or 'nothing'}")
        else:
            self.stack.pop()

    def handle_data(self, data):
        self.text.append(data)


def check_fragment(text):
    """Parse a notebook fragment; return the checker after the common checks."""
    checker = _Checker()
    checker.feed(text)
    checker.close()
    assert not checker.errors, checker.errors[:3]
    assert not checker.stack, f"unclosed: {checker.stack}"
    lowered = text.lower()
    for needle in ("http://", "https://", "src=", "<script", "<link", "@import", "url(http"):
        assert needle not in lowered, needle
    # every url(...) reference is to an id inside the fragment
    for ref in re.findall(r"url\(([^)]*)\)", text):
        assert ref.startswith("#"), ref
    for name, value in checker.attributes:
        if name.endswith("href"):
            assert value.startswith("#"), (name, value)
    return checker


@pytest.fixture(scope="module")
def adc_design():
    return placer.design(placer.load_spec(EXAMPLES / "adc-antialias.toml"))


def test_every_exported_name_resolves():
    for name in placer.__all__:
        assert getattr(placer, name) is not None, name
    assert sorted(dir(placer)) == sorted(placer.__all__)
    with pytest.raises(AttributeError):
        placer.no_such_name  # noqa: B018


def test_functions_named_like_their_module_stay_functions():
    # importing the module placer.design sets the package attribute `design`; the
    # exported function must survive that (it is what `placer.design(spec)` calls)
    import importlib
    import sys

    importlib.import_module("placer.design")
    importlib.import_module("placer.compare")
    assert callable(placer.design) and placer.design.__name__ == "design"
    assert callable(placer.compare) and placer.compare.__name__ == "compare"
    assert sys.modules["placer.design"].Design is placer.Design


def test_workflow_and_result_types_are_exported():
    names = {"Spec", "load_spec", "spec_from_dict", "design", "compare", "run_loop", "Design",
             "SectionDesign", "PartChoice", "Comparison", "SectionComparison", "CandidateResult",
             "LoopSpec", "LoopResult", "LoopDesign", "LoopMonteCarlo", "MonteCarloResult",
             "Verification", "Evidence", "Prelayout", "gather_evidence", "check_design"}
    assert names <= set(placer.__all__)
    from placer.compare import Comparison
    from placer.design import Design
    from placer.spec.loop_table import LoopResult
    assert placer.Design is Design and placer.Comparison is Comparison
    assert placer.LoopResult is LoopResult


def test_spec_in_code_designs_like_the_file(adc_design):
    # the same tables as a dict give the same parts as the file
    spec = placer.spec_from_dict({
        "target": {"response": "lowpass", "approximation": "butterworth", "order": 4,
                   "cutoff": "5 kHz", "gain": "0 dB"},
        "parts": {"resistor_series": "E96", "capacitor_series": "E12",
                  "resistor_range": ["1k", "100k"], "capacitor_range": ["1n", "1u"]},
        "tolerance": {"resistor": "1%", "capacitor": "5%"},
    }, source="in code")
    built = placer.design(spec)
    assert [(p.name, p.value) for p in built.parts] == [(p.name, p.value)
                                                       for p in adc_design.parts]
    # scipy.signal.butter: the analog 4th-order Butterworth poles at 2π·5 kHz
    _, poles, _ = signal.butter(4, 2 * math.pi * 5e3, analog=True, output="zpk")
    achieved = sorted(built.poles, key=lambda p: (round(p.real), p.imag))
    expected = sorted(poles, key=lambda p: (round(p.real), p.imag))
    for a, e in zip(achieved, expected):
        assert abs(a - e) / abs(e) < 0.005   # within 0.5 % after snapping to E96/E12


def test_design_html_is_self_contained_and_lists_the_parts(adc_design):
    text = adc_design._repr_html_()
    checker = check_fragment(text)
    assert "svg" in checker.tags and "table" in checker.tags
    shown = "".join(checker.text)
    for part in adc_design.parts:
        unit = {"resistor": "Ω", "capacitor": "F"}[part.kind]
        assert part.name in shown
        assert format_value(part.value, unit) in shown, part
    for s in adc_design.sections:
        assert s.topology.id in shown


def test_design_plot_is_target_and_built_response(adc_design):
    fig = adc_design.plot()
    assert isinstance(fig, Figure)
    magnitude_ax = fig.axes[0]
    target, built = magnitude_ax.get_lines()[:2]
    f, db = built.get_xdata(), built.get_ydata()
    # scipy.signal.freqs of the Butterworth target: the built cascade within 0.1 dB below 20 kHz
    b, a = signal.butter(4, 2 * math.pi * 5e3, analog=True)
    _, h = signal.freqs(b, a, worN=2 * math.pi * f)
    band = f < 20e3
    assert np.max(np.abs(db[band] - 20 * np.log10(np.abs(h[band])))) < 0.1
    # -3 dB at the cutoff (Butterworth: |H| = 1/√2 at ωc)
    assert np.interp(np.log(5e3), np.log(f), db) == pytest.approx(-3.01, abs=0.05)
    assert notebook.plot(adc_design).axes[0].get_title() == \
        magnitude_ax.get_title()


def test_comparison_html_and_plot():
    spec = placer.load_spec(EXAMPLES / "adc-antialias.toml")
    comparison = placer.compare(spec, samples=100, workers=1)
    checker = check_fragment(comparison._repr_html_())
    shown = "".join(checker.text)
    for s in comparison.sections:
        for c in s.candidates:
            assert c.topology in shown
            if c.reachable:
                assert f"{c.error_pct:.3f}" in shown and f"{c.yield_pct:.1f}" in shown
    fig = comparison.plot(section=2)
    reachable = [c for c in comparison.sections[1].candidates if c.reachable]
    labels = [t.get_text() for t in fig.axes[0].get_yticklabels()]
    assert labels == [c.topology for c in reachable]
    with pytest.raises(placer.SpecError, match="section = 9"):
        comparison.plot(section=9)


def test_loop_html_and_plot_against_python_control():
    spec = placer.load_spec(EXAMPLES / "buck-loop.toml")
    result = placer.run_loop(spec.loop, parts=spec.parts, samples=100, seed=1)
    checker = check_fragment(result._repr_html_())
    shown = "".join(checker.text)
    margins = result.design.snapped_margins
    # python-control's stability_margins of the same loop gain agrees with the margins shown
    gm, pm, _, wpc = control.stability_margins(
        result.design.loop_transfer_function(snapped=True))[:4]
    assert pm == pytest.approx(margins.phase_margin_deg, abs=0.2)
    assert f"{margins.phase_margin_deg:.2f}°" in shown
    for symbol, value in result.design.snapped.items():
        if symbol in result.design.series:
            assert symbol in shown
    assert "Monte Carlo, 100 builds" in shown
    fig = result.plot()
    assert isinstance(fig, Figure) and len(fig.axes) >= 2


def test_monte_carlo_result_view(adc_design):
    evidence = placer.gather_evidence(adc_design, samples=300, seed=3)
    mc = evidence.sections[0].monte_carlo
    checker = check_fragment(mc._repr_html_())
    shown = "".join(checker.text)
    assert format_value(mc.statistics["f0_hz"].mean, "Hz", digits=4) in shown
    fig = mc.plot()
    # the histogram counts every build (matplotlib bars: heights sum to the samples)
    bars = fig.axes[0].containers[0]
    assert sum(p.get_height() for p in bars) == mc.samples


def test_schematic_shows_itself_as_svg(adc_design):
    from placer.report.schematic import design_schematics

    schematic = next(iter(design_schematics(adc_design).values()))
    svg = schematic._repr_svg_()
    assert svg.lstrip().startswith(("<?xml", "<svg"))
    assert "R1" in svg or "<path" in svg


def test_no_view_for_other_objects():
    with pytest.raises(placer.SpecError, match="no notebook view"):
        notebook.to_html(object())
