"""Tests of placer.spec.reader: reading spec files and naming what is wrong.

Every bad input must raise SpecError with a message that names the file,
the field, the offending value and what is accepted. No outside reference:
the expected messages are this project's own contract (docs/architecture.md, Errors).
"""

import math
import textwrap

import pytest

from placer.design import design
from placer.errors import SpecError
from placer.spec.reader import load_spec

GOOD = """
title = "test low-pass"

[target]
response = "lowpass"
approximation = "butterworth"
order = 2
cutoff = "1 kHz"

[parts]
resistor_series = "E96"
capacitor_series = "E12"
resistor_range = ["1k", "100k"]
capacitor_range = ["1n", "1u"]
{parts}

[candidates]
topologies = [{topologies}]
"""


def write_spec(tmp_path, text, name="spec.toml"):
    path = tmp_path / name
    path.write_text(textwrap.dedent(text), encoding="utf-8")
    return path


def spec_text(parts="", topologies='"sallen-key-lowpass-unity"'):
    return GOOD.format(parts=parts, topologies=topologies)


def load_error(tmp_path, text):
    path = write_spec(tmp_path, text)
    with pytest.raises(SpecError) as caught:
        load_spec(path)
    message = str(caught.value)
    assert str(path) in message          # every message names the file
    return message


def test_a_good_spec_loads(tmp_path):
    spec = load_spec(write_spec(tmp_path, spec_text(
        parts='fixed = { C2 = "4.7n" }\nconstraints = ["R1 = R2"]')))
    assert spec.title == "test low-pass"
    assert spec.parts.series["resistor"] == "E96"
    assert spec.parts.series["capacitor"] == "E12"
    assert spec.parts.ranges["resistor"] == (1e3, 100e3)
    assert spec.parts.ranges["capacitor"] == pytest.approx((1e-9, 1e-6), rel=1e-12)
    assert spec.parts.fixed == {"C2": pytest.approx(4.7e-9, rel=1e-12)}
    assert [str(c) for c in spec.parts.constraints] == ["R1 = R2"]
    assert spec.candidates == ("sallen-key-lowpass-unity",)
    assert len(spec.target.poles) == 2
    assert all(abs(abs(p) - 2 * math.pi * 1e3) < 1e-6 for p in spec.target.poles)


def test_missing_file(tmp_path):
    with pytest.raises(SpecError, match="does not exist"):
        load_spec(tmp_path / "nothing.toml")


def test_bad_toml_names_the_file(tmp_path):
    message = load_error(tmp_path, "[target\norder = 2\n")
    assert "not valid TOML" in message


def test_unknown_series_name(tmp_path):
    message = load_error(tmp_path, spec_text().replace('resistor_series = "E96"',
                                                       'resistor_series = "E97"'))
    assert "parts.resistor_series" in message
    assert "'E97'" in message
    assert "E96" in message and "E192" in message     # what would be accepted


@pytest.mark.parametrize("bad_range", ['["100k", "1k"]', '["10k", "10k"]'])
def test_empty_value_range(tmp_path, bad_range):
    message = load_error(tmp_path, spec_text().replace('resistor_range = ["1k", "100k"]',
                                                       f"resistor_range = {bad_range}"))
    assert "parts.resistor_range" in message
    assert "low must be below high" in message


def test_range_with_one_value(tmp_path):
    message = load_error(tmp_path, spec_text().replace('capacitor_range = ["1n", "1u"]',
                                                       'capacitor_range = ["1n"]'))
    assert "parts.capacitor_range" in message
    assert "[low, high]" in message


def test_negative_range(tmp_path):
    message = load_error(tmp_path, spec_text().replace('resistor_range = ["1k", "100k"]',
                                                       'resistor_range = [-1000, 1000]'))
    assert "parts.resistor_range" in message
    assert "positive" in message


def test_fixed_part_outside_its_range_reaches_make_problem(tmp_path):
    # the spec is valid as text; the range check needs the topology's part kinds
    spec = load_spec(write_spec(tmp_path, spec_text(parts='fixed = { C2 = "1m" }')))
    with pytest.raises(SpecError) as caught:
        design(spec)
    message = str(caught.value)
    assert "fixed part 'C2'" in message
    assert "outside its range" in message
    assert "1e-06" in message          # the range's upper end, 1 µF


def test_fixed_part_not_positive(tmp_path):
    message = load_error(tmp_path, spec_text(parts="fixed = { C2 = 0 }"))
    assert "parts.fixed.C2" in message and "positive" in message


def test_unknown_topology_id_suggests_the_nearest(tmp_path):
    message = load_error(tmp_path, spec_text(topologies='"sallen-key-lowpas-unity"'))
    assert "candidates.topologies" in message
    assert "unknown topology id 'sallen-key-lowpas-unity'" in message
    assert "did you mean 'sallen-key-lowpass-unity'" in message


def test_missing_topology_file(tmp_path):
    message = load_error(tmp_path, spec_text(topologies='"mine/absent.toml"'))
    assert "candidates.topologies" in message
    assert "does not exist" in message


def test_constraint_naming_a_part_the_topology_lacks(tmp_path):
    message = load_error(tmp_path, spec_text(parts='constraints = ["C9 = C1"]'))
    assert "parts.constraints" in message
    assert "'C9'" in message
    assert "sallen-key-lowpass-unity (R1, R2, C1, C2)" in message


def test_constraint_valid_for_one_of_several_candidates(tmp_path):
    # R3 exists in the MFB stage only: that is enough
    spec = load_spec(write_spec(tmp_path, spec_text(
        parts='constraints = ["R3 = R2"]',
        topologies='"sallen-key-lowpass-unity", "mfb-lowpass"')))
    assert [str(c) for c in spec.parts.constraints] == ["R3 = R2"]


def test_fixed_part_no_candidate_has(tmp_path):
    message = load_error(tmp_path, spec_text(parts='fixed = { R7 = "10k" }'))
    assert "parts.fixed.R7" in message
    assert "no candidate topology has a part 'R7'" in message


def test_unreadable_constraint(tmp_path):
    message = load_error(tmp_path, spec_text(parts='constraints = ["C1 == C2 + 1"]'))
    assert "parts.constraints" in message
    assert "'C1 = C2'" in message          # the accepted form


def test_unknown_top_level_key_suggests(tmp_path):
    message = load_error(tmp_path, spec_text() + '\n[tagret]\norder = 2\n')
    assert "unknown key 'tagret'" in message
    assert "did you mean 'target'" in message


def test_unknown_parts_key_suggests(tmp_path):
    message = load_error(tmp_path, spec_text().replace('resistor_series = "E96"',
                                                       'resistor_serie = "E96"'))
    assert "[parts]" in message
    assert "unknown key 'resistor_serie'" in message
    assert "did you mean 'resistor_series'" in message


def test_unknown_target_key_suggests(tmp_path):
    message = load_error(tmp_path, spec_text().replace('cutoff = "1 kHz"', 'cutof = "1 kHz"'))
    assert "target.cutof" in message
    assert "'cutoff'" in message


def test_unknown_candidates_key_suggests(tmp_path):
    message = load_error(tmp_path, spec_text().replace("topologies = [", "topology = ["))
    assert "[candidates]" in message
    assert "did you mean 'topologies'" in message


def test_unknown_cascade_ordering(tmp_path):
    message = load_error(tmp_path, spec_text() + '\n[cascade]\nordering = "ascending"\n')
    assert "cascade.ordering" in message
    assert "did you mean 'ascending-q'" in message


def test_tolerance_out_of_bounds(tmp_path):
    message = load_error(tmp_path, spec_text() + '\n[tolerance]\nresistor = "150%"\n')
    assert "tolerance.resistor" in message
    assert "between 0 and 100 %" in message


def test_rejection_window_in_db(tmp_path):
    spec = load_spec(write_spec(tmp_path, spec_text() + '\n[tolerance]\nrejection = "40 dB"\n'))
    assert spec.tolerance.windows["rejection_db"] == pytest.approx(40.0)


@pytest.mark.parametrize("bad", ['"-3 dB"', '"loud"', '0'])
def test_bad_rejection_window(tmp_path, bad):
    message = load_error(tmp_path, spec_text() + f'\n[tolerance]\nrejection = {bad}\n')
    assert "tolerance.rejection" in message


MASK_TARGET = """
[target]
approximation = "butterworth"
passband_edge = "1 kHz"
stopband_edge = "3 kHz"
{levels}
"""


@pytest.mark.parametrize("levels, missing", [('attenuation = "40 dB"', "ripple"),
                                             ('ripple = "1 dB"', "attenuation")])
def test_a_mask_without_both_levels_is_named(tmp_path, levels, missing):
    # Once a TypeError from `None - margin`; now the one-line error.
    message = load_error(tmp_path, MASK_TARGET.format(levels=levels))
    assert f"target.{missing} is missing" in message


def test_a_mask_with_both_levels_sets_the_order(tmp_path):
    spec = load_spec(write_spec(tmp_path, MASK_TARGET.format(
        levels='ripple = "1 dB"\nattenuation = "40 dB"')))
    # Butterworth order n >= log10((10^(A/10) - 1)/(10^(R/10) - 1)) / (2 log10(fs/fp))
    # = log10(9999/0.2589)/(2 log10 3) = 4.81, so 5 (common practice)
    assert spec.target.order == 5
