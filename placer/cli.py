"""The ``placer`` command.

Subcommands: ``analyze`` (H(s) of a topology or circuit file), ``target``
(poles, zeros and sections of a spec's target), ``design`` (part values
and evidence), ``compare`` (rank candidate topologies), ``loop``
(compensator and margins), ``topologies`` (the library).

Exit status: 0 done; 1 a target that cannot be reached (the reasons are
printed); 2 bad input or an output that cannot be written (one line
``error: …``); 3 an internal error (one line ``internal error: …``; the
global ``--debug`` prints the traceback); 130 interrupted (Ctrl-C). No
traceback reaches the user without ``--debug``. Warnings print as one line
``warning: …`` each.

``--json`` alone (or ``--json -``) writes the JSON alone to standard
output and the console text to standard error; ``--json FILE`` writes the
file and prints the text as usual. Every output is checked before the
computation starts (its folder exists and can be written, it is not one of
the run's inputs).
"""

from __future__ import annotations

import argparse
import json
import os
import re
import sys
import traceback
import warnings
from collections.abc import Callable, Iterable, Sequence
from pathlib import Path
from typing import IO, TYPE_CHECKING, Any, TextIO


from . import __version__
from .errors import (BRIEF_LENGTH, NumericalWarning, PlacerError, SpecError,
                     SymbolicSizeError, UnreachableTarget, brief, brief_path)
from .report.files import check_output_folder, check_output_path, write_text
from .units import format_value

if TYPE_CHECKING:
    from .spec.reader import Spec

#: One subcommand: its parsed arguments to an exit status.
Command = Callable[[argparse.Namespace], int]
#: Adds one subcommand's parser: ``add(name, help=...)``.
AddParser = Callable[..., argparse.ArgumentParser]

# The analysis stack (sympy, scipy, python-control) loads inside the
# commands, so `placer --help` answers at once.

__all__ = ["main", "run", "build_parser"]

#: Exit statuses (see the module docstring).
EXIT_UNREACHABLE, EXIT_BAD_INPUT, EXIT_INTERNAL, EXIT_INTERRUPTED = 1, 2, 3, 130


class _Parser(argparse.ArgumentParser):
    """argparse with one-line errors and exit status 2."""

    def error(self, message: str) -> Any:  # never returns: raises SpecError
        # argparse quotes the user's value ('...'): a long one is cut, the rest kept.
        raise SpecError(re.sub(r"'([^']{%d,})'" % BRIEF_LENGTH,
                               lambda m: brief(m.group(1)), message))


def build_parser() -> argparse.ArgumentParser:
    """The ``placer`` argument parser, every subcommand with its options."""
    parser = _Parser(
        prog="placer",
        description="From pole-zero targets to a bill of materials: place the roots of an "
                    "analog filter or compensator with preferred-value parts, with evidence.",
    )
    parser.add_argument("--version", action="version", version=f"placer {__version__}")
    parser.add_argument("--debug", action="store_true",
                        help="on an error, print the traceback (also after the command)")
    # --debug after the command too; SUPPRESS keeps the top-level value when not given there.
    common = _Parser(add_help=False)
    common.add_argument("--debug", action="store_true", default=argparse.SUPPRESS,
                        help="on an error, print the traceback")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)

    def add_parser(name: str, **kwargs: Any) -> argparse.ArgumentParser:
        return sub.add_parser(name, parents=[common], **kwargs)

    p = add_parser("analyze", help="symbolic and numeric H(s) of a topology or circuit file")
    p.add_argument("topology", metavar="TOPOLOGY_OR_FILE", help="a library id or a .toml file")
    p.add_argument("--set", action="append", default=[], metavar="PART=VALUE",
                   help="give a part a value, e.g. --set R1=10k (repeatable)")
    p.add_argument("--latex", action="store_true", help="also print H(s) in LaTeX")
    p.add_argument("--symbolic", action="store_true",
                   help=f"derive and print H(s) even past {ANALYZE_MAX_TERMS} terms (up to "
                        f"{SYMBOLIC_MAX_TERMS:,}); otherwise a larger one is analysed numerically")
    _add_json(p, "the result")

    p = add_parser("target", help="poles, zeros and sections of a spec's target")
    p.add_argument("spec", metavar="SPEC", help="the spec file (TOML; see the README)")
    _add_json(p, "the target")

    p = add_parser("design", help="solve and snap part values for a spec's target")
    p.add_argument("spec", metavar="SPEC", help="the spec file (TOML; see the README)")
    _add_json(p, "the design")
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

    p = add_parser("compare", help="rank every candidate topology for a spec's target")
    p.add_argument("spec", metavar="SPEC", help="the spec file (TOML; see the README)")
    p.add_argument("--rank-by", choices=("yield", "error", "parts", "sensitivity"), default="yield",
                   help="ranking key (default: yield)")
    _add_json(p, "the ranking")
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

    p = add_parser("loop", help="design a loop compensator and check its margins")
    p.add_argument("spec", metavar="SPEC", help="the spec file (TOML; see the README)")
    _add_json(p, "the result")
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

    _add_explore_parser(add_parser)

    p = add_parser("topologies", help="list the topology library, or show one")
    p.add_argument("id", nargs="?", metavar="ID", help="show one topology with its functions")
    p.add_argument("--folder", metavar="DIR", help="also list the topology files in DIR")
    _add_json(p, "the list or the topology")
    p.add_argument("--schematic", metavar="OUT.svg",
                   help="with ID: write the topology's schematic (part symbols) as SVG")
    _add_resistor_style(p)
    return parser


def _add_json(parser: argparse.ArgumentParser, what: str) -> None:
    parser.add_argument("--json", nargs="?", const="-", metavar="OUT",
                        help=f"write {what} as JSON to OUT; alone or with '-', the JSON alone "
                             "to standard output (the console text then goes to standard error)")


def _add_resistor_style(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--resistor-style", choices=("iec", "ieee"), default="iec",
                        help="resistor symbol in schematics: IEC 60617 rectangle (default) or "
                             "IEEE 315 zig-zag")


# -- running -------------------------------------------------------------------

#: The longest a warning's or an internal error's message is shown, in characters.
MESSAGE_LENGTH = 300


def _one_line(text: object, limit: int = MESSAGE_LENGTH) -> str:
    return brief(" ".join(str(text).split()), limit, quote=False)


def _warning_hook(debug: bool) -> Callable[..., None]:
    """A ``warnings.showwarning`` that prints each warning as one line.

    The project's own warnings (their classes live in ``placer``) print as
    ``warning: message``; any other (numpy's RuntimeWarning, say: numerical
    trouble the project did not foresee) is named as numerical trouble,
    with its class, and ``--debug`` adds where it was raised.
    """
    def show(message: Warning | str, category: type[Warning], filename: str, lineno: int,
             file: TextIO | None = None, line: str | None = None) -> None:
        stream = file or sys.stderr
        text = _one_line(message)
        own = getattr(category, "__module__", "").split(".")[0] == "placer"
        if not own:
            text = (f"numerical trouble ({category.__name__}, as a "
                    f"{NumericalWarning.__name__}): {text}")
        if debug:
            text += f" [{filename}:{lineno}]"
        try:
            stream.write(f"warning: {text}\n")
        except (OSError, ValueError):  # stderr closed
            pass

    return show


def run() -> None:
    """The console entry point: :func:`main`, then exit with its status."""
    sys.exit(main())


def main(argv: list[str] | None = None) -> int:
    """Run the command; returns the exit status (see the module docstring)."""
    from_command = argv is None
    argv = sys.argv[1:] if argv is None else list(argv)
    debug = "--debug" in argv
    parser = build_parser()
    with warnings.catch_warnings():
        warnings.showwarning = _warning_hook(debug)
        try:
            args = parser.parse_args(argv)
            if not args.command:
                parser.print_help()
                return EXIT_BAD_INPUT
            _check_early(args)
            return _COMMANDS[args.command](args)
        except UnreachableTarget as error:
            _traceback(debug)
            print(f"cannot reach the target: {error}", file=sys.stderr)
            return EXIT_UNREACHABLE
        except PlacerError as error:  # bad input, an output that cannot be written
            _traceback(debug)
            print(f"error: {error}", file=sys.stderr)
            return EXIT_BAD_INPUT
        except BrokenPipeError:  # output piped into a pager or head that closed early
            sys.stderr.close()
            return 0
        except KeyboardInterrupt:
            _traceback(debug)
            print("error: interrupted", file=sys.stderr)
            if from_command:  # worker pools are ended: skip the interpreter's slow teardown
                _exit_now(EXIT_INTERRUPTED)
            return EXIT_INTERRUPTED
        except Exception as error:  # a defect: one line, the traceback with --debug
            _traceback(debug)
            message = _one_line(f"{type(error).__name__}: {error}" if str(error)
                                else type(error).__name__)
            hint = "" if debug else "; run with --debug for the traceback"
            print(f"internal error: {message}{hint}", file=sys.stderr)
            return EXIT_INTERNAL


def _traceback(debug: bool) -> None:
    if debug:
        traceback.print_exc(file=sys.stderr)


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


def _check_early(args: argparse.Namespace) -> None:
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
    _check_outputs(args, (spec,))  # again with every input once the spec is read
    if args.command in ("design", "loop"):  # compare leaves its counts to compare()
        _check_counts(("--samples", args.samples if args.command == "design" else None, 1),
                      ("--seed", args.seed, 0), ("--workers", args.workers, 1))


#: Output options that name a file, and those that name a folder.
_FILE_OUTPUTS = ("json", "bom", "report")
_FOLDER_OUTPUTS = ("plots", "schematic")


def _json_to_stdout(args: argparse.Namespace) -> bool:
    return getattr(args, "json", None) == "-"


def _console(args: argparse.Namespace) -> IO[str]:
    """Where the console text goes: standard error when the JSON takes standard output."""
    return sys.stderr if _json_to_stdout(args) else sys.stdout


def _check_outputs(args: argparse.Namespace, inputs: Iterable[str | None] = (), *,
                   file_options: Sequence[str] = _FILE_OUTPUTS,
                   folder_options: Sequence[str] = _FOLDER_OUTPUTS) -> None:
    """Check every output the command will write, before it computes anything."""
    inputs = tuple(inputs)  # read once per output
    files: dict[str, str] = {}
    for name in file_options:
        path = getattr(args, name, None)
        option = "--" + name
        if path is None or (name == "json" and path == "-"):
            continue
        target = check_output_path(path, inputs=inputs, option=option)
        key = str(target.resolve())
        if key in files:
            raise SpecError(f"{option}: {brief(path)} is also the {files[key]} output; "
                            "give each output its own file")
        files[key] = option
    for name in folder_options:
        path = getattr(args, name, None)
        if path is not None:
            check_output_folder(path, inputs=inputs, option="--" + name)


def _spec_inputs(spec: Spec) -> list[str]:
    """Every file a spec run reads: the spec, its candidate topology files and folder."""
    inputs = [spec.path]
    inputs += [c for c in (spec.candidates or ()) if Path(c).is_file()]
    if spec.folder:
        inputs.append(spec.folder)  # a folder stands for every entry in it
    return inputs


def _emit_json(data: Any, destination: str | None, *, inputs: Iterable[str | None] = (),
               option: str = "--json") -> None:
    text = json.dumps(data, indent=2, allow_nan=False) + "\n"
    if destination in (None, "-"):
        sys.stdout.write(text)
        sys.stdout.flush()
    else:
        write_text(destination, text, inputs=inputs, option=option)


# -- analyze -------------------------------------------------------------------

#: Terms (N and D together) past which ``analyze`` gives numbers instead of
#: H(s): 2000 terms print as some 50 kB, past reading, while every library
#: function stays under 611 (see the README).
ANALYZE_MAX_TERMS = 2000
#: The ceiling with ``--symbolic``: about 1 kB of memory per term in sympy form.
SYMBOLIC_MAX_TERMS = 1_000_000


def _cmd_analyze(args: argparse.Namespace) -> int:
    from .circuit.elements import read_settings
    from .circuit.library import load_analysable
    from .analysis.network import network_function
    from .analysis.pencil import circuit_poles, circuit_zeros
    from .report.commands import analyze_numeric_report, analyze_report
    from .report.console import wrap_text

    loaded = load_analysable(args.topology)
    topology, circuit = loaded.topology, loaded.circuit
    inputs = (args.topology,)
    _check_outputs(args, inputs)
    settings = read_settings(circuit, args.set)
    symbols = circuit.symbols
    values = dict(topology.values) if topology is not None else {}
    values.update(settings)
    label = topology.id if topology is not None else args.topology
    limit = SYMBOLIC_MAX_TERMS if args.symbolic else ANALYZE_MAX_TERMS
    try:
        nf = network_function(circuit, max_terms=limit)
    except SymbolicSizeError as error:
        hint = "" if args.symbolic else " (--symbolic to derive it anyway)"
        reason = (f"H(s) of {label} is too large to read: its derivation passed "
                  f"{error.limit:,} terms{hint}")
        missing = [s for s in symbols if s not in values]
        if missing:
            raise SpecError(f"{reason}; numeric poles, zeros and response need a value for "
                            f"every part: give {', '.join(missing)} with --set NAME=VALUE or "
                            f"[values] in the topology file") from None
        data, text = analyze_numeric_report(circuit, values, label=label, reason=reason)
    else:
        # A function past the readable size (--symbolic) is too long to compile
        # into an evaluator: its numbers come from the pencil.
        numeric = not symbols or nf.term_count > ANALYZE_MAX_TERMS
        data, text = analyze_report(
            nf, label=label, title=topology.title if topology is not None else None,
            values=values, settings=settings, symbols=symbols, latex=args.latex,
            numeric_roots=((lambda: (circuit_poles(circuit, values), circuit_zeros(circuit, values)))
                           if numeric else None))
    if args.json:
        _emit_json(data, args.json, inputs=inputs)
    print(wrap_text(text), file=_console(args))
    return 0


# -- target --------------------------------------------------------------------

def _cmd_target(args: argparse.Namespace) -> int:
    from .report.console import target_text
    from .spec.reader import load_spec
    from .target.sections import split_sections
    from .spec.target_table import target_to_dict

    spec = load_spec(args.spec)
    inputs = _spec_inputs(spec)
    _check_outputs(args, inputs)
    if spec.target is None:
        raise SpecError(f"{brief_path(args.spec)}: the spec has no [target] table")
    sections = split_sections(spec.target, ordering=spec.ordering, gain=spec.gain_distribution)
    if args.json:
        _emit_json(target_to_dict(spec.target, sections), args.json, inputs=inputs)
    print(target_text(spec.target, sections), file=_console(args))
    return 0


# -- design --------------------------------------------------------------------

def _check_counts(*options: tuple[str, int | None, int]) -> None:
    """(option, value, least) triples: a value given below its least is bad input."""
    for option, value, low in options:
        if value is not None and value < low:
            raise SpecError(f"{option} {value}: give a whole number >= {low}")


def _cmd_design(args: argparse.Namespace) -> int:
    from .design import design
    from .evidence.gather import gather_evidence
    from .report.console import Progress, design_text, evidence_text
    from .report.bom import bom_csv, bom_rows
    from .report.data import design_to_dict
    from .spec.reader import load_spec

    spec = load_spec(args.spec)
    inputs = _spec_inputs(spec)
    _check_outputs(args, inputs)
    _check_counts(("--samples", args.samples, 1), ("--seed", args.seed, 0),
                  ("--workers", args.workers, 1))
    console = _console(args)
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
    print(design_text(data), file=console)
    print(file=console)
    print(evidence_text(evidence), file=console)
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
    print(file=console)
    print("Caution: these values are a starting point; confirm the design by simulation and on the "
          "bench.\nEquipment connected to mains, or used where a failure can hurt someone, must follow\n"
          "its applicable safety standards and licensed practice.", file=console)
    return 0


# -- compare -------------------------------------------------------------------

def _cmd_compare(args: argparse.Namespace) -> int:
    from .compare import compare, comparison_to_dict
    from .report.comparison import comparison_text
    from .report.console import Progress
    from .spec.reader import load_spec

    spec = load_spec(args.spec)
    inputs = _spec_inputs(spec)
    _check_outputs(args, inputs)
    console = _console(args)
    progress = Progress("compare", quiet=args.quiet)
    try:
        comparison = compare(spec, rank_by=args.rank_by, samples=args.samples,
                             workers=args.workers, seed=args.seed, progress=progress, gbw=args.gbw)
    finally:
        progress.close()
    print(comparison_text(comparison, wide=args.wide), file=console)
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
    return EXIT_UNREACHABLE if missed else 0

# -- loop ----------------------------------------------------------------------

def _cmd_loop(args: argparse.Namespace) -> int:
    from .report.console import Progress, wrap_text
    from .report.loop_text import LOOP_CAUTION, loop_data, loop_text
    from .spec.loop_table import run_loop
    from .spec.reader import load_spec

    spec = load_spec(args.spec)
    if spec.loop is None:
        raise SpecError(f"{brief_path(args.spec)}: the spec has no [loop] table")
    inputs = _spec_inputs(spec)
    _check_outputs(args, inputs)
    console = _console(args)
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
    print(wrap_text(loop_text(data)), file=console)
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
    print(file=console)
    print(LOOP_CAUTION, file=console)
    return 0


# -- topologies ----------------------------------------------------------------

def _cmd_topologies(args: argparse.Namespace) -> int:
    from .circuit.library import library_topologies, load_folder, resolve_topology
    from .analysis.network import network_function
    from .report.commands import library_report, topology_report
    from .report.console import wrap_text

    if args.schematic is not None and not args.id:
        raise SpecError("--schematic: name a topology, for example "
                        "`placer topologies mfb-lowpass --schematic mfb.svg`")
    pool = dict(library_topologies())
    errors = {}
    inputs = []
    if args.folder is not None:
        loaded = load_folder(args.folder)
        pool.update(loaded.topologies)
        errors = loaded.errors
        inputs.append(args.folder)  # a folder stands for every entry in it
    topology = None
    if args.id:
        topology = resolve_topology(args.id) if args.id not in pool else pool[args.id]
        if topology.path:
            inputs.append(topology.path)
    _check_outputs(args, inputs, file_options=("json", "schematic"), folder_options=())
    data: Any  # the library's list, or one topology's dict
    if topology is None:
        data, text = library_report(pool, errors)
    else:
        if args.schematic:
            from .report.schematic import render_svg, topology_schematic

            write_text(args.schematic, render_svg(topology_schematic(topology),
                                                  resistor_style=args.resistor_style),
                       inputs=inputs, option="--schematic")
        data, text = topology_report(topology, network_function(topology.circuit))
    if args.json:
        _emit_json(data, args.json, inputs=inputs)
    print(wrap_text(text), file=_console(args))
    return 0


# -- explore -------------------------------------------------------------------

def _add_explore_parser(add_parser: AddParser) -> None:
    p = add_parser("explore", help="place a spec's roots by hand on a local web page")
    p.add_argument("spec", metavar="SPEC", help="the spec file (TOML; see the README)")
    p.add_argument("--host", default="127.0.0.1",
                   help="address to listen on (default 127.0.0.1; another one prints a warning)")
    p.add_argument("--port", type=int, default=0, help="port (default: a free one)")
    p.add_argument("--no-browser", action="store_true", help="print the address only")


def _cmd_explore(args: argparse.Namespace) -> int:
    from .explore.server import serve

    return serve(args.spec, host=args.host, port=args.port, open_browser=not args.no_browser)


_COMMANDS: dict[str, Command] = {
    "analyze": _cmd_analyze,
    "target": _cmd_target,
    "design": _cmd_design,
    "compare": _cmd_compare,
    "loop": _cmd_loop,
    "topologies": _cmd_topologies,
    "explore": _cmd_explore,
}


if __name__ == "__main__":  # pragma: no cover
    run()
