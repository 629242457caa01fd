"""Benchmark: the pre-layout noise analysis and the impedance-level search.

1. Noise density at 500 frequencies of a 6th-order cascade (three
   Tow–Thomas sections with single-pole op-amps and their output
   resistances, so every resistor and every op-amp's voltage and current
   noise is a source): :func:`placer.analysis.noise.noise_spectrum`, one adjoint
   solve per frequency for all sources (batched over frequency), against
   the baseline, one direct solve per source and per frequency.
2. The impedance-level search, :func:`placer.place.level.choose_level`, per
   section, for the low-pass topologies of the library (the solver's
   continuous solution given; the level search alone is timed).

Run::

    python benchmarks/bench_prelayout.py [--repeat 5]
"""

from __future__ import annotations

import argparse
import math
import platform
import sys
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from placer.design import cascade_circuit  # noqa: E402
from placer.place.level import LevelRule, choose_level  # noqa: E402
from placer.circuit.library import get_topology  # noqa: E402
from placer.analysis.mna import numeric_system  # noqa: E402
from placer.analysis.noise import noise_sources, noise_spectrum  # noqa: E402
from placer.place.opamp import AmplifierSpec, apply_amplifier  # noqa: E402
from placer.place.solve import goal_from_section, make_problem, solve  # noqa: E402
from placer.target.targets import make_section  # noqa: E402

Q_VALUES = (0.5176, 0.7071, 1.9319)    # sixth-order Butterworth sections
F0 = 1e3
NOISE = dict(noise_voltage=8e-9, noise_current=0.5e-12)


def cascade():
    """A 6th-order low-pass cascade with every op-amp modelled, numbers for every part."""
    circuits = []
    for q in Q_VALUES:
        section = make_section("lowpass", 2 * math.pi * F0, q)
        topology = get_topology("tow-thomas-lowpass")
        problem = make_problem(topology, goal_from_section(section))
        built = topology.circuit.with_values(solve(problem).values)
        k = len(circuits) + 1
        circuits.append(replace(built, elements=tuple(replace(e, name=f"{e.name}_{k}")
                                                      for e in built.elements), _graph=None))
    return apply_amplifier(cascade_circuit(circuits),
                           AmplifierSpec(gbw=10e6, gain=1e5, output_resistance=50.0))


def per_source_baseline(circuit, frequency):
    """One direct solve of (G + jωC) x = b_k per source column and per frequency."""
    system = numeric_system(circuit)
    sources = noise_sources(circuit, **NOISE)
    out = np.zeros((len(sources.names), frequency.size))
    for i, f in enumerate(frequency):
        matrix = system.G + 2j * math.pi * f * system.C
        for column in range(sources.columns.shape[1]):
            x = np.linalg.solve(matrix, sources.columns[:, column].astype(complex))
            out[sources.group[column], i] += abs(x[system.output]) ** 2 * sources.psd[column]
    return out


def best_of(function, repeat):
    times = []
    for _ in range(repeat):
        start = time.perf_counter()
        value = function()
        times.append(time.perf_counter() - start)
    return min(times), value


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=5)
    args = parser.parse_args(argv)
    print(f"python {platform.python_version()}, numpy {np.__version__}, {platform.machine()}")

    circuit = cascade()
    frequency = np.geomspace(10.0, 100e3, 500)
    sources = noise_sources(circuit, **NOISE)
    size = numeric_system(circuit).G.shape[0]
    print(f"\n1. noise density, 6th-order cascade: MNA size {size}, {len(sources.names)} sources "
          f"({sources.columns.shape[1]} columns), {frequency.size} frequencies")
    adjoint_s, spectrum = best_of(lambda: noise_spectrum(circuit, frequency, **NOISE), args.repeat)
    direct_s, direct = best_of(lambda: per_source_baseline(circuit, frequency), 1)
    worst = float(np.max(np.abs(spectrum.source_psd - direct) / np.maximum(direct, 1e-300)))
    print(f"   adjoint, batched:            {adjoint_s * 1e3:8.1f} ms")
    print(f"   baseline, per-source solves: {direct_s * 1e3:8.1f} ms   ({direct_s / adjoint_s:.0f}x)")
    print(f"   largest relative difference between the two: {worst:.1e}")

    print("\n2. impedance-level search per section (Q 1.932 at 1 kHz; e_n, i_n and 4kTR)")
    rule = LevelRule(band_hz=(10.0, 100e3), analysis_hz=(100.0, 10e3), input_driven=True,
                     output_loaded=True, **NOISE)
    section = make_section("lowpass", 2 * math.pi * F0, Q_VALUES[-1])
    print(f"   {'topology':28s} {'search':>9s}  {'level':>7s}  {'noise':>9s}")
    for topology_id in ("sallen-key-lowpass-unity", "mfb-lowpass", "tow-thomas-lowpass",
                        "akerberg-mossberg-lowpass", "khn-lowpass"):
        problem = make_problem(get_topology(topology_id), goal_from_section(section))
        solution = solve(problem)
        seconds, result = best_of(lambda: choose_level(problem, solution, rule), args.repeat)
        choice = result.choice
        print(f"   {topology_id:28s} {seconds * 1e3:7.1f} ms  "
              f"×{choice.chosen.factor:6.3g}  {choice.chosen.noise_v * 1e6:6.3f} µV")
    return 0


if __name__ == "__main__":
    sys.exit(main())
