"""A long fuzzing run of every input path, with the counts by outcome.

The same cases as tests/test_fuzz.py (mutated examples, topology and
circuit files through ``placer.cli.main`` in-process), but thousands of
them, drawn afresh each run. It prints, per command, how many cases
ended in exit 0, 1 and 2, the most common first words of the error lines,
and every case that broke a promise (another status, a traceback, other
than one ``error:`` line on exit 2, a file changed outside the run's
folder), with the command line to repeat it.

    python benchmarks/fuzz.py                  # 2000 cases over the commands
    python benchmarks/fuzz.py --examples 500 --command analyze
    python benchmarks/fuzz.py --seed 7         # a reproducible run

No baseline to compare against: the figure that matters is the count of
broken promises, which must be 0.
"""

from __future__ import annotations

import argparse
import collections
import importlib.util
import re
import sys
import time
import warnings
from pathlib import Path

from hypothesis import HealthCheck, given, seed, settings

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))


def _fuzz_module():
    spec = importlib.util.spec_from_file_location("placer_fuzz_cases", ROOT / "tests" / "test_fuzz.py")
    module = importlib.util.module_from_spec(spec)
    sys.modules[spec.name] = module  # dataclasses look their module up by name
    spec.loader.exec_module(module)
    return module


# Share of the examples per command: design is by far the slowest.
_SHARES = {"target": 0.35, "analyze": 0.35, "topologies": 0.15, "loop": 0.1, "design": 0.05}


def _first_words(stderr: str) -> str:
    """The error line's gist: its text after the file name, numbers masked."""
    line = next((x for x in stderr.splitlines() if x.startswith("error:")), "")
    line = re.sub(r"'?/\S*placer-fuzz-[^/]+/", "'", line)
    line = re.sub(r"^error: ('?[\w./]+\.toml'?|spec file|topology[^:]*):?\s*", "", line)
    line = re.sub(r"'[^']*'|\"[^\"]*\"|-?\b[0-9][0-9.e+-]*", "…", line)
    return " ".join(line.split()[:6])


def run(command: str, examples: int, seed_value: int | None, module) -> tuple:
    """Run `examples` cases of one command; return (counts, gists, problems)."""
    counts: collections.Counter = collections.Counter()
    gists: collections.Counter = collections.Counter()
    problems: list = []
    strategy = getattr(module, f"{command}_cases")()

    @settings(max_examples=examples, deadline=None, database=None, derandomize=False,
              suppress_health_check=list(HealthCheck))
    @given(strategy)
    def body(case):
        outcome = module.run_case(case)
        counts[outcome.status] += 1
        if outcome.status == 2:
            gists[_first_words(outcome.stderr)] += 1
        if outcome.problems:
            problems.append((case.argv[:4], outcome.problems))

    if seed_value is not None:
        body = seed(seed_value)(body)
    body()
    return counts, gists, problems


def main(argv=None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("--examples", type=int, default=2000, help="cases in all (default 2000)")
    parser.add_argument("--command", choices=sorted(_SHARES), help="one command only")
    parser.add_argument("--seed", type=int, help="a seed, for a reproducible run")
    args = parser.parse_args(argv)
    module = _fuzz_module()
    commands = [args.command] if args.command else list(_SHARES)
    broken = 0
    warnings.simplefilter("ignore")
    for command in commands:
        share = 1.0 if args.command else _SHARES[command]
        examples = max(1, round(args.examples * share))
        start = time.perf_counter()
        counts, gists, problems = run(command, examples, args.seed, module)
        elapsed = time.perf_counter() - start
        total = sum(counts.values())
        shown = ", ".join(f"exit {k}: {v}" for k, v in sorted(counts.items(), key=str))
        print(f"{command:10s} {total:5d} cases in {elapsed:6.1f} s   {shown}   "
              f"broken promises: {len(problems)}")
        for gist, count in gists.most_common(6):
            print(f"           {count:5d}  error: {gist}")
        for argv_, found in problems[:20]:
            print(f"    BROKEN {' '.join(argv_)}: {found}")
        broken += len(problems)
    print(f"broken promises in all: {broken} (must be 0)")
    return 1 if broken else 0


if __name__ == "__main__":
    sys.exit(main())
