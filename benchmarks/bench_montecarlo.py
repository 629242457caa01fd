"""Monte Carlo speed: vectorised evaluation against a per-sample loop.

A fourth-order Butterworth low-pass at 1 kHz as two unity-gain Sallen–Key
sections (Q = 0.5412 and 1.3066, equal resistors, C1/C2 = 4Q²), every
part ±1 % uniform, 10,000 samples:

- vectorised: ``placer.evidence.tolerance.cascade_monte_carlo`` (one coefficient
  evaluation per section for all samples, batched roots);
- loop: for every sample and section, build a python-control
  TransferFunction and read its poles (run on fewer samples when slow and
  scaled, which the output says).

Then one large Monte Carlo (a third-order single-op-amp low-pass, whose
dominant pair comes from batched roots) in one process and in worker
processes on every core, with a check that both give the same samples.

Run from the repository root::

    python benchmarks/bench_montecarlo.py [--samples 10000] [--loop-samples 1000]
                                          [--large-samples 1000000]
"""

from __future__ import annotations

import argparse
import math
import os
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from placer.circuit.elements import Circuit, Element  # noqa: E402
from placer.analysis.network import network_function  # noqa: E402
from placer.circuit.library import get_topology  # noqa: E402
from placer.evidence.tolerance import cascade_monte_carlo, monte_carlo  # noqa: E402

F0_HZ = 1e3
C2_F = 10e-9
TOLERANCE = 0.01


def sallen_key():
    """Unity-gain Sallen–Key low-pass, parts R1, R2, C1, C2 (symbols = names)."""
    return network_function(Circuit((
        Element("R1", "resistor", ("vin", "n1"), symbol="R1"),
        Element("R2", "resistor", ("n1", "n2"), symbol="R2"),
        Element("C1", "capacitor", ("n1", "vout"), symbol="C1"),
        Element("C2", "capacitor", ("n2", "gnd"), symbol="C2"),
        Element("U1", "opamp", ("n2", "vout", "vout")),
    )))


def butterworth4_sections():
    """Part values of the two sections: Q_k = 1/(2 cos((2k−1)π/8))."""
    omega0 = 2 * math.pi * F0_HZ
    sections = []
    for k in (1, 2):
        q = 1 / (2 * math.cos((2 * k - 1) * math.pi / 8))
        r = 1 / (omega0 * C2_F * 2 * q)            # ω0 = 1/(R √(C1 C2)), C1 = 4Q² C2
        sections.append({"R1": r, "R2": r, "C1": 4 * q * q * C2_F, "C2": C2_F})
    return sections


def vectorised(nf, sections, samples):
    start = time.perf_counter()
    result = cascade_monte_carlo([(nf, values, TOLERANCE) for values in sections],
                                 samples=samples, seed=1)
    return time.perf_counter() - start, result


def loop(nf, sections, samples):
    """Per-sample Python loop: a python-control TF per sample and section, its poles."""
    rng = np.random.default_rng(1)
    start = time.perf_counter()
    f0 = np.empty((len(sections), samples))
    for i in range(samples):
        for j, values in enumerate(sections):
            drawn = {n: v * (1 + TOLERANCE * rng.uniform(-1, 1)) for n, v in values.items()}
            poles = nf.transfer_function(drawn).poles()
            f0[j, i] = abs(poles[0]) / (2 * math.pi)
    return time.perf_counter() - start, f0


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=10_000)
    parser.add_argument("--loop-samples", type=int, default=1_000,
                        help="samples actually run by the loop (scaled to --samples)")
    parser.add_argument("--large-samples", type=int, default=1_000_000,
                        help="samples of the one-process / worker-process comparison")
    args = parser.parse_args(argv)

    start = time.perf_counter()
    nf = sallen_key()
    derive = time.perf_counter() - start
    sections = butterworth4_sections()
    vectorised(nf, sections, 100)                      # warm-up: lambdify, imports
    loop(nf, sections, 10)

    vector_time, result = vectorised(nf, sections, args.samples)
    loop_samples = min(args.loop_samples, args.samples)
    loop_time, loop_f0 = loop(nf, sections, loop_samples)
    scale = args.samples / loop_samples
    loop_scaled = loop_time * scale

    print(f"Monte Carlo of a 4th-order Butterworth (2 Sallen–Key sections, {F0_HZ:g} Hz), "
          f"{args.samples:,} samples, all parts ±{TOLERANCE:.0%} uniform")
    print(f"symbolic derivation of the section (once): {derive * 1e3:.1f} ms")
    print()
    print(f"{'method':<44} {'samples run':>12} {'time [s]':>10} {'per sample [µs]':>16}")
    print(f"{'vectorised (cascade_monte_carlo)':<44} {args.samples:>12,} {vector_time:>10.4f} "
          f"{vector_time / args.samples * 1e6:>16.2f}")
    label = "loop (control.tf + poles per sample)" + (f", ×{scale:g}" if scale != 1 else "")
    print(f"{label:<44} {loop_samples:>12,} {loop_scaled:>10.4f} "
          f"{loop_time / loop_samples * 1e6:>16.2f}")
    if scale != 1:
        print(f"  (loop ran {loop_samples:,} samples in {loop_time:.4f} s; "
              f"time scaled ×{scale:g} to {args.samples:,})")
    print(f"ratio loop / vectorised: {loop_scaled / vector_time:.0f}×")
    print(f"target vectorised < 1 s: {'met' if vector_time < 1 else 'NOT met'}")
    print()
    print(f"{'section':<8} {'f0 nominal [Hz]':>16} {'f0 std [Hz]':>12} {'f0 std loop [Hz]':>17} "
          f"{'Q nominal':>10} {'Q std':>8}")
    for j, r in enumerate(result.sections):
        print(f"{j + 1:<8} {r.nominal_f0_hz:>16.3f} {r.statistics['f0_hz'].std:>12.3f} "
              f"{np.std(loop_f0[j]):>17.3f} {r.nominal_q:>10.4f} {r.statistics['q'].std:>8.4f}")
    stats = result.statistics["gain_db"]
    print(f"overall DC gain: mean {stats.mean:+.2e} dB, std {stats.std:.2e} dB "
          "(unity-gain sections: exact)")
    print()
    large(args.large_samples)


def large(samples):
    """One Monte Carlo in one process, then in worker processes on every core."""
    topology = get_topology("sallen-key-lowpass-third-order")
    nf = network_function(topology.circuit)
    values = {s: (10e3 if topology.kind_of(s) == "resistor" else 10e-9) for s in nf.symbols}
    values.update({"C1": 33e-9, "C2": 15e-9, "C3": 1e-9})
    monte_carlo(nf, values, TOLERANCE, samples=1000, seed=2)         # warm-up
    cores = os.cpu_count() or 1
    times, results = {}, {}
    for workers in (1, cores):
        start = time.perf_counter()
        results[workers] = monte_carlo(nf, values, TOLERANCE, samples=samples, seed=2,
                                       workers=workers)
        times[workers] = time.perf_counter() - start
    same = all(np.array_equal(getattr(results[1], name), getattr(results[cores], name))
               for name in ("f0_hz", "q", "gain"))
    print(f"one Monte Carlo of {topology.id} (order 3), {samples:,} samples, parts ±{TOLERANCE:.0%}")
    print(f"{'workers':<10} {'time [s]':>10}")
    for workers in (1, cores):
        print(f"{workers:<10} {times[workers]:>10.3f}")
    print(f"speed-up with {cores} workers: {times[1] / times[cores]:.2f}×; "
          f"same samples: {'yes' if same else 'NO'}")


if __name__ == "__main__":
    main()
