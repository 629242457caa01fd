"""Tests of placer.analysis.mna: unknowns, stamps, the numeric MNA system and the
determinant of the symbolic one.

The stamps are those of modified nodal analysis as C.-W. Ho, A. E. Ruehli
and P. A. Brennan, "The modified nodal approach to network analysis",
IEEE Trans. Circuits and Systems 22(6), 1975, set them out (from memory):
a conductance adds +G on the diagonal and -G off it; a voltage-defining
branch adds a ±1 column (its current in the KCL rows) and a ±1 row (its
branch equation).
"""

import math

import flint
import numpy as np
import pytest
import scipy.signal
import sympy
from hypothesis import given, settings
from hypothesis import strategies as st

from placer.circuit.elements import Circuit, Element
from placer.errors import TopologyError
from placer.analysis.mna import layout, minor_expansion_det, numeric_system, stamps
from placer.analysis.network import circuit_response


def rc_lowpass(r=1e3, c=1e-6):
    return Circuit((Element("R1", "resistor", ("vin", "vout"), value=r),
                    Element("C1", "capacitor", ("vout", "gnd"), value=c)))


def test_layout_numbers_nodes_then_branch_currents():
    circuit = Circuit((
        Element("R1", "resistor", ("vin", "n1"), value=1e3),
        Element("L1", "inductor", ("n1", "vout"), value=1e-3),
        Element("U1", "opamp", ("vout", "n2", "n2")),
        Element("R2", "resistor", ("n2", "gnd"), value=1e3),
        Element("C1", "capacitor", ("vout", "gnd"), value=1e-9),
    ))
    lay = layout(circuit)
    assert lay.unknowns == ("v(vin)", "v(n1)", "v(vout)", "v(n2)",
                            "i(input source)", "i(L1)", "i(U1)")
    assert lay.size == 7
    assert lay.input_row == 4
    assert lay.output_index == 2
    assert lay.branch_index == {"input": 4, "L1": 5, "U1": 6}


def test_rc_matrices_by_hand():
    r, c = 2e3, 3e-9
    system = numeric_system(rc_lowpass(r, c))
    g = 1 / r
    # Unknowns: v(vin), v(vout), i(input source). Hand-written MNA (Ho et al. 1975).
    np.testing.assert_allclose(system.G, [[g, -g, 1], [-g, g, 0], [1, 0, 0]], rtol=1e-15)
    np.testing.assert_allclose(system.C, [[0, 0, 0], [0, c, 0], [0, 0, 0]], rtol=1e-15)
    np.testing.assert_array_equal(system.b, [0, 0, 1])
    assert system.output == 1


def test_inductor_has_a_branch_current_and_minus_sl():
    l = 5e-3
    circuit = Circuit((Element("R1", "resistor", ("vin", "vout"), value=1e3),
                       Element("L1", "inductor", ("vout", "gnd"), value=l)))
    system = numeric_system(circuit)
    # v(vout) - s L i(L1) = 0 in the inductor's row; i(L1) leaves vout.
    row = system.layout.branch_index["L1"]
    assert system.G[row, 1] == 1.0
    assert system.C[row, row] == -l
    assert system.G[1, row] == 1.0


def test_ideal_opamp_row_is_the_nullator():
    circuit = Circuit((
        Element("R1", "resistor", ("n1", "gnd"), value=1e3),
        Element("R2", "resistor", ("n1", "vout"), value=1e3),
        Element("U1", "opamp", ("vin", "n1", "vout")),
        Element("RS", "resistor", ("vin", "gnd"), value=1e3),
    ))
    system = numeric_system(circuit)
    lay = system.layout
    row = lay.branch_index["U1"]
    expected = np.zeros(lay.size)
    expected[lay.node_index["vin"]] = 1.0
    expected[lay.node_index["n1"]] = -1.0
    np.testing.assert_array_equal(system.G[row], expected)  # v+ - v- = 0
    assert not system.C[row].any()
    # The output current enters only the output node's KCL row.
    column = system.G[:, row]
    assert column[lay.node_index["vout"]] == 1.0
    assert np.count_nonzero(column) == 1


def test_opamp_single_pole_row():
    a0, gbw = 1e5, 1e6
    circuit = Circuit((Element("U1", "opamp", ("vin", "vout", "vout"), gain=a0, gbw=gbw),
                       Element("RS", "resistor", ("vin", "gnd"), value=1e3),
                       Element("RL", "resistor", ("vout", "gnd"), value=1e3)))
    system = numeric_system(circuit)
    lay = system.layout
    row = lay.branch_index["U1"]
    wt = 2 * math.pi * gbw
    out, plus = lay.node_index["vout"], lay.node_index["vin"]
    # (s + wt/A0) v_out = wt (v+ - v-), with v- = v_out.
    assert system.C[row, out] == 1.0
    assert system.G[row, out] == pytest.approx(wt / a0 + wt, rel=1e-15)
    assert system.G[row, plus] == pytest.approx(-wt, rel=1e-15)


def test_isource_adds_no_stamp():
    base = stamps(Circuit((Element("R1", "resistor", ("vin", "vout"), value=1e3),
                           Element("R2", "resistor", ("vout", "gnd"), value=1e3))))
    with_source = stamps(Circuit((Element("R1", "resistor", ("vin", "vout"), value=1e3),
                                  Element("R2", "resistor", ("vout", "gnd"), value=1e3),
                                  Element("I1", "isource", ("vout", "gnd"), value=1.0))))
    assert with_source == base


def test_symbols_take_values_from_the_mapping():
    circuit = Circuit((Element("R1", "resistor", ("vin", "vout"), symbol="R"),
                       Element("C1", "capacitor", ("vout", "gnd"), symbol="C")))
    system = numeric_system(circuit, {"R": 4e3, "C": 1e-9})
    assert system.G[0, 0] == pytest.approx(1 / 4e3, rel=1e-15)
    assert system.C[1, 1] == 1e-9


def test_missing_value_names_element_and_part():
    circuit = Circuit((Element("R1", "resistor", ("vin", "vout"), symbol="Rtop"),
                       Element("C1", "capacitor", ("vout", "gnd"), value=1e-9)))
    with pytest.raises(TopologyError, match="element 'R1': part 'Rtop' has no value"):
        numeric_system(circuit)


def test_rc_response_against_scipy_freqs():
    r, c = 4.7e3, 22e-9
    omega = np.logspace(2, 7, 41)
    # H = 1/(sRC + 1): common practice, no source; evaluated by scipy.signal.freqs.
    _, expected = scipy.signal.freqs([1.0], [r * c, 1.0], worN=omega)
    np.testing.assert_allclose(circuit_response(rc_lowpass(r, c), omega), expected, rtol=1e-12)


def test_singular_matrix_in_response_is_a_topology_error():
    # An op-amp with no feedback whose inputs are the driven node and the
    # reference: the nullator asks v(vin) = 0 against the source's v(vin) = 1.
    circuit = Circuit((Element("U1", "opamp", ("vin", "gnd", "vout")),
                       Element("RL", "resistor", ("vout", "gnd"), value=1e3),
                       Element("R1", "resistor", ("vin", "gnd"), value=1e3)))
    with pytest.raises(TopologyError, match="singular"):
        circuit_response(circuit, [1.0, 10.0])


# -- the determinant of the symbolic system ---------------------------------------

_X, _Y = sympy.symbols("x y")
_RING = flint.fmpz_mpoly_ctx.get(("x", "y"), "lex")


def _sparse_matrix(size, cells):
    """A size×size matrix of small polynomials in x, y from hypothesis' draws."""
    rows = [[0] * size for _ in range(size)]
    for (r, c), (a, b, k) in cells.items():
        if r < size and c < size:
            rows[r][c] = a + b * _X ** k + (a - b) * _Y
    return rows


def _as_flint(expression):
    poly = sympy.Poly(expression, _X, _Y)
    return _RING.from_dict({m: int(c) for m, c in poly.terms()})


@settings(max_examples=60, deadline=None)
@given(size=st.integers(1, 7),
       cells=st.dictionaries(st.tuples(st.integers(0, 6), st.integers(0, 6)),
                             st.tuples(st.integers(-3, 3), st.integers(-3, 3), st.integers(0, 2)),
                             max_size=30))
def test_minor_expansion_det_is_sympys_determinant(size, cells):
    # Reference: sympy's Berkowitz determinant of the same matrix (a reference
    # library); sparse draws include singular matrices, empty rows and columns.
    rows = _sparse_matrix(size, cells)
    expected = sympy.expand(sympy.Matrix(rows).det(method="berkowitz"))
    entries = {(r, c): _as_flint(v) for r, row in enumerate(rows) for c, v in enumerate(row)
               if v != 0}
    got = minor_expansion_det(entries, size, _RING.constant(1))
    assert got == _as_flint(expected)


def test_minor_expansion_det_of_a_permutation_matrix_is_its_sign():
    # det of a permutation matrix is the permutation's sign (linear algebra,
    # common practice, no source): (0 1 2 3) -> (1 2 3 0), a 4-cycle, is odd.
    one = _RING.constant(1)
    entries = {(0, 1): one, (1, 2): one, (2, 3): one, (3, 0): one}
    assert minor_expansion_det(entries, 4, one) == -one
    entries = {(0, 1): one, (1, 0): one, (2, 3): one, (3, 2): one}  # two swaps: even
    assert minor_expansion_det(entries, 4, one) == one
