"""Tests of placer.analysis.network: symbolic network functions and the numeric path.

Outside references are named beside each check. The symbolic path
(``network_function`` and the evaluators of its coefficients) and the numeric
path (``circuit_poles``/``circuit_zeros``/``circuit_response``, from the MNA
pencil) share only the stamps, so checks between them are real checks; the
stamps themselves are checked against hand-written matrices in test_mna.py.
"""

import json
import math
import multiprocessing
from concurrent.futures import ProcessPoolExecutor
from functools import lru_cache

import control
import numpy as np
import pytest
import scipy.signal
import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from placer.circuit.elements import Circuit, Element
from placer.cli import main
from placer.errors import SymbolicSizeError, TopologyError
from placer.analysis.network import (
    S,
    circuit_gain,
    circuit_poles,
    circuit_response,
    circuit_zeros,
    network_function,
)

# -- circuits ------------------------------------------------------------------


def part(name, kind, a, b, values=None):
    """A passive part: symbolic (symbol = name) unless `values` gives a number."""
    if values is not None:
        return Element(name, kind, (a, b), value=values[name])
    return Element(name, kind, (a, b), symbol=name)


def sallen_key(values=None, opamp=None):
    """Unity-gain Sallen–Key low-pass: R1, R2 in series, C1 feedback, C2 to ground."""
    opamp = opamp or {}
    return Circuit((
        part("R1", "resistor", "vin", "n1", values),
        part("R2", "resistor", "n1", "n2", values),
        part("C1", "capacitor", "n1", "vout", values),
        part("C2", "capacitor", "n2", "gnd", values),
        Element("U1", "opamp", ("n2", "vout", "vout"), **opamp),
    ))


def mfb_lowpass(values=None):
    """Multiple-feedback low-pass: R1 in, C1 to ground, R2 feedback, R3 and C2 to the op-amp."""
    return Circuit((
        part("R1", "resistor", "vin", "n1", values),
        part("C1", "capacitor", "n1", "gnd", values),
        part("R2", "resistor", "n1", "vout", values),
        part("R3", "resistor", "n1", "n2", values),
        part("C2", "capacitor", "n2", "vout", values),
        Element("U1", "opamp", ("gnd", "n2", "vout")),
    ))


def mfb_bandpass(values=None):
    """Multiple-feedback band-pass: R1 in, R2 to ground, C1 to the op-amp, C2 and R3 feedback."""
    return Circuit((
        part("R1", "resistor", "vin", "n1", values),
        part("R2", "resistor", "n1", "gnd", values),
        part("C1", "capacitor", "n1", "n2", values),
        part("C2", "capacitor", "n1", "vout", values),
        part("R3", "resistor", "n2", "vout", values),
        Element("U1", "opamp", ("gnd", "n2", "vout")),
    ))


def rc_ladder(bridged):
    """Series R, shunt C per section; a True in `bridged` puts a C across that R."""
    elements, previous = [], "vin"
    for i, bridge in enumerate(bridged, start=1):
        node = "vout" if i == len(bridged) else f"n{i}"
        elements.append(part(f"R{i}", "resistor", previous, node))
        if bridge:
            elements.append(part(f"CB{i}", "capacitor", previous, node))
        elements.append(part(f"C{i}", "capacitor", node, "gnd"))
        previous = node
    return Circuit(tuple(elements))


def lc_ladder(order, tanks=()):
    """Doubly terminated ladder RS, shunt C1, series L2, shunt C3, …, RL.

    A True at position k of `tanks` (k even: a series arm) puts a capacitor
    across that inductor, a transmission zero at ±j/√(L C).
    """
    elements = [part("RS", "resistor", "vin", "n1")]
    node = 1
    for k in range(1, order + 1):
        here = f"n{node}"
        if k % 2:
            elements.append(part(f"C{k}", "capacitor", here, "gnd"))
        else:
            node += 1
            elements.append(part(f"L{k}", "inductor", here, f"n{node}"))
            if k - 1 < len(tanks) and tanks[k - 1]:
                elements.append(part(f"CT{k}", "capacitor", here, f"n{node}"))
    elements.append(part("RL", "resistor", f"n{node}", "gnd"))
    return Circuit(tuple(elements), output=f"n{node}")


@lru_cache(maxsize=None)
def cached(builder, *arguments):
    """(circuit, network function) of a symbolic circuit, derived once."""
    circuit = builder(*arguments)
    return circuit, network_function(circuit)


# Log-uniform ranges by kind (SI units): the trade's usual part values.
RANGES = {"resistor": (1e2, 1e5), "capacitor": (1e-10, 1e-6), "inductor": (1e-5, 1e-1)}


def random_values(circuit, rng):
    values = {}
    for element in circuit.elements:
        if element.is_symbolic:
            low, high = RANGES[element.kind]
            values[element.symbol] = float(10 ** rng.uniform(math.log10(low), math.log10(high)))
    return values


PRIMES = (2, 3, 5, 7, 11, 13, 17, 19, 23, 29, 31, 37, 41, 43, 47, 53, 59, 61, 67, 71)


def values_strategy(circuit):
    """Hypothesis strategy: part symbol -> log-uniform value for its kind.

    The k-th part is also scaled by exp(0.05·√p_k), p_k the k-th prime, so
    that draws of equal values (which hypothesis favours) do not make equal
    time constants: multiple roots are ill-conditioned for any root finder
    (a triple root moves by ~ε^(1/3)), which is not what these tests check.
    """
    fields = {}
    symbolic = [e for e in circuit.elements if e.is_symbolic]
    for index, element in enumerate(symbolic):
        low, high = RANGES[element.kind]
        factor = math.exp(0.05 * math.sqrt(PRIMES[index]))
        fields[element.symbol] = st.floats(math.log10(low), math.log10(high)).map(
            lambda x, factor=factor: factor * 10.0 ** x
        )
    return st.fixed_dictionaries(fields)


def evaluate(expression, nf, values):
    """A sympy expression in the part symbols at numbers."""
    return float(expression.subs({nf.symbols[name]: value for name, value in values.items()}))


def assert_roots_match(actual, expected, *, rtol=1e-6, atol_fraction=1e-9):
    """Roots agree as multisets: each expected root has its own nearest actual root.

    Tolerance ``rtol * |root| + atol_fraction * (largest |root|)``, the second
    term for roots at or near the origin.
    """
    actual = list(np.asarray(actual, dtype=complex))
    expected = list(np.asarray(expected, dtype=complex))
    assert len(actual) == len(expected), (actual, expected)
    scale = max([abs(r) for r in expected] + [1e-300])
    for root in sorted(expected, key=lambda r: (r.imag, r.real)):
        distances = [abs(a - root) for a in actual]
        i = int(np.argmin(distances))
        assert distances[i] <= rtol * abs(root) + atol_fraction * scale, (root, actual)
        actual.pop(i)


def cancel_common(poles, zeros, rtol=1e-7):
    """Poles and zeros with coinciding pole-zero pairs removed.

    At particular part values a zero can fall on a pole (for example a
    bridged RC section whose R·C equals another time constant); the numeric
    path reports the reduced function, the symbolic path only cancels
    factors common to N and D for every value.
    """
    poles, kept = list(poles), []
    for zero in zeros:
        distances = [abs(p - zero) for p in poles]
        if distances and min(distances) <= rtol * max(abs(zero), 1e-300):
            poles.pop(int(np.argmin(distances)))
        else:
            kept.append(zero)
    return np.array(poles, dtype=complex), np.array(kept, dtype=complex)


def assert_paths_agree(circuit, nf, values, *, rtol=1e-6):
    """Symbolic (nf) and numeric (pencil) poles and zeros agree."""
    poles, zeros = cancel_common(nf.poles(values), nf.zeros(values))
    assert_roots_match(circuit_poles(circuit, values), poles, rtol=rtol)
    assert_roots_match(circuit_zeros(circuit, values), zeros, rtol=rtol)


# -- textbook first- and second-order results ---------------------------------------


def test_rc_corner_frequency():
    r, c = 4.7e3, 33e-9
    circuit = Circuit((Element("R1", "resistor", ("vin", "vout"), value=r),
                       Element("C1", "capacitor", ("vout", "gnd"), value=c)))
    corner_hz = 1 / (2 * math.pi * r * c)  # f_c = 1/(2πRC): common practice, no source
    h = circuit_response(circuit, [2 * math.pi * corner_hz])[0]
    assert abs(h) == pytest.approx(1 / math.sqrt(2), rel=1e-12)  # −3.01 dB at the corner
    assert np.angle(h, deg=True) == pytest.approx(-45.0, rel=1e-12)
    symbolic = network_function(Circuit((part("R1", "resistor", "vin", "vout"),
                                         part("C1", "capacitor", "vout", "gnd"))))
    R, C = symbolic.symbols["R1"], symbolic.symbols["C1"]
    assert sympy.simplify(symbolic.omega0 - 1 / (R * C)) == 0


def series_rlc(values=None):
    """vin–L–C–vout, R from vout to ground."""
    return Circuit((
        part("L1", "inductor", "vin", "n1", values),
        part("C1", "capacitor", "n1", "vout", values),
        part("R1", "resistor", "vout", "gnd", values),
    ))


def test_series_rlc_bandpass_symbolic():
    # ω0 = 1/√(LC), bandwidth ω0/Q = R/L, gain 1 at ω0: common practice, no source.
    nf = network_function(series_rlc())
    assert nf.gain_kind == "center"
    rng = np.random.default_rng(11)
    for _ in range(5):
        values = random_values(series_rlc(), rng)
        r, l, c = values["R1"], values["L1"], values["C1"]
        assert evaluate(nf.omega0, nf, values) == pytest.approx(1 / math.sqrt(l * c), rel=1e-9)
        bandwidth = evaluate(nf.omega0 / nf.q, nf, values)
        assert bandwidth == pytest.approx(r / l, rel=1e-9)
        assert evaluate(nf.gain, nf, values) == pytest.approx(1.0, rel=1e-12)


def test_series_rlc_bandpass_numeric():
    values = {"R1": 100.0, "L1": 10e-3, "C1": 100e-9}
    circuit = series_rlc(values)
    r, l, c = values["R1"], values["L1"], values["C1"]
    omega0 = 1 / math.sqrt(l * c)
    # −3 dB edges of a series RLC: ω = ∓R/(2L) + √((R/2L)² + 1/(LC)),
    # so ω2 − ω1 = R/L: common practice, no source.
    half = r / (2 * l)
    edges = [-half + math.sqrt(half**2 + omega0**2), half + math.sqrt(half**2 + omega0**2)]
    h = circuit_response(circuit, [omega0] + edges)
    assert h[0] == pytest.approx(1.0, rel=1e-12)
    np.testing.assert_allclose(np.abs(h[1:]), 1 / math.sqrt(2), rtol=1e-12)
    assert edges[1] - edges[0] == pytest.approx(r / l, rel=1e-12)


SK_SYMBOLS = ("R1", "R2", "C1", "C2")
MFB_SYMBOLS = ("R1", "R2", "R3", "C1", "C2")


def test_sallen_key_unity_gain_formulas():
    # Unity-gain Sallen–Key low-pass: ω0 = 1/√(R1R2C1C2),
    # Q = √(R1R2C1C2)/(C2(R1+R2)), gain 1 (op-amp applications handbook, from memory).
    _, nf = cached(sallen_key)
    assert nf.order == 2 and nf.gain_kind == "dc"
    rng = np.random.default_rng(1)
    for _ in range(10):
        v = random_values(sallen_key(), rng)
        product = v["R1"] * v["R2"] * v["C1"] * v["C2"]
        assert evaluate(nf.omega0, nf, v) == pytest.approx(1 / math.sqrt(product), rel=1e-9)
        assert evaluate(nf.q, nf, v) == pytest.approx(
            math.sqrt(product) / (v["C2"] * (v["R1"] + v["R2"])), rel=1e-9)
        assert evaluate(nf.gain, nf, v) == pytest.approx(1.0, rel=1e-12)


def test_mfb_lowpass_formulas():
    # MFB low-pass: H = −(R2/R1)/(s²C1C2R2R3 + sC2(R2 + R3 + R2R3/R1) + 1), so
    # ω0 = 1/√(R2R3C1C2), Q = √(C1C2R2R3)/(C2(R2 + R3 + R2R3/R1)), gain −R2/R1
    # (op-amp applications handbook, from memory).
    _, nf = cached(mfb_lowpass)
    assert nf.order == 2 and nf.gain_kind == "dc"
    rng = np.random.default_rng(2)
    for _ in range(10):
        v = random_values(mfb_lowpass(), rng)
        r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
        assert evaluate(nf.omega0, nf, v) == pytest.approx(1 / math.sqrt(r2 * r3 * c1 * c2), rel=1e-9)
        assert evaluate(nf.q, nf, v) == pytest.approx(
            math.sqrt(c1 * c2 * r2 * r3) / (c2 * (r2 + r3 + r2 * r3 / r1)), rel=1e-9)
        assert evaluate(nf.gain, nf, v) == pytest.approx(-r2 / r1, rel=1e-9)


def test_mfb_bandpass_formulas():
    # MFB band-pass (C1 to the inverting input, C2 to the output):
    # ω0 = √((R1+R2)/(R1R2R3C1C2)), ω0/Q = (C1+C2)/(R3C1C2),
    # centre gain −R3C1/(R1(C1+C2)) (op-amp applications handbook, from memory).
    _, nf = cached(mfb_bandpass)
    assert nf.order == 2 and nf.gain_kind == "center"
    rng = np.random.default_rng(3)
    for _ in range(10):
        v = random_values(mfb_bandpass(), rng)
        r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
        assert evaluate(nf.omega0, nf, v) == pytest.approx(
            math.sqrt((r1 + r2) / (r1 * r2 * r3 * c1 * c2)), rel=1e-9)
        assert evaluate(nf.omega0 / nf.q, nf, v) == pytest.approx((c1 + c2) / (r3 * c1 * c2), rel=1e-9)
        assert evaluate(nf.gain, nf, v) == pytest.approx(-r3 * c1 / (r1 * (c1 + c2)), rel=1e-9)


def test_second_order_figures_vectorised_match_the_handbook():
    # Unity-gain Sallen–Key formulas as above (op-amp applications handbook, from memory).
    _, nf = cached(sallen_key)
    rng = np.random.default_rng(4)
    samples = 200
    v = {k: 10 ** rng.uniform(3, 5, samples) if k[0] == "R" else 10 ** rng.uniform(-9, -7, samples)
         for k in SK_SYMBOLS}
    figures = nf.second_order_figures(v)
    product = v["R1"] * v["R2"] * v["C1"] * v["C2"]
    np.testing.assert_allclose(figures.omega0, 1 / np.sqrt(product), rtol=1e-12)
    np.testing.assert_allclose(figures.q, np.sqrt(product) / (v["C2"] * (v["R1"] + v["R2"])),
                               rtol=1e-12)
    np.testing.assert_allclose(figures.gain, 1.0, rtol=1e-12)
    assert figures.omega0.shape == (samples,)


def test_symbolic_result_is_shown_in_resistances():
    _, nf = cached(mfb_lowpass)
    names = {str(s) for s in nf.denominator.free_symbols | nf.numerator.free_symbols}
    assert names == {"s", "R1", "R2", "R3", "C1", "C2"}
    assert not any(name.startswith("_G_") for name in names)


# -- sensitivity sums -------------------------------------------------------------
#
# For a network of resistors, capacitors and ideal op-amps, impedance scaling
# (every R by k, every C by 1/k) leaves H unchanged and frequency scaling
# (every R or every C by k) divides every frequency by k. Hence
# Σ_R S_R^ω0 = −1, Σ_C S_C^ω0 = −1, Σ_R S_R^Q = 0, Σ_C S_C^Q = 0
# (Schaumann & Van Valkenburg, Design of Analog Filters, sensitivity chapter,
# from memory).


@pytest.mark.parametrize("builder", [sallen_key, mfb_lowpass, mfb_bandpass],
                         ids=["sallen-key", "mfb-lowpass", "mfb-bandpass"])
def test_sensitivity_sums(builder):
    circuit, nf = cached(builder)
    resistors = [e.symbol for e in circuit.elements if e.kind == "resistor"]
    capacitors = [e.symbol for e in circuit.elements if e.kind == "capacitor"]
    rng = np.random.default_rng(5)
    for _ in range(5):
        v = random_values(circuit, rng)

        def sensitivity(figure, name):
            x = nf.symbols[name]
            return evaluate(x / figure * sympy.diff(figure, x), nf, v)

        sums = {
            (figure_name, kind): sum(sensitivity(figure, n) for n in names)
            for figure_name, figure in (("omega0", nf.omega0), ("q", nf.q))
            for kind, names in (("R", resistors), ("C", capacitors))
        }
        assert sums["omega0", "R"] == pytest.approx(-1.0, rel=1e-9)
        assert sums["omega0", "C"] == pytest.approx(-1.0, rel=1e-9)
        assert sums["q", "R"] == pytest.approx(0.0, abs=1e-9)
        assert sums["q", "C"] == pytest.approx(0.0, abs=1e-9)
        # The individual sensitivities are not all zero: the sums are not trivial.
        assert any(abs(sensitivity(nf.q, n)) > 1e-3 for n in resistors + capacitors)


def test_sallen_key_individual_sensitivities():
    # S_Ri^ω0 = S_Ci^ω0 = −1/2 for ω0 = 1/√(R1R2C1C2); S_C1^Q = +1/2,
    # S_C2^Q = −1/2, S_R1^Q = −S_R2^Q = (R2 − R1)/(2(R1 + R2)) (same handbook
    # formula for Q, differentiated by hand).
    _, nf = cached(sallen_key)
    v = {"R1": 1e3, "R2": 3e3, "C1": 10e-9, "C2": 1e-9}

    def sensitivity(figure, name):
        x = nf.symbols[name]
        return evaluate(x / figure * sympy.diff(figure, x), nf, v)

    for name in SK_SYMBOLS:
        assert sensitivity(nf.omega0, name) == pytest.approx(-0.5, rel=1e-12)
    assert sensitivity(nf.q, "C1") == pytest.approx(0.5, rel=1e-12)
    assert sensitivity(nf.q, "C2") == pytest.approx(-0.5, rel=1e-12)
    assert sensitivity(nf.q, "R1") == pytest.approx((3e3 - 1e3) / (2 * 4e3), rel=1e-12)
    assert sensitivity(nf.q, "R2") == pytest.approx(-(3e3 - 1e3) / (2 * 4e3), rel=1e-12)


# -- numeric frequency response against reference libraries --------------------------

OMEGA = np.logspace(1, 8, 57)


@pytest.mark.parametrize("builder", [sallen_key, mfb_lowpass, mfb_bandpass],
                         ids=["sallen-key", "mfb-lowpass", "mfb-bandpass"])
def test_response_against_scipy_freqs(builder):
    circuit, nf = cached(builder)
    v = random_values(circuit, np.random.default_rng(6))
    numerator, denominator = nf.coefficients(v)
    _, expected = scipy.signal.freqs(numerator, denominator, worN=OMEGA)  # reference library
    np.testing.assert_allclose(circuit_response(circuit, OMEGA, v), expected, rtol=1e-9)
    np.testing.assert_allclose(nf.response_at(v, OMEGA), expected, rtol=1e-9)


def test_sallen_key_response_against_scipy_on_handbook_coefficients():
    # H = 1/(s²R1R2C1C2 + sC2(R1+R2) + 1) (op-amp applications handbook, from
    # memory), evaluated by scipy.signal.freqs (reference library).
    v = {"R1": 10e3, "R2": 22e3, "C1": 4.7e-9, "C2": 1e-9}
    denominator = [v["R1"] * v["R2"] * v["C1"] * v["C2"], v["C2"] * (v["R1"] + v["R2"]), 1.0]
    _, expected = scipy.signal.freqs([1.0], denominator, worN=OMEGA)
    np.testing.assert_allclose(circuit_response(sallen_key(v), OMEGA), expected, rtol=1e-9)
    np.testing.assert_allclose(cached(sallen_key)[1].response_at(v, OMEGA), expected, rtol=1e-9)


@pytest.mark.parametrize("builder", [sallen_key, mfb_lowpass, mfb_bandpass],
                         ids=["sallen-key", "mfb-lowpass", "mfb-bandpass"])
def test_response_against_python_control(builder):
    circuit, nf = cached(builder)
    v = random_values(circuit, np.random.default_rng(7))
    system = nf.transfer_function(v)
    assert isinstance(system, control.TransferFunction)
    magnitude, phase, _ = control.frequency_response(system, OMEGA)  # reference library
    expected = np.asarray(magnitude) * np.exp(1j * np.asarray(phase))  # phase in radians
    np.testing.assert_allclose(circuit_response(circuit, OMEGA, v), expected, rtol=1e-9)
    assert_roots_match(circuit_poles(circuit, v), control.poles(system), rtol=1e-9)


def test_ladder_response_against_python_control():
    circuit, nf = cached(lc_ladder, 5, (False, True, False, True))
    v = random_values(circuit, np.random.default_rng(8))
    magnitude, phase, _ = control.frequency_response(nf.transfer_function(v), OMEGA)
    expected = np.asarray(magnitude) * np.exp(1j * np.asarray(phase))
    np.testing.assert_allclose(circuit_response(circuit, OMEGA, v), expected, rtol=1e-8)


# -- symbolic and numeric poles and zeros agree (property tests) -----------------------

PROPERTY = settings(max_examples=40, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])


@PROPERTY
@given(st.data())
@pytest.mark.parametrize("builder", [sallen_key, mfb_lowpass, mfb_bandpass],
                         ids=["sallen-key", "mfb-lowpass", "mfb-bandpass"])
def test_active_rc_poles_and_zeros_agree(builder, data):
    circuit, nf = cached(builder)
    v = data.draw(values_strategy(circuit))
    assert_paths_agree(circuit, nf, v)


@PROPERTY
@given(st.data())
def test_rc_ladder_poles_agree(data):
    sections = data.draw(st.integers(1, 8), label="sections")
    # Bridging capacitors (real zeros) only up to four sections: every
    # pattern is its own circuit, derived and compiled into evaluators.
    bridged = tuple(data.draw(st.lists(st.booleans(), min_size=sections, max_size=sections))
                    ) if sections <= 4 else (False,) * sections
    circuit, nf = cached(rc_ladder, bridged)
    v = data.draw(values_strategy(circuit))
    poles = nf.poles(v)
    assert len(poles) == sections  # one pole per shunt capacitor
    assert np.all(poles.real < 0) and np.allclose(poles.imag, 0, atol=1e-6 * np.abs(poles).max())
    assert_paths_agree(circuit, nf, v)
    # A series arm R∥C blocks transmission at its pole s = −1/(R·C): a
    # ladder's transmission zeros are the poles of its series arms
    # (common practice, no source).
    expected = [-1 / (v[f"R{i}"] * v[f"CB{i}"]) for i, b in enumerate(bridged, start=1) if b]
    assert_roots_match(nf.zeros(v), expected, rtol=1e-6)


@PROPERTY
@given(st.data())
def test_lc_ladder_poles_and_zeros_agree(data):
    order = data.draw(st.integers(1, 6), label="order")
    tanks = tuple(data.draw(st.booleans()) if k % 2 == 0 else False for k in range(1, order + 1))
    circuit, nf = cached(lc_ladder, order, tanks)
    v = data.draw(values_strategy(circuit))
    # A tank between two shunt capacitors closes a loop of capacitors and
    # adds no pole; one at the end (no shunt capacitor after it) adds one.
    assert nf.order == order + (1 if tanks and tanks[-1] else 0)
    assert_roots_match(circuit_poles(circuit, v), nf.poles(v), rtol=1e-6)
    zeros = nf.zeros(v)
    # Each tank gives a pair of zeros at ±j/√(L C) (common practice, no source).
    expected = []
    for k, tank in enumerate(tanks, start=1):
        if tank:
            w = 1 / math.sqrt(v[f"L{k}"] * v[f"CT{k}"])
            expected += [1j * w, -1j * w]
    assert_roots_match(zeros, expected, rtol=1e-6)
    assert_roots_match(circuit_zeros(circuit, v), expected, rtol=1e-6)


@settings(max_examples=20, deadline=None)
@given(
    values=values_strategy(sallen_key()),
    gain=st.floats(1e3, 1e6),
    gbw=st.floats(1e5, 1e8),
)
def test_single_pole_opamp_symbolic_and_numeric_agree(values, gain, gbw):
    circuit = sallen_key(opamp={"gain": gain, "gbw": gbw})
    nf = network_function(circuit)
    assert nf.order == 3  # the op-amp's pole adds one
    assert_roots_match(circuit_poles(circuit, values), nf.poles(values), rtol=1e-6)
    # A follower with open-loop gain A0 has DC gain A0/(1 + A0) (common practice, no source).
    assert nf.gain_kind == "dc"
    assert evaluate(nf.gain, nf, values) == pytest.approx(gain / (1 + gain), rel=1e-9)
    assert circuit_response(circuit, [0.0], values)[0].real == pytest.approx(gain / (1 + gain),
                                                                               rel=1e-9)


@pytest.mark.parametrize("opamp", [{"gain": 1e5}, {"gbw": 1e6}, {"gain": 2e5, "gbw": 3e6}],
                         ids=["gain", "gbw", "both"])
def test_finite_opamp_models_symbolic_and_numeric_agree(opamp):
    circuit = sallen_key(opamp=opamp)
    nf = network_function(circuit)
    assert nf.order == (2 if "gbw" not in opamp else 3)
    rng = np.random.default_rng(9)
    for _ in range(5):
        v = random_values(circuit, rng)
        assert_roots_match(circuit_poles(circuit, v), nf.poles(v), rtol=1e-6)
        np.testing.assert_allclose(circuit_response(circuit, OMEGA, v), nf.response_at(v, OMEGA),
                                   rtol=1e-8)


def test_finite_gain_opamp_approaches_the_ideal():
    # With A0 → ∞ and GBW → ∞ the single-pole model tends to the nullor
    # (common practice, no source): the two low-frequency poles converge.
    v = {"R1": 10e3, "R2": 10e3, "C1": 20e-9, "C2": 10e-9}
    ideal = circuit_poles(sallen_key(v))
    real = circuit_poles(sallen_key(v, opamp={"gain": 1e9, "gbw": 1e12}))
    slow = sorted(real, key=abs)[:2]
    assert_roots_match(slow, ideal, rtol=1e-5)


# -- network_function of a numeric circuit, and the gain constant ----------------------


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.data())
def test_numeric_network_function_equals_the_numeric_path(data):
    sections = data.draw(st.integers(1, 6), label="sections")
    bridged = tuple(data.draw(st.lists(st.booleans(), min_size=sections, max_size=sections)))
    symbolic = rc_ladder(bridged)
    v = data.draw(values_strategy(symbolic))
    circuit = symbolic.with_values(v)
    assert circuit.symbols == ()
    nf = network_function(circuit)
    assert nf.symbols == {}
    assert_roots_match(circuit_poles(circuit), nf.poles({}), rtol=1e-6)
    assert_roots_match(circuit_zeros(circuit), nf.zeros({}), rtol=1e-6)
    scale = float(np.abs(nf.poles({})).max())
    omega = scale * np.logspace(-3, 1, 9)
    np.testing.assert_allclose(nf.response_at({}, omega), circuit_response(circuit, omega),
                               rtol=1e-8)


def test_numeric_network_function_of_an_active_circuit():
    v = {"R1": 12e3, "R2": 33e3, "R3": 15e3, "C1": 10e-9, "C2": 2.2e-9}
    circuit = mfb_lowpass(v)
    nf = network_function(circuit)
    assert_roots_match(circuit_poles(circuit), nf.poles({}), rtol=1e-9)
    np.testing.assert_allclose(nf.response_at({}, OMEGA), circuit_response(circuit, OMEGA),
                               rtol=1e-9)
    # Gain −R2/R1 (op-amp applications handbook, from memory).
    assert float(nf.gain) == pytest.approx(-33e3 / 12e3, rel=1e-12)


def leading_ratio(nf, v):
    numerator, denominator = nf.coefficients(v)
    numerator = np.trim_zeros(numerator, "f")
    return numerator[0] / denominator[0]


@pytest.mark.parametrize("builder", [sallen_key, mfb_lowpass, mfb_bandpass],
                         ids=["sallen-key", "mfb-lowpass", "mfb-bandpass"])
def test_circuit_gain_is_the_leading_coefficient_ratio(builder):
    circuit, nf = cached(builder)
    rng = np.random.default_rng(10)
    for _ in range(5):
        v = random_values(circuit, rng)
        assert circuit_gain(circuit, v) == pytest.approx(leading_ratio(nf, v), rel=1e-6)


def test_circuit_gain_against_handbook_constants():
    # k of H = k/((s − p1)(s − p2)): 1/(R1R2C1C2) for the unity-gain
    # Sallen–Key, −1/(R1R3C1C2) for the MFB low-pass, −1/(R1C2) for the MFB
    # band-pass (k·s/…), from the handbook formulas above (from memory).
    v = {"R1": 10e3, "R2": 22e3, "R3": 4.7e3, "C1": 10e-9, "C2": 3.3e-9}
    sk = {k: v[k] for k in SK_SYMBOLS}
    r1, r2, r3, c1, c2 = (v[k] for k in ("R1", "R2", "R3", "C1", "C2"))
    assert circuit_gain(sallen_key(sk)) == pytest.approx(1 / (r1 * r2 * c1 * c2), rel=1e-6)
    assert circuit_gain(mfb_lowpass(v)) == pytest.approx(-1 / (r1 * r3 * c1 * c2), rel=1e-6)
    assert circuit_gain(mfb_bandpass(v)) == pytest.approx(-1 / (r1 * c2), rel=1e-6)


@PROPERTY
@given(st.data())
def test_ladder_gain_is_the_leading_coefficient_ratio(data):
    order = data.draw(st.integers(1, 6), label="order")
    circuit, nf = cached(lc_ladder, order, ())
    v = data.draw(values_strategy(circuit))
    assert circuit_gain(circuit, v) == pytest.approx(leading_ratio(nf, v), rel=1e-6)


# -- errors -------------------------------------------------------------------------


def test_missing_part_value_names_the_part():
    _, nf = cached(sallen_key)
    with pytest.raises(TopologyError, match="no value for part 'R2'"):
        nf.coefficients({"R1": 1e3, "C1": 1e-9, "C2": 1e-9})


def test_singular_circuit_is_rejected_symbolically():
    # An op-amp with no feedback path: its nullator pins the driven input to 0 V.
    circuit = Circuit((Element("U1", "opamp", ("vin", "gnd", "vout")),
                       Element("RL", "resistor", ("vout", "gnd"), value=1e3),
                       Element("C1", "capacitor", ("vin", "vout"), value=1e-9),
                       Element("R1", "resistor", ("vin", "gnd"), value=1e3)))
    with pytest.raises(TopologyError, match="singular"):
        network_function(circuit)


def test_singular_circuit_is_rejected_numerically():
    circuit = Circuit((Element("U1", "opamp", ("vin", "gnd", "vout")),
                       Element("RL", "resistor", ("vout", "gnd"), value=1e3),
                       Element("C1", "capacitor", ("vin", "vout"), value=1e-9),
                       Element("R1", "resistor", ("vin", "gnd"), value=1e3)))
    with pytest.raises(TopologyError, match="singular"):
        circuit_poles(circuit)
    with pytest.raises(TopologyError, match="singular"):
        circuit_zeros(circuit)


def test_one_symbol_for_two_kinds_is_rejected():
    circuit = Circuit((Element("R1", "resistor", ("vin", "vout"), symbol="X"),
                       Element("C1", "capacitor", ("vout", "gnd"), symbol="X")))
    with pytest.raises(TopologyError, match="symbol 'X' names parts of different kinds"):
        network_function(circuit)


def test_shared_symbol_is_one_part():
    # Equal-resistor Sallen–Key: R1 = R2 = R gives ω0 = 1/(R√(C1C2)) (handbook, from memory).
    circuit = Circuit((
        Element("R1", "resistor", ("vin", "n1"), symbol="R"),
        Element("R2", "resistor", ("n1", "n2"), symbol="R"),
        part("C1", "capacitor", "n1", "vout"),
        part("C2", "capacitor", "n2", "gnd"),
        Element("U1", "opamp", ("n2", "vout", "vout")),
    ))
    nf = network_function(circuit)
    assert set(nf.symbols) == {"R", "C1", "C2"}
    v = {"R": 4.7e3, "C1": 22e-9, "C2": 10e-9}
    assert evaluate(nf.omega0, nf, v) == pytest.approx(1 / (4.7e3 * math.sqrt(22e-9 * 10e-9)),
                                                       rel=1e-9)
    assert S in nf.denominator.gens


# -- RC ladders past the readable size: the flint path and the analyze fallback --------


def uniform_rc_ladder(sections, shared=True):
    """n sections of series R, shunt C; one symbol R and one C, or R1…Rn, C1…Cn."""
    elements, previous = [], "vin"
    for i in range(1, sections + 1):
        node = "vout" if i == sections else f"n{i}"
        r, c = ("R", "C") if shared else (f"R{i}", f"C{i}")
        elements.append(Element(f"R{i}", "resistor", (previous, node), symbol=r))
        elements.append(Element(f"C{i}", "capacitor", (node, "gnd"), symbol=c))
        previous = node
    return Circuit(tuple(elements))


def morgan_voyce(sections):
    """Coefficients of b_n(x) = Σ C(n+k, 2k) x^k, x = sRC, lowest power first.

    The denominator of a uniform n-section RC ladder (A. M. Morgan-Voyce,
    "Ladder network analysis using Fibonacci numbers", IRE Trans. Circuit
    Theory 6(3), 1959, from memory).
    """
    return [math.comb(sections + k, 2 * k) for k in range(sections + 1)]


def float_coefficients(poly, values):
    """A Poly in S at part values, highest power first, term by term in float.

    Independent of the compiled evaluators (which a 10946-term coefficient
    would overflow Python's compiler with).
    """
    ring = poly.domain
    names = [str(g) for g in ring.symbols]
    x = np.array([values[n] for n in names])
    out = []
    for coefficient in poly.rep.to_list():
        terms = list(coefficient.terms())
        exponents = np.array([m for m, _ in terms], dtype=float)
        weights = np.array([float(c) for _, c in terms])
        out.append(float(weights @ np.prod(x ** exponents, axis=1)))
    return np.array(out)


def test_uniform_rc_ladder_is_the_morgan_voyce_polynomial():
    # Ten sections with one R and one C: D = Σ C(10+k, 2k) (sRC)^k, N = 1
    # (Morgan-Voyce, from memory: see morgan_voyce).
    nf = network_function(uniform_rc_ladder(10))
    r, c = nf.symbols["R"], nf.symbols["C"]
    expected = [coefficient * (r * c) ** k for k, coefficient in enumerate(morgan_voyce(10))]
    assert [sympy.expand(a) for a in reversed(nf.denominator.all_coeffs())] == expected
    assert nf.numerator.as_expr() == 1


def test_ten_distinct_sections_reduce_to_morgan_voyce_at_equal_parts():
    # With R1…R10 and C1…C10 all 1 the coefficients add up to b_10's, C(10+k, 2k)
    # (Morgan-Voyce, from memory); every term has coefficient +1, so D has
    # Σ C(10+k, 2k) = F(21) = 10946 terms (the Fibonacci identity of the same paper).
    nf = network_function(uniform_rc_ladder(10, shared=False))
    sums = [sum(int(c) for _, c in coefficient.terms())
            for coefficient in reversed(nf.denominator.rep.to_list())]
    assert sums == morgan_voyce(10)
    assert nf.term_count == 10946 + 1
    assert all(int(c) == 1 for coefficient in nf.denominator.rep.to_list()
               for _, c in coefficient.terms())


def test_ten_section_rc_ladder_agrees_with_the_pencil():
    # Symbolic N/D of ten distinct sections at random part values against the
    # numeric path (the MNA pencil solved at each frequency): they share only
    # the stamps.
    circuit = uniform_rc_ladder(10, shared=False)
    nf = network_function(circuit)
    rng = np.random.default_rng(20)
    for _ in range(3):
        values = random_values(circuit, rng)
        numerator = float_coefficients(nf.numerator, values)
        denominator = float_coefficients(nf.denominator, values)
        tau = np.exp(np.mean([math.log(values[f"R{i}"] * values[f"C{i}"]) for i in range(1, 11)]))
        omega = np.logspace(-2, 1, 13) / tau
        symbolic = np.polyval(numerator, 1j * omega) / np.polyval(denominator, 1j * omega)
        np.testing.assert_allclose(symbolic, circuit_response(circuit, omega, values), rtol=1e-8)


def test_uniform_rc_ladder_response_against_scipy_freqs():
    # b_6(sRC) by scipy.signal.freqs (reference library) against the symbolic
    # function and the pencil, R = 10 kΩ, C = 4.7 nF.
    r, c = 10e3, 4.7e-9
    denominator = [m * (r * c) ** k for k, m in enumerate(morgan_voyce(6))][::-1]
    omega = np.logspace(2, 6, 41)
    _, expected = scipy.signal.freqs([1.0], denominator, worN=omega)
    circuit = uniform_rc_ladder(6)
    values = {"R": r, "C": c}
    np.testing.assert_allclose(network_function(circuit).response_at(values, omega), expected,
                               rtol=1e-9)
    np.testing.assert_allclose(circuit_response(circuit, omega, values), expected, rtol=1e-9)


def test_max_terms_stops_the_derivation_at_the_size_of_the_result():
    # D of ten distinct sections has 10946 terms (Morgan-Voyce, above): the
    # minors held along the way never pass the result, so 10946 is enough and
    # 10945 is not.
    circuit = uniform_rc_ladder(10, shared=False)
    assert network_function(circuit, max_terms=10946).term_count == 10947
    with pytest.raises(SymbolicSizeError) as stopped:
        network_function(circuit, max_terms=10945)
    assert stopped.value.limit == 10945 and stopped.value.terms > 10945
    # Forty sections: F(81) terms, about 3.8e16; stopped at once.
    with pytest.raises(SymbolicSizeError, match="more than the limit of 2000"):
        network_function(uniform_rc_ladder(40, shared=False), max_terms=2000)


def _derived_in_a_worker(sections):
    nf = network_function(uniform_rc_ladder(sections, shared=False))
    values = {f"{kind}{i}": (1.1 + 0.1 * i) * scale for i in range(1, sections + 1)
              for kind, scale in (("R", 1e3), ("C", 1e-8))}
    numerator, denominator = nf.coefficients(values)
    return str(nf.denominator.as_expr()), numerator.tobytes(), denominator.tobytes()


def test_network_function_is_the_same_bits_in_a_fresh_process():
    # Worker processes must compute what the parent does, to the bit (common
    # practice, no source: results may not depend on the number of workers).
    with ProcessPoolExecutor(1, mp_context=multiprocessing.get_context("spawn")) as pool:
        theirs = pool.submit(_derived_in_a_worker, 6).result()
    assert theirs == _derived_in_a_worker(6)


def _ladder_file(folder, sections, *, values=True):
    lines = [f'id = "rc-ladder-{sections}"', f'title = "RC ladder, {sections} sections"',
             'response = "lowpass"', f"order = {sections}", ""]
    previous = "vin"
    for i in range(1, sections + 1):
        node = "vout" if i == sections else f"n{i}"
        lines += ["[[elements]]", f'name = "R{i}"', 'kind = "resistor"',
                  f'nodes = ["{previous}", "{node}"]', f'symbol = "R{i}"', "",
                  "[[elements]]", f'name = "C{i}"', 'kind = "capacitor"',
                  f'nodes = ["{node}", "gnd"]', f'symbol = "C{i}"', ""]
        previous = node
    if values:
        lines += ["[values]"] + [f'R{i} = "10k"' for i in range(1, sections + 1)]
        lines += [f'C{i} = "4.7n"' for i in range(1, sections + 1)]
    path = folder / f"rc-ladder-{sections}.toml"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def uniform_ladder_poles(sections, r, c):
    """s_k = −(4/RC) sin²((2k−1)π/(4n+2)), k = 1…n: the roots of b_n(sRC)
    (Morgan-Voyce polynomial, from memory)."""
    k = np.arange(1, sections + 1)
    return -4 / (r * c) * np.sin((2 * k - 1) * np.pi / (4 * sections + 2)) ** 2


def test_analyze_past_the_limit_gives_numeric_poles_and_response(tmp_path, capsys):
    path = _ladder_file(tmp_path, 20)
    assert main(["analyze", str(path), "--json", "-"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["symbolic"] is False and "2,000 terms" in data["reason"]
    poles = np.array([complex(re, im) for re, im in data["poles"]])
    # Uniform 20-section ladder, 10 kΩ and 4.7 nF (Morgan-Voyce, from memory).
    assert_roots_match(poles, uniform_ladder_poles(20, 10e3, 4.7e-9), rtol=1e-7)
    assert data["zeros"] == []
    # |H| from b_20 by scipy.signal.freqs (reference library) at the printed frequencies.
    response = data["response"]
    omega = 2 * np.pi * np.array([row["f_hz"] for row in response])
    denominator = [m * (10e3 * 4.7e-9) ** k for k, m in enumerate(morgan_voyce(20))][::-1]
    _, expected = scipy.signal.freqs([1.0], denominator, worN=omega)
    np.testing.assert_allclose([row["magnitude_db"] for row in response],
                               20 * np.log10(np.abs(expected)), atol=1e-6)
    assert main(["analyze", str(path)]) == 0
    assert "numeric analysis instead" in capsys.readouterr().out


def test_analyze_past_the_limit_without_values_names_the_parts(tmp_path, capsys):
    path = _ladder_file(tmp_path, 12, values=False)
    assert main(["analyze", str(path), "--set", "R1=1k"]) == 2  # missing values: bad input
    message = capsys.readouterr().err
    assert message.startswith("error: H(s) of rc-ladder-12 is too large to read")
    assert "give C1, R2, C2," in message and "--set NAME=VALUE" in message
    assert "R1," not in message  # given with --set


def test_analyze_symbolic_insists(tmp_path, capsys):
    # Nine sections: D has F(19) = 4181 terms, past the 2000 of analyze.
    path = _ladder_file(tmp_path, 9)
    assert main(["analyze", str(path), "--json", "-"]) == 0
    assert json.loads(capsys.readouterr().out)["symbolic"] is False
    assert main(["analyze", str(path), "--symbolic", "--json", "-"]) == 0
    data = json.loads(capsys.readouterr().out)
    assert data["order"] == 9 and data["denominator"].count("+") == 4180
    poles = np.array([complex(re, im) for re, im in data["poles"]])
    assert_roots_match(poles, uniform_ladder_poles(9, 10e3, 4.7e-9), rtol=1e-7)
