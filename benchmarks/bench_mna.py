"""Benchmark: symbolic network function of a doubly terminated LC ladder.

Compares, per ladder order, the time of

* placer: :func:`placer.analysis.network.network_function` (polynomial entries in a
  sympy polynomial ring, fraction-free determinants), and
* plain: the derivation as one would write it by hand with sympy: the MNA
  matrix as a ``sympy.Matrix`` of rational expressions (1/R, s*C, 1/(s*L)
  admittances, plus the input source's branch row), ``Matrix.det()`` with
  the default method and the Cramer numerator (the output column replaced
  by the excitation), likewise ``det()``.

The ladder is RS, shunt C1, series L2, shunt C3, ..., RL, every part a
symbol. The plain path is slow (about 100 s at order 9), so by default it
runs only up to order 7; ``--full`` runs it up to order 9. Each plain
derivation runs in a child process that is ended after ``--timeout``
seconds, reported as "> N s".

Both results are checked to be the same function at random part values.

``--families`` adds a second table, placer only: series-R/shunt-C ladders
and cascades of unity-gain Sallen–Key sections, where every entry of the
node block is a polynomial in several parts and the determinant costs far
more than for the LC ladder of the same order.

Run::

    python benchmarks/bench_mna.py [--full] [--timeout 300] [--max-order 11] [--families]

Target: placer at order 9 under 0.2 s.
"""

from __future__ import annotations

import argparse
import multiprocessing as mp
import platform
import random
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

import sympy  # noqa: E402

from placer.circuit.elements import Circuit, Element  # noqa: E402
from placer.analysis.network import S, network_function  # noqa: E402

TARGET_ORDER = 9
TARGET_SECONDS = 0.2

# network_function memoises by circuit; time the derivation itself.
derive = getattr(network_function, "__wrapped__", network_function)


def ladder_parts(order):
    """The ladder as (name, kind, node_a, node_b) rows and the output node."""
    parts = [("RS", "resistor", "vin", "n1")]
    node = 1
    for k in range(1, order + 1):
        here = f"n{node}"
        if k % 2 == 1:
            parts.append((f"C{k}", "capacitor", here, "gnd"))
        else:
            node += 1
            parts.append((f"L{k}", "inductor", here, f"n{node}"))
    output = f"n{node}"
    parts.append(("RL", "resistor", output, "gnd"))
    return parts, output


def ladder_circuit(order):
    parts, output = ladder_parts(order)
    elements = tuple(Element(name, kind, (a, b), symbol=name) for name, kind, a, b in parts)
    return Circuit(elements, input="vin", output=output)


def rc_ladder_circuit(sections):
    """Series R, shunt C, `sections` times; every part symbolic."""
    elements, previous = [], "vin"
    for i in range(1, sections + 1):
        node = "vout" if i == sections else f"n{i}"
        elements.append(Element(f"R{i}", "resistor", (previous, node), symbol=f"R{i}"))
        elements.append(Element(f"C{i}", "capacitor", (node, "gnd"), symbol=f"C{i}"))
        previous = node
    return Circuit(tuple(elements))


def sallen_key_cascade(stages):
    """`stages` unity-gain Sallen–Key low-pass sections in cascade, all symbolic."""
    elements, previous = [], "vin"
    for i in range(1, stages + 1):
        out = "vout" if i == stages else f"o{i}"
        a, b = f"a{i}", f"b{i}"
        elements += [
            Element(f"R{i}a", "resistor", (previous, a), symbol=f"R{i}a"),
            Element(f"R{i}b", "resistor", (a, b), symbol=f"R{i}b"),
            Element(f"C{i}a", "capacitor", (a, out), symbol=f"C{i}a"),
            Element(f"C{i}b", "capacitor", (b, "gnd"), symbol=f"C{i}b"),
            Element(f"U{i}", "opamp", (b, out, out)),
        ]
        previous = out
    return Circuit(tuple(elements))


def families_table():
    print()
    print("placer network_function, other families (one run each)")
    header = f"{'circuit':<28}  {'order':>5}  {'MNA size':>8}  {'placer (s)':>11}"
    print(header)
    print("-" * len(header))
    cases = [(f"RC ladder, {n} sections", rc_ladder_circuit(n)) for n in range(2, 7)]
    cases += [(f"Sallen-Key cascade, {k} stages", sallen_key_cascade(k)) for k in range(1, 4)]
    for label, circuit in cases:
        start = time.perf_counter()
        nf = derive(circuit)
        elapsed = time.perf_counter() - start
        size = len(circuit.nodes) - 1 + 1 + sum(
            1 for e in circuit.elements if e.kind in ("inductor", "opamp", "vsource"))
        print(f"{label:<28}  {nf.order:>5}  {size:>8}  {elapsed:>11.3f}", flush=True)


def plain_derivation(order):
    """H(s) by hand: sympy.Matrix of admittances, default det(), Cramer."""
    parts, output = ladder_parts(order)
    nodes = ["vin"] + sorted({n for _, _, a, b in parts for n in (a, b)} - {"vin", "gnd"},
                             key=lambda n: int(n[1:]))
    index = {n: i for i, n in enumerate(nodes)}
    size = len(nodes) + 1  # + the input source's branch current
    matrix = sympy.zeros(size, size)
    for name, kind, a, b in parts:
        symbol = sympy.Symbol(name, positive=True)
        admittance = {"resistor": 1 / symbol, "capacitor": S * symbol,
                      "inductor": 1 / (S * symbol)}[kind]
        for p, q in ((a, a), (b, b)):
            if p != "gnd":
                matrix[index[p], index[q]] += admittance
        if a != "gnd" and b != "gnd":
            matrix[index[a], index[b]] -= admittance
            matrix[index[b], index[a]] -= admittance
    k = size - 1
    matrix[index["vin"], k] = 1
    matrix[k, index["vin"]] = 1
    excitation = sympy.zeros(size, 1)
    excitation[k] = 1
    denominator = matrix.det()
    replaced = matrix.copy()
    replaced[:, index[output]] = excitation
    numerator = replaced.det()
    return numerator, denominator


def _plain_worker(order, queue):
    start = time.perf_counter()
    numerator, denominator = plain_derivation(order)
    elapsed = time.perf_counter() - start
    queue.put((elapsed, numerator, denominator))  # sympy expressions pickle


def time_plain(order, timeout):
    """(seconds or None on timeout, numerator, denominator) in a child process."""
    context = mp.get_context("fork") if "fork" in mp.get_all_start_methods() else mp.get_context()
    queue = context.Queue()
    process = context.Process(target=_plain_worker, args=(order, queue), daemon=True)
    process.start()
    try:
        elapsed, numerator, denominator = queue.get(timeout=timeout)
    except Exception:  # queue.Empty on timeout
        process.terminate()
        process.join()
        return None, None, None
    process.join()
    return elapsed, numerator, denominator


def time_placer(order, repeats=5):
    circuit = ladder_circuit(order)
    best = float("inf")
    for _ in range(repeats):
        start = time.perf_counter()
        nf = derive(circuit)
        best = min(best, time.perf_counter() - start)
    return best, nf


def agree(nf, numerator, denominator, order, seed=0):
    """Do both derivations give the same H at random values and frequencies?"""
    rng = random.Random(seed + order)
    for _ in range(3):
        values = {name: rng.uniform(0.5, 2.0) for name in nf.symbols}
        subs = {sympy.Symbol(name, positive=True): value for name, value in values.items()}
        s = complex(rng.uniform(-1, 1), rng.uniform(0.2, 2))
        subs[S] = s
        plain = complex(numerator.evalf(subs=subs) / denominator.evalf(subs=subs))
        ours = complex(nf.numerator.as_expr().evalf(subs=subs)
                       / nf.denominator.as_expr().evalf(subs=subs))
        if abs(plain - ours) > 1e-9 * abs(ours):
            return False
    return True


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--full", action="store_true", help="run the plain path up to order 9")
    parser.add_argument("--timeout", type=float, default=300.0,
                        help="seconds allowed for one plain derivation (default 300)")
    parser.add_argument("--min-order", type=int, default=3)
    parser.add_argument("--max-order", type=int, default=11)
    parser.add_argument("--families", action="store_true",
                        help="also time RC ladders and Sallen-Key cascades (placer only)")
    args = parser.parse_args(argv)
    plain_limit = 9 if args.full else 7

    try:
        import flint
        flint_version = flint.__version__
    except ImportError:
        flint_version = "not installed"
    from sympy.external.gmpy import GROUND_TYPES

    print(f"python {platform.python_version()}, sympy {sympy.__version__}, "
          f"ground types {GROUND_TYPES}, python-flint {flint_version}")
    print(f"doubly terminated LC ladder, all parts symbolic; plain path up to order "
          f"{plain_limit}, timeout {args.timeout:g} s per order")
    print()
    header = f"{'order':>5}  {'placer (s)':>11}  {'plain (s)':>11}  {'plain/placer':>12}  same H"
    print(header)
    print("-" * len(header))
    target_met = None
    for order in range(args.min_order, args.max_order + 1):
        ours, nf = time_placer(order)
        if order == TARGET_ORDER:
            target_met = ours < TARGET_SECONDS
        if order <= plain_limit:
            plain, numerator, denominator = time_plain(order, args.timeout)
            if plain is None:
                plain_text, ratio_text, same = f"> {args.timeout:g}", f"> {args.timeout / ours:.0f}", "-"
            else:
                plain_text, ratio_text = f"{plain:.3f}", f"{plain / ours:.0f}"
                same = "yes" if agree(nf, numerator, denominator, order) else "NO"
        else:
            plain_text, ratio_text, same = "not run", "-", "-"
        print(f"{order:>5}  {ours:>11.4f}  {plain_text:>11}  {ratio_text:>12}  {same}",
              flush=True)
    if target_met is not None:
        verdict = "met" if target_met else "MISSED"
        print(f"\ntarget: placer at order {TARGET_ORDER} < {TARGET_SECONDS} s: {verdict}")
    if args.families:
        families_table()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
