"""The topology library against published formulas.

Each check compares the symbolic network function of a library file with
the textbook formula for ω0, Q and pass-band gain (or its roots), by
evaluating both at several random positive part values rather than by
``sympy.simplify``. The source of every formula is named beside its check;
"from memory" where it was recalled rather than read off the page.
"""

import math
import re
import zlib

import numpy as np
import pytest
import sympy

from placer.circuit.library import LIBRARY_DIR, find_topologies, get_topology, library_topologies
from placer.analysis.network import network_function
from placer.circuit.topology import load_topology

RTOL = 1e-9
SAMPLES = 6

#: Typical magnitude of a part by kind, around which the random values are drawn.
SCALE = {"resistor": 1e4, "capacitor": 1e-8, "inductor": 1e-2, "vcvs": 2.0}


@pytest.fixture(scope="module")
def functions():
    """Network function of each bundled topology, derived once."""
    cache = {}

    def get(topology_id):
        if topology_id not in cache:
            cache[topology_id] = network_function(get_topology(topology_id).circuit)
        return cache[topology_id]

    return get


def random_values(topology, rng, *, constrained=True):
    """Random positive values for every symbol (log-uniform over a decade each way)."""
    values = {}
    for symbol in topology.symbols:
        kind = topology.kind_of(symbol)
        values[symbol] = SCALE[kind] * 10 ** rng.uniform(-1.0, 1.0)
    if constrained:
        values = apply_constraints(topology, values)
    return values


def apply_constraints(topology, values):
    values = dict(values)
    for constraint in topology.constraints:
        values[constraint.part] = constraint.factor * values[constraint.source]
    return values


def evaluate(nf, expression, values):
    symbols = [nf.symbols[name] for name in nf.symbols]
    function = sympy.lambdify(symbols, expression, "math")
    return complex(function(*[values[name] for name in nf.symbols]))


def sample_sets(topology, seed, count=SAMPLES, constrained=True):
    rng = np.random.default_rng(seed)
    return [random_values(topology, rng, constrained=constrained) for _ in range(count)]


def sorted_roots(roots):
    roots = np.asarray(roots, dtype=complex)
    return roots[np.lexsort((roots.real, roots.imag))]


def assert_roots(actual, expected, *, rtol=1e-7):
    """Order-independent comparison: sort by imaginary part then real part."""
    actual, expected = sorted_roots(actual), sorted_roots(expected)
    assert actual.shape == expected.shape, (actual, expected)
    scale = np.max(np.abs(expected)) if expected.size else 1.0
    np.testing.assert_allclose(actual, expected, rtol=0, atol=rtol * scale)


# -- second-order (and first-order) figures against published formulas -------
#
# Each entry: topology id, then formulas for omega0 (rad/s), Q and the signed
# pass-band gain as functions of the part values `v`. Q is None for a
# first-order section. The source is named in the comment above each entry.

sq = math.sqrt

FIGURES = [
    # Common practice, no source: the RC divider, w0 = 1/(RC), gain 1.
    ("rc-lowpass", lambda v: 1 / (v["R1"] * v["C1"]), None, lambda v: 1.0),
    # Common practice, no source: the CR divider, w0 = 1/(RC), HF gain 1.
    ("rc-highpass", lambda v: 1 / (v["R1"] * v["C1"]), None, lambda v: 1.0),
    # Sedra and Smith, Microelectronic Circuits, first-order active filters (from memory):
    # -(R2/R1)/(1 + s R2 C1).
    ("opamp-lowpass-inverting", lambda v: 1 / (v["R2"] * v["C1"]), None,
     lambda v: -v["R2"] / v["R1"]),
    # Sedra and Smith, first-order active filters (from memory): -(R2/R1) sR1C1/(1 + sR1C1).
    ("opamp-highpass-inverting", lambda v: 1 / (v["R1"] * v["C1"]), None,
     lambda v: -v["R2"] / v["R1"]),
    # Hayt and Kemmerly, Engineering Circuit Analysis, series resonance (from memory):
    # w0 = 1/sqrt(LC), bandwidth R/L so Q = w0 L / R, unity gain at resonance.
    ("series-rlc-bandpass", lambda v: 1 / sq(v["L1"] * v["C1"]),
     lambda v: sq(v["L1"] / v["C1"]) / v["R1"], lambda v: 1.0),
    # Carter and Mancini, Op Amps for Everyone, active filter design, unity-gain
    # Sallen-Key low-pass (from memory).
    ("sallen-key-lowpass-unity", lambda v: 1 / sq(v["R1"] * v["R2"] * v["C1"] * v["C2"]),
     lambda v: sq(v["R1"] * v["R2"] * v["C1"] * v["C2"]) / (v["C2"] * (v["R1"] + v["R2"])),
     lambda v: 1.0),
    # Carter and Mancini, Op Amps for Everyone, Sallen-Key low-pass with gain K (from memory).
    ("sallen-key-lowpass-gain", lambda v: 1 / sq(v["R1"] * v["R2"] * v["C1"] * v["C2"]),
     lambda v: sq(v["R1"] * v["R2"] * v["C1"] * v["C2"])
     / (v["C2"] * (v["R1"] + v["R2"]) + v["R1"] * v["C1"] * (1 - (1 + v["RB"] / v["RA"]))),
     lambda v: 1 + v["RB"] / v["RA"]),
    # Carter and Mancini, Op Amps for Everyone, equal-component Sallen-Key (from memory):
    # w0 = 1/(RC), Q = 1/(3 - K).
    ("sallen-key-lowpass-equal", lambda v: 1 / (v["R1"] * v["C1"]),
     lambda v: 1 / (3 - (1 + v["RB"] / v["RA"])), lambda v: 1 + v["RB"] / v["RA"]),
    # Carter and Mancini, Op Amps for Everyone, unity-gain Sallen-Key high-pass (from memory);
    # R1 is the feedback resistor.
    ("sallen-key-highpass-unity", lambda v: 1 / sq(v["R1"] * v["R2"] * v["C1"] * v["C2"]),
     lambda v: sq(v["R1"] * v["R2"] * v["C1"] * v["C2"]) / (v["R1"] * (v["C1"] + v["C2"])),
     lambda v: 1.0),
    # Carter and Mancini, Op Amps for Everyone, Sallen-Key high-pass with gain K (from memory).
    ("sallen-key-highpass-gain", lambda v: 1 / sq(v["R1"] * v["R2"] * v["C1"] * v["C2"]),
     lambda v: sq(v["R1"] * v["R2"] * v["C1"] * v["C2"])
     / (v["R1"] * (v["C1"] + v["C2"]) + v["R2"] * v["C2"] * (1 - (1 + v["RB"] / v["RA"]))),
     lambda v: 1 + v["RB"] / v["RA"]),
    # Carter and Mancini, Op Amps for Everyone, multiple-feedback low-pass (from memory):
    # gain -R2/R1, Q = sqrt(R2R3C1C2)/(C2(R2 + R3 + R2R3/R1)).
    ("mfb-lowpass", lambda v: 1 / sq(v["R2"] * v["R3"] * v["C1"] * v["C2"]),
     lambda v: sq(v["R2"] * v["R3"] * v["C1"] * v["C2"])
     / (v["C2"] * (v["R2"] + v["R3"] + v["R2"] * v["R3"] / v["R1"])),
     lambda v: -v["R2"] / v["R1"]),
    # Carter and Mancini, Op Amps for Everyone, multiple-feedback high-pass (from memory):
    # gain -C1/C2, Q = sqrt(R1R2C2C3)/(R1(C1 + C2 + C3)).
    ("mfb-highpass", lambda v: 1 / sq(v["R1"] * v["R2"] * v["C2"] * v["C3"]),
     lambda v: sq(v["R1"] * v["R2"] * v["C2"] * v["C3"])
     / (v["R1"] * (v["C1"] + v["C2"] + v["C3"])),
     lambda v: -v["C1"] / v["C2"]),
    # Carter and Mancini, Op Amps for Everyone, multiple-feedback band-pass (from memory).
    ("mfb-bandpass",
     lambda v: sq((v["R1"] + v["R2"]) / (v["R1"] * v["R2"] * v["R3"] * v["C1"] * v["C2"])),
     lambda v: sq((v["R1"] + v["R2"]) / (v["R1"] * v["R2"] * v["R3"] * v["C1"] * v["C2"]))
     * v["R3"] * v["C1"] * v["C2"] / (v["C1"] + v["C2"]),
     lambda v: -v["R3"] * v["C2"] / (v["R1"] * (v["C1"] + v["C2"]))),
    # Schaumann and Van Valkenburg, Design of Analog Filters (2001), Delyiannis-Friend
    # band-pass with positive feedback RA/RB (from memory).
    ("deliyannis-friend-bandpass", lambda v: 1 / sq(v["R1"] * v["R2"] * v["C1"] * v["C2"]),
     lambda v: sq(v["R1"] * v["R2"] * v["C1"] * v["C2"])
     / (v["R1"] * (v["C1"] + v["C2"]) - v["RA"] / v["RB"] * v["R2"] * v["C2"]),
     lambda v: -v["R2"] * v["C2"] * (1 + v["RA"] / v["RB"])
     / (v["R1"] * (v["C1"] + v["C2"]) - v["RA"] / v["RB"] * v["R2"] * v["C2"])),
    # Schaumann and Van Valkenburg (2001), Tow-Thomas biquad (from memory):
    # w0^2 = R6/(R3 R4 R5 C1 C2), Q = w0 R2 C1, low-pass gain R4 R5/(R1 R6).
    ("tow-thomas-lowpass",
     lambda v: sq(v["R6"] / (v["R3"] * v["R4"] * v["R5"] * v["C1"] * v["C2"])),
     lambda v: sq(v["R6"] / (v["R3"] * v["R4"] * v["R5"] * v["C1"] * v["C2"])) * v["R2"] * v["C1"],
     lambda v: v["R4"] * v["R5"] / (v["R1"] * v["R6"])),
    # Schaumann and Van Valkenburg (2001), Tow-Thomas band-pass output: -R2/R1 at w0
    # (from memory).
    ("tow-thomas-bandpass",
     lambda v: sq(v["R6"] / (v["R3"] * v["R4"] * v["R5"] * v["C1"] * v["C2"])),
     lambda v: sq(v["R6"] / (v["R3"] * v["R4"] * v["R5"] * v["C1"] * v["C2"])) * v["R2"] * v["C1"],
     lambda v: -v["R2"] / v["R1"]),
    # Schaumann and Van Valkenburg (2001), Akerberg-Mossberg biquad: same ideal figures
    # as Tow-Thomas, low-pass gain -R4/R1 (from memory).
    ("akerberg-mossberg-lowpass",
     lambda v: sq(v["R5"] / (v["R3"] * v["R4"] * v["R6"] * v["C1"] * v["C2"])),
     lambda v: sq(v["R5"] / (v["R3"] * v["R4"] * v["R6"] * v["C1"] * v["C2"])) * v["R2"] * v["C1"],
     lambda v: -v["R4"] / v["R1"]),
    # Bridged-T notch (Van Valkenburg, Analog Filter Design, 1982, from memory): the
    # pole pair; the pass-band (DC) gain is 1.
    ("bridged-t-notch", lambda v: 1 / sq(v["R1"] * v["R2"] * v["C1"] * v["C2"]),
     lambda v: sq(v["R1"] * v["R2"] * v["C1"] * v["C2"])
     / (v["R2"] * (v["C1"] + v["C2"]) + v["R1"] * v["C2"]),
     lambda v: 1.0),
    # Carter and Mancini, Op Amps for Everyone, all-pass section (from memory):
    # (1 - sRC)/(1 + sRC).
    ("allpass-first-order", lambda v: 1 / (v["R3"] * v["C1"]), None, lambda v: 1.0),
    # Deliyannis, Sun and Fidler (1999), single-amplifier all-pass (from memory):
    # w0 = 1/(C sqrt(R1R2)), Q = sqrt(R2/R1)/2, K = Q^2/(1 + Q^2).
    ("allpass-second-order", lambda v: 1 / (v["C1"] * sq(v["R1"] * v["R2"])),
     lambda v: sq(v["R2"] / v["R1"]) / 2,
     lambda v: (v["R2"] / v["R1"] / 4) / (1 + v["R2"] / v["R1"] / 4)),
]


def _khn(v):
    # Huelsman and Allen, Introduction to the Theory and Design of Active Filters (1980),
    # KHN state-variable biquad (from memory), in this file's naming.
    omega0 = sq(v["R4"] / (v["R3"] * v["R5"] * v["R6"] * v["C1"] * v["C2"]))
    q = omega0 * v["R5"] * v["C1"] * v["R3"] * (v["R1"] + v["R2"]) / (v["R1"] * (v["R3"] + v["R4"]))
    return omega0, q


FIGURES += [
    # Huelsman and Allen (1980), KHN low-pass gain R2(R3 + R4)/(R4(R1 + R2)) (from memory).
    ("khn-lowpass", lambda v: _khn(v)[0], lambda v: _khn(v)[1],
     lambda v: v["R2"] * (v["R3"] + v["R4"]) / (v["R4"] * (v["R1"] + v["R2"]))),
    # Huelsman and Allen (1980), KHN band-pass gain -R2/R1 at w0 (from memory).
    ("khn-bandpass", lambda v: _khn(v)[0], lambda v: _khn(v)[1], lambda v: -v["R2"] / v["R1"]),
    # Huelsman and Allen (1980), KHN high-pass gain R2(R3 + R4)/(R3(R1 + R2)) (from memory).
    ("khn-highpass", lambda v: _khn(v)[0], lambda v: _khn(v)[1],
     lambda v: v["R2"] * (v["R3"] + v["R4"]) / (v["R3"] * (v["R1"] + v["R2"]))),
    # Fliege (1973), two-op-amp notch with R1 = R2 and R5 = R6: w0 = 1/sqrt(R3 R4 C1 C2),
    # Q = w0 C2 (R5 || R6), gain 1 (from memory).
    ("fliege-notch", lambda v: 1 / sq(v["R3"] * v["R4"] * v["C1"] * v["C2"]),
     lambda v: v["C2"] * v["R5"] * v["R6"] / (v["R5"] + v["R6"])
     / sq(v["R3"] * v["R4"] * v["C1"] * v["C2"]),
     lambda v: 1.0),
]


@pytest.mark.parametrize("topology_id, omega0, q, gain", FIGURES, ids=[f[0] for f in FIGURES])
def test_figures_match_published_formula(functions, topology_id, omega0, q, gain):
    topology = get_topology(topology_id)
    nf = functions(topology_id)
    for values in sample_sets(topology, seed=zlib.crc32(topology_id.encode())):
        assert evaluate(nf, nf.omega0, values).real == pytest.approx(omega0(values), rel=RTOL)
        if q is None:
            assert nf.q is None
        else:
            assert evaluate(nf, nf.q, values).real == pytest.approx(q(values), rel=RTOL)
        assert evaluate(nf, nf.gain, values).real == pytest.approx(gain(values), rel=RTOL)


def test_khn_textbook_equal_case(functions):
    # Huelsman and Allen (1980), KHN with R3 = R4 and equal integrators (from memory):
    # w0 = 1/(RC), Q = (1 + R2/R1)/2.
    nf = functions("khn-bandpass")
    values = {"R1": 10e3, "R2": 39e3, "R3": 10e3, "R4": 10e3, "R5": 15e3, "R6": 15e3,
              "C1": 10e-9, "C2": 10e-9}
    figures = nf.second_order_figures(values)
    assert float(figures.omega0) == pytest.approx(1 / (15e3 * 10e-9), rel=RTOL)
    assert float(figures.q) == pytest.approx((1 + 39e3 / 10e3) / 2, rel=RTOL)


def test_sallen_key_equal_component_gain_for_q(functions):
    # Carter and Mancini, Op Amps for Everyone (from memory): K = 3 - 1/Q; a Butterworth
    # section (Q = 1/sqrt 2) needs K = 1.586, i.e. RB/RA = 0.586.
    nf = functions("sallen-key-lowpass-equal")
    rb_over_ra = 3 - math.sqrt(2) - 1
    values = {"R1": 10e3, "R2": 10e3, "C1": 10e-9, "C2": 10e-9, "RA": 10e3,
              "RB": 10e3 * rb_over_ra}
    figures = nf.second_order_figures(values)
    assert float(figures.q) == pytest.approx(1 / math.sqrt(2), rel=RTOL)
    assert float(figures.gain) == pytest.approx(1.586, abs=5e-4)  # handbook's 4 figures


# -- notches -----------------------------------------------------------------

def test_twin_t_null_at_one_over_rc(functions):
    # Horowitz and Hill, The Art of Electronics, twin-T (from memory): R, R, R/2 and
    # C, C, 2C null at w0 = 1/(RC); the remaining pole pair is s^2 + 4 w0 s + w0^2
    # and (s + w0) is common to N and D.
    nf = functions("twin-t-notch")
    for r, c in ((10e3, 10e-9), (3.3e3, 47e-9), (100e3, 1e-9)):
        values = {"R1": r, "R2": r, "R3": r / 2, "C1": c, "C2": c, "C3": 2 * c}
        w0 = 1 / (r * c)
        assert_roots(nf.zeros(values), [1j * w0, -1j * w0, -w0])
        assert_roots(nf.poles(values), [-w0, w0 * (-2 + math.sqrt(3)), w0 * (-2 - math.sqrt(3))])
        assert abs(nf.response_at(values, w0)) < 1e-9
        assert nf.response_at(values, 0.0).real == pytest.approx(1.0, rel=RTOL)


def test_bridged_t_notch_zeros_and_depth(functions):
    # Van Valkenburg, Analog Filter Design (1982), bridged-T (from memory):
    # zeros of s^2 R1R2C1C2 + s R2(C1 + C2) + 1; depth R2(C1 + C2)/(R2(C1 + C2) + R1 C2).
    topology = get_topology("bridged-t-notch")
    nf = functions("bridged-t-notch")
    for v in sample_sets(topology, seed=11):
        expected = np.roots([v["R1"] * v["R2"] * v["C1"] * v["C2"],
                             v["R2"] * (v["C1"] + v["C2"]), 1.0])
        assert_roots(nf.zeros(v), expected)
        w0 = 1 / sq(v["R1"] * v["R2"] * v["C1"] * v["C2"])
        depth = v["R2"] * (v["C1"] + v["C2"]) / (v["R2"] * (v["C1"] + v["C2"]) + v["R1"] * v["C2"])
        assert abs(nf.response_at(v, w0)) == pytest.approx(depth, rel=RTOL)


# -- all-pass ----------------------------------------------------------------

@pytest.mark.parametrize("topology_id, flat_gain", [
    # Carter and Mancini, Op Amps for Everyone, first-order all-pass (from memory): |H| = 1.
    ("allpass-first-order", lambda v: 1.0),
    # Deliyannis, Sun and Fidler (1999), single-amplifier all-pass (from memory):
    # |H| = RB/(RA + RB) at every frequency under the balance condition.
    ("allpass-second-order", lambda v: v["RB"] / (v["RA"] + v["RB"])),
])
def test_allpass_magnitude_is_flat(functions, topology_id, flat_gain):
    topology = get_topology(topology_id)
    nf = functions(topology_id)
    omega = np.logspace(1, 7, 61)
    for v in sample_sets(topology, seed=5):
        magnitude = np.abs(nf.response_at(v, omega))
        np.testing.assert_allclose(magnitude, flat_gain(v), rtol=RTOL)
        # zeros mirror the poles in the imaginary axis
        assert_roots(nf.zeros(v), -np.conj(nf.poles(v)))


def test_first_order_allpass_phase_at_w0(functions):
    # Carter and Mancini, Op Amps for Everyone (from memory): -90 degrees at w0 = 1/(RC).
    nf = functions("allpass-first-order")
    v = {"R1": 10e3, "R2": 10e3, "R3": 4.7e3, "C1": 22e-9}
    h = nf.response_at(v, 1 / (4.7e3 * 22e-9))
    assert np.degrees(np.angle(h)) == pytest.approx(-90.0, abs=1e-9)


# -- compensators ------------------------------------------------------------

def test_lead_network_zero_pole_and_gain(functions):
    # Ogata, Modern Control Engineering, RC lead network (from memory):
    # alpha (1 + sT)/(1 + s alpha T), T = R1 C1, alpha = R2/(R1 + R2).
    topology = get_topology("lead-network")
    nf = functions("lead-network")
    for v in sample_sets(topology, seed=21):
        alpha = v["R2"] / (v["R1"] + v["R2"])
        t = v["R1"] * v["C1"]
        assert_roots(nf.zeros(v), [-1 / t])
        assert_roots(nf.poles(v), [-1 / (alpha * t)])
        assert evaluate(nf, nf.gain, v).real == pytest.approx(alpha, rel=RTOL)
        # maximum phase lead asin((1 - alpha)/(1 + alpha)) at 1/(T sqrt(alpha))
        phase = np.angle(nf.response_at(v, 1 / (t * sq(alpha))))
        assert phase == pytest.approx(math.asin((1 - alpha) / (1 + alpha)), rel=1e-9)


def test_lag_network_zero_pole_and_gain(functions):
    # Ogata, Modern Control Engineering, RC lag network (from memory):
    # (1 + sT)/(1 + s beta T), T = R2 C1, beta = (R1 + R2)/R2.
    topology = get_topology("lag-network")
    nf = functions("lag-network")
    for v in sample_sets(topology, seed=22):
        t = v["R2"] * v["C1"]
        beta = (v["R1"] + v["R2"]) / v["R2"]
        assert_roots(nf.zeros(v), [-1 / t])
        assert_roots(nf.poles(v), [-1 / (beta * t)])
        assert evaluate(nf, nf.gain, v).real == pytest.approx(1.0, rel=RTOL)
        assert nf.response_at(v, 1e12).real == pytest.approx(1 / beta, rel=1e-6)


def _assert_response(nf, values, expected, omega=np.logspace(0, 7, 29)):
    np.testing.assert_allclose(nf.response_at(values, omega), expected(1j * omega), rtol=1e-9)


def test_pi_controller(functions):
    # Ogata, Modern Control Engineering, op-amp controllers (from memory):
    # -(Kp + Ki/s), Kp = R2/R1, Ki = 1/(R1 C1).
    topology = get_topology("pi-controller")
    nf = functions("pi-controller")
    for v in sample_sets(topology, seed=31):
        kp, ki = v["R2"] / v["R1"], 1 / (v["R1"] * v["C1"])
        _assert_response(nf, v, lambda s: -(kp + ki / s))
        assert_roots(nf.zeros(v), [-1 / (v["R2"] * v["C1"])])
        assert_roots(nf.poles(v), [0.0])


def test_pid_controller(functions):
    # Ogata, Modern Control Engineering, op-amp controllers (from memory):
    # -(Kp + Ki/s + Kd s), Kp = R2/R1 + C1/C2, Ki = 1/(R1 C2), Kd = R2 C1.
    topology = get_topology("pid-controller")
    nf = functions("pid-controller")
    for v in sample_sets(topology, seed=32):
        kp = v["R2"] / v["R1"] + v["C1"] / v["C2"]
        ki = 1 / (v["R1"] * v["C2"])
        kd = v["R2"] * v["C1"]
        _assert_response(nf, v, lambda s: -(kp + ki / s + kd * s))
        assert_roots(nf.zeros(v), [-1 / (v["R1"] * v["C1"]), -1 / (v["R2"] * v["C2"])])
        assert_roots(nf.poles(v), [0.0])


def test_type2_error_amplifier(functions):
    # Venable, The K Factor (Powercon 10, 1983), Type II amplifier (from memory):
    # pole at 0, zero 1/(R2 C1), pole (C1 + C2)/(R2 C1 C2).
    topology = get_topology("type2-error-amplifier")
    nf = functions("type2-error-amplifier")
    for v in sample_sets(topology, seed=41):
        r1, r2, c1, c2 = v["R1"], v["R2"], v["C1"], v["C2"]
        _assert_response(nf, v, lambda s: -(1 + s * r2 * c1)
                         / (s * r1 * (c1 + c2) * (1 + s * r2 * c1 * c2 / (c1 + c2))))
        assert_roots(nf.zeros(v), [-1 / (r2 * c1)])
        assert_roots(nf.poles(v), [0.0, -(c1 + c2) / (r2 * c1 * c2)])


def test_type3_error_amplifier(functions):
    # Venable, The K Factor (Powercon 10, 1983), Type III amplifier (from memory):
    # zeros 1/(R2 C1), 1/((R1 + R3) C3); poles 0, (C1 + C2)/(R2 C1 C2), 1/(R3 C3).
    topology = get_topology("type3-error-amplifier")
    nf = functions("type3-error-amplifier")
    for v in sample_sets(topology, seed=42):
        r1, r2, r3, c1, c2, c3 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2", "C3"))
        assert_roots(nf.zeros(v), [-1 / (r2 * c1), -1 / ((r1 + r3) * c3)])
        assert_roots(nf.poles(v), [0.0, -(c1 + c2) / (r2 * c1 * c2), -1 / (r3 * c3)])
        _assert_response(nf, v, lambda s: -(1 + s * r2 * c1) * (1 + s * (r1 + r3) * c3)
                         / (s * r1 * (c1 + c2) * (1 + s * r2 * c1 * c2 / (c1 + c2))
                            * (1 + s * r3 * c3)))


# -- third order -------------------------------------------------------------

def test_third_order_lowpass_coefficients(functions):
    # Open-circuit/short-circuit time constants (Cochrun and Grabel, IEEE Trans.
    # Circuit Theory CT-20, 1973), worked by hand for this circuit:
    # a1 = R1C1 + (R1 + R2 + R3)C3, a2 = R1C1(R2 + R3)C3 + (R1 + R2)R3C2C3,
    # a3 = R1R2R3C1C2C3; DC gain 1.
    topology = get_topology("sallen-key-lowpass-third-order")
    nf = functions("sallen-key-lowpass-third-order")
    for v in sample_sets(topology, seed=51):
        r1, r2, r3, c1, c2, c3 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2", "C3"))
        numerator, denominator = nf.coefficients(v)
        a = denominator / denominator[-1]
        expected = [r1 * r2 * r3 * c1 * c2 * c3,
                    r1 * c1 * (r2 + r3) * c3 + (r1 + r2) * r3 * c2 * c3,
                    r1 * c1 + (r1 + r2 + r3) * c3, 1.0]
        np.testing.assert_allclose(a, expected, rtol=RTOL)
        assert evaluate(nf, nf.gain, v).real == pytest.approx(1.0, rel=RTOL)


def test_third_order_lowpass_realises_butterworth(functions):
    # scipy.signal.buttap (reference library): with R1 = R2 = R3 = 1 ohm, capacitors
    # exist that make D(s) = s^3 + 2s^2 + 2s + 1 (a real pole and a Q = 1 pair), so the
    # topology reaches the third-order Butterworth response.
    from scipy.signal import buttap
    from scipy.optimize import fsolve

    nf = functions("sallen-key-lowpass-third-order")

    def residual(c):
        v = {"R1": 1.0, "R2": 1.0, "R3": 1.0, "C1": c[0], "C2": c[1], "C3": c[2]}
        _, denominator = nf.coefficients(v)
        return denominator[:3] / denominator[-1] - [1.0, 2.0, 2.0]

    c = fsolve(residual, [1.4, 3.5, 0.2])
    values = {"R1": 1.0, "R2": 1.0, "R3": 1.0, "C1": c[0], "C2": c[1], "C3": c[2]}
    assert min(c) > 0
    assert_roots(nf.poles(values), buttap(3)[1], rtol=1e-7)


# -- the library as a whole --------------------------------------------------

REQUIRED = [
    "rc-lowpass", "rc-highpass", "opamp-lowpass-inverting", "opamp-highpass-inverting",
    "series-rlc-bandpass", "sallen-key-lowpass-unity", "sallen-key-lowpass-gain",
    "sallen-key-lowpass-equal", "sallen-key-highpass-unity", "sallen-key-highpass-gain",
    "mfb-lowpass", "mfb-highpass", "mfb-bandpass", "deliyannis-friend-bandpass",
    "tow-thomas-lowpass", "tow-thomas-bandpass", "khn-lowpass", "khn-bandpass",
    "khn-highpass", "akerberg-mossberg-lowpass", "twin-t-notch", "bridged-t-notch",
    "allpass-first-order", "allpass-second-order", "lead-network", "lag-network",
    "pi-controller", "pid-controller", "type2-error-amplifier", "type3-error-amplifier",
    "sallen-key-lowpass-third-order", "fliege-notch", "khn-notch",
]

BUNDLED = sorted(LIBRARY_DIR.glob("*.toml"))
_SOURCE = re.compile(r"\(([^()]*\b(?:[A-Z][a-z]+|no source)\b[^()]*)\)\s*$")


def test_library_holds_the_required_set():
    ids = set(library_topologies())
    assert len(BUNDLED) >= 26
    missing = [i for i in REQUIRED if i not in ids]
    assert not missing


@pytest.mark.parametrize("path", BUNDLED, ids=[p.stem for p in BUNDLED])
def test_every_file_loads_with_metadata(path):
    topology = load_topology(path)
    assert topology.id == path.stem  # file named after its id
    assert topology.title.strip()
    assert topology.description.strip()
    # the formula text ends with its source in parentheses: authors, or "no source"
    assert _SOURCE.search(topology.formula), topology.formula
    if topology.response == "compensator":
        assert topology.family in {"lead", "lag", "pi", "pid", "type2", "type3"}
    for symbol in topology.free:
        low, high = topology.ranges[symbol]
        assert 0 < low < high


@pytest.mark.parametrize("path", BUNDLED, ids=[p.stem for p in BUNDLED])
def test_order_and_sign_match_the_file(functions, path):
    topology = load_topology(path)
    nf = functions(topology.id)
    assert nf.denominator.degree() == topology.order
    # sign of the low-frequency asymptote (lowest non-zero coefficients of N and D),
    # with every part at its typical value: the pass-band sign for filters, the
    # integrator or proportional sign for compensators
    values = apply_constraints(topology, {s: SCALE[topology.kind_of(s)] for s in topology.symbols})
    numerator, denominator = nf.coefficients(values)
    low_n = next(c for c in numerator[::-1] if c != 0)
    low_d = next(c for c in denominator[::-1] if c != 0)
    assert (low_n / low_d < 0) == topology.inverting
    if topology.response != "compensator":
        assert (evaluate(nf, nf.gain, values).real < 0) == topology.inverting


def test_typical_values_give_stable_poles(functions):
    # common practice: every bundled topology at typical part values is stable
    # (integrating compensators have one pole at the origin)
    for path in BUNDLED:
        topology = load_topology(path)
        nf = functions(topology.id)
        values = apply_constraints(
            topology, {s: SCALE[topology.kind_of(s)] for s in topology.symbols})
        poles = nf.poles(values)
        scale = max(1.0, float(np.max(np.abs(poles))))
        assert np.all(poles.real <= 1e-9 * scale), (topology.id, poles)


def test_find_topologies_by_response_and_family():
    lowpass_2 = {t.id for t in find_topologies(response="lowpass", order=2)}
    assert {"sallen-key-lowpass-unity", "mfb-lowpass", "tow-thomas-lowpass"} <= lowpass_2
    assert [t.id for t in find_topologies(family="type3")] == ["type3-error-amplifier"]
