"""The mask verdict: does the built filter meet its pass- and stop-band mask?

Outside references, named beside each check:

* scipy.signal.freqs_zpk (reference library) on the design's achieved roots
  (the poles and zeros of the built cascade circuit), and an independent
  evaluation of the circuit: H(jω) by solving its MNA system at every grid
  frequency (:func:`placer.analysis.pencil.circuit_response`), each read against the
  mask on a dense grid written here;
* scipy.signal.ellip / cheby1 (reference library) for where an elliptic's
  loss first reaches its attenuation and a Chebyshev's its ripple;
* the Chebyshev I ripple edge sits at the −3 dB cutoff over
  cosh(acosh(1/ε)/n) (Williams and Taylor, Electronic Filter Design
  Handbook, Chebyshev response; from memory);
* a geometric band-pass transform maps a prototype frequency Ω to edges
  with f_low·f_high = f0² and f_high − f_low = Ω·bandwidth (standard
  filter-design texts; from memory).
"""

import json
import math

import numpy as np
import pytest
from scipy import optimize, signal

from placer.design import design
from placer.errors import SpecError
from placer.evidence.gather import gather_evidence
from placer.target.mask import Mask, grid_figures, mask_grid
from placer.analysis.pencil import circuit_response
from placer.report.console import evidence_text
from placer.report.data import design_to_dict
from placer.report.html import write_design_report
from placer.spec.reader import spec_from_dict
from placer.spec.target_table import target_from_table, target_to_dict
from placer.evidence.tolerance import cascade_magnitude_blocks

TWO_PI = 2 * math.pi

ELLIPTIC_MASK = {"approximation": "elliptic", "passband_edge": "2 kHz",
                 "stopband_edge": "3.4 kHz", "ripple": "0.5 dB", "attenuation": "40 dB"}
PARTS = {"resistor_series": "E96", "capacitor_series": "E12"}
TOLERANCE = {"resistor": "0.1%", "capacitor": "1%", "samples": 400}


def _spec(target):
    return spec_from_dict({"title": "mask", "target": target, "parts": PARTS,
                           "tolerance": TOLERANCE}, source="mask.toml")


@pytest.fixture(scope="module")
def elliptic():
    """A 2 kHz / 3.4 kHz elliptic mask on E12 capacitors, without and with a margin."""
    built = {}
    for margin in (None, "0.2 dB"):
        target = dict(ELLIPTIC_MASK, **({"margin": margin} if margin else {}))
        result = design(_spec(target), seed=0)
        built[margin] = (result, gather_evidence(result, samples=400, seed=1))
    return built


def _dense_figures(h, frequency_hz, passing, stopping):
    """Pass-band deviation and least attenuation on a dense grid (independent reading)."""
    db = 20 * np.log10(np.abs(h))
    peak = db[passing].max()
    return peak - db[passing].min(), peak - db[stopping].max()


def _dense_grid():
    passing = np.unique(np.concatenate([np.linspace(0, 2e3, 40001), [2e3]]))
    stopping = np.unique(np.concatenate([np.linspace(3.4e3, 40e3, 80001),
                                         np.geomspace(40e3, 3.4e8, 2001)]))
    frequency = np.concatenate([passing, stopping])
    flags = np.concatenate([np.ones(passing.size, bool), np.zeros(stopping.size, bool)])
    return frequency, flags, ~flags


def test_implied_chebyshev_edge_is_the_handbook_ripple_edge():
    n, ripple, cutoff = 5, 0.25, 3.3e3
    target = target_from_table({"approximation": "chebyshev1", "order": n,
                                "ripple": ripple, "cutoff": cutoff, "response": "highpass"})
    epsilon = math.sqrt(10 ** (ripple / 10) - 1)
    # high-pass: the ripple edge lies above the cutoff by the same ratio (Williams & Taylor)
    edge = cutoff * math.cosh(math.acosh(1 / epsilon) / n)
    ((low, high),) = target.mask.passbands_hz
    assert low == pytest.approx(edge, rel=1e-9) and math.isinf(high)
    assert target.mask.stopbands_hz == () and target.mask.attenuation_db is None


def test_implied_elliptic_stop_edge_against_scipy():
    target = target_from_table({"approximation": "elliptic", "order": 5, "ripple": 0.3,
                                "attenuation": 52, "cutoff": "800 Hz"})
    ((_, passband_edge),) = target.mask.passbands_hz
    ((stop_edge, _),) = target.mask.stopbands_hz
    # scipy.signal.ellip puts its ripple edge at Wn (reference library): design there and
    # find where the loss first reaches 52 dB, below its first transmission zero.
    z, p, k = signal.ellip(5, 0.3, 52, TWO_PI * passband_edge, analog=True, output="zpk")

    def excess(f):
        h = signal.freqs_zpk(z, p, k, worN=[TWO_PI * f])[1][0]
        return -20 * math.log10(max(abs(h), 1e-300)) - 52
    first_zero = np.min(np.abs(z)) / TWO_PI
    assert stop_edge == pytest.approx(optimize.brentq(excess, passband_edge, first_zero),
                                      rel=1e-7)


def test_implied_bandpass_edges_are_geometric():
    target = target_from_table({"approximation": "chebyshev1", "order": 3, "ripple": 0.5,
                                "response": "bandpass", "center": "10 kHz",
                                "bandwidth": "2 kHz"})
    ((low, high),) = target.mask.passbands_hz
    # f_low·f_high = f0² (geometric transform, standard texts)
    assert low * high == pytest.approx(1e8, rel=1e-10)
    epsilon = math.sqrt(10 ** 0.05 - 1)
    ratio = 1 / math.cosh(math.acosh(1 / epsilon) / 3)     # ripple edge over cutoff (handbook)
    assert high - low == pytest.approx(2e3 * ratio, rel=1e-9)


def test_target_json_carries_the_mask():
    target = target_from_table(dict(ELLIPTIC_MASK))
    data = json.loads(json.dumps(target_to_dict(target)))
    assert data["mask"]["passbands_hz"] == [[0.0, 2000.0]]
    assert data["mask"]["stopbands_hz"] == [[3400.0, None]]
    assert data["mask"]["ripple_db"] == 0.5 and data["mask"]["attenuation_db"] == 40.0


def test_snapped_figures_against_scipy_and_the_circuit(elliptic):
    result, evidence = elliptic[None]
    verdict = evidence.mask
    frequency, passing, stopping = _dense_grid()
    omega = TWO_PI * frequency
    # reference library: freqs_zpk on the achieved roots, scaled to the circuit at DC
    _, h_roots = signal.freqs_zpk(result.zeros, result.poles, 1.0, worN=omega)
    h_roots *= circuit_response(result.circuit, [0.0])[0] / h_roots[0]
    h_circuit = circuit_response(result.circuit, omega)    # independent MNA solve per frequency
    for h in (h_roots, h_circuit):
        deviation, attenuation = _dense_figures(h, frequency, passing, stopping)
        assert verdict.snapped.passband_deviation_db == pytest.approx(deviation, abs=2e-4)
        assert verdict.snapped.stopband_attenuation_db == pytest.approx(attenuation, abs=2e-3)
    # the target sits on its mask exactly: an elliptic of the estimated order is equiripple
    assert verdict.target.passband_margin_db == pytest.approx(0.0, abs=1e-9)
    assert verdict.target.stopband_margin_db == pytest.approx(0.0, abs=1e-9)
    assert verdict.target.meets


def test_a_small_miss_is_said_plainly(elliptic):
    result, evidence = elliptic[None]
    verdict = evidence.mask
    # E12 capacitors move the equiripple lobes: the build lands a little short of
    # the mask, in its pass band or its stop band (whichever the snapping bent)
    assert not verdict.snapped.meets
    snapped = verdict.snapped
    assert min(snapped.passband_margin_db, snapped.stopband_margin_db) > -0.5
    text = " ".join(evidence_text(evidence).split())     # the console wraps at 100 columns
    if snapped.stopband_margin_db < 0:
        assert f"stop band {-snapped.stopband_margin_db:.3f} dB short of 40 dB" in text
    if snapped.passband_margin_db < 0:
        assert f"pass band varies {-snapped.passband_margin_db:.3f} dB more than" in text
    assert "The circuit with preferred values does not meet the mask" in text
    data = json.loads(json.dumps(design_to_dict(result, evidence=evidence.to_dict()),
                                 allow_nan=False))
    mask = data["evidence"]["mask"]
    assert mask["snapped"]["meets"] is False
    assert mask["snapped"]["stopband_margin_db"] == pytest.approx(snapped.stopband_margin_db)
    assert mask["snapped"]["passband_margin_db"] == pytest.approx(snapped.passband_margin_db)
    assert 0 <= mask["monte_carlo"]["yield_pct"] <= 100


def test_margin_designs_headroom_so_the_build_meets(elliptic):
    result, evidence = elliptic["0.2 dB"]
    verdict = evidence.mask
    assert verdict.mask.margin_db == 0.2
    # the mask stays the one asked for; the approximation is designed 0.2 dB inside it
    assert verdict.mask.ripple_db == 0.5 and verdict.mask.attenuation_db == 40.0
    z, p, k = result.target.zpk()
    frequency, passing, stopping = _dense_grid()
    _, h = signal.freqs_zpk(z, p, k, worN=TWO_PI * frequency)     # reference library
    deviation, attenuation = _dense_figures(h, frequency, passing, stopping)
    assert 0.5 - deviation == pytest.approx(0.2, abs=1e-4)
    assert attenuation - 40.0 >= 0.2 - 1e-4
    assert verdict.snapped.meets
    without = elliptic[None][1].mask
    assert verdict.yield_fraction > without.yield_fraction


def test_monte_carlo_mask_yield_matches_builds_evaluated_one_by_one(elliptic):
    result, _ = elliptic[None]
    mask = result.target.mask
    grid = mask_grid(mask)
    omega = TWO_PI * grid.frequency_hz
    parts, tolerance = [], {"resistor": 0.001, "capacitor": 0.01}
    for s in result.sections:
        topology = s.candidate.topology
        tolerances = {p: tolerance[topology.kind_of(p)] for p in s.candidate.snapped.values
                      if topology.kind_of(p) in tolerance}
        parts.append((s.candidate.problem.nf, dict(s.candidate.snapped.values), tolerances))
    blocks = list(cascade_magnitude_blocks(parts, omega, samples=12, seed=7, block=5))
    vectorised = grid_figures(mask, grid, np.concatenate(blocks))
    # the same draws, uniform within ±tolerance from each section's child stream
    streams = np.random.default_rng(7).spawn(len(parts))
    draws = [stream.uniform(-1.0, 1.0, size=(len(t), 12)) for (_, _, t), stream in
             zip(parts, streams)]
    for build in range(12):
        h = np.ones(omega.size, complex)
        for s, (nf, values, tolerances), draw in zip(result.sections, parts, draws):
            built = dict(values)
            for row, (name, width) in enumerate(tolerances.items()):
                built[name] = values[name] * (1 + width * draw[row, build])
            # independent evaluation: the section's circuit by MNA at each frequency
            h *= circuit_response(s.candidate.topology.circuit, omega, values=built)
        one = grid_figures(mask, grid, 20 * np.log10(np.abs(h)))
        assert float(vectorised.passband_deviation_db[build]) == pytest.approx(
            float(one.passband_deviation_db), abs=1e-7)
        assert float(vectorised.stopband_attenuation_db[build]) == pytest.approx(
            float(one.stopband_attenuation_db), abs=1e-6)
        assert bool(vectorised.meets[build]) == bool(one.meets)


def test_margin_errors():
    implied = {"approximation": "elliptic", "order": 4, "ripple": 0.5, "attenuation": 40,
               "cutoff": "1 kHz", "margin": "0.2 dB"}
    # an elliptic of a given order sits exactly on its own mask: no room without more order
    with pytest.raises(SpecError, match="needs order 5"):
        target_from_table(implied)
    with pytest.raises(SpecError, match="must be below ripple"):
        target_from_table(dict(ELLIPTIC_MASK, margin="0.5 dB"))
    with pytest.raises(SpecError, match="needs a mask"):
        target_from_table({"approximation": "butterworth", "order": 3, "cutoff": 1e3,
                           "margin": 0.1})
    with pytest.raises(SpecError, match="margin"):
        target_from_table(dict(ELLIPTIC_MASK, margin="-0.1 dB"))
    # with a ripple requirement alone, the margin moves the ripple edge onto the mask
    ripple_only = target_from_table({"approximation": "chebyshev1", "order": 4, "ripple": 1.0,
                                     "cutoff": "5 kHz", "margin": "0.4 dB"})
    z, p, k = ripple_only.zpk()
    ((_, edge),) = ripple_only.mask.passbands_hz
    grid = np.linspace(0, edge, 20001)
    db = 20 * np.log10(np.abs(signal.freqs_zpk(z, p, k, worN=TWO_PI * grid)[1]))
    assert db.max() - db.min() == pytest.approx(0.6, abs=1e-4)    # 1 dB less the margin


def test_grid_figures_on_a_stop_band_only_mask():
    # Inverse Chebyshev high-pass: only a stop band below its edge; the attenuation is read
    # from the peak above it (scipy.signal.cheby2 is equiripple at -45 dB there).
    target = target_from_table({"approximation": "chebyshev2", "order": 4, "attenuation": 45,
                                "cutoff": "1 kHz", "response": "highpass"})
    mask = target.mask
    assert mask.passbands_hz == () and mask.stopbands_hz[0][0] == 0.0
    grid = mask_grid(mask)
    h = target.frequency_response(TWO_PI * grid.frequency_hz)
    figures = grid_figures(mask, grid, 20 * np.log10(np.abs(h)))
    assert float(figures.stopband_attenuation_db) == pytest.approx(45.0, abs=1e-3)
    assert figures.passband_deviation_db is None


def test_report_draws_the_mask(elliptic, tmp_path):
    result, evidence = elliptic[None]
    data = design_to_dict(result, evidence=evidence.to_dict())
    write_design_report(result, data, evidence, html_path=tmp_path / "r.html")
    page = (tmp_path / "r.html").read_text(encoding="utf-8")
    assert "Against the mask" in page and "does not meet the mask" in page
    assert "Hatched: where the mask forbids" in page


def test_mask_dataclass_describes_itself():
    mask = Mask("bandstop", ((0.0, 900.0), (1100.0, math.inf)), ((980.0, 1020.0),), 1.0, 30.0)
    assert mask.describe() == ("pass band up to 900 Hz and from 1.1 kHz within 1 dB; "
                               "stop band 980 Hz – 1.02 kHz at least 30 dB down")
