"""The whole cascade's gain: measured on the built cascade at the target's
reference frequency, never summed from the sections' own gains.

Outside references, named beside each check:

* an independent evaluation of the built circuit: H(jω) by solving the
  MNA system (G + jωC)x = b at that one frequency
  (:func:`placer.analysis.pencil.circuit_response`), not the roots the design used;
* scipy.signal.freqs_zpk (reference library) on the achieved roots.
"""

import math

import pytest
from scipy import signal

from placer.design import design
from placer.analysis.pencil import circuit_response
from placer.report.console import design_text
from placer.report.data import design_to_dict
from placer.spec.reader import spec_from_dict

TWO_PI = 2 * math.pi


def _spec(target, **extra):
    return spec_from_dict({"title": "gain", "target": target,
                           "parts": {"resistor_series": "E96", "capacitor_series": "E12"},
                           **extra}, source="gain.toml")


def _db(x):
    return 20 * math.log10(abs(x))


@pytest.fixture(scope="module")
def bandpass():
    # 4th-order Butterworth band-pass at 2.5 kHz, 6 dB: two staggered sections, not an example's
    spec = _spec({"response": "bandpass", "approximation": "butterworth", "order": 2,
                  "center": "2.5 kHz", "bandwidth": "800 Hz", "gain": "6 dB"})
    return design(spec, seed=0)


def test_bandpass_cascade_gain_is_measured_at_the_centre(bandpass):
    data = design_to_dict(bandpass)
    centre = bandpass.target.reference_omega
    measured = circuit_response(bandpass.circuit, [centre])[0]
    # independent MNA solve of the built cascade at the band centre
    assert data["achieved"]["gain_db"] == pytest.approx(_db(measured), abs=1e-6)
    # and scipy.signal.freqs_zpk on the achieved roots (reference library)
    _, h = signal.freqs_zpk(bandpass.zeros, bandpass.poles, 1.0, worN=[centre])
    k = measured / h[0]
    assert abs(k.imag) < 1e-6 * abs(k)
    # a snapped build lands within a few tenths of a dB of the 6 dB asked
    assert data["achieved"]["gain_db"] == pytest.approx(6.0, abs=0.3)
    assert data["achieved"]["gain_at_hz"] == pytest.approx(2.5e3, rel=1e-9)
    # the old figure, each section's gain at its own f0, summed: several dB off
    summed = sum(s["achieved"]["gain_db"] for s in data["sections"])
    assert abs(summed - data["achieved"]["gain_db"]) > 3.0
    assert f"gain {data['achieved']['gain_db']:+.3f} dB at 2.5 kHz" in design_text(data)


def test_highpass_cascade_gain_is_the_high_frequency_plateau():
    spec = _spec({"response": "highpass", "approximation": "bessel", "order": 3,
                  "cutoff": "180 Hz", "gain": "-4 dB"})
    result = design(spec, seed=0)
    data = design_to_dict(result)
    # independent MNA solve four decades above the cutoff, where a Bessel high-pass
    # sits on its plateau to well under 1e-6 dB
    far = circuit_response(result.circuit, [TWO_PI * 180.0 * 1e4])[0]
    assert data["achieved"]["gain_db"] == pytest.approx(_db(far), abs=1e-5)
    assert data["achieved"]["gain_db"] == pytest.approx(-4.0, abs=0.2)
    assert data["achieved"]["gain_at_hz"] is None
    assert "at high frequency" in design_text(data)


def test_highpass_with_a_real_opamp_quotes_the_plateau():
    spec = _spec({"response": "highpass", "approximation": "butterworth", "order": 2,
                  "cutoff": "300 Hz"}, amplifier={"gbw": "1 MHz", "gain": "100 dB"},
                 candidates={"topologies": ["sallen-key-highpass-unity"]})
    result = design(spec, seed=0)
    data = design_to_dict(result)
    # A GBW of 1 MHz leaves the 300 Hz high-pass flat to a few thousandths of a dB at
    # 30 kHz (single-pole op-amp model: the roll-off starts near GBW/closed-loop gain,
    # common practice, no source).
    plateau = circuit_response(result.circuit, [TWO_PI * 30e3])[0]
    assert data["achieved"]["gain_db"] is not None
    assert data["achieved"]["gain_db"] == pytest.approx(_db(plateau), abs=0.02)
