"""Benchmark (quality bar): designing with a real op-amp versus an ideal one.

For the unity-gain Sallen–Key (``sallen-key-lowpass-unity``) and the
multiple-feedback (``mfb-lowpass``) low-pass, at f0 = 10 kHz and Q in
{0.7, 1, 2, 3, 5}, with a single-pole op-amp of GBW = 20·f0 (200 kHz) and
DC gain 100 dB, resistors E96 and capacitors E12:

* ideal: the design solved and snapped with ideal op-amps
  (:func:`placer.design.place_section`), built with the real op-amp:
  its f0 and Q errors against the target;
* corrected: the design re-solved and snapped with the op-amp modelled
  (:func:`placer.place.amplifier.place_section_with_amplifier`): its errors,
  which must be within 1 %;
* check: the corrected design's f0 and Q read independently from the
  numeric MNA poles of the modelled circuit with the snapped values
  (:func:`placer.analysis.network.circuit_poles`), not from the dominant-root
  evaluator the design used;
* low GBW: the corrected design's errors when the op-amp's GBW is 25 %
  below the model's (the correction leans on the GBW; datasheet GBW is a
  typical figure), for information — not part of the bar;
* the parasitic pole the op-amp adds (Hz) and the CPU time of the
  corrected placement.

Run::

    python benchmarks/bench_opamp.py [--gbw-ratio 20] [--gain-db 100] [--f0 10e3]

Exits with status 1 when a corrected design misses 1 % (f0 or Q).
"""

from __future__ import annotations

import argparse
import math
import platform
import sys
import time
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

import numpy as np  # noqa: E402

from placer.place.amplifier import place_section_with_amplifier  # noqa: E402
from placer.place.opamp import apply_amplifier  # noqa: E402
from placer.circuit.library import get_topology  # noqa: E402
from placer.analysis.network import circuit_poles  # noqa: E402
from placer.spec.reader import AmplifierSpec, PartsSpec  # noqa: E402
from placer.target.targets import make_section  # noqa: E402

TOPOLOGIES = ("sallen-key-lowpass-unity", "mfb-lowpass")
QS = (0.7, 1.0, 2.0, 3.0, 5.0)
BOUND_PCT = 1.0


def figures_from_circuit(circuit, section):
    """f0 (Hz) and Q of the numeric MNA pole pair nearest the target."""
    poles = circuit_poles(circuit)
    target = section.poles[0]
    upper = min((p for p in poles if p.imag >= 0), key=lambda p: abs(p - target))
    if abs(upper.imag) > 0:
        return abs(upper) / (2 * math.pi), abs(upper) / (-2 * upper.real)
    # a real pair (Q < 0.5): the two nearest real poles
    real = sorted((p for p in poles if p.imag == 0), key=lambda p: abs(p - target))[:2]
    omega0 = math.sqrt(abs(real[0] * real[1]))
    return omega0 / (2 * math.pi), omega0 / -(real[0].real + real[1].real)


def main(argv=None):
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--f0", type=float, default=10e3, help="section f0, Hz (default 10 kHz)")
    parser.add_argument("--gbw-ratio", type=float, default=20.0, help="GBW / f0 (default 20)")
    parser.add_argument("--gain-db", type=float, default=100.0,
                        help="op-amp DC open-loop gain, dB (default 100)")
    args = parser.parse_args(argv)
    f0 = args.f0
    gbw = args.gbw_ratio * f0
    model = AmplifierSpec(gbw=gbw, gain=10 ** (args.gain_db / 20))
    parts = PartsSpec(series={"resistor": "E96", "capacitor": "E12", "inductor": "E12"})
    print(f"# placer op-amp correction benchmark — python {platform.python_version()}, "
          f"numpy {np.__version__}")
    print(f"# f0 = {f0:g} Hz, single-pole op-amp: GBW = {gbw:g} Hz ({args.gbw_ratio:g}·f0), "
          f"A0 = {args.gain_db:g} dB; resistors E96, capacitors E12; bound {BOUND_PCT:g} %")
    header = (f"{'topology':26} {'Q':>4} | {'ideal f0 err %':>14} {'ideal Q err %':>13} | "
              f"{'corr. f0 err %':>14} {'corr. Q err %':>13} | {'check f0 %':>10} {'check Q %':>9} | "
              f"{'GBW-25% f0 %':>12} {'GBW-25% Q %':>11} | {'parasitic Hz':>12} {'cpu s':>6}")
    print(header)
    print("-" * len(header))
    failures = 0
    for topology_id in TOPOLOGIES:
        topology = get_topology(topology_id)
        for q in QS:
            section = make_section("lowpass", 2 * math.pi * f0, q)
            start = time.process_time()
            result = place_section_with_amplifier(section, topology, model, parts=parts)
            seconds = time.process_time() - start
            if not result.reachable:
                print(f"{topology_id:26} {q:4.1f} | unreachable: {result.reason}")
                failures += 1
                continue
            built = apply_amplifier(topology.circuit, model).with_values(result.snapped.values)
            check_f0, check_q = figures_from_circuit(built, section)
            check_f0_pct = 100 * (check_f0 / f0 - 1)
            check_q_pct = 100 * (check_q / q - 1)
            ideal, corrected, low = result.ideal_drift, result.drift, result.low_gbw_drift
            worst = max(abs(corrected.f0_pct), abs(corrected.q_pct), abs(check_f0_pct), abs(check_q_pct))
            flag = "" if worst <= BOUND_PCT else "  <-- misses the bound"
            failures += worst > BOUND_PCT
            parasitic = min(result.parasitic_poles_hz) if result.parasitic_poles_hz else math.nan
            print(f"{topology_id:26} {q:4.1f} | {ideal.f0_pct:14.3f} {ideal.q_pct:13.3f} | "
                  f"{corrected.f0_pct:14.3f} {corrected.q_pct:13.3f} | {check_f0_pct:10.3f} "
                  f"{check_q_pct:9.3f} | {low.f0_pct:12.3f} {low.q_pct:11.3f} | "
                  f"{parasitic:12.4g} {seconds:6.2f}{flag}")
    print(f"# {failures} case(s) miss the {BOUND_PCT:g} % bound" if failures
          else f"# every corrected design is within {BOUND_PCT:g} % in f0 and Q")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
