"""Benchmark: one section re-placed through the explorer's HTTP API.

For each bundled second-order low-pass topology, a spec (fourth-order
Butterworth at 5 kHz, E96/E12 parts, the gain all in the first section so
that moving one section leaves the other's target alone, that topology the
only candidate) is served by the explorer's app and driven through
Starlette's TestClient, in process: request to reply, JSON decoded, as the
page sees it. The first section's pole pair is dragged through ``--drags``
positions (f0 up 2 % and Q up 3 % a step); each request re-places that one
section (the reply's ``replaced`` flags are checked) and the other comes
from the cache. Printed beside two baselines:

* the first request of the session (cold: the symbolic network function,
  its compiled evaluators and both sections' placements);
* ``placer design SPEC`` run as a command from scratch (what editing the
  TOML and re-running cost before), evidence included, as a user runs it.

A last row does the same with every bundled low-pass topology as a
candidate (each request places all of them for the moved section and
ranks them, as ``placer design`` does).

Bar: median re-placement under 0.3 s for each topology on its own.

Run::

    python benchmarks/bench_explore.py [--drags 15] [--no-cli]
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
import warnings
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

warnings.filterwarnings("ignore", message=".*httpx2.*")

from starlette.testclient import TestClient  # noqa: E402

from placer.explore import ExploreSession, create_app  # noqa: E402
from placer.circuit.library import find_topologies  # noqa: E402
from placer.spec.reader import load_spec  # noqa: E402

TOKEN = "benchmark-token"
BAR_S = 0.3
SPEC = """\
title = "explore benchmark: {label}"

[target]
response = "lowpass"
approximation = "butterworth"
order = 4
cutoff = "5 kHz"

[cascade]
gain_distribution = "first"

[parts]
resistor_series = "E96"
capacitor_series = "E12"
resistor_range = ["1k", "100k"]
capacitor_range = ["1n", "1u"]

[candidates]
topologies = [{names}]

[tolerance]
samples = 2000
"""


def lowpass_topologies() -> list[str]:
    """The bundled second-order low-pass topologies (the ladders excluded)."""
    return sorted(t.id for t in find_topologies(response="lowpass", order=2)
                  if t.family != "ladder")


def write_spec(folder: Path, label: str, names: list[str]) -> Path:
    path = folder / f"{label}.toml"
    path.write_text(SPEC.format(label=label, names=", ".join(f'"{n}"' for n in names)),
                    encoding="utf-8")
    return path


def drive(path: Path, drags: int) -> dict:
    """Cold first request, then `drags` moves of section 1; seconds each."""
    session = ExploreSession(load_spec(path))
    client = TestClient(create_app(session, token=TOKEN), base_url="http://127.0.0.1:8000",
                        headers={"X-Placer-Token": TOKEN})
    base = [{"kind": e.kind, "f0": e.f0_hz, "q": e.q} for e in session.initial]
    started = time.perf_counter()
    reply = client.post("/api/place", json={"sections": base})
    cold = time.perf_counter() - started
    reply.raise_for_status()
    times = []
    replaced_counts = []
    for k in range(1, drags + 1):
        sections = [dict(s) for s in base]
        sections[0].update(f0=round(5000.0 * 1.02 ** k, 1), q=round(0.56 * 1.03 ** k, 4))
        started = time.perf_counter()
        reply = client.post("/api/place", json={"client": "bench", "seq": k, "sections": sections})
        data = reply.json()
        times.append(time.perf_counter() - started)
        if reply.status_code != 200 or not data.get("ok"):
            raise SystemExit(f"{path.name}: drag {k} failed: {data}")
        replaced = sorted(s["slot"] for s in data["sections"] if s["replaced"])
        if 0 not in replaced:
            raise SystemExit(f"{path.name}: drag {k} did not re-place section 1 ({replaced})")
        # A later section is placed again too when its impedance-level rule
        # changed: the default noise band spans the whole target's poles.
        replaced_counts.append(len(replaced))
    return {"cold": cold, "times": times, "replaced": replaced_counts}


def cli_design(path: Path) -> float:
    """Seconds for `placer design SPEC` as a fresh command."""
    started = time.perf_counter()
    subprocess.run([sys.executable, "-m", "placer.cli", "design", str(path), "--quiet"],
                   cwd=ROOT, check=True, stdout=subprocess.DEVNULL,
                   env={**os.environ, "PYTHONPATH": str(ROOT)})
    return time.perf_counter() - started


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--drags", type=int, default=15, help="moves per topology")
    parser.add_argument("--no-cli", action="store_true", help="skip the `placer design` baseline")
    args = parser.parse_args()
    print(f"python {platform.python_version()} on {platform.machine()}, {os.cpu_count()} cores, "
          f"load average {os.getloadavg()[0]:.1f} (shared machine)")
    print(f"{args.drags} drags of section 1 each; seconds from request to decoded reply\n")
    names = lowpass_topologies()
    header = (f"{'candidates':34s} {'median':>7s} {'p90':>7s} {'max':>7s}  "
              f"{'cold 1st':>8s} {'CLI design':>10s} {'placed':>6s}  bar {BAR_S} s")
    print(header)
    print("-" * len(header))
    failed = []
    with tempfile.TemporaryDirectory() as folder:
        rows = [(n, [n]) for n in names] + [(f"all {len(names)} low-pass", names)]
        for label, candidates in rows:
            path = write_spec(Path(folder), label.replace(" ", "-"), candidates)
            result = drive(path, args.drags)
            times = sorted(result["times"])
            median = statistics.median(times)
            p90 = times[min(len(times) - 1, int(round(0.9 * (len(times) - 1))))]
            cli = "-" if args.no_cli else f"{cli_design(path):10.2f}"
            single = len(candidates) == 1
            verdict = ("ok" if median < BAR_S else "OVER") if single else "(not barred)"
            if single and median >= BAR_S:
                failed.append(label)
            placed = statistics.median(result["replaced"])
            print(f"{label:34s} {median:7.3f} {p90:7.3f} {times[-1]:7.3f}  "
                  f"{result['cold']:8.2f} {cli:>10s} {placed:6.0f}  {verdict}")
    print()
    print("placed: sections placed again per drag (median); a drag moves section 1's f0, which "
          "moves the\ndefault noise band, so section 2's impedance level is chosen again too")
    print("over the bar: " + (", ".join(failed) if failed else "none"))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
