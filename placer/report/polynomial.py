"""Polynomials in s as a designer writes them.

Descending powers of s, each power's coefficient grouped in parentheses:
``R1*R2*C1*C2*s**2 + (R1*C2 + R2*C2)*s + 1``. Within a product the
resistors come first, then capacitors, inductors and the rest, each in
numeric order (R2 before R10). The text keeps sympy's operators (``*``,
``**``), so it reads back with ``sympy.sympify`` (never done on user text).
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from fractions import Fraction
from typing import Any

import sympy

__all__ = ["polynomial_text", "symbol_order"]

_KIND_ORDER = {"R": 0, "G": 1, "C": 2, "L": 3}


def symbol_order(name: str) -> tuple[int, int, str, int, str]:
    """Sort key of a part symbol: R, G, C, L, then the rest; numbers in numeric order."""
    match = re.fullmatch(r"([A-Za-z_]+?)(\d*)(.*)", name)
    letters, digits, rest = match.groups() if match else (name, "", "")
    kind = _KIND_ORDER.get(letters[:1].upper(), 4) if len(letters) == 1 else 4
    return (kind, 0 if digits else 1, letters, int(digits) if digits else 0, rest)


def _number(value: Any) -> str:
    fraction = Fraction(int(value.p), int(value.q)) if isinstance(value, sympy.Rational) \
        else Fraction(str(value))
    if fraction.denominator == 1:
        return str(fraction.numerator)
    return f"{fraction.numerator}/{fraction.denominator}"


def _monomial(coefficient: Any, exponents: Sequence[int], names: Sequence[str]) -> tuple[int, str]:
    """(sign, text) of one term: the coefficient's magnitude and the factors in order."""
    factors = [name if power == 1 else f"{name}**{power}"
               for name, power in zip(names, exponents) if power]
    sign = -1 if coefficient < 0 else 1
    magnitude = abs(coefficient)
    if magnitude != 1 or not factors:
        factors.insert(0, _number(magnitude))
    return sign, "*".join(factors)


def _terms(expr: Any, params: Sequence[Any]) -> list[tuple[int, str]] | None:
    """The signed terms of one coefficient, largest degree first; None if not a polynomial."""
    if not params:
        value = sympy.nsimplify(expr) if not expr.is_Rational else expr
        if not value.is_Rational:
            return None
        return [] if value == 0 else [_monomial(value, (), ())]
    try:
        poly = sympy.Poly(expr, *params)
    except sympy.PolynomialError:
        return None
    if not all(c.is_Rational for c in poly.coeffs()):
        return None
    names = [str(p) for p in params]
    terms = sorted(poly.terms(), key=lambda t: (-sum(t[0]), tuple(-e for e in t[0])))
    return [_monomial(c, e, names) for e, c in terms if c != 0]


def _power(k: int) -> str:
    return "" if k == 0 else "s" if k == 1 else f"s**{k}"


def polynomial_text(poly: Any, s: Any = None) -> str:
    """A polynomial in s as text, descending powers, coefficients grouped.

    Parameters
    ----------
    poly : sympy.Poly or sympy expression
        In `s` (the Poly's first generator when `s` is None, else the
        symbol named "s"); its coefficients are polynomials in the parts.
    s : sympy.Symbol, optional

    Returns
    -------
    str
        e.g. ``R1*R2*C1*C2*s**2 + (R1*C2 + R2*C2)*s + 1``; ``0`` for zero.

    Examples
    --------
    >>> R1, C1, s = sympy.symbols("R1 C1 s")
    >>> polynomial_text(sympy.Poly(C1*R1*s + 1, s))
    'R1*C1*s + 1'
    """
    if not isinstance(poly, sympy.Poly):
        expr = sympy.sympify(poly)
        s = s or next((x for x in expr.free_symbols if x.name == "s"), sympy.Symbol("s"))
        poly = sympy.Poly(expr, s)
    s = s or poly.gens[0]
    poly = sympy.Poly(poly.as_expr(), s)
    params = sorted((x for x in poly.as_expr().free_symbols if x != s),
                    key=lambda x: symbol_order(x.name))
    pieces: list[str] = []
    for (k,), coefficient in sorted(poly.terms(), key=lambda t: -t[0][0]):
        terms = _terms(sympy.expand(coefficient), params)
        if terms == []:
            continue
        if terms is None:           # not a polynomial in the parts: sympy's own text
            sign, body = 1, f"({coefficient})"
        elif len(terms) == 1:
            sign, body = terms[0]
            if k and body == "1":
                body = ""
        else:
            sign = -1 if all(t[0] < 0 for t in terms) else 1
            inner = ""
            for t_sign, text in terms:
                t_sign *= sign
                inner += (text if not inner and t_sign > 0 else
                          f"-{text}" if not inner else
                          f" + {text}" if t_sign > 0 else f" - {text}")
            body = inner if k == 0 and sign > 0 else f"({inner})"
        power = _power(k)
        body = f"{body}*{power}" if body and power else body or power
        if not pieces:
            pieces.append(body if sign > 0 else f"-{body}")
        else:
            pieces.append(f" + {body}" if sign > 0 else f" - {body}")
    return "".join(pieces) or "0"


def _factor_text(factor: Any, params: Sequence[Any]) -> str:
    """One factor (a polynomial in the parts) as text; a sum in parentheses."""
    terms = _terms(factor, params)
    if terms is None or not terms:
        return f"({factor})"
    text = ""
    for sign, body in terms:
        text += (body if not text and sign > 0 else f"-{body}" if not text else
                 f" + {body}" if sign > 0 else f" - {body}")
    return f"({text})" if len(terms) > 1 else text


def _positive(factor: Any, params: Sequence[Any]) -> bool:
    """True when every coefficient of the polynomial factor is positive (so is it, for positive parts)."""
    try:
        return all(c > 0 for c in sympy.Poly(factor, *params).coeffs()) if params else factor > 0
    except (sympy.PolynomialError, TypeError):
        return False


def _product(pieces: list[str]) -> str:
    return "*".join(pieces)


def root_product_text(terms: Sequence[tuple[Any, Fraction]]) -> tuple[str, Any]:
    """A product of powers of part polynomials as a designer writes it, and its sympy value.

    Each term is ``(expression, exponent)`` with the exponent a whole or a
    half number, e.g. ``[(a0, ½), (a2, -½)]`` for ω0 = √(a0/a2). The
    factors are combined under one square root and the ones that come out
    whole are taken out of it: ``1/sqrt(R1*R2*C1*C2)`` rather than sympy's
    ``1/(sqrt(C1)*sqrt(C2)*sqrt(R1)*sqrt(R2))``. Part values are taken as
    positive: a factor is moved out of the root (or cancelled against
    another) only when all its coefficients are positive; the others stay
    where the terms put them.

    Returns
    -------
    (str, sympy.Expr)
        The text (sympy operators, ``sqrt``) and the expression it writes,
        built alongside it, so that a caller can check the two agree.
    """
    symbols = sorted({x for expr, _ in terms for x in sympy.sympify(expr).free_symbols},
                     key=lambda x: symbol_order(x.name))
    split = _split_terms(terms, symbols)
    if split.zero is not None:
        return split.zero
    constant, inside_constant = _split_constant(split.constant_halves)
    outside_num, outside_den, inside_num, inside_den = _out_of_root(
        list(split.halves.items()) + split.kept)
    constant = sympy.Rational(constant)
    sign = "-" if constant < 0 else ""
    constant = abs(constant)
    inside = sympy.Rational(inside_constant)
    numerator = ([_number(constant.p)] if constant.p != 1 else []) + _texts(outside_num, symbols)
    denominator = ([_number(constant.q)] if constant.q != 1 else []) + _texts(outside_den, symbols)
    root = _root_text(([_number(inside.p)] if inside.p != 1 else []) + _texts(inside_num, symbols),
                      ([_number(inside.q)] if inside.q != 1 else []) + _texts(inside_den, symbols))
    if root is not None:
        (numerator if root[0] else denominator).append(root[1])
    text = sign + (_product(numerator) or "1")
    if denominator:
        text += "/" + (denominator[0] if len(denominator) == 1 else f"({_product(denominator)})")
    expr = ((-1 if sign else 1) * constant * _value(outside_num) / _value(outside_den)
            * sympy.sqrt(inside_constant * _value(inside_num) / _value(inside_den)))
    return text, expr


@dataclass
class _Split:
    """The terms taken apart: positive factors, the others, the rational constants."""

    halves: dict[Any, int] = field(default_factory=dict)       # factor -> exponent in halves
    kept: list[tuple[Any, int]] = field(default_factory=list)  # of unknown sign, as given
    constant_halves: list[tuple[Any, int]] = field(default_factory=list)  # (rational, halves)
    zero: tuple[str, Any] | None = None     # the whole result when a term is zero


def _split_terms(terms: Sequence[tuple[Any, Fraction]], symbols: Sequence[Any]) -> _Split:
    """Factor each term; a positive factor's halves add up, the others are kept apart."""
    split = _Split()
    for expr, exponent in terms:
        twice = int(2 * exponent)
        if twice != 2 * exponent:
            raise ValueError(f"exponent {exponent}: a whole or half number only")
        expr = sympy.sympify(expr)
        if expr == 0:
            split.zero = ("0", sympy.Integer(0)) if exponent > 0 else ("zoo", sympy.zoo)
            return split
        coefficient, factors = sympy.factor_list(expr, *symbols) if symbols else (expr, [])
        split.constant_halves.append((coefficient, twice))
        for factor, power in factors:
            if _positive(factor, symbols):
                split.halves[factor] = split.halves.get(factor, 0) + twice * power
            else:
                split.kept.append((factor, twice * power))
    return split


def _split_constant(constant_halves: Sequence[tuple[Any, int]]) -> tuple[Any, Any]:
    """(outside, inside the root) of the rational constant: a perfect square comes out."""
    constant = sympy.Integer(1)
    inside_constant = sympy.Integer(1)
    for coefficient, twice in constant_halves:
        if twice % 2 == 0:
            constant *= coefficient ** (twice // 2)
            continue
        root = sympy.sqrt(coefficient)
        if root.is_Rational:
            constant *= root ** twice
        else:
            constant *= coefficient ** ((twice - 1) // 2) if twice > 0 else \
                coefficient ** ((twice + 1) // 2)
            inside_constant *= coefficient if twice > 0 else 1 / coefficient
    return constant, inside_constant


_Factors = list[tuple[Any, int]]


def _out_of_root(factors: Sequence[tuple[Any, int]]
                 ) -> tuple[_Factors, _Factors, _Factors, _Factors]:
    """(outside numerator, outside denominator, inside numerator, inside denominator)
    of factors with exponents in halves: the whole powers come out of the root."""
    outside_num: _Factors = []
    outside_den: _Factors = []
    inside_num: _Factors = []
    inside_den: _Factors = []
    for factor, h in factors:
        whole, odd = divmod(abs(h), 2)
        if whole:
            (outside_num if h > 0 else outside_den).append((factor, whole))
        if odd:
            (inside_num if h > 0 else inside_den).append((factor, 1))
    return outside_num, outside_den, inside_num, inside_den


def _order(items: _Factors) -> _Factors:
    """Single parts first, in the R, C, L order, then the sums."""
    return sorted(items, key=lambda item: (0, symbol_order(str(item[0]))) if item[0].is_Symbol
                  else (1, (str(item[0]),)))


def _texts(items: _Factors, symbols: Sequence[Any]) -> list[str]:
    return [(_factor_text(f, symbols) if p == 1 else f"{_factor_text(f, symbols)}**{p}")
            for f, p in _order(items)]


def _value(items: _Factors) -> Any:
    return sympy.Mul(*(f ** p for f, p in items))


def _root_text(root_num: list[str], root_den: list[str]) -> tuple[bool, str] | None:
    """The square root of the factors left inside, and whether it goes above the line."""
    if root_num and root_den:
        below = _product(root_den)
        return True, (f"sqrt({_product(root_num)}/"
                      + (below if len(root_den) == 1 else f"({below})") + ")")
    if root_num:
        return True, f"sqrt({_product(root_num)})"
    if root_den:
        return False, f"sqrt({_product(root_den)})"
    return None
