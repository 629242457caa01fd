"""The loop command as a designer reads it: [parts] shared with design, the
right-half-plane-zero limit, the compensator's zeros and poles, the plot's
plant and compensator curves. Tests of placer.spec.loop_table,
placer.loops.compensator, placer.report.loop_text and placer.report.loop_plots.
"""

import json
import math
import tomllib
from pathlib import Path

import control
import numpy as np
import pytest

from placer.cli import main
from placer.errors import UnreachableTarget
from placer.loops.compensator import RHP_ZERO_FRACTION, design_compensator
from placer.loops.plants import boost_plant
from placer.report.html import loop_components
from placer.report.loop_text import loop_data, loop_text
from placer.report.loop_plots import loop_bode_figure
from placer.spec.loop_table import run_loop
from placer.spec.reader import load_spec

EXAMPLES = Path(__file__).resolve().parent.parent / "examples"

#: IEC 60063 E24 significant figures (the published table).
E24 = (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
       3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1)
#: IEC 60063 E6 significant figures.
E6 = (1.0, 1.5, 2.2, 3.3, 4.7, 6.8)

# The buck example without its own series and R1, so that [parts] decides.
BUCK = "\n".join(line for line in (EXAMPLES / "buck-loop.toml").read_text(encoding="utf-8")
                 .splitlines() if not line.startswith(("resistor_series", "capacitor_series",
                                                       "r1 "))) + "\n"


def _in_series(value, figures):
    mantissa = value / 10 ** math.floor(math.log10(value) + 1e-12)
    return any(abs(mantissa - f) < 1e-6 for f in figures)


def _boost_87khz():
    # Boost, Vin 5 V, Vout 12 V (D = 7/12), L = 3.8 µH, R = 12 Ω: RHP zero
    # R(1 − D)²/L (Erickson & Maksimović, Fundamentals of Power Electronics,
    # 2nd ed., ch. 8; from memory) = 12·(5/12)²/3.8e-6 rad/s ≈ 87.26 kHz.
    return boost_plant(5.0, vout=12.0, inductance=3.8e-6, capacitance=220e-6, esr=0.05,
                       load=12.0, ramp=1.0)


# -- 1. the [parts] table -------------------------------------------------------

PARTS = """
[parts]
resistor_series = "E24"
capacitor_series = "E6"
resistor_range = ["20k", "2M"]
capacitor_range = ["10p", "100n"]
"""


def test_loop_command_uses_the_parts_table(tmp_path, capsys):
    spec = tmp_path / "buck.toml"
    spec.write_text(BUCK + PARTS, encoding="utf-8")
    out = tmp_path / "loop.json"
    assert main(["loop", str(spec), "--samples", "0", "--json", str(out)]) == 0
    data = json.loads(out.read_text(encoding="utf-8"))
    resistors = [p for p in data["parts"] if p["kind"] == "resistor"]
    capacitors = [p for p in data["parts"] if p["kind"] == "capacitor"]
    assert resistors and capacitors
    for p in resistors:           # inside [parts] and on IEC 60063 E24
        assert 20e3 * (1 - 1e-9) <= p["value"] <= 2e6 * (1 + 1e-9) and p["series"] == "E24"
        assert _in_series(p["value"], E24)
    for p in capacitors:          # inside [parts] and on IEC 60063 E6
        assert 10e-12 * (1 - 1e-9) <= p["value"] <= 100e-9 * (1 + 1e-9) and p["series"] == "E6"
        assert _in_series(p["value"], E6)
    # 10 kΩ, the default R1, lies below the range: the nearer end is used.
    assert data["parts"][0]["name"] == "R1" and data["parts"][0]["value"] >= 20e3


def test_run_loop_reads_the_files_own_parts_table():
    # The whole file, no parts= argument: [parts] is read as design reads it.
    table = tomllib.loads(BUCK + PARTS)
    result = run_loop(table, samples=0)
    assert result.spec.resistor_series == "E24" and result.spec.capacitor_series == "E6"
    assert result.spec.resistor_range == (20e3, 2e6)
    assert result.spec.capacitor_range == (10e-12, 100e-9)



def test_run_loop_with_the_parts_of_load_spec_gives_the_same_design(tmp_path):
    path = tmp_path / "spec.toml"
    path.write_text(BUCK + PARTS, encoding="utf-8")
    spec = load_spec(path)
    given = run_loop(spec.loop, samples=0, parts=spec.parts)
    read = run_loop(tomllib.loads(BUCK + PARTS), samples=0)
    assert given.design.snapped == read.design.snapped


# -- 2. the right-half-plane zero -----------------------------------------------

def test_crossover_near_the_rhp_zero_names_the_zero_and_the_limit():
    plant = _boost_87khz()
    zero_hz = 12.0 * (5 / 12) ** 2 / 3.8e-6 / (2 * math.pi)
    assert zero_hz == pytest.approx(87.26e3, rel=1e-3)
    assert RHP_ZERO_FRACTION == pytest.approx(0.2)    # a fifth: common practice
    design = design_compensator(plant, 40e3, 50.0, compensator="type3")
    note = next(n for n in design.notes if "right-half-plane zero" in n)
    assert "87.26 kHz" in note and "1/5" in note and "common practice" in note
    assert "17.45 kHz" in note                         # 87.26 kHz / 5
    assert "40 kHz" in note


def test_below_the_limit_there_is_no_note():
    design = design_compensator(_boost_87khz(), 10e3, 50.0, compensator="type3")
    assert not any("right-half-plane zero" in n for n in design.notes)


def test_a_failure_near_the_rhp_zero_names_it():
    # Low ESR: no phase lead from the ESR zero, so 40 kHz needs more boost than
    # a Type III gives; the failure names the RHP zero and the limit.
    plant = boost_plant(5.0, vout=12.0, inductance=3.8e-6, capacitance=220e-6, esr=0.005,
                        load=12.0, ramp=1.0)
    with pytest.raises(UnreachableTarget) as error:
        design_compensator(plant, 40e3, 60.0, compensator="type3")
    message = str(error.value)
    assert "right-half-plane zero at 87.26 kHz" in message
    assert "below 17.45 kHz" in message and "1/5" in message


# -- 3. zeros and poles in the console, the plot's curves ------------------------

@pytest.fixture(scope="module")
def type2():
    table = tomllib.loads(BUCK.replace('compensator = "type3"', 'compensator = "type2"')
                          .replace('phase_margin = "60 deg"', 'phase_margin = "45 deg"')
                          .replace('crossover = "20 kHz"', 'crossover = "5 kHz"'))
    return run_loop(table, samples=0)


def test_console_lists_the_compensator_zero_and_poles(type2):
    from placer.spec.reader import AmplifierSpec

    design = type2.design
    assert design.placement.family == "type2"
    v = {role: design.snapped[symbol] for role, symbol in design.roles.items()}
    # Type II (R1 input; R2–C1 in series, C2 across them): zero 1/(2π R2 C1),
    # pole (C1 + C2)/(2π R2 C1 C2), integrator at 0 (common practice; from memory).
    zero = 1 / (2 * math.pi * v["R2"] * v["C1"])
    pole = (v["C1"] + v["C2"]) / (2 * math.pi * v["R2"] * v["C1"] * v["C2"])
    data, _ = loop_data(type2, AmplifierSpec())
    assert data["compensator"]["zeros_hz"] == pytest.approx([zero], rel=1e-6)
    assert data["compensator"]["poles_hz"] == pytest.approx([0.0, pole], rel=1e-6, abs=1e-6)
    text = loop_text(data)
    from placer.units import format_value

    line = next(x for x in text.splitlines() if "compensator zeros" in x)
    assert format_value(zero, "Hz", digits=4) in line
    line = next(x for x in text.splitlines() if "compensator poles" in x)
    assert "0 Hz (integrator)" in line and format_value(pole, "Hz", digits=4) in line


def test_boost_console_lists_the_rhp_zero(tmp_path, capsys):
    assert main(["loop", str(EXAMPLES / "boost-loop.toml"), "--samples", "0", "--quiet"]) == 0
    out = capsys.readouterr().out
    # R(1 − D)²/L with L = 4.7 µH, R = 12 Ω, D = 7/12 (Erickson, ch. 8; from memory).
    zero_hz = 12.0 * (5 / 12) ** 2 / 4.7e-6 / (2 * math.pi)
    from placer.units import format_value

    line = next(x for x in out.splitlines() if "right-half-plane zero" in x)
    assert format_value(zero_hz, "Hz", digits=4) in line
    assert format_value(zero_hz / 5, "Hz", digits=4) in line


def test_plant_and_compensator_curves_multiply_to_the_loop(type2):
    # |L| = |Gc|·|G| and ∠L = ∠Gc + ∠G (mod 360°), checked against python-control.
    design = type2.design
    fc = design.placement.crossover_hz
    parts = loop_components(design, fc)
    omega = 2 * math.pi * np.geomspace(fc / 1e3, fc * 1e3, int(200 * 6) + 1)
    loop = control.frequency_response(design.loop_transfer_function(), omega)
    plant_db, plant_deg = parts["plant G"]
    comp_db, comp_deg = parts["compensator Gc"]
    loop_db = 20 * np.log10(np.ravel(loop.magnitude))
    np.testing.assert_allclose(plant_db + comp_db, loop_db, atol=1e-6)
    turns = (plant_deg + comp_deg - np.degrees(np.ravel(loop.phase))) / 360.0
    np.testing.assert_allclose(turns, np.round(turns), atol=1e-6)
    fig = loop_bode_figure(np.ravel(loop.omega) / (2 * math.pi), loop_db,
                           np.degrees(np.unwrap(np.ravel(loop.phase))),
                           crossover_hz=fc, phase_margin_deg=45.0, gain_margin_db=None,
                           phase_crossover_hz=None, components=parts)
    magnitude_ax = fig.axes[0]
    labels = [line.get_label() for line in magnitude_ax.get_lines()]
    assert {"loop gain L", "plant G", "compensator Gc"} <= set(labels)
