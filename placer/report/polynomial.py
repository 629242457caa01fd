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
    halves: dict[Any, int] = {}     # factor -> exponent in halves
    kept: list[tuple[Any, int]] = []  # factors of unknown sign, as the terms put them
    constant = sympy.Integer(1)       # rational, to the power of its own halves below
    constant_halves: list[tuple[Any, int]] = []
    symbols = sorted({x for expr, _ in terms for x in sympy.sympify(expr).free_symbols},
                     key=lambda x: symbol_order(x.name))
    for expr, exponent in terms:
        twice = int(2 * exponent)
        if twice != 2 * exponent:
            raise ValueError(f"exponent {exponent}: a whole or half number only")
        expr = sympy.sympify(expr)
        if expr == 0:
            return ("0", sympy.Integer(0)) if exponent > 0 else ("zoo", sympy.zoo)
        coefficient, factors = sympy.factor_list(expr, *symbols) if symbols else (expr, [])
        constant_halves.append((coefficient, twice))
        for factor, power in factors:
            if _positive(factor, symbols):
                halves[factor] = halves.get(factor, 0) + twice * power
            else:
                kept.append((factor, twice * power))
    # the rational constant: a perfect square comes out of the root
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
    outside_num: list[tuple[Any, int]] = []
    outside_den: list[tuple[Any, int]] = []
    inside_num: list[tuple[Any, int]] = []
    inside_den: list[tuple[Any, int]] = []
    for factor, h in list(halves.items()) + kept:
        whole, odd = divmod(abs(h), 2)
        if whole:
            (outside_num if h > 0 else outside_den).append((factor, whole))
        if odd:
            (inside_num if h > 0 else inside_den).append((factor, 1))

    def order(items: list[tuple[Any, int]]) -> list[tuple[Any, int]]:
        # single parts first, in the R, C, L order, then the sums
        return sorted(items, key=lambda item: (0, symbol_order(str(item[0]))) if item[0].is_Symbol
                      else (1, (str(item[0]),)))

    def texts(items: list[tuple[Any, int]]) -> list[str]:
        return [(_factor_text(f, symbols) if p == 1 else f"{_factor_text(f, symbols)}**{p}")
                for f, p in order(items)]

    def value(items: list[tuple[Any, int]]) -> Any:
        return sympy.Mul(*(f ** p for f, p in items))

    numerator: list[str] = []
    denominator: list[str] = []
    constant = sympy.Rational(constant)
    if constant < 0:
        sign, constant = "-", -constant
    else:
        sign = ""
    if constant.p != 1:
        numerator.append(_number(constant.p))
    if constant.q != 1:
        denominator.append(_number(constant.q))
    numerator += texts(outside_num)
    denominator += texts(outside_den)
    root_num = ([_number(sympy.Rational(inside_constant).p)]
                if sympy.Rational(inside_constant).p != 1 else []) + texts(inside_num)
    root_den = ([_number(sympy.Rational(inside_constant).q)]
                if sympy.Rational(inside_constant).q != 1 else []) + texts(inside_den)
    if root_num and root_den:
        below = _product(root_den)
        numerator.append(f"sqrt({_product(root_num)}/"
                         + (below if len(root_den) == 1 else f"({below})") + ")")
    elif root_num:
        numerator.append(f"sqrt({_product(root_num)})")
    elif root_den:
        denominator.append(f"sqrt({_product(root_den)})")
    text = sign + (_product(numerator) or "1")
    if denominator:
        text += "/" + (denominator[0] if len(denominator) == 1 else f"({_product(denominator)})")
    expr = ((-1 if sign else 1) * constant * value(outside_num) / value(outside_den)
            * sympy.sqrt(inside_constant * value(inside_num) / value(inside_den)))
    return text, expr
