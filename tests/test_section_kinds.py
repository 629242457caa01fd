"""Notch section kinds: symmetric, low-pass and high-pass notches, and the
topologies that can realise each.

Outside references, named beside each check:

* scipy.signal.ellip and cheby2 (reference library) for the roots of the
  elliptic and inverse-Chebyshev targets;
* the trade's names: a second-order section whose jω-axis zeros lie above
  its pole frequency is a low-pass notch, below it a high-pass notch, at it
  a (symmetric) notch (common practice, no source);
* the twin-T, bridged-T and Fliege notches null at their own pole
  frequency, the KHN output-summing notch sets its zero apart from it
  (the formulas quoted in each topology file, from memory).
"""

import math
import textwrap

import numpy as np
import pytest
from scipy import signal

from placer.design import candidate_topologies, design
from placer.errors import SpecError, TopologyError
from placer.circuit.library import find_topologies, get_topology, realises
from placer.report.data import design_to_dict
from placer.target.sections import split_sections
from placer.spec.reader import load_spec
from placer.spec.target_table import target_from_table, target_to_dict
from placer.target.targets import design_target, make_section, notch_kind
from placer.circuit.topology import topology_from_text

TWO_PI = 2 * math.pi


def test_elliptic_lowpass_sections_are_lowpass_notches():
    # A case the examples do not hold: a 6th-order elliptic at 3 kHz.
    target = design_target("elliptic", 6, frequency_hz=3e3, ripple_db=0.25, attenuation_db=55.0)
    sections = split_sections(target)
    z, p, _ = signal.ellip(6, 0.25, 55.0, 1.0, analog=True, output="zpk")
    # scipy's elliptic low-pass: every zero pair lies above every pole magnitude
    # (reference library), so every section is a low-pass notch.
    assert np.min(np.abs(z)) > np.max(np.abs(p))
    assert [s.kind for s in sections] == ["lowpass-notch"] * 3
    for s in sections:
        assert s.zero_omega > s.omega0
    data = target_to_dict(target, sections)
    assert {s["kind"] for s in data["sections"]} == {"lowpass-notch"}


def test_inverse_chebyshev_highpass_sections_are_highpass_notches():
    target = design_target("chebyshev2", 4, response="highpass", frequency_hz=250.0,
                           attenuation_db=45.0)
    z, p, _ = signal.cheby2(4, 45.0, 1.0, btype="highpass", analog=True, output="zpk")
    # High-pass transform: the zeros fall below the poles (reference library).
    assert np.max(np.abs(z)) < np.min(np.abs(p))
    kinds = [s.kind for s in split_sections(target)]
    assert kinds == ["highpass-notch"] * 2


def test_first_order_bandstop_gives_one_symmetric_notch():
    # lp2bs of a first-order prototype: s^2 + (bw/p) s + w0^2, poles of magnitude w0
    # exactly, zeros at ±j w0 (reference library's transform).
    target = design_target("butterworth", 1, response="bandstop", center_hz=60.0,
                           bandwidth_hz=6.0)
    z, p, _ = signal.lp2bs_zpk([], [-1.0], 1.0, wo=TWO_PI * 60.0, bw=TWO_PI * 6.0)
    assert np.abs(p) == pytest.approx([TWO_PI * 60.0] * 2, rel=1e-12)
    (section,) = split_sections(target)
    assert section.kind == "notch"


def test_staggered_bandstop_mixes_low_and_high_pass_notches():
    target = design_target("butterworth", 2, response="bandstop", center_hz=1e3,
                           bandwidth_hz=500.0)
    kinds = sorted(s.kind for s in split_sections(target))
    # lp2bs of a Butterworth pair: pole magnitudes either side of the centre,
    # zeros at the centre (reference library), so one of each.
    _, p, _ = signal.lp2bs_zpk([], [complex(-1, 1) / 2**0.5, complex(-1, -1) / 2**0.5], 1.0,
                               wo=TWO_PI * 1e3, bw=TWO_PI * 500.0)
    magnitudes = np.unique(np.round(np.abs(p) / (TWO_PI * 1e3), 9))
    assert magnitudes[0] < 1 < magnitudes[-1]
    assert kinds == ["highpass-notch", "lowpass-notch"]


def test_notch_kind_and_make_section():
    assert notch_kind(100.0, 100.0) == "notch"
    assert notch_kind(100.0, 150.0) == "lowpass-notch"
    assert notch_kind(100.0, 70.0) == "highpass-notch"
    assert make_section("notch", 100.0, 2.0, zero_omega=70.0).kind == "highpass-notch"
    with pytest.raises(SpecError, match="'highpass-notch' section"):
        make_section("lowpass-notch", 100.0, 2.0, zero_omega=70.0)


def test_sections_table_checks_a_named_notch_kind():
    good = target_from_table({"sections": [{"f0": "1 kHz", "q": 3, "zero_f0": "1.5 kHz",
                                            "kind": "lowpass-notch"}]})
    assert split_sections(good)[0].kind == "lowpass-notch"
    with pytest.raises(SpecError, match=r"sections\[0\].*'highpass-notch' section"):
        target_from_table({"sections": [{"f0": "1 kHz", "q": 3, "zero_f0": "700 Hz",
                                         "kind": "lowpass-notch"}]})
    with pytest.raises(SpecError, match="needs zero_f0"):
        target_from_table({"sections": [{"f0": "1 kHz", "q": 3, "kind": "highpass-notch"}]})


def test_library_notch_capabilities_are_metadata():
    # The KHN output-summing notch sets wz apart from w0; the passive notches and the
    # Fliege null at w0 (each file's formula, from memory).
    assert get_topology("khn-notch").notch_kinds == ("notch", "lowpass-notch", "highpass-notch")
    for symmetric in ("twin-t-notch", "bridged-t-notch", "fliege-notch"):
        topology = get_topology(symmetric)
        assert topology.notch_kinds == ("notch",)
        assert realises(topology, "notch") and not realises(topology, "lowpass-notch")
    assert {t.id for t in find_topologies(response="lowpass-notch")} == {"khn-notch"}
    assert {t.id for t in find_topologies(response="highpass-notch")} == {"khn-notch"}
    assert {"fliege-notch", "bridged-t-notch", "khn-notch"} <= \
        {t.id for t in find_topologies(response="notch", order=2)}


def test_candidates_for_a_lowpass_notch_leave_out_symmetric_topologies():
    section = make_section("notch", TWO_PI * 1e3, 4.0, zero_omega=TWO_PI * 2.5e3)
    topologies = candidate_topologies(section).topologies
    assert [t.id for t in topologies] == ["khn-notch"]
    symmetric = make_section("notch", TWO_PI * 1e3, 4.0, zero_omega=TWO_PI * 1e3)
    ids = {t.id for t in candidate_topologies(symmetric).topologies}
    assert {"fliege-notch", "khn-notch", "bridged-t-notch"} <= ids


def test_notch_kinds_key_is_checked():
    base = textwrap.dedent("""\
        id = "my-notch"
        title = "demo"
        response = "{response}"
        order = 1
        {extra}
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
        """)
    own = topology_from_text(base.format(response="notch",
                                         extra='notch_kinds = ["lowpass-notch"]'))
    assert own.notch_kinds == ("lowpass-notch",)
    assert topology_from_text(base.format(response="notch", extra="")).notch_kinds == ("notch",)
    assert topology_from_text(base.format(response="lowpass", extra="")).notch_kinds == ()
    with pytest.raises(TopologyError, match="notch_kinds"):
        topology_from_text(base.format(response="notch", extra='notch_kinds = ["bandstop"]'))
    with pytest.raises(TopologyError, match="response = 'notch' only"):
        topology_from_text(base.format(response="lowpass", extra='notch_kinds = ["notch"]'))


def test_elliptic_design_labels_and_places_lowpass_notches(tmp_path):
    path = tmp_path / "elliptic.toml"
    path.write_text(textwrap.dedent("""\
        title = "fourth-order elliptic"
        [target]
        approximation = "elliptic"
        order = 4
        ripple = "0.5 dB"
        attenuation = "40 dB"
        cutoff = "2.2 kHz"
        """))
    result = design(load_spec(path), seed=0)
    data = design_to_dict(result)
    assert [s["target"]["kind"] for s in data["sections"]] == ["lowpass-notch"] * 2
    for s in data["sections"]:
        assert s["topology"] == "khn-notch"
        assert s["target"]["zero_f0_hz"] > s["target"]["f0_hz"]
        # no symmetric-only topology was tried for it
        assert {c["topology"] for c in s["candidates"]} == {"khn-notch"}
