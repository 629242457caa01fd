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


def symbol_order(name: str) -> tuple:
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
