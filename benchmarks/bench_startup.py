"""Benchmark: how long the ``placer`` command takes to answer, beside plain imports.

Each row is the median wall time of N fresh interpreters (the process
started, run and exited, as a user sees it) of:

* ``placer design missing.toml``: a spec that does not exist (the goal:
  refused within 0.3 s, before the numerical stack loads);
* ``placer design malformed.toml``: a spec that is not TOML;
* ``placer --help``;
* ``placer target examples/adc-antialias.toml``: a good spec, read, its
  target factored into sections (loads sympy, scipy, python-control);

with two baselines: ``python -c "import placer"`` (the lazy package) and
``python -c "import sympy, scipy.signal"`` (the stack the commands need).
The command is run as ``python -m placer.cli`` from this worktree, so the
figures are of this source tree, not of an installed copy.

Run::

    python benchmarks/bench_startup.py [--runs 7]
"""

from __future__ import annotations

import argparse
import os
import platform
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
GOAL_S = 0.3


def wall_times(argv, runs, cwd):
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    times = []
    for _ in range(runs):
        start = time.perf_counter()
        done = subprocess.run(argv, cwd=cwd, env=env, stdout=subprocess.DEVNULL,
                              stderr=subprocess.PIPE, text=True)
        times.append(time.perf_counter() - start)
    return times, done.returncode


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--runs", type=int, default=7, help="fresh interpreters per row (default 7)")
    args = parser.parse_args()
    python = sys.executable
    with tempfile.TemporaryDirectory() as folder:
        Path(folder, "malformed.toml").write_text('title = "x"\n[target\n')
        spec = str(ROOT / "examples" / "adc-antialias.toml")
        rows = [
            ("placer design missing.toml", [python, "-m", "placer.cli", "design", "missing.toml"]),
            ("placer design malformed.toml", [python, "-m", "placer.cli", "design",
                                              "malformed.toml"]),
            ("placer --help", [python, "-m", "placer.cli", "--help"]),
            ("placer target examples/adc-antialias.toml", [python, "-m", "placer.cli", "target",
                                                           spec]),
            ("baseline: python -c 'import placer'", [python, "-c", "import placer"]),
            ("baseline: python -c 'import sympy, scipy.signal'",
             [python, "-c", "import sympy, scipy.signal"]),
            ("baseline: python -c 'pass'", [python, "-c", "pass"]),
        ]
        print(f"python {platform.python_version()} on {platform.machine()}, "
              f"{os.cpu_count()} cores; median of {args.runs} fresh processes each")
        width = max(len(label) for label, _ in rows)
        print(f"{'command':<{width}}  {'median s':>8}  {'min s':>6}  {'max s':>6}  exit")
        for label, argv in rows:
            times, code = wall_times(argv, args.runs, folder)
            print(f"{label:<{width}}  {statistics.median(times):>8.3f}  {min(times):>6.3f}  "
                  f"{max(times):>6.3f}  {code:>4}")
            if label.startswith("placer design missing"):
                verdict = "meets" if statistics.median(times) < GOAL_S else "MISSES"
                missing = statistics.median(times)
        print(f"goal: a bad spec refused in under {GOAL_S} s — {verdict} it ({missing:.3f} s)")


if __name__ == "__main__":
    main()
