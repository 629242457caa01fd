"""Tests of placer.report.plots, placer.report.loop_plots and placer.report.html: figures, reports."""

import dataclasses
import json
import re
import shutil
import tomllib
from pathlib import Path

import numpy as np
import pytest
from matplotlib.figure import Figure
from matplotlib.lines import Line2D

from placer.cli import main
from placer.design import design
from placer.errors import SpecError
from placer.evidence.gather import gather_evidence
from placer.spec.loop_table import loop_to_dict, run_loop
from placer.report.data import design_to_dict
from placer.report.html import write_design_report, write_loop_report
from placer.report.page import inline_svg
from placer.report.loop_plots import loop_bode_figure
from placer.report.plots import (
    bode_figure,
    engineering_scale,
    figure_png,
    figure_svg,
    histogram_figure,
    pole_zero_figure,
    save_figure,
    step_figure,
)
from placer.spec.reader import load_spec
from placer.units import format_value

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"
ADC_SPEC = EXAMPLES / "adc-antialias.toml"
BUCK_SPEC = EXAMPLES / "buck-loop.toml"
_UNIT = {"resistor": "ohm", "capacitor": "F", "inductor": "H"}
CAUTION_WORDS = ("confirm the design by simulation and on the bench",
                 "applicable safety standards and licensed practice")
PLOT_STEMS = {"pole-zero", "bode", "step", "section1-f0-histogram", "section1-q-histogram",
              "section2-f0-histogram", "section2-q-histogram"}
#: The plots of the pre-layout checks, which `placer design` adds (placer.report.prelayout).
PRELAYOUT_STEMS = {"noise-density", "swing", "opamp-loop"}


def _external_references(text):
    """http(s) URLs and tags that would fetch something when the page opens."""
    urls = re.findall(r"https?://", text)
    tags = re.findall(r"<(?:link|script|img|iframe)\b[^>]*(?:src|href)=", text, flags=re.I)
    return urls + tags


def _lines(fig):
    return {line.get_label(): line for ax in fig.axes for line in ax.get_lines()
            if isinstance(line, Line2D)}


# -- fixtures: one real design and one real loop, built once -------------------

@pytest.fixture(scope="module")
def built():
    spec = load_spec(str(ADC_SPEC))
    result = design(spec)
    evidence = gather_evidence(result, samples=200)
    return result, design_to_dict(result), evidence


@pytest.fixture(scope="module")
def report(built, tmp_path_factory):
    result, data, evidence = built
    folder = tmp_path_factory.mktemp("design-report")
    plots = folder / "plots"
    plots.mkdir()
    written = write_design_report(result, data, evidence, html_path=folder / "report.html",
                                  plots_dir=plots, inputs=(str(ADC_SPEC),))
    return written, (folder / "report.html").read_text(encoding="utf-8"), plots


@pytest.fixture(scope="module")
def loop_report(tmp_path_factory):
    table = tomllib.loads(BUCK_SPEC.read_text(encoding="utf-8"))
    result = run_loop(table, source=str(BUCK_SPEC), samples=200, seed=1)
    data = loop_to_dict(result)
    folder = tmp_path_factory.mktemp("loop-report")
    written = write_loop_report(result, data, html_path=folder / "loop.html", plots_dir=folder,
                                inputs=(str(BUCK_SPEC),))
    return result, data, written, (folder / "loop.html").read_text(encoding="utf-8")


# -- the design report -----------------------------------------------------------

def test_design_report_is_self_contained(report):
    written, text, _ = report
    assert written.html is not None and written.html.name == "report.html"
    assert text.startswith("<!DOCTYPE html>")
    assert _external_references(text) == []
    # the plots, then a schematic of each section and of the cascade
    assert text.count('<figure class="schematic">') == 3
    assert text.count("<svg") == len(PLOT_STEMS) + 3
    assert "<style>" in text


def test_design_report_shows_the_spec_text_escaped(report):
    _, text, _ = report
    assert "From <code>" in text
    assert 'cutoff = &quot;5 kHz&quot;' in text          # the TOML line, escaped
    assert 'approximation = &quot;butterworth&quot;' in text


def test_design_report_lists_every_part_with_its_value(report, built):
    _, text, _ = report
    _, data, _ = built
    parts_list = text[text.index("<h2>Parts list</h2>"):]
    for section in data["sections"]:
        for part in section["parts"]:
            row = re.search(rf"<tr><td>{part['name']}</td>(.*?)</tr>", parts_list)
            assert row, part["name"]
            assert format_value(part["value"], _UNIT[part["kind"]]) in row.group(1)
            assert part["series"] in row.group(1)
    assert "kΩ" in text and "nF" in text


def test_design_report_has_sections_figures_and_sensitivities(report, built):
    _, text, _ = report
    _, data, evidence = built
    for heading in ("What was asked for", "Target and achieved, section by section",
                    "Where the poles and zeros sit", "Frequency response", "Step response",
                    "Tolerance spread (Monte Carlo)", "Sensitivity", "Parts list",
                    "Before you build it"):
        assert f"<h2>{heading}" in text, heading
    for header in ("f0 (Hz)", "Q (dimensionless)", "gain (dB)", "S ω0 (%/%)", "S Q (%/%)",
                   "S gain (%/%)", "tolerance"):
        assert header in text, header
    for s in evidence.sections:
        for designator in s.designators.values():
            assert f"<td>{designator}</td>" in text
    # achieved f0 of each section, as the console shows it
    for s in data["sections"]:
        assert format_value(s["achieved"]["f0_hz"], "Hz", digits=4) in text


def test_design_report_ends_with_the_caution(report):
    _, text, _ = report
    for words in CAUTION_WORDS:
        assert words in text
    assert text.rindex("Before you build it") > text.rindex("Parts list")


def test_plots_folder_gets_png_and_svg_of_every_plot(report):
    written, _, plots = report
    names = {p.name for p in plots.iterdir()}
    assert names == {f"{stem}.{suffix}" for stem in PLOT_STEMS for suffix in ("png", "svg")}
    assert {p.name for p in written.plots} == names
    for stem in PLOT_STEMS:
        assert (plots / f"{stem}.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"
        assert "<svg" in (plots / f"{stem}.svg").read_text(encoding="utf-8")


def test_plots_only_writes_no_html(built, tmp_path):
    result, data, evidence = built
    written = write_design_report(result, data, None, plots_dir=tmp_path)
    assert written.html is None
    assert {p.name for p in tmp_path.iterdir()} == {"pole-zero.png", "pole-zero.svg"}


def test_report_refuses_to_overwrite_the_spec(built, tmp_path):
    result, data, evidence = built
    spec_copy = tmp_path / "spec.toml"
    shutil.copy(ADC_SPEC, spec_copy)
    before = spec_copy.read_bytes()
    moved = dataclasses.replace(result, spec=dataclasses.replace(result.spec, path=str(spec_copy)))
    with pytest.raises(SpecError, match="input file"):     # named in inputs
        write_design_report(moved, data, evidence, html_path=spec_copy, inputs=(str(spec_copy),))
    with pytest.raises(SpecError, match="input file"):     # the design's own spec, implicitly
        write_design_report(moved, data, evidence, html_path=spec_copy)
    assert spec_copy.read_bytes() == before
    assert [p.name for p in tmp_path.iterdir()] == ["spec.toml"]


def test_missing_output_folder_is_a_spec_error(built, tmp_path):
    result, data, evidence = built
    with pytest.raises(SpecError, match="does not exist"):
        write_design_report(result, data, evidence, html_path=tmp_path / "nowhere" / "r.html")
    with pytest.raises(SpecError, match="--plots"):
        write_design_report(result, data, evidence, html_path=tmp_path / "r.html",
                            plots_dir=tmp_path / "nowhere")
    assert list(tmp_path.iterdir()) == []                  # checked before anything is written


# -- the loop report ---------------------------------------------------------------

def test_loop_report_contents(loop_report):
    result, data, written, text = loop_report
    assert _external_references(text) == []
    assert text.count("<svg") == 2 + 1  # two plots and the compensator's schematic
    assert text.count('<figure class="schematic">') == 1
    assert {p.name for p in written.plots} == {"loop-gain.png", "loop-gain.svg",
                                                "phase-margin-histogram.png",
                                                "phase-margin-histogram.svg"}
    assert "crossover = &quot;20 kHz&quot;" in text       # the spec text
    assert data["plant"]["description"] in text
    assert result.design.topology.id in text
    for part in data["parts"]:
        assert f"<td>{part['name']}</td>" in text
        assert format_value(part["value"], _UNIT[part["kind"]]) in text
    assert f"{data['phase_margin_deg']:.2f}°" in text
    assert f"{data['monte_carlo']['phase_margin_worst_deg']:.2f}°" in text
    assert f"{100 * data['monte_carlo']['yield']:.1f} %" in text
    for words in CAUTION_WORDS + ("Power converters can hurt people",):
        assert words in text


def test_loop_report_refuses_the_spec_as_output(loop_report, tmp_path):
    result, data, _, _ = loop_report
    spec_copy = tmp_path / "loop.toml"
    shutil.copy(BUCK_SPEC, spec_copy)
    before = spec_copy.read_bytes()
    with pytest.raises(SpecError, match="input file"):
        write_loop_report(result, data, html_path=spec_copy, inputs=(str(spec_copy),))
    assert spec_copy.read_bytes() == before


# -- the figures ---------------------------------------------------------------------

def test_pole_zero_marks_poles_with_crosses_and_zeros_with_circles():
    fig = pole_zero_figure([-1e3 + 2e3j, -1e3 - 2e3j], [3e3j, -3e3j],
                           [-1.1e3 + 2e3j, -1.1e3 - 2e3j], [3.1e3j, -3.1e3j])
    assert isinstance(fig, Figure)
    lines = _lines(fig)
    assert lines["target poles"].get_marker() == "x"
    assert lines["achieved poles"].get_marker() == "x"
    assert lines["target zeros"].get_marker() == "o"
    assert lines["achieved zeros"].get_marker() == "o"
    assert lines["target poles"].get_linestyle() == "None"
    # target and achieved look different
    assert lines["target poles"].get_color() != lines["achieved poles"].get_color()
    assert lines["target poles"].get_markersize() > lines["achieved poles"].get_markersize()
    np.testing.assert_allclose(lines["achieved poles"].get_xdata(), [-1.1, -1.1])  # krad/s
    ax = fig.axes[0]
    assert "krad/s" in ax.get_xlabel() and "jω" in ax.get_ylabel()
    # the jω axis is drawn: a vertical line at σ = 0
    assert any(np.allclose(line.get_xdata(), 0.0) and line.get_label().startswith("_")
               for line in ax.get_lines())


def test_pole_zero_of_the_real_design(built):
    result, _, _ = built
    fig = pole_zero_figure(result.target.poles, result.target.zeros, result.poles, result.zeros)
    lines = _lines(fig)
    assert lines["achieved poles"].get_marker() == "x"
    assert len(lines["achieved poles"].get_xdata()) == 4
    assert "achieved zeros" not in lines                   # a low-pass has no finite zeros
    assert any("no finite zeros" in t.get_text() for t in fig.axes[0].texts)


def test_repeated_roots_carry_their_multiplicity():
    fig = pole_zero_figure([-1.0, -2.0], [0.0, 0.0, 0.0], [-1.0, -2.0], [0.0, 0.0, 0.0])
    assert "(3)" in [t.get_text() for t in fig.axes[0].texts]


def test_bode_figure_axes_and_envelope():
    f = np.geomspace(10, 1e5, 400)
    magnitude = -10 * np.log10(1 + (f / 1e3) ** 4)
    phase = -np.degrees(np.arctan(f / 1e3)) * 2
    curves = {"target": (magnitude, phase), "preferred values": (magnitude - 0.1, phase)}
    fig = bode_figure(f, curves, envelope=(magnitude - 1, magnitude + 1), reference="target")
    magnitude_ax, difference_ax, phase_ax = fig.axes
    assert magnitude_ax.get_xscale() == "log"
    assert magnitude_ax.get_ylabel() == "magnitude (dB)"
    assert phase_ax.get_ylabel() == "phase (degrees)"
    assert phase_ax.get_xlabel() == "frequency (Hz)"
    assert magnitude_ax.collections, "the envelope is shaded"
    np.testing.assert_allclose(difference_ax.get_lines()[0].get_ydata(), -0.1, atol=1e-12)
    with pytest.raises(SpecError, match="reference"):
        bode_figure(f, {"target": (magnitude, phase)}, reference="nothing")


def test_step_figure_time_in_engineering_units():
    t = np.linspace(0, 2e-3, 100)
    fig = step_figure({"target": (t, 1 - np.exp(-t / 2e-4))})
    assert fig.axes[0].get_xlabel() == "time (ms)"
    np.testing.assert_allclose(fig.axes[0].get_lines()[0].get_xdata()[-1], 2.0)


def test_histogram_figure_nominal_and_window():
    samples = np.random.default_rng(3).normal(5e3, 50, 500)
    fig = histogram_figure(samples, 5e3, label="f0", unit="Hz", window=(4.9e3, 5.1e3))
    ax = fig.axes[0]
    assert ax.get_xlabel() == "f0 (kHz)"
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert "nominal 5 kHz" in labels
    assert any(label.startswith("window 4.9 kHz – 5.1 kHz") for label in labels)
    one_sided = histogram_figure(samples / 100, 50.0, label="phase margin", unit="deg",
                                 window=(45.0, None))
    labels = [t.get_text() for t in one_sided.axes[0].get_legend().get_texts()]
    assert any(label.startswith("window ≥ 45°") for label in labels)


def test_loop_bode_marks_the_margins():
    f = np.geomspace(0.01, 100, 801)
    s = 2j * np.pi * f
    loop = 10 * 2**0.5 / (s * (1 + s / 10))     # k/(s(1 + s/10)): PM 45° at 10 rad/s
    fig = loop_bode_figure(f, 20 * np.log10(np.abs(loop)), np.degrees(np.unwrap(np.angle(loop))),
                           crossover_hz=10 / (2 * np.pi), phase_margin_deg=45.0,
                           gain_margin_db=None, phase_crossover_hz=None)
    texts = [t.get_text() for ax in fig.axes for t in ax.texts]
    assert any(t.startswith("phase margin 45.0°") for t in texts)
    assert any("no phase crossover" in t for t in texts)
    magnitude_ax, phase_ax = fig.axes
    drawn = phase_ax.get_lines()[0]
    at = np.interp(np.log(10 / (2 * np.pi)), np.log(drawn.get_xdata()), drawn.get_ydata())
    assert at == pytest.approx(-135.0, abs=0.1)           # −180° + PM at the crossover
    assert any(np.allclose(line.get_ydata(), -180.0) for line in phase_ax.get_lines()[1:])
    assert any(np.allclose(line.get_ydata(), 0.0) for line in magnitude_ax.get_lines()[1:])
    none = loop_bode_figure(f, np.full(f.size, -20.0), np.full(f.size, -90.0), crossover_hz=None,
                            phase_margin_deg=None, gain_margin_db=None, phase_crossover_hz=None)
    texts = [t.get_text() for ax in none.axes for t in ax.texts]
    assert any("no gain crossover" in t for t in texts)


def test_loop_bode_gain_margin_annotation():
    f = np.geomspace(0.01, 100, 801)
    s = 2j * np.pi * f
    loop = 0.5 / (1 + s) ** 3      # phase −180° at ω = √3 rad/s, |L| = 0.5/8 there: GM 24.08 dB
    phase = np.degrees(np.unwrap(np.angle(loop))) + 360.0     # on another branch, on purpose
    crossing = 3**0.5 / (2 * np.pi)
    fig = loop_bode_figure(f, 20 * np.log10(np.abs(loop)), phase, crossover_hz=None,
                           phase_margin_deg=None, gain_margin_db=20 * np.log10(16.0),
                           phase_crossover_hz=crossing)
    texts = [t.get_text() for ax in fig.axes for t in ax.texts]
    assert any(t.startswith("gain margin 24.1 dB") for t in texts)
    assert any("no gain crossover" in t for t in texts)
    drawn = fig.axes[1].get_lines()[0]     # the phase curve, shifted to read −180° there
    at = np.interp(np.log(crossing), np.log(drawn.get_xdata()), drawn.get_ydata())
    assert at == pytest.approx(-180.0, abs=0.5)


def test_svg_and_png_helpers(tmp_path):
    fig = step_figure({"design": (np.linspace(0, 1, 10), np.linspace(0, 1, 10))})
    svg = figure_svg(fig)
    assert svg == figure_svg(fig)              # reproducible: no date, fixed hash salt
    assert figure_png(fig)[:8] == b"\x89PNG\r\n\x1a\n"
    png, svg_path = save_figure(fig, tmp_path, "step")
    assert png.name == "step.png" and svg_path.name == "step.svg"
    assert not list(tmp_path.glob(".*.tmp"))
    with pytest.raises(SpecError):
        save_figure(fig, tmp_path / "missing", "step")
    with pytest.raises(SpecError, match="input file"):
        save_figure(fig, tmp_path, "step", inputs=(str(png),))


def test_inline_svg_prefixes_ids_and_drops_namespaces():
    fig = step_figure({"design": (np.linspace(0, 1, 10), np.linspace(0, 1, 10))})
    text = inline_svg(figure_svg(fig), "p7-")
    assert text.startswith("<svg") and "http" not in text
    ids = re.findall(r'\bid="([^"]+)"', text)
    references = re.findall(r'href="#([^"]+)"', text) + re.findall(r"url\(#([^)]+)\)", text)
    assert ids and all(i.startswith("p7-") for i in ids)
    assert references and set(references) <= set(ids)


def test_engineering_scale():
    assert engineering_scale(29e3) == (1e3, "k")
    assert engineering_scale(999.0) == (1.0, "")
    assert engineering_scale(2.5e-6) == (1e-6, "µ")


# -- the command line ------------------------------------------------------------------

def test_cli_design_writes_report_and_plots(tmp_path, capsys):
    out = tmp_path / "report.html"
    plots = tmp_path / "plots"
    plots.mkdir()
    status = main(["design", str(ADC_SPEC), "--report", str(out), "--plots", str(plots),
                   "--quiet", "--samples", "200"])
    assert status == 0
    text = out.read_text(encoding="utf-8")
    assert _external_references(text) == [] and "<svg" in text
    assert {p.name for p in plots.iterdir()} == {f"{stem}.{suffix}"
                                                 for stem in PLOT_STEMS | PRELAYOUT_STEMS
                                                 for suffix in ("png", "svg")}
    printed = capsys.readouterr().out
    assert "Caution" in printed and "notch's null" not in printed


def test_notch_report_shows_the_rejection_under_tolerance(tmp_path, capsys):
    # The hum-notch example asks for 20 dB at 50 Hz: console, HTML and plots show the
    # builds' rejection there; the JSON carries the figures, consistent with each other.
    out, plots, data = tmp_path / "hum.html", tmp_path / "plots", tmp_path / "hum.json"
    plots.mkdir()
    status = main(["design", str(EXAMPLES / "hum-notch.toml"), "--report", str(out),
                   "--plots", str(plots), "--json", str(data), "--quiet", "--samples", "400"])
    assert status == 0
    printed = capsys.readouterr().out
    assert "rejection at 50 Hz" in printed and "rejection >= 20 dB" in printed
    assert "at a notch's null" in printed        # the dB deviation there is explained
    assert "rejection at 50 Hz" in out.read_text(encoding="utf-8")
    assert (plots / "section1-rejection-histogram.svg").is_file()
    mc = json.loads(data.read_text())["evidence"]["sections"][0]["monte_carlo"]
    assert mc["reject_hz"] == pytest.approx(50.0)
    rejection = mc["statistics"]["rejection_db"]
    assert 0 < rejection["p01"] <= rejection["mean"] <= rejection["p99"]
    assert mc["windows"]["rejection_db"] == pytest.approx(20.0)
    assert mc["yield_pct"] <= mc["window_yield_pct"]["rejection_db"] < 100


def test_cli_refuses_the_spec_as_report(tmp_path, capsys):
    spec_copy = tmp_path / "spec.toml"
    shutil.copy(ADC_SPEC, spec_copy)
    before = spec_copy.read_bytes()
    assert main(["design", str(spec_copy), "--report", str(spec_copy), "--quiet"]) == 2
    assert "input file" in capsys.readouterr().err
    assert spec_copy.read_bytes() == before


@pytest.mark.parametrize("option, value", [("--workers", "0"), ("--samples", "0"), ("--seed", "-1")])
def test_cli_design_refuses_a_bad_count_before_working(tmp_path, capsys, option, value):
    out = tmp_path / "design.json"
    assert main(["design", str(ADC_SPEC), option, value, "--json", str(out), "--quiet"]) == 2
    error = capsys.readouterr().err
    assert f"{option} {value}" in error and "whole number" in error
    assert not out.exists()


def test_cli_loop_writes_report_and_plots(tmp_path):
    out = tmp_path / "loop.html"
    status = main(["loop", str(BUCK_SPEC), "--report", str(out), "--plots", str(tmp_path),
                   "--quiet", "--samples", "100"])
    assert status == 0
    text = out.read_text(encoding="utf-8")
    assert _external_references(text) == [] and "<svg" in text
    assert "crossover = &quot;20 kHz&quot;" in text       # the spec, found from the inputs
    assert {p.name for p in tmp_path.iterdir()} == {"loop.html", "loop-gain.png", "loop-gain.svg",
                                                    "phase-margin-histogram.png",
                                                    "phase-margin-histogram.svg",
                                                    "U1-loop.png", "U1-loop.svg"}


# -- the comparison report -----------------------------------------------------

def _small_compare_spec(folder):
    spec = folder / "compare.toml"
    # Q = 2 with capacitors 1n-10n: the unity-gain Sallen-Key (C1/C2 >= 4Q^2 = 16) cannot
    # reach it, the Tow-Thomas biquad can
    spec.write_text('title = "one stage"\n[target]\nsections = [{ f0 = "1 kHz", q = 2 }]\n'
                    '[candidates]\ntopologies = ["sallen-key-lowpass-unity", "tow-thomas-lowpass"]\n'
                    '[parts]\ncapacitor_range = ["1n", "10n"]\n'
                    '[tolerance]\nsamples = 200\n', encoding="utf-8")
    return spec


def test_cli_compare_writes_a_self_contained_report(tmp_path, capsys):
    spec = _small_compare_spec(tmp_path)
    out, plots = tmp_path / "compare.html", tmp_path / "plots"
    plots.mkdir()
    assert main(["compare", str(spec), "--report", str(out), "--plots", str(plots),
                 "--workers", "1", "--quiet"]) == 0
    text = out.read_text(encoding="utf-8")
    assert _external_references(text) == [] and "<svg" in text
    for name in ("sallen-key-lowpass-unity", "tow-thomas-lowpass", "Cannot reach it",
                 "GBW needed", "Before you build it"):
        assert name in text
    assert {p.name for p in plots.iterdir()} == {"section1-ranking.png", "section1-ranking.svg"}
    assert "rank" in capsys.readouterr().out            # the console table still prints


@pytest.mark.parametrize("case", ["spec-as-report", "missing-plots"])
def test_cli_compare_report_refuses_before_working(tmp_path, capsys, case):
    spec = _small_compare_spec(tmp_path)
    before = spec.read_bytes()
    if case == "spec-as-report":
        args = ["--report", str(spec)]
    else:
        args = ["--report", str(tmp_path / "r.html"), "--plots", str(tmp_path / "nowhere")]
    assert main(["compare", str(spec), *args, "--quiet"]) == 2
    assert "error:" in capsys.readouterr().err
    assert spec.read_bytes() == before and not (tmp_path / "r.html").exists()
