"""The Linkwitz–Riley ``crossover`` key of ``[target]``: the −6 dB frequency.

Reference (handbook fact): a Linkwitz–Riley crossover of order n is two
Butterworth filters of order n/2 in cascade, each −3 dB at the crossover
frequency f_c, so the pair is 2 × −3.0103 = −6.0206 dB there and the low-
and high-pass branches sum to a flat magnitude (S. H. Linkwitz, "Active
crossover networks for noncoincident drivers", JAES 24(1), 1976). The
reference responses below are built with scipy.signal.butter, not with the
project's own prototypes.
"""

import math
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from scipy import signal

from placer.errors import SpecError
from placer.spec.target_table import target_from_table

ROOT = Path(__file__).resolve().parents[1]
TWO_PI = 2 * math.pi
HALF_POWER_DB = 20 * math.log10(math.sqrt(0.5))   # −3.0103 dB


def _magnitude_db(target, f_hz):
    """|H(j2πf)| in dB by scipy.signal.freqs on the target's polynomials."""
    zeros, poles, k = target.zpk()
    b = np.real(np.poly(zeros)) * k if len(zeros) else np.array([k])
    a = np.real(np.poly(poles))
    _, h = signal.freqs(b, a, worN=TWO_PI * np.atleast_1d(f_hz))
    return 20 * np.log10(np.abs(h))


def _lr_reference(order, f_c, btype):
    """Two cascaded Butterworths of order n/2, each −3 dB at f_c (scipy.signal)."""
    b, a = signal.butter(order // 2, TWO_PI * f_c, btype=btype, analog=True)
    return np.polymul(b, b), np.polymul(a, a)


@pytest.mark.parametrize("response,btype", [("lowpass", "low"), ("highpass", "high")])
@pytest.mark.parametrize("order", [2, 4, 8])
def test_crossover_is_minus_6_db(order, response, btype):
    f_c = 3000.0
    target = target_from_table({"response": response, "approximation": "linkwitz-riley",
                                "order": order, "crossover": "3 kHz"})
    assert _magnitude_db(target, f_c)[0] == pytest.approx(2 * HALF_POWER_DB, abs=1e-9)
    assert 2 * HALF_POWER_DB == pytest.approx(-6.0206, abs=1e-4)
    # The whole response is the reference's: two Butterworths in cascade.
    f = np.geomspace(30.0, 300e3, 61)
    b, a = _lr_reference(order, f_c, btype)
    _, h = signal.freqs(b, a, worN=TWO_PI * f)
    assert _magnitude_db(target, f) == pytest.approx(20 * np.log10(np.abs(h)), abs=1e-6)


def test_lr4_branches_sum_flat():
    # Handbook fact: LR4 low- and high-pass at one crossover sum to an all-pass.
    f = np.geomspace(100.0, 100e3, 41)
    low, high = (target_from_table({"response": r, "approximation": "linkwitz-riley",
                                    "order": 4, "crossover": 3000.0})
                 for r in ("lowpass", "highpass"))
    total = low.frequency_response(TWO_PI * f) + high.frequency_response(TWO_PI * f)
    assert np.abs(total) == pytest.approx(np.ones_like(f), abs=1e-9)


def test_cutoff_stays_the_minus_3_db_point():
    # cutoff is −3 dB of the whole response; its −6 dB point is (√2 + 1)^(1/n)
    # higher ((1 + ω^n)² = 2 at the −3 dB point of |B_{n/2}|⁴ = 1/(1 + ω^n)²).
    target = target_from_table({"approximation": "linkwitz-riley", "order": 4,
                                "cutoff": "2.5 kHz"})
    assert _magnitude_db(target, 2500.0)[0] == pytest.approx(HALF_POWER_DB, abs=1e-9)
    minus_6 = 2500.0 * (math.sqrt(2) + 1) ** 0.25
    assert minus_6 == pytest.approx(3116.3, abs=0.1)
    assert _magnitude_db(target, minus_6)[0] == pytest.approx(2 * HALF_POWER_DB, abs=1e-9)
    same = target_from_table({"approximation": "linkwitz-riley", "order": 4,
                              "crossover": minus_6})
    assert np.sort_complex(np.array(same.poles)) == pytest.approx(
        np.sort_complex(np.array(target.poles)), rel=1e-9)


@pytest.mark.parametrize("table,words", [
    ({"approximation": "linkwitz-riley", "order": 4, "crossover": "3k", "cutoff": "2.5k"},
     "crossover = '3k' and cutoff both set the frequency"),
    ({"approximation": "linkwitz-riley", "order": 4, "crossover": "3k",
      "passband_edge": "2k"}, "and passband_edge both set the frequency"),
    ({"approximation": "butterworth", "order": 4, "crossover": "3k"},
     "applies to a linkwitz-riley target only"),
    ({"approximation": "linkwitz-riley", "order": 4, "crossover": "3k",
      "response": "allpass"}, "lowpass or highpass target, not allpass"),
    ({"approximation": "linkwitz-riley", "order": 4, "crossover": "0"}, "must be positive"),
])
def test_crossover_errors(table, words):
    with pytest.raises(SpecError, match=None) as error:
        target_from_table(table, source="x.toml")
    assert words in str(error.value)
    assert str(error.value).startswith("x.toml: target.crossover")


def test_crossover_and_cutoff_on_the_command_line(tmp_path):
    spec = tmp_path / "both.toml"
    spec.write_text('[target]\napproximation = "linkwitz-riley"\norder = 4\n'
                    'cutoff = "2.5 kHz"\ncrossover = "3.1 kHz"\n')
    run = subprocess.run([sys.executable, "-m", "placer.cli", "target", str(spec)],
                         capture_output=True, text=True, cwd=tmp_path,
                         env={"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin"})
    assert run.returncode == 2
    lines = run.stderr.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: ") and "not both" in lines[0]
    assert "Traceback" not in run.stderr
