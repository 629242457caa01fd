"""Tests of the placement design and compare share (placer.place.placement, placer.design).

Regression tests: a first-order section read at its own order with a real
op-amp, unstable candidates refused, design and compare agreeing on every
candidate, constraints on parts some candidates lack, a topology that cannot
fit the section, and the cascade's parasitic poles listed apart. Outside
references are named beside each check.
"""

import json
import math
from pathlib import Path

import numpy as np
import pytest
from scipy import optimize, signal

from placer.cli import main
from placer.compare import compare
from placer.design import design, place_candidate, split_poles
from placer.errors import SpecError, UnreachableTarget
from placer.evidence.gather import gather_evidence
from placer.circuit.library import get_topology
from placer.place.placement import (
    UNSTABLE_REASON,
    Candidate,
    candidate_seeds,
    parts_notes,
    require_stable,
    right_half_plane_poles,
)
from placer.place.snap import SnapResult
from placer.spec.reader import PartsSpec, load_spec
from placer.target.targets import make_section
from placer.circuit.topology import parse_constraint
from placer.units import format_value

TWO_PI = 2 * math.pi
EXAMPLES = Path(__file__).resolve().parent.parent / "examples"


def _write(folder, body, name="spec.toml"):
    path = folder / name
    path.write_text(body, encoding="utf-8")
    return path


def _minus_3db_hz(zeros, poles, k):
    """The -3 dB frequency (Hz) of a low-pass from scipy.signal.freqs_zpk."""
    def excess(f):
        _, h = signal.freqs_zpk(zeros, poles, k, worN=[TWO_PI * f])
        return 20 * math.log10(abs(h[0])) + 3.0103
    return optimize.brentq(excess, 1e-3, 10.0)


def _section_figures_from_scipy(zeros, poles, k, cutoff_hz):
    """First-order pole f0 and second-order pair (f0, Q), Hz, scaled to a -3 dB cutoff."""
    scale = cutoff_hz / _minus_3db_hz(zeros, poles, k) / TWO_PI     # rad/s -> Hz, rescaled
    real = [abs(p) * scale for p in poles if abs(p.imag) < 1e-9]
    pairs = [(abs(p) * scale, abs(p) / (-2 * p.real)) for p in poles if p.imag > 1e-9]
    return real, pairs


# -- 1. dominant roots of odd-order modelled sections -----------------------------

def test_bessel_third_order_with_a_10_mhz_op_amp_designs(tmp_path):
    # Used to end in "ValueError: shape mismatch" in dominant._dominant_split.
    # Section targets against scipy.signal.bessel(3, norm='mag'), the -3 dB
    # normalisation the project's cutoff means (scipy's documentation).
    spec = load_spec(_write(tmp_path, """
title = "bessel 3"
[target]
response = "lowpass"
approximation = "bessel"
order = 3
cutoff = "10 kHz"
[amplifier]
preset = "10 MHz"
"""))
    result = design(spec)
    z, p, k = signal.bessel(3, 1.0, analog=True, norm="mag", output="zpk")
    real, pairs = _section_figures_from_scipy(z, p, k, 10e3)
    first = next(s for s in result.sections if s.section.order == 1)
    second = next(s for s in result.sections if s.section.order == 2)
    assert first.section.f0_hz == pytest.approx(real[0], rel=1e-6)
    assert second.section.f0_hz == pytest.approx(pairs[0][0], rel=1e-6)
    assert second.section.q == pytest.approx(pairs[0][1], rel=1e-6)
    for s in result.sections:
        # snapped to E96/E12 and corrected for the op-amp: within 1 %
        assert s.candidate.reachable and s.candidate.error_pct < 1.0


# -- 2. a first-order section with a real op-amp ---------------------------------

CHEBYSHEV_3 = """
title = "chebyshev 3 with an op-amp"
[target]
response = "lowpass"
approximation = "chebyshev1"
order = 3
ripple = "1 dB"
cutoff = "10 kHz"
[candidates]
topologies = ["opamp-lowpass-inverting", "sallen-key-lowpass-unity"]
[amplifier]
gbw = "10 MHz"
[tolerance]
samples = 300
"""


@pytest.fixture(scope="module")
def chebyshev_with_op_amp(tmp_path_factory):
    spec = load_spec(_write(tmp_path_factory.mktemp("cheb"), CHEBYSHEV_3))
    result = design(spec)
    return result, gather_evidence(result, samples=300)


def test_first_order_section_is_read_at_its_own_order(chebyshev_with_op_amp):
    result, evidence = chebyshev_with_op_amp
    # The real pole of a 1 dB Chebyshev, order 3, scaled to a 10 kHz -3 dB
    # cutoff: scipy.signal.cheb1ap.
    z, p, k = signal.cheb1ap(3, 1.0)
    real, _ = _section_figures_from_scipy(z, p, k, 10e3)
    index = next(i for i, s in enumerate(result.sections) if s.section.order == 1)
    mc = evidence.sections[index].monte_carlo
    # Was 253.6 kHz with "Q 0.0253": a pair of op-amp poles read as the section.
    assert mc.nominal_f0_hz == pytest.approx(real[0], rel=0.005)
    assert mc.nominal_q is None and mc.q is None and "q" not in mc.statistics
    # ω0 = 1/(R2·C1) for the inverting first-order low-pass: S = -1 to each, 0
    # to R1 (classical sensitivity of a first-order RC, common practice, no
    # source); the op-amp's 10 MHz pole moves it by under 0.1 %.
    sens = evidence.sections[index].sensitivities
    assert sens.q is None
    assert sens.omega0["R2"] == pytest.approx(-1.0, abs=1e-3)
    assert sens.omega0["C1"] == pytest.approx(-1.0, abs=1e-3)
    assert sens.omega0["R1"] == pytest.approx(0.0, abs=1e-3)
    # C1 ±10 % (the default capacitor tolerance) spreads f0 by about ±10 %: an
    # f0 window of ±2 % cannot keep every build (it was 100 %).
    assert 0.05 < mc.yield_fraction < 0.5


def test_cascade_lists_parasitic_poles_apart(chebyshev_with_op_amp, capsys):
    result, _ = chebyshev_with_op_amp
    # 3 poles for a 3rd-order target; each section has one op-amp, whose
    # single-pole model adds one pole near its 10 MHz GBW.
    assert len(result.poles) == 3 and len(result.parasitic_poles) == 2
    for p in result.parasitic_poles:
        assert 1e6 < abs(p) / TWO_PI < 1e8
    # the target's poles (scipy.signal.cheb1ap, scaled) are the dominant ones
    z, p, k = signal.cheb1ap(3, 1.0)
    scale = 10e3 / _minus_3db_hz(z, p, k)
    want = sorted(np.asarray(p) * scale, key=lambda r: (abs(r), r.imag))
    got = sorted(result.poles, key=lambda r: (abs(r), r.imag))
    np.testing.assert_allclose(np.array(got), np.array(want), rtol=0.01)


def test_cascade_console_says_how_many_poles_are_parasitic(tmp_path, capsys):
    path = _write(tmp_path, CHEBYSHEV_3.replace("samples = 300", "samples = 50"))
    assert main(["design", str(path), "--quiet"]) == 0
    out = capsys.readouterr().out
    assert "Whole cascade: 3 poles (+2 op-amp parasitic poles)" in out


def test_notch_with_an_op_amp_lists_its_parasitic_zero_apart(tmp_path):
    # A notch has two zeros, at ±j·2π·50 Hz for a 50 Hz null (the definition
    # of the notch); the two modelled op-amps of the Fliege notch add poles
    # and a zero near their 1 MHz GBW, which are listed apart.
    spec = load_spec(_write(tmp_path, """
[target]
response = "custom"
sections = [{ f0 = "50 Hz", q = 2, zero_f0 = "50 Hz", kind = "notch" }]
[candidates]
topologies = ["fliege-notch"]
[amplifier]
gbw = "1 MHz"
"""))
    result = design(spec)
    assert len(result.zeros) == 2 and len(result.poles) == 2
    for z in result.zeros:
        assert abs(z) / TWO_PI == pytest.approx(50.0, rel=0.005)
        assert abs(z.real) < 1e-3 * abs(z)
    assert len(result.parasitic_zeros) >= 1 and len(result.parasitic_poles) == 2
    assert all(abs(z) / TWO_PI > 1e5 for z in result.parasitic_zeros)


def test_split_poles_matches_each_dominant_pole_once():
    # 5 poles: a pair and a real pole near the given dominant ones, two far ones
    poles = [-1e3 + 2e3j, -1e3 - 2e3j, -5e2, -6e7, -7e7]
    split = split_poles(poles, [-1.01e3 + 2e3j, -1.01e3 - 2e3j, -5.1e2])
    assert sorted(split.parasitic, key=abs) == [-6e7, -7e7]
    assert len(split.dominant) == 3


# -- 3. unstable candidates --------------------------------------------------------

EQUAL = get_topology("sallen-key-lowpass-equal")
EQUAL_PARTS = {"R1": 10e3, "R2": 10e3, "C1": 10e-9, "C2": 10e-9, "RA": 10e3}


@pytest.mark.parametrize("k", [3.5, 4.0, 4.93])
def test_equal_component_sallen_key_past_k_of_three_has_rhp_poles(k):
    # Equal-component Sallen–Key: ω0 = 1/(RC), Q = 1/(3 - K), K = 1 + RB/RA
    # (standard active-filter texts, from memory): for K > 3, Q < 0 and the
    # poles ω0·(-1/(2Q) ± j·sqrt(1 - 1/(4Q²))) lie in the right half-plane.
    values = {**EQUAL_PARTS, "RB": (k - 1) * 10e3}
    omega0, q = 1 / (10e3 * 10e-9), 1 / (3 - k)
    root = omega0 * (-1 / (2 * q) + 1j * math.sqrt(max(0.0, 1 - 1 / (4 * q * q))))
    unstable = right_half_plane_poles(EQUAL.circuit, values)
    assert len(unstable) == 2
    upper = max(unstable, key=lambda r: r.imag)
    assert upper.real == pytest.approx(root.real, rel=1e-6)
    assert upper.imag == pytest.approx(root.imag, rel=1e-6, abs=1e-6 * omega0)


def test_equal_component_sallen_key_at_k_of_three_oscillates():
    # Same formula: K = 3 puts the poles on the jω axis at ±j/(RC), an
    # oscillator, not a filter.
    unstable = right_half_plane_poles(EQUAL.circuit, {**EQUAL_PARTS, "RB": 20e3})
    assert len(unstable) == 2
    omega0 = 1 / (10e3 * 10e-9)
    assert max(abs(p.imag) for p in unstable) == pytest.approx(omega0, rel=1e-6)
    assert max(abs(p.real) for p in unstable) < 1e-6 * omega0


def test_equal_component_sallen_key_below_k_of_three_is_stable():
    # Same formula: K = 2 gives Q = 1, poles in the left half-plane.
    assert right_half_plane_poles(EQUAL.circuit, {**EQUAL_PARTS, "RB": 10e3}) == ()


def test_require_stable_refuses_an_unstable_placement():
    values = {**EQUAL_PARTS, "RB": 39.3e3}       # K = 4.93, as the RA 59k, RB 232k
    snapped = SnapResult(values=values, continuous=values, series={}, error=0.0, candidates=1)
    candidate = Candidate(topology=EQUAL, reachable=True, snapped=snapped)
    refused = require_stable(candidate, EQUAL.circuit)
    assert not refused.reachable
    assert refused.reason.startswith(UNSTABLE_REASON)
    assert refused.error_pct == math.inf


def test_solver_does_not_mirror_poles_into_the_right_half_plane():
    # Q = 0.5176 (the first section of a 6th-order Butterworth, handbook
    # table, from memory): the stable equal-component design has
    # K = 3 - 1/Q = 1.068; the mirrored one (K = 3 + 1/Q = 4.93, Q = -0.5176)
    # has the same |coefficients| and was offered at "393 % error".
    section = make_section("lowpass", TWO_PI * 1e3, 0.5176, gain=1.0)
    parts = PartsSpec(ranges={"resistor": (1e3, 1e6), "capacitor": (100e-12, 10e-6)})
    for seed in range(4):
        candidate = place_candidate(section, EQUAL, index=1, parts=parts, seed=seed)
        assert candidate.reachable
        values = candidate.snapped.values
        k = 1 + values["RB"] / values["RA"]
        assert k < 3
        assert k == pytest.approx(3 - 1 / 0.5176, rel=0.02)


def test_fixed_gain_past_three_is_unreachable_as_unstable(tmp_path):
    # K fixed at 4 (RA 10k, RB 30k): Q = 1/(3 - 4) < 0 whatever R and C are
    # (same formula), so no stable design exists.
    path = _write(tmp_path, """
[target]
response = "custom"
sections = [{ f0 = "1 kHz", q = 1 }]
[parts]
fixed = { RA = "10k", RB = "30k" }
[candidates]
topologies = ["sallen-key-lowpass-equal"]
""")
    with pytest.raises(UnreachableTarget, match="unstable: poles in the right half-plane"):
        design(load_spec(path))


# -- 4. design and compare agree ---------------------------------------------------

@pytest.mark.parametrize("example", ["compare-lowpass.toml", "hum-notch.toml"])
def test_design_and_compare_place_every_candidate_alike(example):
    # One placement path: the same candidate gets the same parts, the same
    # error and the same verdict in both commands (the tool's own promise).
    spec = load_spec(EXAMPLES / example)
    designed = design(spec)
    compared = compare(spec, samples=20, workers=1)
    for section, ranked in zip(designed.sections, compared.sections):
        by_id = {c.topology: c for c in ranked.candidates}
        assert set(by_id) == {c.topology.id for c in section.candidates}
        for candidate in section.candidates:
            result = by_id[candidate.topology.id]
            assert result.reachable == candidate.reachable, candidate.topology.id
            if not candidate.reachable:
                assert result.reason == candidate.reason
                continue
            assert result.error_pct == pytest.approx(candidate.error_pct, rel=1e-12, abs=1e-12)
            assert result.values == pytest.approx(candidate.snapped.values, rel=1e-12)


def test_compare_lowpass_offers_no_unstable_equal_component_sallen_key():
    # Every reachable equal-component Sallen–Key has K = 1 + RB/RA < 3, so
    # Q = 1/(3 - K) > 0 (same formula as above).
    spec = load_spec(EXAMPLES / "compare-lowpass.toml")
    compared = compare(spec, samples=20, workers=1)
    for section in compared.sections:
        for c in section.candidates:
            if c.topology == "sallen-key-lowpass-equal":
                assert c.reachable
                k = 1 + c.values["RB"] / c.values["RA"]
                assert k < 3
                # its Q on target: K = 3 - 1/Q, within the snapping of RA, RB
                assert k == pytest.approx(3 - 1 / section.section.q, rel=0.02)


def test_candidate_seeds_are_named_and_follow_the_identity():
    seeds = candidate_seeds(0, 1, "mfb-lowpass")
    assert seeds.solver == candidate_seeds(0, 1, "mfb-lowpass")[0]
    assert seeds.solver != candidate_seeds(0, 1, "tow-thomas-lowpass").solver


# -- 5. constraints on parts some candidates lack ---------------------------------

BUTTERWORTH = """
[target]
response = "lowpass"
approximation = "butterworth"
order = {order}
cutoff = "1 kHz"
[parts]
{parts}
"""


def test_constraint_applies_where_both_parts_exist(tmp_path):
    # Used to end in "KeyError: 'C1'" (the equal-component Sallen–Key ties
    # C2 = C1 itself). Butterworth order 2: Q = 0.7071 (handbook, from memory).
    path = _write(tmp_path, BUTTERWORTH.format(order=2, parts='constraints = ["C1 = C2"]'))
    result = design(load_spec(path))
    section = result.sections[0]
    assert section.section.q == pytest.approx(1 / math.sqrt(2), rel=1e-9)
    for c in section.candidates:
        if c.reachable and {"C1", "C2"} <= set(c.topology.symbols):
            assert c.snapped.values["C1"] == c.snapped.values["C2"], c.topology.id
    equal = next(c for c in section.candidates if c.topology.id == "sallen-key-lowpass-equal")
    assert equal.reachable         # the constraint is its own: nothing to contradict


def test_constraint_is_left_out_with_a_note_where_a_part_is_missing(tmp_path, capsys):
    # Order 3: the first-order section's candidates have no C2.
    path = _write(tmp_path, BUTTERWORTH.format(order=3, parts='constraints = ["C1 = C2"]'))
    result = design(load_spec(path))
    first = next(s for s in result.sections if s.section.order == 1)
    assert any("constraint 'C1 = C2' left out" in note for note in first.candidate.notes)
    assert main(["design", str(path), "--quiet", "--samples", "20"]) == 0
    assert "note: constraint 'C1 = C2' left out" in capsys.readouterr().out


def test_parts_notes_name_the_missing_part():
    parts = PartsSpec(fixed={"R9": 1e3}, constraints=(parse_constraint("C1 = C2"),))
    notes = parts_notes(get_topology("rc-lowpass"), parts)
    assert notes == ("fixed R9 left out: topology 'rc-lowpass' has no part R9",
                     "constraint 'C1 = C2' left out: topology 'rc-lowpass' has no part C2")


def test_constraint_contradicting_a_topology_tie_makes_that_candidate_unreachable(tmp_path):
    path = _write(tmp_path, BUTTERWORTH.format(order=2, parts='constraints = ["C1 = 2*C2"]'))
    result = design(load_spec(path))
    candidates = {c.topology.id: c for c in result.sections[0].candidates}
    equal = candidates["sallen-key-lowpass-equal"]
    assert not equal.reachable and "contradicts" in equal.reason
    assert result.sections[0].candidate.reachable
    chosen = result.sections[0].candidate.snapped.values
    # a tie by a factor other than 1 is snapped to the nearest E12 value, whose
    # steps are about 21 % apart (IEC 60063): within ±11 % of the ratio
    assert chosen["C1"] / chosen["C2"] == pytest.approx(2.0, rel=0.11)


def test_fixed_part_tied_by_the_topology_fixes_its_partner():
    # Equal-component Sallen–Key ties C2 = C1; fixing C2 at 10 nF fixes C1 too
    # (it used to be refused as "ties 'C2', which is fixed").
    section = make_section("lowpass", TWO_PI * 1e3, 0.7071, gain=1.0)
    candidate = place_candidate(section, EQUAL, index=1, parts=PartsSpec(fixed={"C2": 10e-9}))
    assert candidate.reachable
    assert candidate.snapped.values["C1"] == pytest.approx(10e-9, rel=1e-12)
    assert candidate.snapped.values["C2"] == pytest.approx(10e-9, rel=1e-12)


def test_constraint_no_candidate_has_is_bad_input_in_compare_as_in_design(tmp_path):
    path = _write(tmp_path, BUTTERWORTH.format(order=2, parts='constraints = ["C9 = C1"]'))
    spec = load_spec(path)
    for run in (design, lambda s: compare(s, samples=20, workers=1)):
        with pytest.raises(SpecError, match="'C9 = C1' names 'C9'"):
            run(spec)


def test_spec_constraints_that_contradict_each_other_are_bad_input(tmp_path):
    path = _write(tmp_path, BUTTERWORTH.format(
        order=2, parts='constraints = ["C1 = C2", "C2 = 2*C1"]') + """
[candidates]
topologies = ["sallen-key-lowpass-unity"]
""")
    with pytest.raises(SpecError, match="contradicts"):
        design(load_spec(path))


# -- 6. a topology that cannot fit the section ------------------------------------

BANDPASS_RC = """
[target]
response = "bandpass"
approximation = "butterworth"
order = 1
low_edge = "1 kHz"
high_edge = "2 kHz"
[candidates]
topologies = ["rc-lowpass"]
[tolerance]
samples = 20
"""


def test_bandpass_with_a_first_order_lowpass_is_unreachable(tmp_path):
    # Used to end in "IndexError" in solve.passband_gain.
    spec = load_spec(_write(tmp_path, BANDPASS_RC))
    with pytest.raises(UnreachableTarget, match="rc-lowpass.*order 1, the section needs order 2"):
        design(spec)
    compared = compare(spec, workers=1)
    reason = compared.sections[0].candidates[0].reason
    assert not compared.sections[0].reachable and "order 1" in reason


@pytest.mark.parametrize("command", ["design", "compare"])
def test_bandpass_with_a_first_order_lowpass_exits_one_with_the_reason(tmp_path, capsys, command):
    path = _write(tmp_path, BANDPASS_RC)
    assert main([command, str(path), "--quiet"]) == 1
    captured = capsys.readouterr()
    assert "Traceback" not in captured.err
    assert "rc-lowpass" in captured.err and "order 1" in captured.err


# -- 7. which GBW method the console shows ----------------------------------------

def test_compare_gbw_model_shows_its_figure_in_the_console(tmp_path, capsys):
    path = _write(tmp_path, """
[target]
sections = [{ f0 = "1 kHz", q = 0.7071 }]
[candidates]
topologies = ["sallen-key-lowpass-unity"]
[tolerance]
samples = 20
""")
    out_json = tmp_path / "out.json"
    assert main(["compare", str(path), "--gbw", "model", "--quiet", "--workers", "1",
                 "--json", str(out_json)]) == 0
    text = " ".join(capsys.readouterr().out.split())     # the console wraps at 100 columns
    assert "GBW needed (--gbw model)" in text and "GBW re-solved (Hz)" in text
    data = json.loads(out_json.read_text())
    resolved = data["candidates"][0]["gbw_resolved_hz"]
    as_built = data["candidates"][0]["gbw_hz"]
    # Correcting for the op-amp lowers the GBW a stage needs (the reason the
    # correction exists; Schaumann and Van Valkenburg, Design of Analog
    # Filters, 2001, finite-GBW chapter — from memory).
    assert resolved is not None and 0 < resolved < as_built
    assert format_value(resolved, "Hz") in text
    assert main(["compare", str(path), "--quiet", "--workers", "1"]) == 0
    default = capsys.readouterr().out
    assert "GBW needed (--gbw built)" in default and "GBW re-solved" not in default
