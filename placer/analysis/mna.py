"""Modified nodal analysis: stamps, and the symbolic and numeric systems.

The unknowns are the node voltages (the reference removed) plus one branch
current for every element with no admittance form: the input source,
independent voltage sources, inductors (so every entry stays a polynomial),
vcvs and ccvs outputs and op-amp outputs. The system is

    M(s) x = b,   M(s) = G + s C,

with ``b`` the unit excitation of the input source's branch equation.
By Cramer's rule the response is ``x_out = det(M_out) / det(M)``, where
``M_out`` is ``M`` with the output's column replaced by ``b``: the poles
are the roots of ``det M`` (the same for every input and output) and the
zeros those of the minor the source and detector select.

Op-amps: with neither ``gain`` nor ``gbw`` an op-amp is a nullor
(v+ = v−, output current free); with ``gain`` A0 only, v_out = A0 (v+ − v−);
with ``gbw`` only, an integrator s·v_out = ωt (v+ − v−), ωt = 2π·gbw; with
both, the single-pole model (s + ωt/A0)·v_out = ωt (v+ − v−).

References
----------
C.-W. Ho, A. E. Ruehli and P. A. Brennan, "The modified nodal approach to
network analysis", IEEE Trans. Circuits and Systems 22(6), 1975,
doi:10.1109/TCS.1975.1084079.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from typing import TYPE_CHECKING, Any, cast

import numpy as np

from ..errors import SymbolicSizeError, TopologyError

if TYPE_CHECKING:
    from ..circuit.elements import Circuit, Element

__all__ = ["Stamp", "Layout", "layout", "stamps", "NumericSystem", "numeric_system",
           "minor_expansion_det"]


@dataclass(frozen=True)
class Stamp:
    """One contribution ``factor * parameter * s**power`` to ``M[row, col]``.

    ``parameter`` is None (the number ``factor`` alone) or a pair
    ``(element name, role)`` with role in {"conductance", "capacitance",
    "inductance", "gain"}.
    """

    row: int
    col: int
    power: int
    factor: float
    parameter: tuple[str, str] | None = None


@dataclass(frozen=True)
class Layout:
    """Which unknown each index of the MNA vector is."""

    unknowns: tuple[str, ...]  # labels: "v(node)" or "i(element)"
    node_index: dict[str, int]  # node -> index (reference absent)
    branch_index: dict[str, int]  # element name (or "input") -> index
    input_row: int        # row of the input source's branch equation
    output_index: int     # index of the output node's voltage

    @property
    def size(self) -> int:
        return len(self.unknowns)


_BRANCH_KINDS = ("vsource", "inductor", "vcvs", "ccvs", "opamp")


def layout(circuit: Circuit) -> Layout:
    """Number the unknowns of `circuit` (nodes first, then branch currents)."""
    node_index: dict[str, int] = {}
    for node in circuit.nodes:
        if node != circuit.reference:
            node_index[node] = len(node_index)
    branch_index = {"input": len(node_index)}
    for element in circuit.elements:
        if element.kind in _BRANCH_KINDS:
            branch_index[element.name] = len(node_index) + len(branch_index)
    unknowns = tuple(f"v({n})" for n in node_index) + tuple(
        "i(input source)" if name == "input" else f"i({name})" for name in branch_index
    )
    if circuit.output == circuit.reference:
        raise TopologyError("the output node cannot be the reference node")
    if circuit.input == circuit.reference:
        raise TopologyError("the input node cannot be the reference node")
    return Layout(
        unknowns=unknowns,
        node_index=node_index,
        branch_index=branch_index,
        input_row=branch_index["input"],
        output_index=node_index[circuit.output],
    )


def stamps(circuit: Circuit, lay: Layout | None = None) -> list[Stamp]:
    """Every stamp of `circuit`, as a list of :class:`Stamp`.

    Op-amp model constants (ωt, A0) enter as plain numbers; part values
    enter as parameters so that a symbolic or a numeric builder can supply
    symbols or numbers for them.
    """
    lay = lay or layout(circuit)
    node = lay.node_index
    out: list[Stamp] = []

    def add(row: int | None, col: int | None, power: int, factor: float,
            parameter: tuple[str, str] | None = None) -> None:
        if row is None or col is None:
            return  # the reference row/column is removed
        out.append(Stamp(row, col, power, float(factor), parameter))

    def admittance(a: str, b: str, power: int, parameter: tuple[str, str]) -> None:
        ia, ib = node.get(a), node.get(b)
        add(ia, ia, power, 1, parameter)
        add(ib, ib, power, 1, parameter)
        add(ia, ib, power, -1, parameter)
        add(ib, ia, power, -1, parameter)

    def branch(k: int, a: str, b: str) -> None:
        """KCL entries of a branch current k leaving node a, entering node b."""
        ia, ib = node.get(a), node.get(b)
        add(ia, k, 0, 1)
        add(ib, k, 0, -1)
        add(k, ia, 0, 1)
        add(k, ib, 0, -1)

    k_in = lay.branch_index["input"]
    branch(k_in, circuit.input, circuit.reference)
    for element in circuit.elements:
        n = element.nodes
        name = element.name
        if element.kind == "resistor":
            admittance(n[0], n[1], 0, (name, "conductance"))
        elif element.kind == "capacitor":
            admittance(n[0], n[1], 1, (name, "capacitance"))
        elif element.kind == "isource":
            continue  # an independent source is zero in small-signal analysis
        elif element.kind == "vsource":
            branch(lay.branch_index[name], n[0], n[1])
        elif element.kind == "inductor":
            k = lay.branch_index[name]
            branch(k, n[0], n[1])
            add(k, k, 1, -1, (name, "inductance"))
        elif element.kind == "vcvs":
            k = lay.branch_index[name]
            branch(k, n[0], n[1])
            add(k, node.get(n[2]), 0, -1, (name, "gain"))
            add(k, node.get(n[3]), 0, 1, (name, "gain"))
        elif element.kind == "vccs":
            for row, sign in ((node.get(n[0]), 1), (node.get(n[1]), -1)):
                add(row, node.get(n[2]), 0, sign, (name, "gain"))
                add(row, node.get(n[3]), 0, -sign, (name, "gain"))
        elif element.kind == "cccs":
            control = lay.branch_index[cast(str, element.control)]  # validated: a vsource
            add(node.get(n[0]), control, 0, 1, (name, "gain"))
            add(node.get(n[1]), control, 0, -1, (name, "gain"))
        elif element.kind == "ccvs":
            k = lay.branch_index[name]
            branch(k, n[0], n[1])
            add(k, lay.branch_index[cast(str, element.control)], 0, -1, (name, "gain"))
        elif element.kind == "opamp":
            k = lay.branch_index[name]
            plus, minus, output = node.get(n[0]), node.get(n[1]), node.get(n[2])
            add(output, k, 0, 1)  # output current leaves the node into the op-amp
            gain, gbw = element.gain, element.gbw
            if gain is None and gbw is None:
                add(k, plus, 0, 1)
                add(k, minus, 0, -1)
            elif gbw is None:
                gain = cast(float, gain)  # not None here: the case above took both None
                add(k, output, 0, 1)
                add(k, plus, 0, -gain)
                add(k, minus, 0, gain)
            else:
                omega_t = 2 * math.pi * gbw
                add(k, output, 1, 1)
                if gain is not None:
                    add(k, output, 0, omega_t / gain)
                add(k, plus, 0, -omega_t)
                add(k, minus, 0, omega_t)
        else:  # pragma: no cover - Element validates kinds
            raise TopologyError(f"element {name!r}: kind {element.kind!r} has no stamp")
    return out


def parameter_value(element: Element, role: str) -> float | None:
    """The number a stamp parameter stands for (None when symbolic)."""
    number = element.parameter
    if number is None:
        return None
    if role == "conductance":
        return 1.0 / number
    return float(number)


@dataclass(frozen=True)
class NumericSystem:
    """``(G + s C) x = b`` with numbers; ``output`` indexes x."""

    G: np.ndarray
    C: np.ndarray
    b: np.ndarray
    output: int
    layout: Layout


def numeric_system(circuit: Circuit, values: Mapping[str, float] | None = None) -> NumericSystem:
    """Numeric MNA matrices of `circuit` with every part a number.

    Parameters
    ----------
    values : mapping, optional
        Symbol → number for parts that carry a symbol.

    Raises
    ------
    TopologyError
        When a part has neither a value nor an entry in `values`.
    """
    values = values or {}
    lay = layout(circuit)
    size = lay.size
    G = np.zeros((size, size))
    C = np.zeros((size, size))
    by_name = {e.name: e for e in circuit.elements}
    for stamp in stamps(circuit, lay):
        factor = stamp.factor
        if stamp.parameter is not None:
            name, role = stamp.parameter
            element = by_name[name]
            number = parameter_value(element, role)
            if number is None:
                if element.symbol not in values:
                    raise TopologyError(
                        f"element {name!r}: part {element.symbol!r} has no value; "
                        f"set it (for example --set {element.symbol}=10k)"
                    )
                number = float(values[cast(str, element.symbol)])  # checked just above
                if role == "conductance":
                    number = 1.0 / number
            factor *= number
        (C if stamp.power else G)[stamp.row, stamp.col] += factor
    b = np.zeros(size)
    b[lay.input_row] = 1.0
    return NumericSystem(G=G, C=C, b=b, output=lay.output_index, layout=lay)


# -- determinants of the symbolic system -------------------------------------

def minor_expansion_det(entries: dict, size: int, one: Any, *,
                        max_terms: int | None = None) -> Any:
    """Determinant of a sparse square matrix by expansion into shared minors.

    Laplace expansion column by column, with every minor computed once:
    after k columns, each set of k rows that can still lead to a nonzero
    term holds the k×k minor on those rows and columns, and the next column
    extends each minor by one row. Only sums of products appear (no
    division), and a row whose last nonzero column is behind is required
    in the set, which prunes dead minors at once. The columns are taken in
    the order that keeps the fewest rows open (touched, but with nonzeros
    still to come), so a ladder's banded matrix keeps about two minors per
    step, and the work is about the size of the result.

    Parameters
    ----------
    entries : dict
        ``(row, column) → entry`` for the nonzero entries; entries are
        polynomials that add and multiply (python-flint ``fmpz_mpoly`` or
        ``fmpq_mpoly``; any ring elements do).
    size : int
        The matrix is ``size × size``.
    one : ring element
        The unit of the entries' ring.
    max_terms : int, optional
        Raise :class:`SymbolicSizeError` when the minors kept after a step
        have more terms than this, together (elements need ``len``).

    Returns
    -------
    ring element
        The determinant (``one * 0`` for a singular matrix).

    References
    ----------
    P.-S. Laplace, "Recherches sur le calcul intégral et sur le système du
    monde", Mémoires de l'Académie royale des sciences, 1772 (the expansion
    by minors; from memory). Keeping each minor of the columns taken so far
    once, instead of recomputing it in every branch, turns the n! products
    of the plain expansion into one product per kept minor and row.

    Examples
    --------
    >>> import flint
    >>> x, = flint.fmpz_mpoly_ctx.get(("x",), "lex").gens()
    >>> minor_expansion_det({(0, 0): x, (0, 1): x**0, (1, 0): x**0, (1, 1): x}, 2, x**0)
    x^2 - 1
    """
    columns: dict[int, list] = {}
    for (row, column), value in sorted(entries.items()):
        if value:
            columns.setdefault(column, []).append((row, value))
    zero = one * 0
    if len(columns) < size:
        return zero
    order = _column_order(columns, size)
    closing = [0] * size            # rows whose last nonzero is in the k-th column taken
    last = {}
    for position, column in enumerate(order):
        for row, _ in columns[column]:
            last[row] = position
    if len(last) < size:
        return zero                 # a row of zeros
    for row, position in last.items():
        closing[position] |= 1 << row
    minors = {0: one}
    for k, column in enumerate(order):
        extended: dict[int, object] = {}
        for used, minor in minors.items():
            for row, value in columns[column]:
                bit = 1 << row
                key = used | bit
                if used & bit or key & closing[k] != closing[k]:
                    continue
                term = value * minor
                if (bin(used & (bit - 1)).count("1") + k) % 2:
                    term = -term
                extended[key] = extended[key] + term if key in extended else term
        minors = {key: minor for key, minor in extended.items() if minor}
        if not minors:
            return zero
        if max_terms is not None:
            held = sum(len(minor) for minor in minors.values())
            if held > max_terms:
                raise SymbolicSizeError(held, max_terms)
    determinant = minors[(1 << size) - 1]
    return -determinant if _odd_permutation(order) else determinant


def _column_order(columns: dict[int, list[Any]], size: int) -> list[int]:
    """Columns in the order that keeps the fewest rows open at each step."""
    rows_of = {c: sum(1 << r for r, _ in entries) for c, entries in columns.items()}
    remaining = [0] * size           # nonzeros of each row in the columns not yet taken
    for mask in rows_of.values():
        for r in range(size):
            if mask >> r & 1:
                remaining[r] += 1
    order: list[int] = []
    touched, left = 0, set(columns)
    while left:
        best: tuple[int, int, int] | None = None
        for c in sorted(left):
            mask = rows_of[c]
            reach = touched | mask
            open_rows = sum(1 for r in range(size)
                            if reach >> r & 1 and remaining[r] - (mask >> r & 1) > 0)
            score = (open_rows, bin(mask).count("1"), c)
            if best is None or score < best:
                best = score
        assert best is not None  # `left` is not empty
        c = best[2]
        order.append(c)
        left.remove(c)
        touched |= rows_of[c]
        for r in range(size):
            if rows_of[c] >> r & 1:
                remaining[r] -= 1
    return order


def _odd_permutation(order: list[int]) -> bool:
    """Is `order` (a permutation of 0…n−1) odd? By counting cycles."""
    seen, transpositions = [False] * len(order), 0
    for start in range(len(order)):
        length, i = 0, start
        while not seen[i]:
            seen[i] = True
            i = order[i]
            length += 1
        transpositions += max(length - 1, 0)
    return transpositions % 2 == 1
