"""Tests of placer.compare: ranking candidate topologies."""

import json
import math

import pytest

from placer.cli import main
from placer.compare import (
    RANK_KEYS,
    CandidateResult,
    candidate_seeds,
    compare,
    comparison_to_dict,
    rank_candidates,
)
from placer.place.opamp import AmplifierSpec, apply_amplifier
from placer.design import place_section
from placer.errors import SpecError
from placer.circuit.library import LIBRARY_DIR, get_topology
from placer.analysis.network import circuit_poles
from placer.spec.reader import PartsSpec, load_spec
from placer.target.targets import make_section

TWO_PI = 2 * math.pi
REQUIRED = ("topology", "reachable", "error_pct", "yield_pct", "parts", "opamps", "spread",
            "max_sensitivity_w0", "max_sensitivity_q", "gbw_hz", "gbw_source")


def _write_spec(folder, body, name="spec.toml"):
    path = folder / name
    path.write_text(body, encoding="utf-8")
    return path


def _section_spec(q, topologies, *, extra=""):
    listed = ", ".join(f'"{t}"' for t in topologies)
    return f"""
title = "test"
[target]
sections = [{{ f0 = "1 kHz", q = {q} }}]
[candidates]
topologies = [{listed}]
[tolerance]
resistor = "1%"
capacitor = "5%"
samples = 200
{extra}
"""


def _dc_gain(nf, values):
    numerator, denominator = nf.coefficients(values)
    return float(numerator[-1] / denominator[-1])


def _q(nf, values):
    a2, a1, a0 = (float(c) for c in nf.coefficients(values)[1])
    return math.sqrt(a0 * a2) / abs(a1)


# -- facts of the trade ------------------------------------------------------

@pytest.fixture(scope="module")
def high_q(tmp_path_factory):
    """Q = 8 at 1 kHz: state-variable, Tow–Thomas and two Sallen–Key stages."""
    folder = tmp_path_factory.mktemp("highq")
    spec = load_spec(_write_spec(folder, _section_spec(8, [
        "khn-lowpass", "tow-thomas-lowpass", "sallen-key-lowpass-unity", "sallen-key-lowpass-equal",
    ])))
    ranked = compare(spec, workers=1).sections[0].candidates
    return {c.topology: c for c in ranked}


def test_high_q_biquads_have_lower_q_sensitivity_than_gain_set_sallen_key(high_q):
    # Common practice, no source: at high Q the state-variable (KHN) and
    # Tow–Thomas stages keep max |S^Q| near 1 whatever Q is, while an
    # equal-component Sallen–Key, whose gain sets Q, has |S^Q| growing with Q
    # (S_K^Q = 3Q - 1 for the amplifier gain; of the order of Q for its parts).
    equal = high_q["sallen-key-lowpass-equal"].max_sensitivity_q
    for biquad in ("khn-lowpass", "tow-thomas-lowpass"):
        assert high_q[biquad].reachable
        assert high_q[biquad].max_sensitivity_q <= 1.0 + 1e-6
        assert high_q[biquad].max_sensitivity_q < equal / 5
    assert equal > 8


def test_high_q_unity_gain_sallen_key_pays_in_capacitor_spread(high_q):
    # Unity-gain Sallen–Key: S^Q to its R and C are at most 1/2 in magnitude
    # (S_C1^Q = 1/2, S_R1^Q = 1/2 - R1/(R1 + R2)), so it does NOT have a higher
    # passive max |S^Q| than the biquads; its high-Q costs are C1/C2 >= 4Q^2
    # and its reliance on the op-amp (Schaumann and Van Valkenburg, Design of
    # Analog Filters, 2001, Sallen–Key sensitivities — from memory).
    unity = high_q["sallen-key-lowpass-unity"]
    assert unity.max_sensitivity_q == pytest.approx(0.5, abs=1e-6)
    assert unity.spread["capacitor"] >= 4 * 8**2 * (1 - 0.01)
    for biquad in ("khn-lowpass", "tow-thomas-lowpass"):
        assert high_q[biquad].max_sensitivity_q >= unity.max_sensitivity_q


def test_high_q_biquads_lean_less_on_the_op_amp_gain_than_unity_sallen_key():
    # Common practice, no source: the unity-gain Sallen–Key's Q rests on its
    # buffer's gain being exactly 1 (S_K^Q = 2Q^2 with equal resistors; from
    # memory), so a finite op-amp gain A0 moves Q by about 2Q^2/A0, while the
    # KHN and Tow–Thomas stages only see A0 through their virtual grounds.
    # Each stage as solved for Q = 8 with ideal op-amps, then given A0 = 1e4.
    a0, q, w0 = 1e4, 8.0, TWO_PI * 1e3
    section = make_section("lowpass", w0, q, gain=1.0)

    def q_of(circuit):
        pair = min(circuit_poles(circuit), key=lambda p: abs(abs(p) - w0))
        return abs(pair) / (-2 * pair.real)

    def q_shift(topology_id):
        candidate = place_section(section, get_topology(topology_id), parts=PartsSpec(), seed=0)
        circuit = candidate.topology.circuit.with_values(candidate.solution.values)
        return abs(q_of(apply_amplifier(circuit, AmplifierSpec(gain=a0))) / q_of(circuit) - 1)

    unity = q_shift("sallen-key-lowpass-unity")
    assert unity == pytest.approx(2 * q**2 / a0, rel=0.1)
    for biquad in ("khn-lowpass", "tow-thomas-lowpass"):
        assert q_shift(biquad) < unity / 4


def test_multiple_feedback_lowpass_inverts():
    # MFB low-pass DC gain = -R2/R1 (Carter and Mancini, Op Amps for Everyone,
    # active filter chapter — from memory): negative, -1 for a 0 dB target.
    section = make_section("lowpass", TWO_PI * 1e3, 0.7071, gain=1.0)
    candidate = place_section(section, get_topology("mfb-lowpass"), parts=PartsSpec(), seed=0)
    values = candidate.snapped.values
    gain = _dc_gain(candidate.problem.nf, values)
    assert gain < 0
    assert gain == pytest.approx(-values["R2"] / values["R1"], rel=1e-9)
    assert gain == pytest.approx(-1.0, rel=0.02)


@pytest.mark.parametrize("q", [0.7071, 2.0])
def test_equal_component_sallen_key_gain_is_three_minus_one_over_q(q):
    # Equal-component Sallen–Key: Q = 1/(3 - K), so K = 3 - 1/Q (Carter and
    # Mancini, Op Amps for Everyone, equal-component Sallen–Key — from memory).
    section = make_section("lowpass", TWO_PI * 1e3, q, gain=1.0)
    candidate = place_section(section, get_topology("sallen-key-lowpass-equal"),
                              parts=PartsSpec(), seed=0)
    assert candidate.reachable
    nf, values = candidate.problem.nf, candidate.solution.values
    assert _q(nf, values) == pytest.approx(q, rel=1e-5)
    assert _dc_gain(nf, values) == pytest.approx(3 - 1 / q, rel=1e-5)


def test_gbw_rule_of_thumb_labels(tmp_path):
    # GBW >= 100·f0·Q: common practice for Sallen–Key and MFB stages, no source;
    # for other active stages the same practice is labelled as applied by extension.
    q = 1.932
    spec = load_spec(_write_spec(tmp_path, _section_spec(q, ["mfb-lowpass", "tow-thomas-lowpass"])))
    results = {c.topology: c for c in compare(spec, workers=1, gbw="rule").sections[0].candidates}
    for topology in ("mfb-lowpass", "tow-thomas-lowpass"):
        assert results[topology].gbw_hz == pytest.approx(100 * 1e3 * q, rel=1e-9)
    assert results["mfb-lowpass"].gbw_source.startswith("common practice")
    assert results["tow-thomas-lowpass"].gbw_source.startswith("common practice")
    assert "not stated for" in results["tow-thomas-lowpass"].gbw_source


# -- ranking, determinism and output -------------------------------------------

@pytest.fixture(scope="module")
def ranked_spec(tmp_path_factory):
    """One section, Q = 2, capacitors 1n–10n: the unity-gain SK (needs C1/C2 >= 4Q^2 = 16)
    and the MFB (needs more) cannot reach it."""
    folder = tmp_path_factory.mktemp("ranked")
    return _write_spec(folder, _section_spec(2, [
        "sallen-key-lowpass-unity", "mfb-lowpass", "sallen-key-lowpass-gain", "tow-thomas-lowpass",
        "khn-lowpass",
    ], extra='[parts]\ncapacitor_range = ["1n", "10n"]\n'))


@pytest.fixture(scope="module")
def ranked(ranked_spec):
    return compare(load_spec(ranked_spec), workers=1)


def _is_sorted(keys):
    return all(a <= b for a, b in zip(keys, keys[1:]))


@pytest.mark.parametrize("rank_by", sorted(RANK_KEYS))
def test_rank_by_orders_as_documented(ranked, rank_by):
    order = rank_candidates(ranked.sections[0].candidates, rank_by)
    reachable = [c for c in order if c.reachable]
    assert len(reachable) == 3                                    # unreachable last:
    assert [c.topology for c in order[3:]] == ["mfb-lowpass", "sallen-key-lowpass-unity"]
    documented = {
        "yield": lambda c: (-c.yield_pct, c.error_pct, c.parts),
        "error": lambda c: (c.error_pct,),
        "parts": lambda c: (c.parts, c.error_pct),
        "sensitivity": lambda c: (max(c.max_sensitivity_w0, c.max_sensitivity_q),),
    }[rank_by]
    assert _is_sorted([documented(c) for c in reachable])


def test_rank_by_unknown_key_names_the_choices():
    with pytest.raises(SpecError, match="rank_by must be one of .*'yield'.*not 'speed'"):
        rank_candidates([], "speed")


def test_unreachable_candidate_gives_its_reason(ranked):
    unity = ranked.sections[0].candidates[-1]
    assert unity.topology == "sallen-key-lowpass-unity"
    assert not unity.reachable and "4Q^2 = 16" in unity.reason
    assert unity.error_pct is None and unity.yield_pct is None


def test_same_result_with_one_and_two_workers(tmp_path):
    spec = load_spec(_write_spec(tmp_path, """
[target]
response = "lowpass"
approximation = "butterworth"
order = 4
cutoff = "1 kHz"
[candidates]
topologies = ["sallen-key-lowpass-unity", "mfb-lowpass", "tow-thomas-lowpass"]
[tolerance]
samples = 300
"""))
    one = comparison_to_dict(compare(spec, workers=1))
    two = comparison_to_dict(compare(spec, workers=2))
    assert one == two
    assert len(one["sections"]) == 2 and len(one["candidates"]) == 6
    # the seeds depend on the section, so the two sections' draws differ
    a, b = (next(c for c in s["candidates"] if c["topology"] == "mfb-lowpass") for s in one["sections"])
    assert candidate_seeds(0, 1, "mfb-lowpass")[0] != candidate_seeds(0, 2, "mfb-lowpass")[0]
    assert a["values"] != b["values"]


def test_cli_json_has_candidates_in_rank_order(ranked_spec, tmp_path, capsys):
    out = tmp_path / "ranking.json"
    status = main(["compare", str(ranked_spec), "--rank-by", "parts", "--json", str(out),
                   "--workers", "1", "--quiet"])
    assert status == 0
    text = capsys.readouterr().out
    for label in ("rank", "worst error", "yield (%)", "R spread", "max|S Q|",
                  "GBW needed", "GBW drift (%)", "cannot reach it", "sallen-key-lowpass-unity"):
        assert label in text
    data = json.loads(out.read_text())
    assert data["rank_by"] == "parts" and data["samples"] == 200 and data["seed"] == 0
    assert data["candidates"] == data["sections"][0]["candidates"]
    for candidate in data["candidates"]:
        assert all(key in candidate for key in REQUIRED)
        assert candidate["reachable"] or candidate["reason"]
    parts = [c["parts"] for c in data["candidates"] if c["reachable"]]
    assert _is_sorted(parts)
    assert data["sections"][0]["target"]["f0_hz"] == pytest.approx(1e3)
    assert data["sections"][0]["target"]["q"] == pytest.approx(2.0)


def test_cli_refuses_to_overwrite_the_spec(ranked_spec, capsys):
    assert main(["compare", str(ranked_spec), "--json", str(ranked_spec), "--quiet"]) == 2
    assert "input file" in capsys.readouterr().err


def test_no_candidate_reaches_exits_1_with_reasons(tmp_path, capsys):
    spec = _write_spec(tmp_path, _section_spec(
        4, ["sallen-key-lowpass-unity"], extra='[parts]\ncapacitor_range = ["1n", "10n"]\n'))
    assert main(["compare", str(spec), "--quiet", "--workers", "1"]) == 1
    err = capsys.readouterr().err
    assert "cannot reach section 1" in err and "4Q^2" in err


# -- bad user topology files -------------------------------------------------------

def _library_text(topology_id, new_id):
    text = (LIBRARY_DIR / f"{topology_id}.toml").read_text(encoding="utf-8")
    return text.replace(f'id = "{topology_id}"', f'id = "{new_id}"', 1)


BAD_ELEMENT = """
id = "bad-element"
title = "resistor with three nodes"
response = "lowpass"
order = 2
[[elements]]
name = "R9"
kind = "resistor"
nodes = ["vin", "n1", "vout"]
symbol = "R9"
"""

BAD_RESPONSE = _library_text("sallen-key-lowpass-unity", "bad-response").replace(
    'response = "lowpass"', 'response = "lowpas"', 1)

NO_RANGE = _library_text("sallen-key-lowpass-unity", "no-range") + """
[[elements]]
name = "IB"
kind = "isource"
nodes = ["n1", "gnd"]
symbol = "IB"
"""


def test_bad_user_files_are_listed_and_the_others_compared(tmp_path):
    folder = tmp_path / "mine"
    folder.mkdir()
    (folder / "bad-element.toml").write_text(BAD_ELEMENT, encoding="utf-8")
    (folder / "bad-response.toml").write_text(BAD_RESPONSE, encoding="utf-8")
    (folder / "no-range.toml").write_text(NO_RANGE, encoding="utf-8")
    (folder / "good.toml").write_text(_library_text("sallen-key-lowpass-unity", "my-sallen-key"),
                                      encoding="utf-8")
    body = _section_spec(0.7071, ["mfb-lowpass"]).replace(
        "[candidates]\n", '[candidates]\nfolder = "mine"\n', 1)
    spec = load_spec(_write_spec(tmp_path, body))
    candidates = {c.topology: c for c in compare(spec, workers=2).sections[0].candidates}
    assert candidates["my-sallen-key"].reachable and candidates["mfb-lowpass"].reachable
    reasons = {path.rsplit("/", 1)[-1]: c.reason for path, c in candidates.items()
               if path.endswith(".toml")}
    assert set(reasons) == {"bad-element.toml", "bad-response.toml", "no-range.toml"}
    assert "bad-element.toml" in reasons["bad-element.toml"] and "'R9'" in reasons["bad-element.toml"]
    assert "2 nodes" in reasons["bad-element.toml"]
    assert "bad-response.toml" in reasons["bad-response.toml"] and "'lowpas'" in reasons["bad-response.toml"]
    assert "no-range.toml" in reasons["no-range.toml"] and "'IB'" in reasons["no-range.toml"]
    assert "no range" in reasons["no-range.toml"]
    assert all(not candidates[p].reachable for p in candidates if p.endswith(".toml"))


def test_missing_folder_is_a_spec_error(tmp_path, capsys):
    body = _section_spec(0.7071, ["mfb-lowpass"]).replace(
        "[candidates]\n", '[candidates]\nfolder = "nowhere"\n', 1)
    path = _write_spec(tmp_path, body)
    with pytest.raises(SpecError, match="nowhere.*does not exist"):
        load_spec(path)
    assert main(["compare", str(path), "--quiet"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "spec.toml" in err and "nowhere" in err


def test_bad_options_are_spec_errors(ranked_spec):
    spec = load_spec(ranked_spec)
    with pytest.raises(SpecError, match="samples must be a whole number >= 1, not 0"):
        compare(spec, samples=0)
    with pytest.raises(SpecError, match="gbw must be one of"):
        compare(spec, gbw="guess")
    assert CandidateResult(1, "x").max_sensitivity == math.inf


def _notch_spec(rejection):
    return f"""
title = "hum notch"
[target]
response = "custom"
sections = [{{ f0 = "50 Hz", q = 2, zero_f0 = "50 Hz", kind = "notch" }}]
[candidates]
topologies = ["fliege-notch", "khn-notch"]
[tolerance]
resistor = "1%"
capacitor = "2%"
samples = 400
f0 = "20%"
q = "20%"
{rejection}
"""


def test_notch_candidates_carry_their_rejection_and_the_window_counts(tmp_path):
    # Wide f0/Q windows, so the rejection window decides the yield; the yield can only
    # fall as the least rejection asked for rises.
    loose = compare(load_spec(_write_spec(tmp_path, _notch_spec(""), "loose.toml")), workers=1)
    tight = compare(load_spec(_write_spec(tmp_path, _notch_spec('rejection = "30 dB"'),
                                          "tight.toml")), workers=1)
    for a, b in zip(sorted(loose.sections[0].candidates, key=lambda c: c.topology),
                    sorted(tight.sections[0].candidates, key=lambda c: c.topology)):
        assert a.reachable and b.reachable
        assert a.rejection_db == b.rejection_db          # same seeds, same builds
        assert 0 < a.rejection_db < 60
        assert b.yield_pct < a.yield_pct
    out = tmp_path / "ranking.json"
    assert main(["compare", str(tmp_path / "tight.toml"), "--json", str(out), "--workers", "1"]) == 0
    data = json.loads(out.read_text())
    assert all(isinstance(c["rejection_db"], float) for c in data["sections"][0]["candidates"])


def test_drift_at_the_gbw_needed_shows_q_enhancement(tmp_path):
    # Q = 5 at 1 kHz, each stage built with single-pole op-amps of the rule-of-thumb
    # GBW (100 f0 Q = 500 kHz): the Tow–Thomas biquad's Q enhancement is the largest
    # drift, the Akerberg–Mossberg biquad, made to cancel the integrators' phase lag,
    # moves far less (Akerberg and Mossberg, 1974, from memory; common practice). The
    # figure is the one the built circuit's own numeric MNA poles give.
    spec = load_spec(_write_spec(tmp_path, _section_spec(5, [
        "tow-thomas-lowpass", "akerberg-mossberg-lowpass", "sallen-key-lowpass-unity"])))
    ranked = {c.topology: c for c in compare(spec, workers=1).sections[0].candidates}
    tow, akerberg = ranked["tow-thomas-lowpass"], ranked["akerberg-mossberg-lowpass"]
    assert tow.gbw_drift_pct > 3 * akerberg.gbw_drift_pct
    w0 = TWO_PI * 1e3
    for c in ranked.values():
        circuit = get_topology(c.topology).circuit.with_values(c.values)
        built = apply_amplifier(circuit, AmplifierSpec(gbw=500e3))      # 100·f0·Q

        def figures(poles):
            pair = sorted(poles, key=lambda p: abs(abs(p) - w0))[:2]
            omega0 = math.sqrt(abs(pair[0] * pair[1]))
            return omega0, omega0 / -float((pair[0] + pair[1]).real)

        (w_ideal, q_ideal), (w_real, q_real) = figures(circuit_poles(circuit)), figures(circuit_poles(built))
        expected = 100 * max(abs(w_real / w_ideal - 1), abs(q_real / q_ideal - 1))
        assert c.gbw_drift_pct == pytest.approx(expected, rel=1e-6)


def test_yield_ties_within_two_standard_errors_go_to_the_simpler_stage():
    # Binomial standard error of a yield p from n builds: sqrt(p(1 - p)/n); of the
    # difference of two independent ones about sqrt(2 p(1 - p)/n) (textbook
    # statistics). At n = 2000, p = 0.627: two of them are 3.06 percentage points.
    def result(name, yield_pct, opamps, parts, error=0.02):
        return CandidateResult(1, name, reachable=True, parts=parts, opamps=opamps,
                               error_pct=error, yield_pct=yield_pct)

    biquad = result("biquad", 62.7, 3, 8)
    single = result("single", 62.4, 1, 4)
    edge_in = result("edge-in", 62.7 - 3.0, 1, 3)
    edge_out = result("edge-out", 62.7 - 3.2, 1, 2)
    order = rank_candidates([biquad, single, edge_in, edge_out], samples=2000)
    assert [c.topology for c in order] == ["edge-in", "single", "biquad", "edge-out"]
    exact = rank_candidates([biquad, single, edge_in, edge_out])
    assert [c.topology for c in exact] == ["biquad", "single", "edge-in", "edge-out"]


def test_gbw_needed_is_where_the_built_design_crosses_the_bound(tmp_path):
    # Default "built": the smallest GBW at which the snapped design, built with
    # single-pole op-amps, stays within 1 % of the target. Checked on the built
    # circuit's own numeric MNA poles (an independent path): within 1 % at the
    # figure, outside it 5 % below (bisection to 2 %).
    spec = load_spec(_write_spec(tmp_path, _section_spec(2, [
        "sallen-key-lowpass-unity", "mfb-lowpass", "tow-thomas-lowpass"])))
    w0 = TWO_PI * 1e3

    def worst_pct(c, gbw):
        circuit = get_topology(c.topology).circuit.with_values(c.values)
        poles = circuit_poles(apply_amplifier(circuit, AmplifierSpec(gbw=gbw)))
        pair = sorted(poles, key=lambda p: abs(abs(p) - w0))[:2]
        omega0 = math.sqrt(abs(pair[0] * pair[1]))
        q = omega0 / -float((pair[0] + pair[1]).real)
        return 100 * max(abs(omega0 / w0 - 1), abs(q / 2 - 1))

    for c in compare(spec, workers=1).sections[0].candidates:
        assert c.gbw_source.startswith("op-amp model")
        assert worst_pct(c, c.gbw_hz) <= 1.0 + 1e-6
        assert worst_pct(c, c.gbw_hz / 1.05) > 1.0
        assert c.gbw_hz > 1e3 * 2                     # far above f0, as the trade expects
