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

``--rc`` adds the RC ladder table: series R, shunt C, 5, 10, 15 and 20
sections, every part a symbol, where the former implementation took 58 s
and 950 MB at 10 sections and did not finish at 20. Per size, in a child
process each (``--rc-timeout`` seconds, ``--rc-memory`` GB of address space):

* placer: :func:`placer.analysis.network.network_function`, with a ceiling of
  ``--rc-max-terms`` terms (2,000,000: the expanded D of 20 sections has
  F(41) = 165,580,141 terms, which no expanded form can hold; at 15 sections
  it has 1,346,269 and sympy needs about 3 GB for them); the time of its
  two determinants alone (python-flint), and the child's peak resident
  memory (forked from this process: the imports are in it);
* Bareiss: the former implementation, kept below as
  :func:`old_network_function` (sympy polynomial ring, fraction-free
  elimination, sympy gcd);
* Matrix.det: the plain sympy derivation (``sympy.Matrix`` of admittances,
  default ``det()`` and the Cramer numerator);
* analyze: ``placer analyze`` of the ladder as a topology file with part
  values, in-process (Python start-up and imports not counted): H(s) up to
  2000 terms, numeric poles, zeros and response past that.

"same" compares placer with the baselines that finished: the same
polynomials as Bareiss (exactly), the same H as Matrix.det at random values.

Run::

    python benchmarks/bench_mna.py [--full] [--timeout 300] [--max-order 11] [--families]
    python benchmarks/bench_mna.py --rc [--rc-timeout 120] [--max-order 0]   # 0: no LC table

Targets: placer at order 9 (LC ladder) under 0.2 s; RC ladder of 10
sections under 0.5 s; ``placer analyze`` of 20 sections under 10 s.
"""

from __future__ import annotations

import argparse
import contextlib
import io
import multiprocessing as mp
import platform
import random
import resource
import sys
import tempfile
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

import sympy  # noqa: E402
from sympy.polys.domains import QQ, ZZ  # noqa: E402

from placer.circuit.elements import Circuit, Element  # noqa: E402
from placer.errors import SymbolicSizeError, TopologyError  # noqa: E402
from placer.analysis.mna import layout, stamps  # noqa: E402
from placer.analysis.network import S, network_function  # noqa: E402

TARGET_ORDER = 9
TARGET_SECONDS = 0.2
RC_SECTIONS = (5, 10, 15, 20)
RC_TARGETS = {10: ("placer", 0.5), 20: ("analyze", 10.0)}

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


def rc_ladder_parts(sections):
    """Series R, shunt C, `sections` times, as (name, kind, node_a, node_b) rows."""
    parts, previous = [], "vin"
    for i in range(1, sections + 1):
        node = "vout" if i == sections else f"n{i}"
        parts.append((f"R{i}", "resistor", previous, node))
        parts.append((f"C{i}", "capacitor", node, "gnd"))
        previous = node
    return parts, "vout"


def rc_ladder_circuit(sections):
    """Series R, shunt C, `sections` times; every part symbolic."""
    parts, _ = rc_ladder_parts(sections)
    return Circuit(tuple(Element(name, kind, (a, b), symbol=name) for name, kind, a, b in parts))


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
    """H(s) of the LC ladder by hand: sympy.Matrix of admittances, default det(), Cramer."""
    return plain_derivation_of(*ladder_parts(order))


def plain_derivation_of(parts, output):
    """H(s) by hand for (name, kind, a, b) rows: sympy.Matrix, default det(), Cramer."""
    nodes = ["vin"]
    for _, _, a, b in parts:
        nodes += [n for n in (a, b) if n not in nodes and n != "gnd"]
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


# -- RC ladders: placer, the former implementation, Matrix.det, analyze ----------

def run_limited(function, args, *, timeout, memory_gb):
    """``function(*args)`` in a child process with a time and memory limit.

    Returns (value, None) when it finished, else (None, why): "> N s" on a
    timeout, "> N GB" when it ran out of the address space it was given.
    """
    context = mp.get_context("fork") if "fork" in mp.get_all_start_methods() else mp.get_context()
    queue = context.Queue()
    process = context.Process(target=_limited_worker, args=(function, args, memory_gb, queue),
                              daemon=True)
    process.start()
    deadline = time.perf_counter() + timeout
    while True:
        try:
            status, value = queue.get(timeout=0.5)
            break
        except Exception:  # queue.Empty: still running, or died without a word
            if time.perf_counter() > deadline:
                process.terminate()
                process.join()
                return None, f"> {timeout:g} s"
            if not process.is_alive():
                return None, f"> {memory_gb:g} GB"  # a C library aborted on malloc
    process.join()
    return (value, None) if status == "ok" else (None, value)


def _limited_worker(function, args, memory_gb, queue):
    limit = int(memory_gb * 2 ** 30)
    resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
    try:
        value = function(*args)
        value["peak_mb"] = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
        queue.put(("ok", value))
    except MemoryError:
        queue.put(("failed", f"> {memory_gb:g} GB"))


def _denominator_terms(denominator):
    return sum(len(c) if hasattr(c, "__len__") else 1 for c in denominator.rep.to_list() if c)


def placer_rc(sections, max_terms):
    """network_function of the ladder: seconds, seconds in the determinants, terms of D."""
    from placer import network

    circuit = rc_ladder_circuit(sections)
    spent = [0.0]
    determinant = network.minor_expansion_det

    def timed(*args, **kwargs):
        start = time.perf_counter()
        try:
            return determinant(*args, **kwargs)
        finally:
            spent[0] += time.perf_counter() - start

    network.minor_expansion_det = timed  # in this child process only
    best = None
    for _ in range(3):  # best of three while a run takes under a second
        spent[0] = 0.0
        start = time.perf_counter()
        try:
            nf = derive(circuit, max_terms=max_terms)
        except SymbolicSizeError as error:
            return {"stopped": error.limit, "seconds": time.perf_counter() - start,
                    "det": spent[0]}
        run = {"seconds": time.perf_counter() - start, "det": spent[0],
               "terms": _denominator_terms(nf.denominator)}
        best = run if best is None or run["seconds"] < best["seconds"] else best
        if run["seconds"] > 1.0:
            break
    return best


def bareiss_rc(sections):
    """The former implementation: seconds, and whether it gives placer's polynomials."""
    circuit = rc_ladder_circuit(sections)
    start = time.perf_counter()
    numerator, denominator = old_network_function(circuit)
    seconds = time.perf_counter() - start
    nf = derive(circuit)
    return {"seconds": seconds,
            "same": numerator == nf.numerator and denominator == nf.denominator}


def matrix_det_rc(sections):
    """Plain sympy Matrix.det: seconds, and whether it gives placer's H at random points."""
    start = time.perf_counter()
    numerator, denominator = plain_derivation_of(*rc_ladder_parts(sections))
    seconds = time.perf_counter() - start
    return {"seconds": seconds,
            "same": agree(derive(rc_ladder_circuit(sections)), numerator, denominator, sections)}


def rc_topology_text(sections):
    """The ladder as a topology file with a [values] table (ohm, farad)."""
    parts, _ = rc_ladder_parts(sections)
    lines = [f'id = "rc-ladder-{sections}"', f'title = "RC ladder, {sections} sections"',
             'response = "lowpass"', f"order = {sections}", ""]
    for name, kind, a, b in parts:
        lines += ["[[elements]]", f'name = "{name}"', f'kind = "{kind}"',
                  f'nodes = ["{a}", "{b}"]', f'symbol = "{name}"', ""]
    lines.append("[values]")
    for i in range(1, sections + 1):
        lines += [f"R{i} = {1e3 * (1 + i % 3):g}", f"C{i} = {1e-8 * (1 + i % 2):g}"]
    return "\n".join(lines) + "\n"


def analyze_rc(sections, folder):
    """``placer analyze FILE`` in-process: seconds, exit status and what it printed."""
    from placer.cli import main as cli_main

    path = Path(folder) / f"rc-ladder-{sections}.toml"
    path.write_text(rc_topology_text(sections), encoding="utf-8")
    out = io.StringIO()
    start = time.perf_counter()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(io.StringIO()):
        status = cli_main(["analyze", str(path)])
    seconds = time.perf_counter() - start
    kind = "numbers" if "numeric analysis instead" in out.getvalue() else "H(s)"
    return {"seconds": seconds, "status": status, "gives": kind}


def _seconds(result, why):
    if result is None:
        return why
    if "stopped" in result:
        return f"> {result['stopped']:,} terms ({result['seconds']:.2f} s)"
    return f"{result['seconds']:.3f}"


def rc_table(args):
    print()
    print(f"RC ladder, every part a symbol; each run in a child process, "
          f"{args.rc_timeout:g} s and {args.rc_memory:g} GB at most; placer's ceiling "
          f"{args.rc_max_terms:,} terms")
    header = (f"{'sections':>8}  {'terms in D':>12}  {'placer (s)':>27}  {'of it, det (s)':>14}  {'peak (MB)':>9}  "
              f"{'Bareiss (s)':>11}  {'Matrix.det (s)':>14}  {'same':>4}  "
              f"{'analyze (s)':>11}  analyze gives")
    print(header)
    print("-" * len(header))
    verdicts = []
    with tempfile.TemporaryDirectory() as folder:
        for sections in RC_SECTIONS:
            limits = {"timeout": args.rc_timeout, "memory_gb": args.rc_memory}
            ours, why = run_limited(placer_rc, (sections, args.rc_max_terms), **limits)
            old, old_why = run_limited(bareiss_rc, (sections,), **limits)
            plain, plain_why = run_limited(matrix_det_rc, (sections,), **limits)
            shown, shown_why = run_limited(analyze_rc, (sections, folder), **limits)
            fibonacci = _fibonacci(2 * sections + 1)
            if ours is not None and "terms" in ours:
                terms = f"{ours['terms']:,}" + ("" if ours["terms"] == fibonacci else " (!)")
            else:
                terms = f"{fibonacci:,}*"
            checks = [r["same"] for r in (old, plain) if r is not None]
            same = "-" if not checks else ("yes" if all(checks) else "NO")
            det = "-" if ours is None else f"{ours['det']:.3f}"
            peak = "-" if ours is None else f"{ours['peak_mb']:.0f}"
            gives = "-" if shown is None else f"{shown['gives']} (exit {shown['status']})"
            print(f"{sections:>8}  {terms:>12}  {_seconds(ours, why):>27}  "
                  f"{det:>14}  {peak:>9}  {_seconds(old, old_why):>11}  {_seconds(plain, plain_why):>14}  "
                  f"{same:>4}  {_seconds(shown, shown_why):>11}  {gives}", flush=True)
            for where, seconds in [RC_TARGETS.get(sections, (None, None))]:
                if where is None:
                    continue
                result = ours if where == "placer" else shown
                met = result is not None and "stopped" not in result and result["seconds"] < seconds
                verdicts.append(f"{where} at {sections} sections < {seconds:g} s: "
                                f"{'met' if met else 'MISSED'}")
    print("* not derived: F(2n+1), the Fibonacci number each size derived here matches "
          "(a mismatch is marked (!))")
    print("\n".join(["", *verdicts]))


def _fibonacci(n):
    a, b = 0, 1
    for _ in range(n):
        a, b = b, a + b
    return a

# -- the former implementation (the baseline), as it was -------------------------
#
# network_function before python-flint: sympy polynomial ring, Bareiss
# elimination with its own pivoting (fraction_free_det), sympy's gcd and the
# conversion of conductances back to resistances over sympy's ring. Copied
# here so that the baseline is timed by the same command; only the return
# value differs (the two polynomials instead of a NetworkFunction).

def old_network_function(circuit):
    """(N, D) as sympy Polys in S, by the former Bareiss implementation."""
    lay = layout(circuit)
    by_name = {e.name: e for e in circuit.elements}
    part_symbols = {}      # part symbol name -> sympy Symbol (R form)
    generators = [S]       # ring generators (conductances as G__name)
    generator_of = {}      # (symbol, role) -> generator
    role_of_symbol = {}
    for element in circuit.elements:
        if not element.is_symbolic:
            continue
        role = _old_role(element.kind)
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
        generator = sympy.Symbol(f"G__{element.symbol}", positive=True) if role == "conductance" else part
        generators.append(generator)
        generator_of[element.symbol] = generator

    # Stamps as (generator index or None, exact number, power of s) terms.
    terms_at = {}
    integral = True
    for stamp in stamps(circuit, lay):
        number = _old_rational(stamp.factor)
        generator = None
        if stamp.parameter is not None:
            name, role = stamp.parameter
            element = by_name[name]
            if element.is_symbolic:
                generator = generators.index(generator_of[element.symbol])
            else:
                value = _old_rational(element.parameter)
                number = number / value if role == "conductance" else number * value
        integral = integral and number.is_integer
        terms_at.setdefault((stamp.row, stamp.col), []).append((generator, number, stamp.power))
    domain = (ZZ if integral else QQ)[tuple(generators)]
    gens = domain.gens
    size = lay.size
    rows = [[domain.zero] * size for _ in range(size)]
    for (r, c), terms in terms_at.items():
        entry = domain.zero
        for generator, number, power in terms:
            term = domain.convert(number)
            if generator is not None:
                term = term * gens[generator]
            if power:
                term = term * gens[0]
            entry = entry + term
        rows[r][c] = entry
    denominator = _old_fraction_free_det(rows, domain)
    if denominator == domain.zero:
        raise TopologyError(
            "the MNA matrix is singular: the circuit has no unique solution "
            "(check for floating nodes, or op-amps with no feedback path)"
        )
    replaced = [row[:] for row in rows]
    for r in range(size):
        replaced[r][lay.output_index] = domain.one if r == lay.input_row else domain.zero
    numerator = _old_fraction_free_det(replaced, domain)
    common, numerator, denominator = _old_cancel(domain, numerator, denominator)
    if _old_leading_sign(denominator) < 0:
        numerator, denominator = -numerator, -denominator
    names = list(generator_of)
    numerator_poly, denominator_poly = _old_to_resistances(
        domain, numerator, denominator, names, role_of_symbol, part_symbols
    )
    return numerator_poly, denominator_poly


def _old_fraction_free_det(rows, domain):
    """Bareiss elimination, pivot on the entry with the fewest terms (as before)."""
    matrix = [list(row) for row in rows]
    n = len(matrix)
    if n == 0:
        return domain.one
    sign = 1
    previous = domain.one
    for k in range(n - 1):
        best = None
        for i in range(k, n):
            row = matrix[i]
            for j in range(k, n):
                entry = row[j]
                if entry and (best is None or len(entry) < best[0]):
                    best = (len(entry), i, j)
            if best is not None and best[0] == 1:
                break
        if best is None:
            return domain.zero
        _, i, j = best
        if i != k:
            matrix[k], matrix[i] = matrix[i], matrix[k]
            sign = -sign
        if j != k:
            for row in matrix:
                row[k], row[j] = row[j], row[k]
            sign = -sign
        pivot = matrix[k][k]
        pivot_row = matrix[k]
        for i in range(k + 1, n):
            row = matrix[i]
            factor = row[k]
            for j in range(k + 1, n):
                if factor:
                    row[j] = domain.exquo(row[j] * pivot - factor * pivot_row[j], previous)
                elif row[j]:
                    row[j] = domain.exquo(row[j] * pivot, previous)
            row[k] = domain.zero
        previous = pivot
    determinant = matrix[n - 1][n - 1]
    return determinant if sign > 0 else -determinant


def _old_role(kind):
    return {"resistor": "conductance", "capacitor": "capacitance",
            "inductor": "inductance"}.get(kind, "gain")


def _old_rational(number):
    number = float(number)
    if number.is_integer():
        return sympy.Integer(int(number))
    return sympy.Rational(repr(number))


def _old_cancel(domain, numerator, denominator):
    if numerator == domain.zero:
        return domain.one, numerator, denominator
    common, numerator_part, denominator_part = numerator.cofactors(denominator)
    return common, numerator_part, denominator_part


def _old_leading_sign(poly):
    coefficient = poly.LC
    return -1 if coefficient < 0 else 1


def _old_to_resistances(domain, numerator, denominator, names, role_of, parts):
    """Replace each conductance G by 1/R and clear denominators in R (as before).

    Ring generator i + 1 belongs to ``names[i]``. Every conductance's
    highest power over N and D is cleared by the same product of R, so the
    ratio is unchanged. Returns two sympy Polys in S whose coefficients lie
    in a polynomial ring over the part symbols.
    """
    conductance = [role_of[n] == "conductance" for n in names]
    degrees = [0] * len(names)
    for poly in (numerator, denominator):
        for monom in poly.monoms():
            for i, flag in enumerate(conductance):
                if flag:
                    degrees[i] = max(degrees[i], monom[i + 1])
    coefficient_ring = domain.domain[tuple(parts[n] for n in names)] if names else domain.domain

    def convert(poly):
        by_power = {}
        for monom, coefficient in poly.terms():
            exponents = tuple(
                degrees[i] - monom[i + 1] if conductance[i] else monom[i + 1]
                for i in range(len(names))
            )
            by_power.setdefault(monom[0], {})[exponents] = coefficient
        out = {}
        for power, terms in by_power.items():
            if names:
                out[(power,)] = coefficient_ring.from_dict(terms) if hasattr(coefficient_ring, "from_dict") else coefficient_ring.ring.from_dict(terms)
            else:
                out[(power,)] = terms[()]
        return sympy.Poly.from_dict(out, S, domain=coefficient_ring)

    return convert(numerator), convert(denominator)


def lc_table(args):
    plain_limit = 9 if args.full else 7
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


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--full", action="store_true", help="run the plain path up to order 9")
    parser.add_argument("--timeout", type=float, default=300.0,
                        help="seconds allowed for one plain derivation (default 300)")
    parser.add_argument("--min-order", type=int, default=3)
    parser.add_argument("--max-order", type=int, default=11)
    parser.add_argument("--families", action="store_true",
                        help="also time RC ladders and Sallen-Key cascades (placer only)")
    parser.add_argument("--rc", action="store_true",
                        help="also time RC ladders of 5-20 sections against the former "
                             "implementation and Matrix.det, and placer analyze")
    parser.add_argument("--rc-timeout", type=float, default=120.0,
                        help="seconds allowed for one RC ladder run (default 120)")
    parser.add_argument("--rc-memory", type=float, default=8.0,
                        help="GB of address space for one RC ladder run (default 8)")
    parser.add_argument("--rc-max-terms", type=int, default=2_000_000,
                        help="placer's term ceiling on the RC ladders (default 2,000,000)")
    args = parser.parse_args(argv)

    try:
        import flint
        flint_version = flint.__version__
    except ImportError:
        flint_version = "not installed"
    from sympy.external.gmpy import GROUND_TYPES

    print(f"python {platform.python_version()}, sympy {sympy.__version__}, "
          f"ground types {GROUND_TYPES}, python-flint {flint_version}")
    if args.max_order >= args.min_order:
        lc_table(args)
    if args.families:
        families_table()
    if args.rc:
        rc_table(args)
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
