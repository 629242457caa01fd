"""Topology comparison speed: one worker process against two.

A sixth-order Butterworth low-pass at 1 kHz (three second-order sections,
Q = 0.5176, 0.7071 and 1.932), E96 resistors and E12 capacitors, every
low-pass candidate topology of the library for each section, 2,000 Monte
Carlo samples per candidate, and the GBW each candidate needs from the
finite-GBW op-amp model (the default ``gbw="built"``):
``placer.compare.compare`` with workers = 1 (in-process) and workers = 2
(a process pool). The two rankings must be
identical, number for number. Target: each under 20 s on a 2-core machine.

Each worker count is timed in a fresh Python process (so neither run
inherits the other's cached network functions); the time is that of the
``compare`` call alone, imports excluded.

Run from the repository root::

    python benchmarks/bench_compare.py [--samples 2000] [--workers 1 2]
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import subprocess
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from placer.compare import compare, comparison_to_dict  # noqa: E402
from placer.report.console import table  # noqa: E402
from placer.spec.reader import spec_from_dict  # noqa: E402

TARGET_S = 20.0
SPEC = {
    "title": "bench: 6th-order Butterworth 1 kHz",
    "target": {"response": "lowpass", "approximation": "butterworth", "order": 6,
               "cutoff": "1 kHz", "gain": "0 dB"},
    "parts": {"resistor_series": "E96", "capacitor_series": "E12"},
    "tolerance": {"resistor": "1%", "capacitor": "5%", "samples": 2000, "seed": 0},
}


def timed_run(samples, workers):
    """Wall time (s) of one ``compare`` call and its result as a dict."""
    spec = spec_from_dict(SPEC, source="bench_compare")
    start = time.perf_counter()
    comparison = compare(spec, samples=samples, workers=workers)
    wall = time.perf_counter() - start
    return wall, comparison_to_dict(comparison)


def _cpu_seconds():
    """User + system CPU time of this process and its reaped workers, s."""
    return sum(r.ru_utime + r.ru_stime for r in (resource.getrusage(resource.RUSAGE_SELF),
                                                 resource.getrusage(resource.RUSAGE_CHILDREN)))


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=2000, help="Monte Carlo samples per candidate")
    parser.add_argument("--workers", type=int, nargs="+", default=[1, 2], help="worker counts to time")
    parser.add_argument("--one", type=int, help=argparse.SUPPRESS)  # child: time one worker count
    args = parser.parse_args(argv)
    if args.one is not None:
        before = _cpu_seconds()
        wall, data = timed_run(args.samples, args.one)
        print(json.dumps({"wall": wall, "cpu": _cpu_seconds() - before, "data": data}))
        return 0
    rows, rankings = [], {}
    for workers in args.workers:
        child = subprocess.run(
            [sys.executable, __file__, "--samples", str(args.samples), "--one", str(workers)],
            check=True, capture_output=True, text=True,
        )
        result = json.loads(child.stdout)
        wall, cpu, data = result["wall"], result["cpu"], result["data"]
        rankings[workers] = data
        count = len(data["candidates"])
        reachable = sum(1 for c in data["candidates"] if c["reachable"])
        rows.append([workers, count, reachable, f"{wall:.2f}", f"{cpu:.2f}",
                     f"{wall / count:.3f}", "yes" if wall < TARGET_S else "NO"])
    print(f"compare: {SPEC['title']}, {args.samples} Monte Carlo samples per candidate; "
          f"{os.cpu_count()} cores, load average {os.getloadavg()[0]:.1f} at the end")
    print(table(["workers", "candidates", "reachable", "wall time (s)", "CPU time (s)",
                 "wall per candidate (s)", f"under {TARGET_S:g} s"], rows))
    first = rankings[args.workers[0]]
    for workers, data in rankings.items():
        assert data == first, f"workers={workers} gave a different comparison than workers={args.workers[0]}"
    print(f"identical rankings (every field of every candidate) for workers "
          f"{', '.join(map(str, args.workers))}: yes")
    for index, section in enumerate(first["sections"], start=1):
        print(f"  section {index}: {' > '.join(c['topology'] for c in section['candidates'])}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
