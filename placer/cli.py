"""The ``placer`` command.

Subcommands: ``analyze`` (H(s) of a topology or circuit file), ``target``
(poles, zeros and sections of a spec's target), ``design`` (part values
and evidence), ``compare`` (rank candidate topologies), ``loop``
(compensator and margins), ``topologies`` (the library).

Bad input prints one line ``error: …`` and exits 2; a target that cannot
be reached prints the reasons and exits 1.
"""

from __future__ import annotations

import argparse
import json
import math
import os
import sys
from pathlib import Path
from typing import TYPE_CHECKING

from . import __version__
from .errors import PlacerError, SpecError, SymbolicSizeError, UnreachableTarget
from .report.files import check_output_path, write_text
from .units import finite_or_none, format_value

if TYPE_CHECKING:
    from .circuit.elements import Circuit

# The analysis stack (sympy, scipy, python-control) loads inside the
# commands, so `placer --help` answers at once.

__all__ = ["main", "build_parser"]


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors and exit status 2."""

    def error(self, message):
        raise SpecError(message)


def build_parser():
    parser = _Parser(
        prog="placer",
        description="From pole-zero targets to a bill of materials: place the roots of an "
                    "analog filter or compensator with preferred-value parts, with evidence.",
    )
    parser.add_argument("--version", action="version", version=f"placer {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    p = sub.add_parser("analyze", help="symbolic and numeric H(s) of a topology or circuit file")
    p.add_argument("topology", metavar="TOPOLOGY_OR_FILE", help="a library id or a .toml file")
    p.add_argument("--set", action="append", default=[], metavar="PART=VALUE",
                   help="give a part a value, e.g. --set R1=10k (repeatable)")
    p.add_argument("--latex", action="store_true", help="also print H(s) in LaTeX")
    p.add_argument("--symbolic", action="store_true",
                   help=f"derive and print H(s) even past {ANALYZE_MAX_TERMS} terms (up to "
                        f"{SYMBOLIC_MAX_TERMS:,}); otherwise a larger one is analysed numerically")
    p.add_argument("--json", nargs="?", const="-", metavar="OUT",
                   help="write the result as JSON to OUT (or stdout)")

    p = sub.add_parser("target", help="poles, zeros and sections of a spec's target")
    p.add_argument("spec", metavar="SPEC", help="the spec file (TOML; see the README)")
    p.add_argument("--json", nargs="?", const="-", metavar="OUT", help="write JSON to OUT (or stdout)")

    p = sub.add_parser("design", help="solve and snap part values for a spec's target")
    p.add_argument("spec", metavar="SPEC", help="the spec file (TOML; see the README)")
    p.add_argument("--json", metavar="OUT", help="write the design as JSON")
    p.add_argument("--bom", metavar="OUT.csv", help="write a bill of materials (CSV)")
    p.add_argument("--report", metavar="OUT.html", help="write a self-contained HTML report")
    p.add_argument("--plots", metavar="DIR", help="write each plot as PNG and SVG into DIR")
    p.add_argument("--schematic", metavar="DIR",
                   help="write each section's schematic and the cascade's as SVG and PNG into DIR")
    _add_resistor_style(p)
    p.add_argument("--samples", type=int, help="Monte Carlo samples (default: the spec's)")
    p.add_argument("--seed", type=int, help="random seed (default: the spec's, else 0)")
    p.add_argument("--workers", type=int,
                   help="worker processes for a Monte Carlo of 50,000 samples or more "
                        "(default: all cores; the result does not depend on it)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")

    p = sub.add_parser("compare", help="rank every candidate topology for a spec's target")
    p.add_argument("spec", metavar="SPEC", help="the spec file (TOML; see the README)")
    p.add_argument("--rank-by", choices=("yield", "error", "parts", "sensitivity"), default="yield",
                   help="ranking key (default: yield)")
    p.add_argument("--json", metavar="OUT", help="write the ranking as JSON")
    p.add_argument("--report", metavar="OUT.html", help="write a self-contained HTML report")
    p.add_argument("--plots", metavar="DIR", help="write each chart as PNG and SVG into DIR")
    _add_resistor_style(p)
    p.add_argument("--samples", type=int, help="Monte Carlo samples per candidate")
    p.add_argument("--workers", type=int, help="worker processes (default: all cores)")
    p.add_argument("--gbw", choices=("built", "rule", "model"), default="built",
                   help="op-amp GBW each candidate needs: the finite-GBW model on the snapped "
                        "design as built (default), the 100·f0·Q common practice, or the model "
                        "plus the GBW a design re-solved for the op-amp needs (slower)")
    p.add_argument("--seed", type=int, help="random seed")
    p.add_argument("--quiet", action="store_true", help="no progress bar")
    p.add_argument("--wide", action="store_true", help="one line per candidate, past 100 columns")

    p = sub.add_parser("loop", help="design a loop compensator and check its margins")
    p.add_argument("spec", metavar="SPEC", help="the spec file (TOML; see the README)")
    p.add_argument("--json", metavar="OUT", help="write the result as JSON")
    p.add_argument("--report", metavar="OUT.html", help="write a self-contained HTML report")
    p.add_argument("--plots", metavar="DIR", help="write each plot as PNG and SVG into DIR")
    p.add_argument("--schematic", metavar="DIR",
                   help="write the compensator's schematic as SVG and PNG into DIR")
    _add_resistor_style(p)
    p.add_argument("--samples", type=int, help="Monte Carlo samples")
    p.add_argument("--seed", type=int, help="random seed")
    p.add_argument("--workers", type=int,
                   help="worker processes for a Monte Carlo of 50,000 samples or more "
                        "(default: all cores; the result does not depend on it)")
    p.add_argument("--quiet", action="store_true", help="no progress bar")

    _add_explore_parser(sub)

    p = sub.add_parser("topologies", help="list the topology library, or show one")
    p.add_argument("id", nargs="?", metavar="ID", help="show one topology with its functions")
    p.add_argument("--folder", metavar="DIR", help="also list the topology files in DIR")
    p.add_argument("--json", nargs="?", const="-", metavar="OUT", help="write JSON to OUT (or stdout)")
    p.add_argument("--schematic", metavar="OUT.svg",
                   help="with ID: write the topology's schematic (part symbols) as SVG")
    _add_resistor_style(p)
    return parser


def _add_resistor_style(parser):
    parser.add_argument("--resistor-style", choices=("iec", "ieee"), default="iec",
                        help="resistor symbol in schematics: IEC 60617 rectangle (default) or "
                             "IEEE 315 zig-zag")


def _check_schematic_folder(folder):
    if folder is not None and not Path(folder).is_dir():
        raise SpecError(f"--schematic: folder {folder!r} does not exist")


def main(argv: list[str] | None = None) -> int:
    """Run the command; returns the exit status."""
    parser = build_parser()
    try:
        args = parser.parse_args(argv)
        if not args.command:
            parser.print_help()
            return 2
        _check_early(args)
        return _COMMANDS[args.command](args)
    except UnreachableTarget as error:
        print(f"cannot reach the target: {error}", file=sys.stderr)
        return 1
    except SpecError as error:
        print(f"error: {error}", file=sys.stderr)
        return 2
    except PlacerError as error:
        print(f"error: {error}", file=sys.stderr)
        return 1
    except BrokenPipeError:  # output piped into a pager or head that closed early
        sys.stderr.close()
        return 0
    except KeyboardInterrupt:
        print("error: interrupted", file=sys.stderr)
        if argv is None:  # the command itself: worker pools are ended, skip the slow teardown
            _exit_now(130)
        return 130


def _exit_now(status: int) -> None:
    """Flush the output and leave at once (a Ctrl-C should not wait for cleanup)."""
    for stream in (sys.stdout, sys.stderr):
        try:
            stream.flush()
        except (OSError, ValueError):
            pass
    os._exit(status)


# -- helpers -------------------------------------------------------------------

#: Tables whose keys and types a spec is checked for before anything heavy loads.
_EARLY_TABLES = ("cascade", "parts", "candidates", "tolerance", "amplifier", "noise", "signal")


def _check_early(args):
    """Fail on a bad spec file or option before the numerical stack loads.

    The commands import sympy, scipy, python-control and matplotlib (about
    two seconds); a missing, unreadable or malformed spec, an unknown
    table or key, a missing output folder or a bad count is found first
    with `placer.schema` and the standard library only. The commands run
    the same checks (and all the others) again when they load the spec.
    """
    spec = getattr(args, "spec", None)
    if spec is None:
        return
    from .schema import check_table, read_toml

    data = read_toml(spec, what="spec file")
    check_table(data, "", source=str(spec))
    for name in _EARLY_TABLES:
        if name in data:
            check_table(data[name], name, source=str(spec))
    for option in ("json", "bom", "report"):
        path = getattr(args, option, None)
        if path and path != "-":
            check_output_path(path, inputs=(spec,), option=f"--{option}")
    plots = getattr(args, "plots", None)
    if plots and not Path(plots).is_dir():
        raise SpecError(f"--plots: folder {plots!r} does not exist")
    _check_schematic_folder(getattr(args, "schematic", None))
    if args.command in ("design", "loop"):  # compare leaves its counts to compare()
        _check_counts(("--samples", args.samples if args.command == "design" else None, 1),
                      ("--seed", args.seed, 0), ("--workers", args.workers, 1))


def _emit_json(data, destination, *, inputs=(), option="--json"):
    text = json.dumps(data, indent=2, allow_nan=False) + "\n"
    if destination in (None, "-"):
        sys.stdout.write(text)
    else:
        write_text(destination, text, inputs=inputs, option=option)


def _pairs(roots):
    return [[float(r.real), float(r.imag)] for r in sorted(roots, key=lambda r: (abs(r), r.imag))]


# -- analyze -------------------------------------------------------------------

#: Terms (N and D together) past which ``analyze`` gives numbers instead of
#: H(s): 2000 terms print as some 50 kB, past reading, while every library
#: function stays under 611 (see the README).
ANALYZE_MAX_TERMS = 2000
#: The ceiling with ``--symbolic``: about 1 kB of memory per term in sympy form.
SYMBOLIC_MAX_TERMS = 1_000_000


def _cmd_analyze(args):
    from .circuit.elements import read_settings
    from .circuit.library import load_analysable
    from .analysis.network import network_function
    from .analysis.pencil import circuit_poles, circuit_zeros
    from .report.console import table, wrap_text

    loaded = load_analysable(args.topology)
    topology, circuit = loaded.topology, loaded.circuit
    settings = read_settings(circuit, args.set)
    symbols = circuit.symbols
    values = dict(topology.values) if topology is not None else {}
    values.update(settings)
    label = topology.id if topology is not None else args.topology
    limit = SYMBOLIC_MAX_TERMS if args.symbolic else ANALYZE_MAX_TERMS
    try:
        nf = network_function(circuit, max_terms=limit)
    except SymbolicSizeError as error:
        return _analyze_numerically(args, circuit, values, label, error)
    lines = [f"H(s) of {label}" + (f" — {topology.title}" if topology is not None else "") + ":"]
    from .report.polynomial import polynomial_text

    numerator_text, denominator_text = polynomial_text(nf.numerator), polynomial_text(nf.denominator)
    lines.append(f"  N(s) = {numerator_text}")
    lines.append(f"  D(s) = {denominator_text}")
    lines.append(f"  order {nf.order}")
    data = {"id": label, "numerator": numerator_text,
            "denominator": denominator_text, "order": nf.order}
    if nf.order in (1, 2):
        lines.append(f"  w0 = {nf.omega0}   (rad/s)")
        if nf.q is not None:
            lines.append(f"  Q  = {nf.q}")
        lines.append(f"  gain ({nf.gain_kind}) = {nf.gain}")
        data.update({"omega0": str(nf.omega0), "q_expression": None if nf.q is None else str(nf.q),
                     "gain_expression": str(nf.gain)})
    if args.latex:
        lines.append(f"  LaTeX: H(s) = {nf.latex()}")
        data["latex"] = nf.latex()
    missing = [s for s in symbols if s not in values]
    if not missing:
        # A function past the readable size (--symbolic) is too long to compile
        # into an evaluator: its numbers come from the pencil.
        numeric = not symbols or nf.term_count > ANALYZE_MAX_TERMS
        poles = circuit_poles(circuit, values) if numeric else nf.poles(values)
        zeros = circuit_zeros(circuit, values) if numeric else nf.zeros(values)
        data["poles"] = _pairs(poles)
        data["zeros"] = _pairs(zeros)
        lines.append("")
        lines.append("With values: " + (", ".join(f"{k} = {format_value(v)}" for k, v in values.items()) or "all given in the file"))
        def row(kind, r):
            # + 0.0 turns a negative zero into a plain 0
            return [kind, f"{r.real + 0.0:.6g}", f"{r.imag + 0.0:+.6g}",
                    format_value(abs(r) / (2 * math.pi), "Hz", digits=4)]

        rows = [row("pole", p) for p in sorted(poles, key=lambda r: (abs(r), r.imag))]
        rows += [row("zero", z) for z in sorted(zeros, key=lambda r: (abs(r), r.imag))]
        lines.append(table(["root", "re (rad/s)", "im (rad/s)", "|root| (Hz)"], rows))
        if nf.order == 2:
            figures = nf.second_order_figures(values)
            # No f0 or Q when D(s)'s coefficients differ in sign; no DC gain with a pole at 0.
            f0 = finite_or_none(float(figures.omega0) / (2 * math.pi))
            q = finite_or_none(float(figures.q))
            gain = finite_or_none(float(figures.gain))
            gain_db = 20 * math.log10(abs(gain)) if gain else None
            data.update({"f0_hz": f0, "q": q, "gain_db": gain_db})
            shown = ("0" if gain == 0 else "none (a pole at s = 0)" if gain is None
                     else f"{gain_db:+.3f} dB" + (" (inverting)" if gain < 0 else ""))
            lines.append((f"  f0 = {format_value(f0, 'Hz', digits=4)}   Q = {q:.4f}"
                          if f0 is not None and q is not None else
                          "  f0, Q: none (D(s) has coefficients of both signs: real poles, "
                          "one in the right half-plane)") + f"   gain = {shown}")
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
    if args.json:
        _emit_json(data, args.json, inputs=(args.topology,))
        if args.json == "-":
            return 0
    print(wrap_text("\n".join(lines)))
    return 0


def _analyze_numerically(args: argparse.Namespace, circuit: Circuit, values: dict, label: str,
                         error: SymbolicSizeError) -> int:
    """``analyze`` past the term limit: poles, zeros and response from the pencil."""
    import numpy as np

    from .analysis.pencil import circuit_response, circuit_roots
    from .report.console import table

    hint = "" if args.symbolic else " (--symbolic to derive it anyway)"
    reason = (f"H(s) of {label} is too large to read: its derivation passed {error.limit:,} "
              f"terms{hint}")
    missing = [s for s in circuit.symbols if s not in values]
    if missing:
        raise PlacerError(f"{reason}; numeric poles, zeros and response need a value for every "
                          f"part: give {', '.join(missing)} with --set NAME=VALUE or [values] "
                          f"in the topology file")
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
    with np.errstate(divide="ignore"):
        db = 20 * np.log10(np.abs(h[shown]))
    phase = np.degrees(np.unwrap(np.angle(h)))[shown]
    data = {"id": label, "symbolic": False, "reason": reason, "order": int(roots.poles.size),
            "poles": _pairs(roots.poles), "zeros": _pairs(roots.zeros),
            "gain_constant": roots.gain,
            "response": [{"f_hz": float(f), "magnitude_db": float(m) if np.isfinite(m) else None,
                          "phase_deg": float(p)} for f, m, p in zip(f_hz, db, phase)]}
    if args.json:
        _emit_json(data, args.json, inputs=(args.topology,))
        if args.json == "-":
            return 0

    def row(kind, r):
        return [kind, f"{r.real + 0.0:.6g}", f"{r.imag + 0.0:+.6g}",
                format_value(abs(r) / (2 * math.pi), "Hz", digits=4)]

    lines = [f"{reason}; numeric analysis instead.", f"  order {roots.poles.size}", "",
             "With values: " + (", ".join(f"{k} = {format_value(v)}" for k, v in values.items())
                                or "all given in the file")]
    rows = [row("pole", p) for p in sorted(roots.poles, key=lambda r: (abs(r), r.imag))]
    rows += [row("zero", z) for z in sorted(roots.zeros, key=lambda r: (abs(r), r.imag))]
    lines.append(table(["root", "re (rad/s)", "im (rad/s)", "|root| (Hz)"], rows))
    lines.append(f"  H(s) = k·Π(s − z)/Π(s − p), k = {roots.gain:.6g}")
    lines.append("")
    lines.append(table(["f", "|H| (dB)", "phase (deg)"],
                       [[format_value(f, "Hz", digits=3), f"{m:+.2f}", f"{p:+.1f}"]
                        for f, m, p in zip(f_hz, db, phase)]))
    print("\n".join(lines))
    return 0


# -- target --------------------------------------------------------------------

def _cmd_target(args):
    from .report.console import target_text
    from .spec.reader import load_spec
    from .target.sections import split_sections
    from .spec.target_table import target_to_dict

    spec = load_spec(args.spec)
    if spec.target is None:
        raise SpecError(f"{args.spec}: the spec has no [target] table")
    sections = split_sections(spec.target, ordering=spec.ordering, gain=spec.gain_distribution)
    if args.json:
        _emit_json(target_to_dict(spec.target, sections), args.json, inputs=(args.spec,))
        if args.json == "-":
            return 0
    print(target_text(spec.target, sections))
    return 0


# -- design --------------------------------------------------------------------

def _check_counts(*options):
    """(option, value, least) triples: a value given below its least is bad input."""
    for option, value, low in options:
        if value is not None and value < low:
            raise SpecError(f"{option} {value}: give a whole number >= {low}")


def _cmd_design(args):
    from .design import design
    from .evidence.gather import gather_evidence
    from .report.console import Progress, design_text, evidence_text
    from .report.bom import bom_csv, bom_rows
    from .report.data import design_to_dict
    from .spec.reader import load_spec

    spec = load_spec(args.spec)
    inputs = (args.spec,)
    for option, path in (("--json", args.json), ("--bom", args.bom), ("--report", args.report)):
        if path:
            check_output_path(path, inputs=inputs, option=option)
    if args.plots and not Path(args.plots).is_dir():
        raise SpecError(f"--plots: folder {args.plots!r} does not exist")
    _check_schematic_folder(args.schematic)
    _check_counts(("--samples", args.samples, 1), ("--seed", args.seed, 0),
                  ("--workers", args.workers, 1))
    progress = Progress("designing", quiet=args.quiet)
    try:
        result = design(spec, seed=args.seed, progress=progress)
    finally:
        progress.close()
    progress = Progress("evidence", quiet=args.quiet)
    try:
        evidence = gather_evidence(result, samples=args.samples, seed=args.seed, progress=progress,
                                   workers=args.workers)
    finally:
        progress.close()
    from .evidence.prelayout import check_design

    prelayout = check_design(result)
    data = design_to_dict(result, evidence=evidence.to_dict(), prelayout=prelayout.to_dict())
    print(design_text(data))
    print()
    print(evidence_text(evidence))
    if args.json:
        _emit_json(data, args.json, inputs=inputs)
    if args.bom:
        opamps = [(e.name, "op-amp") for e in result.circuit.elements if e.kind == "opamp"]
        rows = bom_rows(result.parts, tolerances=spec.tolerance.tolerances, opamps=opamps,
                        amplifier=spec.amplifier)
        write_text(args.bom, bom_csv(rows), inputs=inputs, option="--bom")
    if args.report or args.plots:
        from .report.html import write_design_report

        write_design_report(result, data, evidence, html_path=args.report, plots_dir=args.plots,
                            inputs=inputs, prelayout=prelayout,
                            resistor_style=args.resistor_style)
    if args.schematic:
        from .report.schematic import design_schematics, write_schematic_files

        write_schematic_files(design_schematics(result), args.schematic,
                              resistor_style=args.resistor_style, inputs=inputs)
    print()
    print("Caution: these values are a starting point; confirm the design by simulation and on the "
          "bench.\nEquipment connected to mains, or used where a failure can hurt someone, must follow\n"
          "its applicable safety standards and licensed practice.")
    return 0


# -- compare -------------------------------------------------------------------

def _cmd_compare(args):
    from .compare import compare, comparison_to_dict
    from .report.comparison import comparison_text
    from .report.console import Progress
    from .spec.reader import load_spec

    spec = load_spec(args.spec)
    inputs = [spec.path] + [c for c in (spec.candidates or ()) if c.endswith(".toml")]
    if spec.folder:
        inputs += [str(p) for p in Path(spec.folder).glob("*.toml")]
    for option, path in (("--json", args.json), ("--report", args.report)):
        if path:
            check_output_path(path, inputs=inputs, option=option)
    if args.plots and not Path(args.plots).is_dir():
        raise SpecError(f"--plots: folder {args.plots!r} does not exist")
    progress = Progress("compare", quiet=args.quiet)
    try:
        comparison = compare(spec, rank_by=args.rank_by, samples=args.samples,
                             workers=args.workers, seed=args.seed, progress=progress, gbw=args.gbw)
    finally:
        progress.close()
    print(comparison_text(comparison, wide=args.wide))
    if args.json:
        _emit_json(comparison_to_dict(comparison), args.json, inputs=inputs)
    if args.report or args.plots:
        from .report.comparison import write_comparison_report

        write_comparison_report(comparison, html_path=args.report, plots_dir=args.plots,
                                inputs=inputs, resistor_style=args.resistor_style)
    missed = [s for s in comparison.sections if not s.reachable]
    for s in missed:
        reasons = "; ".join(f"{c.topology}: {c.reason}" for c in s.candidates) or "no candidate topology"
        print(f"cannot reach section {s.index} ({s.section.kind}, f0 "
              f"{format_value(s.section.f0_hz, 'Hz', digits=4)}): {reasons}", file=sys.stderr)
    return 1 if missed else 0


# -- loop ----------------------------------------------------------------------

def _cmd_loop(args: argparse.Namespace) -> int:
    from .report.console import Progress, wrap_text
    from .report.loop_text import LOOP_CAUTION, loop_data, loop_text
    from .spec.loop_table import run_loop
    from .spec.reader import load_spec

    spec = load_spec(args.spec)
    if spec.loop is None:
        raise SpecError(f"{args.spec}: the spec has no [loop] table")
    inputs = (args.spec,)
    for option, path in (("--json", args.json), ("--report", args.report)):
        if path:
            check_output_path(path, inputs=inputs, option=option)
    if args.plots and not Path(args.plots).is_dir():
        raise SpecError(f"--plots: folder {args.plots!r} does not exist")
    _check_schematic_folder(args.schematic)
    samples = spec.tolerance.samples if args.samples is None else args.samples
    if samples < 0:
        raise SpecError(f"--samples {samples}: give a whole number >= 0 (0 skips the Monte Carlo)")
    seed = spec.tolerance.seed if args.seed is None else args.seed
    _check_counts(("--seed", args.seed, 0), ("--workers", args.workers, 1))
    tolerances = dict(spec.tolerance.tolerances)
    progress = Progress("loop", quiet=args.quiet)
    progress(0, max(samples, 1), "compensator")
    try:
        result = run_loop(spec.loop, source=args.spec, samples=samples, seed=seed,
                          tolerances=tolerances, distribution=spec.tolerance.distribution,
                          workers=args.workers, parts=spec.parts,
                          progress=lambda done, total: progress(done, total, "Monte Carlo builds"))
        progress(max(samples, 1), max(samples, 1), "done")
    finally:
        progress.close()
    data, loops = loop_data(result, spec.amplifier)
    print(wrap_text(loop_text(data)))
    if args.json:
        _emit_json(data, args.json, inputs=inputs)
    if args.report or args.plots:
        from .report.html import write_loop_report

        write_loop_report(result, data, html_path=args.report, plots_dir=args.plots, inputs=inputs,
                          opamp_loops=loops, resistor_style=args.resistor_style)
    if args.schematic:
        from .report.schematic import compensator_schematic, write_schematic_files

        write_schematic_files({"compensator": compensator_schematic(result.design)},
                              args.schematic, resistor_style=args.resistor_style, inputs=inputs)
    print()
    print(LOOP_CAUTION)
    return 0


def _plain(value):
    if isinstance(value, float):
        return f"{value:.4g}"
    return str(value)


# -- topologies ----------------------------------------------------------------

def _solved_for(topology):
    """Free parts the solver moves: those no constraint ties to another."""
    tied = {c.part for c in topology.constraints}
    return [name for name in topology.free if name not in tied]


def _cmd_topologies(args):
    from .circuit.library import library_topologies, load_folder, resolve_topology
    from .analysis.network import network_function
    from .report.console import WIDTH, table, wrap_text
    from .report.polynomial import polynomial_text

    pool = dict(library_topologies())
    errors = {}
    if args.folder:
        loaded = load_folder(args.folder)
        pool.update(loaded.topologies)
        errors = loaded.errors
    if args.schematic and not args.id:
        raise SpecError("--schematic: name a topology, for example "
                        "`placer topologies mfb-lowpass --schematic mfb.svg`")
    if args.id:
        topology = resolve_topology(args.id) if args.id not in pool else pool[args.id]
        if args.schematic:
            from .report.schematic import render_svg, topology_schematic

            inputs = tuple(p for p in (topology.path,) if p)
            check_output_path(args.schematic, inputs=inputs, option="--schematic")
            write_text(args.schematic, render_svg(topology_schematic(topology),
                                                  resistor_style=args.resistor_style),
                       inputs=inputs, option="--schematic")
        nf = network_function(topology.circuit)
        data = {
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
        if args.json:
            _emit_json(data, args.json)
            if args.json == "-":
                return 0
        lines = [f"{topology.id}: {topology.title}",
                 f"  response {topology.response}" + (f" ({topology.family})" if topology.family else "")
                 + f", order {topology.order}, {topology.part_count} parts, {topology.opamp_count} op-amps"
                 + (", inverting" if topology.inverting else ""),
                 f"  free parts: {', '.join(_solved_for(topology))}"
                 + (" (the rest follow the constraints)" if topology.constraints else "")]
        if topology.constraints:
            lines.append(f"  constraints: {', '.join(str(c) for c in topology.constraints)}")
        if topology.description:
            lines.append(f"  {topology.description}")
        lines.append(f"  N(s) = {data['numerator']}")
        lines.append(f"  D(s) = {data['denominator']}")
        if nf.order in (1, 2):
            lines.append(f"  w0 = {data['omega0']}   (rad/s)")
            if data["q"]:
                lines.append(f"  Q  = {data['q']}")
            lines.append(f"  gain = {data['gain']}")
        if topology.formula:
            lines.append(f"  published: {topology.formula}")
        print(wrap_text("\n".join(lines)))
        return 0
    rows = []
    listing = []
    for topology in sorted(pool.values(), key=lambda t: (t.response, t.order, t.id)):
        rows.append([topology.id, topology.title, topology.response
                     + (f"/{topology.family}" if topology.family else ""), topology.order,
                     topology.part_count, topology.opamp_count])
        listing.append({"id": topology.id, "title": topology.title, "response": topology.response,
                        "family": topology.family, "order": topology.order,
                        "parts": topology.part_count, "opamps": topology.opamp_count})
    for path, message in errors.items():
        listing.append({"id": path, "error": message})
    if args.json:
        _emit_json(listing, args.json)
        if args.json == "-":
            return 0
    print(table(["id", "title", "response", "order", "parts", "op-amps"], rows, width=WIDTH, wrap=1))
    for path, message in errors.items():
        print(f"  could not load {path}: {message}")
    return 0


# -- explore -------------------------------------------------------------------

def _add_explore_parser(sub):
    p = sub.add_parser("explore", help="place a spec's roots by hand on a local web page")
    p.add_argument("spec", metavar="SPEC", help="the spec file (TOML; see the README)")
    p.add_argument("--host", default="127.0.0.1",
                   help="address to listen on (default 127.0.0.1; another one prints a warning)")
    p.add_argument("--port", type=int, default=0, help="port (default: a free one)")
    p.add_argument("--no-browser", action="store_true", help="print the address only")


def _cmd_explore(args):
    from .explore.server import serve

    return serve(args.spec, host=args.host, port=args.port, open_browser=not args.no_browser)


_COMMANDS = {
    "analyze": _cmd_analyze,
    "target": _cmd_target,
    "design": _cmd_design,
    "compare": _cmd_compare,
    "loop": _cmd_loop,
    "topologies": _cmd_topologies,
    "explore": _cmd_explore,
}


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
