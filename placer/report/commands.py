"""What ``placer analyze`` and ``placer topologies`` show: their JSON and console text.

Each function takes what the command computed and returns ``(data, text)``:
the JSON-ready dict (or list) and the console text, so the command only
parses its arguments, calls these and writes the results.
"""

from __future__ import annotations

import math
import random
from collections.abc import Callable, Collection, Iterable, Mapping
from fractions import Fraction
from typing import TYPE_CHECKING, Any

from ..units import finite_or_none, format_value, plural
from .console import WIDTH, table
from .polynomial import polynomial_text, root_product_text

if TYPE_CHECKING:
    from ..analysis.network import NetworkFunction
    from ..circuit.elements import Circuit
    from ..circuit.topology import Topology

#: Roots as (poles, zeros).
Roots = tuple[Collection[complex], Collection[complex]]

__all__ = ["analyze_report", "analyze_numeric_report", "topology_report", "library_report",
           "root_pairs", "solved_for", "readable_figures"]


def root_pairs(roots: Iterable[complex]) -> list[list[float]]:
    """Roots as ``[re, im]`` pairs, by magnitude then imaginary part."""
    return [[float(r.real), float(r.imag)] for r in sorted(roots, key=lambda r: (abs(r), r.imag))]


def _root_rows(poles: Iterable[complex], zeros: Iterable[complex]) -> list[list[str]]:
    def row(kind: str, r: complex) -> list[str]:
        # + 0.0 turns a negative zero into a plain 0
        return [kind, f"{r.real + 0.0:.6g}", f"{r.imag + 0.0:+.6g}",
                format_value(abs(r) / (2 * math.pi), "Hz", digits=4)]

    rows = [row("pole", p) for p in sorted(poles, key=lambda r: (abs(r), r.imag))]
    rows += [row("zero", z) for z in sorted(zeros, key=lambda r: (abs(r), r.imag))]
    return rows


_ROOT_HEADERS = ["root", "re (rad/s)", "im (rad/s)", "|root| (Hz)"]


def _values_line(values: Mapping[str, float]) -> str:
    return "With values: " + (", ".join(f"{k} = {format_value(v)}" for k, v in values.items())
                              or "all given in the file")


def analyze_report(nf: NetworkFunction, *, label: str, title: str | None,
                   values: Mapping[str, float], settings: Mapping[str, float],
                   symbols: Iterable[str], latex: bool = False,
                   numeric_roots: Callable[[], Roots] | None = None) -> tuple[dict[str, Any], str]:
    """``placer analyze`` of a function derived symbolically.

    Parameters
    ----------
    nf : NetworkFunction
    label, title : the topology id (or file) and its title (None for a circuit file)
    values : every value known (the file's, then ``--set``)
    settings : the ``--set`` values alone
    symbols : the circuit's part symbols
    latex : also give H(s) in LaTeX
    numeric_roots : callable () -> (poles, zeros), optional
        The roots when they must come from the pencil (a function too large
        to compile); by default the function's own evaluators.
    """
    lines = [f"H(s) of {label}" + (f" — {title}" if title is not None else "") + ":"]
    numerator_text, denominator_text = polynomial_text(nf.numerator), polynomial_text(nf.denominator)
    lines.append(f"  N(s) = {numerator_text}")
    lines.append(f"  D(s) = {denominator_text}")
    lines.append(f"  order {nf.order}")
    data: dict[str, Any] = {"id": label, "numerator": numerator_text,
            "denominator": denominator_text, "order": nf.order}
    if nf.order in (1, 2):
        lines += _figure_lines(nf)
        lines.append(f"  gain ({nf.gain_kind}) = {nf.gain}")
        data.update({"omega0": str(nf.omega0), "q_expression": None if nf.q is None else str(nf.q),
                     "gain_expression": str(nf.gain)})
    if latex:
        lines.append(f"  LaTeX: H(s) = {nf.latex()}")
        data["latex"] = nf.latex()
    missing = [s for s in symbols if s not in values]
    if not missing:
        poles: Collection[complex]
        zeros: Collection[complex]
        if numeric_roots is not None:
            poles, zeros = numeric_roots()
        else:
            poles, zeros = nf.poles(values), nf.zeros(values)
        data["poles"] = root_pairs(poles)
        data["zeros"] = root_pairs(zeros)
        lines.append("")
        lines.append(_values_line(values))
        lines.append(table(_ROOT_HEADERS, _root_rows(poles, zeros)))
        if nf.order == 2:
            lines.append(_second_order_line(nf, values, data))
        elif nf.order == 1:
            numerator, denominator = nf.coefficients(values)
            f0 = finite_or_none(float(denominator[1]) / float(denominator[0])
                                / (2 * math.pi)) if float(denominator[0]) else None
            data["f0_hz"] = f0
            lines.append(f"  f0 = {format_value(f0, 'Hz', digits=4)}" if f0 is not None
                         else "  f0: none")
    elif settings:
        lines.append("")
        lines.append(f"  (give every part a value for numbers; still missing: {', '.join(missing)})")
    return data, "\n".join(lines)


def readable_figures(nf: NetworkFunction) -> tuple[str | None, str | None]:
    """ω0 (rad/s) and Q of a first- or second-order function as a designer writes them.

    Built from D(s)'s coefficients: ω0 = a0/a1 (first order), ω0 = √(a0/a2)
    and Q = √(a0·a2)/a1 (second order), under one square root each, e.g.
    ``1/sqrt(R1*R2*C1*C2)`` and ``sqrt(R1*R2*C1/C2)/(R1 + R2)`` for a
    unity-gain Sallen-Key low-pass. Each text is checked against the
    function's own :attr:`~placer.analysis.network.NetworkFunction.omega0`
    and ``q`` at random positive part values; where they disagree (or for
    another order) it is sympy's text of those, or None when not defined.
    """
    coefficients = nf.denominator_coefficients
    half = Fraction(1, 2)
    if nf.order == 1:
        a1, a0 = coefficients
        return _checked(root_product_text([(a0, Fraction(1)), (a1, Fraction(-1))]), nf.omega0), None
    if nf.order == 2:
        a2, a1, a0 = coefficients
        omega0 = _checked(root_product_text([(a0, half), (a2, -half)]), nf.omega0)
        q = _checked(root_product_text([(a0, half), (a2, half), (a1, Fraction(-1))]), nf.q)
        return omega0, q
    return (None if nf.omega0 is None else str(nf.omega0)), (None if nf.q is None else str(nf.q))


def _checked(built: tuple[str, Any], reference: Any) -> str | None:
    """The built text when its expression equals `reference` at three random positive points."""
    if reference is None:
        return None
    text, expr = built
    symbols = sorted(expr.free_symbols | reference.free_symbols, key=str)
    rng = random.Random(1)
    try:
        for _ in range(3):
            point = {x: rng.uniform(0.5, 2.0) for x in symbols}
            a, b = complex(expr.subs(point)), complex(reference.subs(point))
            if not (abs(a - b) <= 1e-9 * max(abs(a), abs(b)) or a == b):
                return str(reference)
    except (TypeError, ValueError, ZeroDivisionError, OverflowError):
        return str(reference)
    return text


def _figure_lines(nf: NetworkFunction) -> list[str]:
    """The ``w0 = …   (rad/s)`` and ``Q  = …`` lines of a first- or second-order function."""
    omega0, q = readable_figures(nf)
    lines = [f"  w0 = {omega0}   (rad/s)"]
    if q is not None:
        lines.append(f"  Q  = {q}")
    return lines


def _second_order_line(nf: NetworkFunction, values: Mapping[str, float],
                       data: dict[str, Any]) -> str:
    figures = nf.second_order_figures(values)
    # No f0 or Q when D(s)'s coefficients differ in sign; no DC gain with a pole at 0.
    f0 = finite_or_none(float(figures.omega0) / (2 * math.pi))
    q = finite_or_none(float(figures.q))
    gain = finite_or_none(float(figures.gain))
    gain_db = 20 * math.log10(abs(gain)) if gain else None
    data.update({"f0_hz": f0, "q": q, "gain_db": gain_db})
    shown = ("0" if gain == 0 else "none (a pole at s = 0)" if gain is None
             else f"{gain_db:+.3f} dB" + (" (inverting)" if gain < 0 else ""))
    return ((f"  f0 = {format_value(f0, 'Hz', digits=4)}   Q = {q:.4f}"
             if f0 is not None and q is not None else
             "  f0, Q: none (D(s) has coefficients of both signs: real poles, "
             "one in the right half-plane)") + f"   gain = {shown}")


def analyze_numeric_report(circuit: Circuit, values: Mapping[str, float], *, label: str,
                           reason: str) -> tuple[dict[str, Any], str]:
    """``placer analyze`` past the term limit: poles, zeros and response from the pencil."""
    import numpy as np

    from ..analysis.pencil import circuit_response, circuit_roots

    roots = circuit_roots(circuit, values)
    # A decade below the lowest root to a decade above the highest, in 1-2-5
    # steps; the phase is unwrapped on a grid of 40 points a decade.
    magnitudes = np.abs(np.concatenate([roots.poles, roots.zeros])) / (2 * math.pi)
    magnitudes = magnitudes[magnitudes > 0]
    low, high = (magnitudes.min() / 10, magnitudes.max() * 10) if magnitudes.size else (0.1, 10.0)
    decades = range(math.floor(math.log10(low)), math.ceil(math.log10(high)) + 1)
    steps = (1.0, 2.0, 5.0) if len(decades) <= 8 else (1.0,)
    f_hz = np.array([m * 10.0 ** d for d in decades for m in steps
                     if low <= m * 10.0 ** d <= high] or [low, high])
    dense = np.unique(np.concatenate([f_hz, np.geomspace(f_hz[0], f_hz[-1], 40 * len(decades))]))
    h = circuit_response(circuit, 2 * np.pi * dense, values)
    shown = np.searchsorted(dense, f_hz)
    with np.errstate(divide="ignore"):  # a zero of transmission on the grid is -inf dB
        db = 20 * np.log10(np.abs(h[shown]))
    phase = np.degrees(np.unwrap(np.angle(h)))[shown]
    data = {"id": label, "symbolic": False, "reason": reason, "order": int(roots.poles.size),
            "poles": root_pairs(roots.poles), "zeros": root_pairs(roots.zeros),
            "gain_constant": roots.gain,
            "response": [{"f_hz": float(f), "magnitude_db": float(m) if np.isfinite(m) else None,
                          "phase_deg": float(p)} for f, m, p in zip(f_hz, db, phase)]}
    lines = [f"{reason}; numeric analysis instead.", f"  order {roots.poles.size}", "",
             _values_line(values)]
    lines.append(table(_ROOT_HEADERS, _root_rows(roots.poles, roots.zeros)))
    lines.append(f"  H(s) = k·Π(s − z)/Π(s − p), k = {roots.gain:.6g}")
    lines.append("")
    lines.append(table(["f", "|H| (dB)", "phase (deg)"],
                       [[format_value(f, "Hz", digits=3),
                         f"{m:+.2f}" if np.isfinite(m) else "-inf", f"{p:+.1f}"]
                        for f, m, p in zip(f_hz, db, phase)]))
    return data, "\n".join(lines)


def solved_for(topology: Topology) -> list[str]:
    """Free parts the solver moves: those no constraint ties to another."""
    tied = {c.part for c in topology.constraints}
    return [name for name in topology.free if name not in tied]


def topology_report(topology: Topology, nf: NetworkFunction) -> tuple[dict[str, Any], str]:
    """``placer topologies ID``: one topology with its functions."""
    data: dict[str, Any] = {
        "id": topology.id, "title": topology.title, "response": topology.response,
        "family": topology.family, "order": topology.order, "inverting": topology.inverting,
        "parts": list(topology.symbols), "free": list(topology.free),
        "opamps": topology.opamp_count, "constraints": [str(c) for c in topology.constraints],
        "ranges": {k: list(v) for k, v in topology.ranges.items()},
        "numerator": polynomial_text(nf.numerator), "denominator": polynomial_text(nf.denominator),
        "formula": topology.formula, "description": topology.description,
        "circuit": topology.circuit.to_dict(),
    }
    if nf.order in (1, 2):
        data["omega0"] = str(nf.omega0)
        data["q"] = None if nf.q is None else str(nf.q)
        data["gain"] = str(nf.gain)
    lines = [f"{topology.id}: {topology.title}",
             f"  response {topology.response}" + (f" ({topology.family})" if topology.family else "")
             + f", order {topology.order}, {plural(topology.part_count, 'part')}, "
             + plural(topology.opamp_count, "op-amp")
             + (", inverting" if topology.inverting and "inverting" not in topology.title.lower()
                else ""),
             f"  free parts: {', '.join(solved_for(topology))}"
             + (" (the rest follow the constraints)" if topology.constraints else "")]
    if topology.constraints:
        lines.append(f"  constraints: {', '.join(str(c) for c in topology.constraints)}")
    if topology.description:
        lines.append(f"  {topology.description}")
    lines.append(f"  N(s) = {data['numerator']}")
    lines.append(f"  D(s) = {data['denominator']}")
    if nf.order in (1, 2):
        lines += _figure_lines(nf)
        lines.append(f"  gain = {data['gain']}")
    if topology.formula:
        lines.append(f"  published: {topology.formula}")
    return data, "\n".join(lines)


def library_report(pool: Mapping[str, Topology],
                   errors: Mapping[str, str]) -> tuple[list[dict[str, Any]], str]:
    """``placer topologies``: the library (and a folder's files) as a list and a table."""
    rows: list[list[Any]] = []
    listing: list[dict[str, Any]] = []
    for topology in sorted(pool.values(), key=lambda t: (t.response, t.order, t.id)):
        rows.append([topology.id, topology.title, topology.response
                     + (f"/{topology.family}" if topology.family else ""), topology.order,
                     topology.part_count, topology.opamp_count])
        listing.append({"id": topology.id, "title": topology.title, "response": topology.response,
                        "family": topology.family, "order": topology.order,
                        "parts": topology.part_count, "opamps": topology.opamp_count})
    for path, message in errors.items():
        listing.append({"id": path, "error": message})
    lines = [table(["id", "title", "response", "order", "parts", "op-amps"], rows, width=WIDTH, wrap=1)]
    lines += [f"  could not load {path}: {message}" for path, message in errors.items()]
    return listing, "\n".join(lines)
