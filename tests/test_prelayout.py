"""Pre-layout checks on whole designs: swing, slew, noise target, bad input, outputs."""

import json
import math

import pytest

from placer.cli import main
from placer.design import design
from placer.evidence.prelayout import check_design
from placer.spec.reader import spec_from_dict

Q = 1.3066
F0 = 5e3


def spec_dict(**tables):
    data = {"title": "one section", "target": {"response": "lowpass", "sections": [
        {"f0": f"{F0} Hz", "q": Q}]},
        "candidates": {"topologies": ["sallen-key-lowpass-unity"]}}
    data.update(tables)
    return data


@pytest.fixture(scope="module")
def checked():
    spec = spec_from_dict(spec_dict(signal={"amplitude": "2 V"},
                                    amplifier={"gbw": "10 MHz", "output_resistance": "50", "output_swing": "2.5 V",
                                               "slew_rate": "0.05 V/us",
                                               "noise_voltage": "8 nV/rtHz",
                                               "noise_current": "0.5 pA/rtHz",
                                               "load_capacitance": "100p"}), source="spec.toml")
    result = design(spec)
    return result, check_design(result)


def test_swing_peak_of_a_second_order_lowpass(checked):
    # The peak of a second-order low-pass, |H|max = Q/√(1 − 1/(4Q²)) for Q > 1/√2 (standard
    # filter texts): a 2 V input reaches 2·|H|max at the op-amp output; the grid is 50 points
    # a decade, so the sampled peak is within 0.3 % of it.
    _, pre = checked
    swing = next(w for w in pre.sections[0].swing if w.opamp)
    peak = Q / math.sqrt(1 - 1 / (4 * Q * Q))
    assert swing.peak_v == pytest.approx(2.0 * peak, rel=3e-3)
    assert swing.clips_at_input_v == pytest.approx(2.5 / (swing.peak_v / 2.0), rel=1e-12)
    assert swing.exceeds                        # 2 V in gives 2.97 V out, past 2.5 V
    assert pre.first_clip.opamp == swing.opamp
    assert any("past the swing" in flag for flag in pre.flags)


def test_slew_rate_need_is_two_pi_f_v_peak(checked):
    # The slew rate a sine needs is 2π·f·V_peak (common practice, no source), taken at its
    # largest over the pass band: recomputed here from the reported frequency and the
    # section's |H| there (the second-order low-pass formula, standard filter texts).
    _, pre = checked
    need = pre.sections[0].slew[0]
    x = need.at_hz / F0
    magnitude = 1 / math.sqrt((1 - x * x) ** 2 + (x / Q) ** 2)
    assert need.need_v_per_s == pytest.approx(2 * math.pi * need.at_hz * 2.0 * magnitude, rel=2e-3)
    assert need.short and any("slew rate" in flag for flag in pre.flags)


def test_noise_and_loops_are_reported(checked):
    result, pre = checked
    noise = pre.sections[0].noise
    assert noise.rms_v > 0 and {c.kind for c in noise.contributions} == {
        "resistor", "op-amp voltage noise", "op-amp current noise"}
    assert sum(c.share for c in noise.contributions) == pytest.approx(1.0, rel=1e-12)
    loop = pre.sections[0].loops[0]
    assert 0 < loop.phase_margin_deg < 90 and loop.crossover_hz > 1e6
    data = pre.to_dict()
    assert data["settings"]["loop_model"]["source"] == "spec"
    assert data["settings"]["temperature_source"] == "default" and data["settings"]["temperature_k"] == 300
    assert json.dumps(data, allow_nan=False)


def test_noise_target_sets_the_level():
    # Resistor noise power ∝ the impedance level (Johnson 1928): a tighter target gives
    # smaller resistors, and the output noise meets it.
    results = {}
    for target in ("6 uV", "3 uV"):
        spec = spec_from_dict(spec_dict(noise={"target": target, "band": ["10 Hz", "100 kHz"]}),
                              source="spec.toml")
        result = design(spec)
        pre = check_design(result)
        results[target] = (result, pre)
        assert pre.cascade_noise.rms_v <= float(target.split()[0]) * 1e-6
    r_loose = results["6 uV"][0].sections[0].parts[0].value
    r_tight = results["3 uV"][0].sections[0].parts[0].value
    assert r_tight < r_loose


def write(tmp_path, data):
    """`data` as a TOML file: tables of scalars and lists, the target's sections inline."""
    def value(v):
        if isinstance(v, dict):
            return "{ " + ", ".join(f"{k} = {value(x)}" for k, x in v.items()) + " }"
        if isinstance(v, list):
            return "[" + ", ".join(value(x) for x in v) + "]"
        return json.dumps(v)
    lines = [f"title = {value(data.get('title', 'spec'))}"]
    for name, table in data.items():
        if isinstance(table, dict):
            lines.append(f"[{name}]")
            for key, v in table.items():
                if isinstance(v, dict):          # a sub-table, e.g. [loop.plant]
                    lines.append(f"{key} = {value(v)}")
                else:
                    lines.append(f"{key} = {value(v)}")
    path = tmp_path / "spec.toml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return str(path)


@pytest.mark.parametrize("table, key, value", [
    ("amplifier", "noise_voltage", "-8 nV/rtHz"), ("amplifier", "noise_voltage", "0 nV/rtHz"),
    ("amplifier", "noise_current", "0"), ("amplifier", "output_swing", "-1 V"),
    ("amplifier", "slew_rate", "0 V/us"), ("amplifier", "load_capacitance", "-100p"),
    ("amplifier", "min_load", "0"), ("noise", "temperature", 0), ("noise", "temperature", "-5 K"),
    ("signal", "amplitude", "0 V"), ("signal", "amplitude", -1),
    ("noise", "band", ["10 kHz", "10 Hz"]), ("noise", "band", ["1 kHz", "1 kHz"]),
    ("noise", "target", "0 V"),
])
def test_bad_input_is_one_line_and_exit_2(tmp_path, capsys, table, key, value):
    path = write(tmp_path, spec_dict(**{table: {key: value}}))
    assert main(["design", path, "--samples", "20", "--quiet"]) == 2
    err = capsys.readouterr().err.strip()
    assert err.startswith("error: ") and "\n" not in err and key in err


def test_unmeetable_target_exits_1_naming_the_constraint(tmp_path, capsys):
    path = write(tmp_path, spec_dict(noise={"target": "10 nV"}))
    assert main(["design", path, "--samples", "20", "--quiet"]) == 1
    err = capsys.readouterr().err
    assert "cannot be met" in err and "min_load" in err


def test_design_outputs_carry_the_checks(tmp_path, capsys):
    path = write(tmp_path, spec_dict(amplifier={"gbw": "1 MHz", "load_capacitance": "10n",
                                                "output_resistance": "100"}))
    out_json, out_html = tmp_path / "d.json", tmp_path / "d.html"
    assert main(["design", path, "--samples", "20", "--quiet", "--json", str(out_json),
                 "--report", str(out_html)]) == 0
    text = capsys.readouterr().out
    assert "before layout (section 1 alone)" in text and "own loop" in text and "FLAG:" in text
    data = json.loads(out_json.read_text())["prelayout"]
    assert data["cascade"]["worst_phase_margin_deg"] < 45
    assert any("phase margin" in f for f in data["flags"])
    html = out_html.read_text()
    for heading in ("Before layout: noise", "Before layout: signal swing and slew",
                    "own loop</h2>"):
        assert heading in html


def test_compare_and_loop_carry_the_new_figures(tmp_path, capsys):
    path = write(tmp_path, spec_dict())
    out = tmp_path / "c.json"
    assert main(["compare", path, "--samples", "20", "--workers", "1", "--quiet",
                 "--json", str(out)]) == 0
    candidate = json.loads(out.read_text())["candidates"][0]
    assert candidate["noise_rms_v"] > 0 and 0 < candidate["worst_phase_margin_deg"] <= 90.5
    assert "noise (µV rms)" in capsys.readouterr().out
    loop = write(tmp_path, {"loop": {"crossover": "2 kHz", "phase_margin": "45 deg",
                                     "compensator": "type3", "plant": {
        "type": "roots", "poles": [-100, -1000], "dc_gain": 10}}})
    out = tmp_path / "l.json"
    assert main(["loop", loop, "--samples", "0", "--quiet", "--json", str(out)]) == 0
    data = json.loads(out.read_text())["opamp_loops"]
    assert "default" in data["model_source"] and data["loops"][0]["phase_margin_deg"] > 0
    assert "compensator op-amp" in capsys.readouterr().out
