"""Network functions H(s) = N(s)/D(s) of a circuit, symbolic and numeric.

Symbolic: the MNA matrix is built with polynomial entries (resistors as
conductances, s·C for capacitors, inductor branch currents) in a sympy
polynomial ring (python-flint's ``fmpz_mpoly``, or ``fmpq_mpoly`` when
numeric parts bring fractions), and ``det M`` and the output minor are
taken by expansion into shared minors
(:func:`minor_expansion_det`), with no rational functions and no division
at any step. The result is shown in the part symbols (R, not G):
each conductance power is cleared by multiplying N and D by the same
product of resistances.

Numeric evaluation of N and D for arrays of part values (Monte Carlo,
solving) is here too; the purely numeric analysis of a circuit with numbers
for every part (pencil eigenvalues, frequency response) is in
:mod:`placer.analysis.pencil`, whose functions this module also offers.

Examples
--------
>>> from placer.circuit.elements import Circuit, Element
>>> rc = Circuit((Element("R1", "resistor", ("vin", "vout"), symbol="R"),
...               Element("C1", "capacitor", ("vout", "gnd"), symbol="C")))
>>> nf = network_function(rc)
>>> nf.expression()
1/(C*R*s + 1)
>>> nf.omega0
1/(C*R)
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass, field
from functools import cached_property, lru_cache
from typing import TYPE_CHECKING, Any, SupportsFloat, TypeVar, cast

import control
import flint
import numpy as np
import sympy
from numpy.typing import ArrayLike, NDArray
from sympy.polys.domains import QQ, ZZ
from sympy.polys.domains.domain import Domain

from ..errors import TopologyError
from .mna import Layout, layout, minor_expansion_det, stamps
from .second_order import SecondOrderFigures, omega0_q, passband_gain
from .pencil import (
    CircuitRoots,
    circuit_gain,
    circuit_poles,
    circuit_response,
    circuit_roots,
    circuit_zeros,
)
from .protocols import ComplexArray, FloatArray, PartValues

if TYPE_CHECKING:
    from ..circuit.elements import Circuit

__all__ = [
    "S",
    "NetworkFunction",
    "network_function",
    "circuit_poles",
    "circuit_zeros",
    "circuit_gain",
    "circuit_roots",
    "CircuitRoots",
    "circuit_response",
    "batched_roots",
    "polynomial_values",
]

#: The Laplace variable, rad/s.
S = sympy.Symbol("s")


@dataclass(frozen=True)
class NetworkFunction:
    """Symbolic H(s) = N(s)/D(s) of a circuit, with numeric evaluators.

    Attributes
    ----------
    numerator, denominator : sympy.Poly
        Polynomials in :data:`S`; coefficients are polynomials in the part
        symbols (R, C, L, gains).
    symbols : dict
        Part symbol name → sympy Symbol.
    cancelled : sympy.Expr
        The common factor removed from N and D (1 when none).
    """

    numerator: sympy.Poly
    denominator: sympy.Poly
    symbols: dict[str, sympy.Symbol]
    cancelled: sympy.Expr = sympy.Integer(1)
    _cache: dict[str, Any] = field(default_factory=dict, repr=False, compare=False)

    # -- pickling (worker processes) -----------------------------------------
    def __getstate__(self) -> dict[str, Any]:
        # The compiled evaluators and cached figures are rebuilt on demand;
        # only the polynomials travel, with their domain's generator order
        # (sympy's own pickling re-sorts it, which changes the order the
        # evaluators add terms in, and so the last bits of the numbers).
        return {"numerator": _poly_state(self.numerator),
                "denominator": _poly_state(self.denominator),
                "symbols": self.symbols, "cancelled": self.cancelled}

    def __setstate__(self, state: Mapping[str, Any]) -> None:
        state = dict(state)
        state["numerator"] = _poly_from_state(state["numerator"])
        state["denominator"] = _poly_from_state(state["denominator"])
        for name, value in state.items():
            object.__setattr__(self, name, value)
        object.__setattr__(self, "_cache", {})

    # -- symbolic figures --------------------------------------------------
    @property
    def order(self) -> int:
        """Degree of the denominator in s."""
        return int(self.denominator.degree())

    def expression(self) -> sympy.Expr:
        """H(s) as one sympy expression."""
        return sympy.cancel(self.numerator.as_expr() / self.denominator.as_expr())

    @cached_property
    def term_count(self) -> int:
        """Terms of N and D together, expanded in the part symbols and s."""
        return sum(len(c) if hasattr(c, "__len__") else int(c != 0)
                   for poly in (self.numerator, self.denominator) for c in poly.rep.to_list())

    @cached_property
    def numerator_coefficients(self) -> tuple[sympy.Expr, ...]:
        """Coefficients of N, highest power of s first (sympy expressions)."""
        return tuple(self.numerator.all_coeffs())

    @cached_property
    def denominator_coefficients(self) -> tuple[sympy.Expr, ...]:
        return tuple(self.denominator.all_coeffs())

    @cached_property
    def gain_kind(self) -> str:
        """Where the pass-band gain is read: "dc", "hf" or "center"."""
        degrees = [m[0] for m in self.numerator.monoms()]
        n = self.order
        if degrees and min(degrees) == max(degrees):
            k = degrees[0]
            if k == 0:
                return "dc"
            if k == n:
                return "hf"
            if n == 2 and k == 1:
                return "center"
        if self.numerator.eval(0) != 0 and self.denominator.eval(0) != 0:
            return "dc"
        return "hf"  # a zero at the origin, or an integrator (pole at the origin)

    @cached_property
    def omega0(self) -> sympy.Expr | None:
        """Natural frequency (rad/s) for first- and second-order D; else None."""
        a = self.denominator_coefficients
        if self.order == 1:
            return sympy.factor(a[1] / a[0])
        if self.order == 2:
            return sympy.sqrt(sympy.factor(a[2] / a[0]))
        return None

    @cached_property
    def q(self) -> sympy.Expr | None:
        """Quality factor for a second-order D; else None."""
        if self.order != 2:
            return None
        a2, a1, a0 = self.denominator_coefficients
        return sympy.sqrt(sympy.factor(a0 * a2)) / sympy.factor(a1)

    @cached_property
    def gain(self) -> sympy.Expr:
        """Pass-band gain (signed): at DC, at high frequency or at ω0."""
        b = dict(zip(range(self.numerator.degree(), -1, -1), self.numerator_coefficients))
        a = dict(zip(range(self.order, -1, -1), self.denominator_coefficients))
        kind = self.gain_kind
        if kind == "dc":
            return sympy.factor(b.get(0, 0) / a[0])
        if kind == "center":
            return sympy.factor(b.get(1, 0) / a[1])
        top = self.numerator.degree()
        if top < self.order:
            return sympy.Integer(0)
        return sympy.factor(b[top] / a[self.order])

    # -- numeric evaluation ------------------------------------------------
    @cached_property
    def _evaluators(self) -> tuple[list[str], Callable[..., Any], Callable[..., Any]]:
        names = list(self.symbols)
        # Placeholders named by position, not dummies: a Dummy's place in a
        # printed product follows a process-wide counter, so two processes
        # would multiply in different orders and differ in the last bits.
        places = [sympy.Symbol(f"_part{i}") for i in range(len(names))]
        mapping = {self.symbols[n]: place for n, place in zip(names, places)}

        def compile_(coefficients: Sequence[sympy.Expr]) -> Callable[..., Any]:
            return sympy.lambdify(places, [c.xreplace(mapping) for c in coefficients],
                                  "numpy", dummify=False)

        return names, compile_(self.numerator_coefficients), compile_(self.denominator_coefficients)

    def coefficients(self, values: PartValues) -> tuple[FloatArray, FloatArray]:
        """Numeric coefficients of N and D, highest power first.

        Parameters
        ----------
        values : mapping of str to float or array
            Every part symbol → its value (SI units). Arrays broadcast, so
            one call evaluates many samples (Monte Carlo).

        Returns
        -------
        (numerator, denominator) : tuple of ndarray
            Shapes ``(deg N + 1, *sample_shape)`` and ``(deg D + 1, *sample_shape)``.
        """
        names, num, den = self._evaluators
        missing = [n for n in names if n not in values]
        if missing:
            raise TopologyError(
                f"no value for part {missing[0]!r}; every part needs one "
                f"(parts: {', '.join(names)})"
            )
        args = [np.asarray(values[n], dtype=float) for n in names]
        numerator = num(*args)
        denominator = den(*args)
        shape = np.broadcast_shapes(*(np.shape(x) for x in args)) if args else ()
        numerator = np.stack([np.broadcast_to(np.asarray(c, float), shape) for c in numerator])
        denominator = np.stack([np.broadcast_to(np.asarray(c, float), shape) for c in denominator])
        return numerator, denominator

    def second_order_figures(self, values: PartValues) -> SecondOrderFigures:
        """ω0 (rad/s), Q and pass-band gain, vectorised over samples."""
        if self.order != 2:
            raise TopologyError(
                f"second_order_figures needs a second-order function, not order {self.order}"
            )
        numerator, denominator = self.coefficients(values)
        omega0, q = omega0_q(*denominator)
        gain = passband_gain(numerator, denominator, self.gain_kind)
        return SecondOrderFigures(omega0=omega0, q=q, gain=gain)

    def poles(self, values: PartValues) -> ComplexArray:
        """Poles in rad/s for one set of part values."""
        _, denominator = self.coefficients(values)
        return _roots(denominator)

    def zeros(self, values: PartValues) -> ComplexArray:
        """Finite zeros in rad/s for one set of part values."""
        numerator, _ = self.coefficients(values)
        return _roots(numerator)

    def response_at(self, values: PartValues, omega: ArrayLike) -> ComplexArray:
        """H(jω) for one set of part values; `omega` in rad/s."""
        numerator, denominator = self.coefficients(values)
        s = 1j * np.asarray(omega, dtype=float)
        return np.polyval(numerator, s) / np.polyval(denominator, s)

    def transfer_function(self, values: PartValues) -> control.TransferFunction:
        """A python-control TransferFunction for one set of part values."""
        numerator, denominator = self.coefficients(values)
        numerator = np.trim_zeros(np.asarray(numerator, float), "f")
        denominator = np.trim_zeros(np.asarray(denominator, float), "f")
        return control.tf(numerator if numerator.size else [0.0], denominator)

    def latex(self) -> str:
        """H(s) in LaTeX, in the part symbols."""
        return sympy.latex(self.numerator.as_expr() / self.denominator.as_expr())


def _roots(coefficients: ArrayLike) -> ComplexArray:
    coefficients = np.trim_zeros(np.asarray(coefficients, dtype=float), "f")
    if coefficients.size <= 1:
        return np.array([], dtype=complex)
    return np.roots(coefficients).astype(complex)


def _poly_state(poly: sympy.Poly) -> tuple[Any, ...]:
    """A picklable description of a Poly that keeps its domain's generator order."""
    domain = poly.domain
    if domain.is_PolynomialRing:
        return poly.as_expr(), poly.gens, str(domain.domain), tuple(domain.symbols)
    return poly.as_expr(), poly.gens, str(domain), None


def _poly_from_state(state: tuple[Any, ...]) -> sympy.Poly:
    expr, gens, ground, symbols = state
    ground = {"ZZ": ZZ, "QQ": QQ}[ground]
    return sympy.Poly(expr, *gens, domain=ground[symbols] if symbols else ground)


def polynomial_values(coefficients: ArrayLike, s: complex | ArrayLike) -> ComplexArray:
    """Values of many polynomials at s, by Horner's rule.

    Parameters
    ----------
    coefficients : array_like, shape (n + 1, ...)
        Highest power first; the trailing axes index the polynomials
        (samples), as :meth:`NetworkFunction.coefficients` returns them.
    s : complex or ndarray
        Where to evaluate, broadcast against the trailing axes.

    Returns
    -------
    ndarray of complex

    Examples
    --------
    s² + 1 and 2s² + s at s = j:

    >>> polynomial_values(np.array([[1.0, 2.0], [0.0, 1.0], [1.0, 0.0]]), 1j).tolist()
    [0j, (-2+1j)]
    """
    coefficients = np.asarray(coefficients)
    value = np.zeros(np.broadcast(coefficients[0], s).shape, complex)
    for c in coefficients:
        value = value * s + c
    return value


def batched_roots(coefficients: ArrayLike, *, scale: float = 1.0) -> ComplexArray:
    """Roots of many polynomials at once, from companion matrices.

    Parameters
    ----------
    coefficients : array_like, shape (degree + 1, batch)
        One real polynomial per column, highest power first (the layout
        :meth:`NetworkFunction.coefficients` returns for arrays of parts).
    scale : float, optional
        Roots are found in x = s/scale and returned in s. With *scale*
        near the roots' size (rad/s) the companion entries are of one
        size, which keeps the eigenvalues accurate. Default 1.

    Returns
    -------
    ndarray of complex, shape (batch, degree)
        Each column's roots, in no particular order. Leading rows that
        are zero in every column are dropped first (as :func:`numpy.roots`
        drops leading zeros), so *degree* is the highest degree any column
        has; a column whose own leading coefficient is then zero, or that
        holds a NaN or inf, gets NaN roots.

    Raises
    ------
    ValueError
        If *coefficients* is not two-dimensional.

    Examples
    --------
    s² + 3s + 2 = (s + 1)(s + 2) and s² + 4 = (s − 2j)(s + 2j):

    >>> roots = batched_roots([[1.0, 1.0], [3.0, 0.0], [2.0, 4.0]])
    >>> (np.sort_complex(roots).round(9) + 0.0).tolist()
    [[(-2+0j), (-1+0j)], [-2j, 2j]]
    """
    coefficients = np.asarray(coefficients, dtype=float)
    if coefficients.ndim != 2:
        raise ValueError(f"coefficients must have shape (degree + 1, batch), not "
                         f"{coefficients.shape}")
    used = np.flatnonzero(np.any(coefficients != 0, axis=1))
    coefficients = coefficients[used[0]:] if used.size else coefficients[-1:]
    degree, batch = coefficients.shape[0] - 1, coefficients.shape[1]
    roots = np.full((batch, degree), complex(math.nan, math.nan))
    if degree == 0:
        return roots
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        monic = coefficients[1:] / coefficients[0] / scale ** np.arange(1, degree + 1)[:, None]
    finite = np.isfinite(monic).all(axis=0)
    companion = np.zeros((int(np.count_nonzero(finite)), degree, degree))
    companion[:, 0, :] = -monic[:, finite].T
    companion[:, np.arange(1, degree), np.arange(degree - 1)] = 1.0
    roots[finite] = np.linalg.eigvals(companion) * scale
    return roots


# -- symbolic derivation -----------------------------------------------------

@lru_cache(maxsize=512)
def network_function(circuit: Circuit, *, max_terms: int | None = None) -> NetworkFunction:
    """Symbolic network function of `circuit`, output over input voltage.

    Parts that carry a symbol stay symbolic; parts with a value enter as
    exact rationals of their decimal value.

    Parameters
    ----------
    circuit : Circuit
    max_terms : int, optional
        Stop with :class:`SymbolicSizeError` as soon as the derivation
        holds more terms than this at one step (all partial minors of the
        MNA matrix together, and so N and D themselves). Default: no limit.

    Returns
    -------
    NetworkFunction

    Raises
    ------
    TopologyError
        If the MNA matrix is singular (the circuit has no unique solution).
    SymbolicSizeError
        If the derivation passes `max_terms`.

    Examples
    --------
    >>> from placer.circuit.library import get_topology
    >>> nf = network_function(get_topology("rc-lowpass").circuit)
    >>> nf.denominator.all_coeffs()
    [C1*R1, 1]
    """
    lay = layout(circuit)
    symbols = _ring_generators(circuit)
    terms_at, integral = _stamp_terms(circuit, lay, symbols)
    ring = _flint_ring(len(symbols.generators), integral)
    numerator, denominator = _transfer_determinants(circuit, lay, _matrix_entries(ring, terms_at),
                                                    ring.constant(1), max_terms)
    common, numerator, denominator = _cancel(numerator, denominator)
    if _leading_sign(denominator) < 0:
        numerator, denominator = -numerator, -denominator
    names = list(symbols.generator_of)
    ground = ZZ if integral else QQ
    numerator_poly, denominator_poly = _to_resistances(
        ground, numerator, denominator, names, symbols.role_of, symbols.parts
    )
    return NetworkFunction(
        numerator=numerator_poly,
        denominator=denominator_poly,
        symbols=dict(symbols.parts),
        cancelled=_flint_to_expr(common, symbols.generators, ground),
    )


@dataclass(frozen=True)
class _Generators:
    """The symbols of a circuit's symbolic parts and the ring generators they give."""

    parts: dict[str, sympy.Symbol]          # part symbol -> sympy Symbol (R form for resistors)
    generators: list[sympy.Symbol]          # s, then one per part (a resistor's: _G_name)
    generator_of: dict[str, sympy.Symbol]   # part symbol -> its generator
    role_of: dict[str, str]                 # part symbol -> "conductance", "capacitance", ...


def _ring_generators(circuit: Circuit) -> _Generators:
    """One generator per part symbol; a symbol naming parts of two kinds is an error."""
    part_symbols: dict[str, sympy.Symbol] = {}
    generators = [S]
    generator_of: dict[str, sympy.Symbol] = {}
    role_of_symbol: dict[str, str] = {}
    for element in circuit.elements:
        if element.symbol is None or not element.is_symbolic:
            continue
        role = _role(element.kind)
        known = role_of_symbol.setdefault(element.symbol, role)
        if known != role:
            raise TopologyError(
                f"symbol {element.symbol!r} names parts of different kinds; use one name per kind"
            )
        if element.symbol in part_symbols:
            continue
        positive = element.kind in ("resistor", "capacitor", "inductor")
        part = sympy.Symbol(element.symbol, positive=True) if positive else sympy.Symbol(element.symbol)
        part_symbols[element.symbol] = part
        # A leading "_" keeps the conductance apart from every part symbol
        # (circuit.SYMBOL_PATTERN starts with a letter).
        generator = sympy.Symbol(f"_G_{element.symbol}", positive=True) if role == "conductance" else part
        generators.append(generator)
        generator_of[element.symbol] = generator
    return _Generators(part_symbols, generators, generator_of, role_of_symbol)


def _stamp_terms(circuit: Circuit, lay: Layout, symbols: _Generators,
                 ) -> tuple[dict[tuple[int, int], list[_Term]], bool]:
    """The stamps as (generator index or None, exact number, power of s) terms per entry.

    Returns the terms by (row, column) and whether every number is an
    integer (then the ring is over ZZ, else QQ).
    """
    by_name = {e.name: e for e in circuit.elements}
    terms_at: dict[tuple[int, int], list[_Term]] = {}
    integral = True
    for stamp in stamps(circuit, lay):
        number = _rational(stamp.factor)
        generator = None
        if stamp.parameter is not None:
            name, role = stamp.parameter
            element = by_name[name]
            if element.symbol is not None and element.is_symbolic:
                generator = symbols.generators.index(symbols.generator_of[element.symbol])
            else:
                # a part without a symbol has a number
                value = _rational(cast(float, element.parameter))
                number = number / value if role == "conductance" else number * value
        integral = integral and number.is_integer
        terms_at.setdefault((stamp.row, stamp.col), []).append((generator, number, stamp.power))
    return terms_at, integral


def _transfer_determinants(circuit: Circuit, lay: Layout,
                           entries: dict[tuple[int, int], _FlintPoly], one: _FlintPoly,
                           max_terms: int | None) -> tuple[Any, Any]:
    """(N, D) by Cramer's rule: D the MNA determinant, N with the output column replaced.

    Raises TopologyError when D is zero (no unique solution) or N is zero
    (the output does not depend on the input).
    """
    denominator = minor_expansion_det(entries, lay.size, one, max_terms=max_terms)
    if denominator.is_zero():
        raise TopologyError(
            "the MNA matrix is singular: the circuit has no unique solution "
            "(check for floating nodes, or op-amps with no feedback path)"
        )
    replaced = {(r, c): v for (r, c), v in entries.items() if c != lay.output_index}
    replaced[(lay.input_row, lay.output_index)] = one
    numerator = minor_expansion_det(replaced, lay.size, one, max_terms=max_terms)
    if numerator.is_zero():
        where = f"circuit {circuit.name!r}: " if circuit.name else ""
        raise TopologyError(
            f"{where}the output {circuit.output!r} does not depend on the input {circuit.input!r}: "
            "H(s) = 0 for every part value (check the connections, and for a "
            "controlled source or op-amp gain of 0)"
        )
    return numerator, denominator


#: The symbolic path's polynomials (python-flint).
_FlintPoly = flint.fmpz_mpoly | flint.fmpq_mpoly
#: A stamp's term in the ring: (generator index or None, exact number, power of s).
_Term = tuple[int | None, sympy.Rational, int]
#: One of the two, the same for every argument of a function.
_P = TypeVar("_P", flint.fmpz_mpoly, flint.fmpq_mpoly)


def _flint_ring(count: int, integral: bool) -> flint.fmpz_mpoly_ctx | flint.fmpq_mpoly_ctx:
    """python-flint's ring ZZ[x0, …] (or QQ[…]) in lex order, as sympy's.

    Variables are named by position (x0 is s, then the generators in
    order), so no part symbol can collide with another name here.
    """
    names = tuple(f"x{i}" for i in range(count))
    if integral:
        return flint.fmpz_mpoly_ctx.get(names, "lex")
    return flint.fmpq_mpoly_ctx.get(names, "lex")


def _matrix_entries(ring: flint.fmpz_mpoly_ctx | flint.fmpq_mpoly_ctx,
                    terms_at: Mapping[tuple[int, int], list[_Term]],
                    ) -> dict[tuple[int, int], _FlintPoly]:
    """The MNA entries as ring elements from (generator, number, power) terms."""
    nvars = ring.nvars()
    entries: dict[tuple[int, int], _FlintPoly] = {}
    for position, terms in terms_at.items():
        monomials: dict[tuple[int, ...], Any] = {}
        for generator, number, power in terms:
            exponents = [0] * nvars
            exponents[0] += power
            if generator is not None:
                exponents[generator] += 1
            key = tuple(exponents)
            monomials[key] = monomials.get(key, 0) + number
        # fmpz numbers over ZZ, fmpq over QQ: the ring and the numbers agree
        coefficients: dict[tuple[int, ...], Any] = {
            m: _flint_number(c) for m, c in monomials.items() if c != 0}
        entry = ring.from_dict(coefficients)
        if entry:
            entries[position] = entry
    return entries


def _flint_number(number: sympy.Rational) -> flint.fmpz | flint.fmpq:
    if number.is_integer:
        return flint.fmpz(int(number))
    return flint.fmpq(int(number.p), int(number.q))


def _flint_to_expr(poly: _FlintPoly, generators: list[sympy.Symbol], ground: Domain) -> sympy.Expr:
    terms = {m: _ground_number(c, ground) for m, c in poly.to_dict().items()}
    return sympy.Poly.from_dict(terms, *generators, domain=ground).as_expr()


def _ground_number(coefficient: flint.fmpz | flint.fmpq, ground: Domain) -> object:
    """A flint fmpz/fmpq coefficient as an element of sympy's ZZ or QQ."""
    if isinstance(coefficient, flint.fmpq):
        return ground.convert(sympy.Rational(int(coefficient.p), int(coefficient.q)))
    return ground.convert(int(coefficient))


def _role(kind: str) -> str:
    return {
        "resistor": "conductance",
        "capacitor": "capacitance",
        "inductor": "inductance",
    }.get(kind, "gain")


def _rational(number: SupportsFloat) -> sympy.Rational:
    number = float(number)
    if number.is_integer():
        return sympy.Integer(int(number))
    return sympy.Rational(repr(number))


def _cancel(numerator: _P, denominator: _P) -> tuple[_P, _P, _P]:
    """(common factor, N / common, D / common), normalised as sympy's ``cofactors``.

    A one-term N or D shares a monomial whose coefficient is the gcd of
    all coefficients (over QQ: gcd of numerators over lcm of
    denominators); otherwise flint's gcd (positive leading coefficient over
    ZZ, monic over QQ) is sympy's.
    """
    if numerator.is_zero():
        return numerator ** 0, numerator, denominator
    if len(numerator) == 1 or len(denominator) == 1:
        common = _monomial_gcd(numerator, denominator)
    else:
        common = numerator.gcd(denominator)
    return common, numerator / common, denominator / common


def _monomial_gcd(first: _P, second: _P) -> _P:
    common = first.term_content().gcd(second.term_content())
    if isinstance(common, flint.fmpq_mpoly):
        # flint's is monic; sympy's coefficient is gcd(numerators)/lcm(denominators)
        coefficients = list(first.coeffs()) + list(second.coeffs())
        common = common * flint.fmpq(math.gcd(*(int(c.p) for c in coefficients)),
                                     math.lcm(*(int(c.q) for c in coefficients)))
    return common


def _leading_sign(poly: _FlintPoly) -> int:
    coefficient = poly.leading_coefficient()
    return -1 if coefficient < 0 else 1


def _to_resistances(ground: Domain, numerator: _FlintPoly, denominator: _FlintPoly,
                    names: list[str], role_of: Mapping[str, str],
                    parts: Mapping[str, sympy.Symbol]) -> tuple[sympy.Poly, sympy.Poly]:
    """Replace each conductance G by 1/R and clear denominators in R.

    Ring generator i + 1 belongs to ``names[i]``. Every conductance's
    highest power over N and D is cleared by the same product of R, so the
    ratio is unchanged: a term's exponent e of G becomes d − e of R, with d
    the highest power of G in N and D. Returns two sympy Polys in S whose
    coefficients lie in a polynomial ring over the part symbols (over
    `ground`, ZZ or QQ).
    """
    flip = np.array([role_of[n] == "conductance" for n in names], dtype=bool)
    highest = np.maximum(numerator.degrees()[1:], denominator.degrees()[1:]) if names else None
    coefficient_ring = ground[tuple(parts[n] for n in names)] if names else ground

    def convert(poly: _FlintPoly) -> sympy.Poly:
        if poly.is_zero():
            return sympy.Poly.from_dict({}, S, domain=coefficient_ring)
        width = len(names) + 1
        monoms = np.fromiter(itertools.chain.from_iterable(poly.monoms()), dtype=np.int64,
                             count=len(poly) * width).reshape(len(poly), width)
        coefficients = _ground_numbers(poly.coeffs(), ground)
        # Lex order with s first: the terms of each power of s are consecutive.
        starts = [0, *(np.flatnonzero(np.diff(monoms[:, 0])) + 1).tolist(), len(poly)]
        if names:
            top = cast(NDArray[np.int64], highest)
            keys = list(map(tuple, np.where(flip, top - monoms[:, 1:], monoms[:, 1:]).tolist()))
        out: dict[tuple[int], Any] = {}
        for a, b in zip(starts[:-1], starts[1:]):
            power = (int(monoms[a, 0]),)
            if names:
                out[power] = coefficient_ring.ring.from_dict(dict(zip(keys[a:b], coefficients[a:b])))
            else:
                out[power] = coefficients[a]
        return sympy.Poly.from_dict(out, S, domain=coefficient_ring)

    return convert(numerator), convert(denominator)


def _ground_numbers(coefficients: list[Any], ground: Domain) -> list[Any]:
    """flint fmpz/fmpq coefficients as elements of sympy's ZZ or QQ."""
    if all(isinstance(c, ground.dtype) for c in coefficients):
        return coefficients           # sympy runs on python-flint's ground types
    return [_ground_number(c, ground) for c in coefficients]
