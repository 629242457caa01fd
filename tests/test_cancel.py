"""Ctrl-C: placer stops between Monte Carlo blocks and candidates, ends its
worker processes, writes no output and exits 130 (the shell's status for a
command ended by SIGINT, 128 + 2: common practice). Tests of
placer.evidence.workers, placer.loops.tolerance and placer.cli.

No test here times anything: the timeouts only guard against a hang.
(benchmarks/bench_cancel.py prints the time from SIGINT to exit.)
"""

import os
import pty
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import numpy as np
import pytest

import placer.loops.tolerance as loop_tolerance
from placer.evidence.workers import results_in_order, worker_pool
from placer.loops.compensator import design_compensator
from placer.loops.plants import buck_plant
from placer.loops.tolerance import loop_monte_carlo

ROOT = Path(__file__).resolve().parent.parent
HANG_GUARD_S = 300


def _alive(pid):
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    try:  # a zombie is gone for our purposes
        with open(f"/proc/{pid}/stat", encoding="ascii") as stat:
            return stat.read().split(") ")[-1].split()[0] != "Z"
    except OSError:
        return False


def _group_members(pgid):
    members = []
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                if os.getpgid(int(entry)) == pgid and _alive(int(entry)):
                    members.append(int(entry))
            except OSError:
                pass
    return members


def _interrupt(argv, marker, cwd):
    """Run placer under a terminal, wait for `marker` on stderr, Ctrl-C the group."""
    master, slave = pty.openpty()   # a terminal: the progress line is shown
    env = dict(os.environ, PYTHONPATH=str(ROOT))
    process = subprocess.Popen([sys.executable, "-m", "placer.cli", *argv], cwd=cwd, env=env,
                               stdout=subprocess.PIPE, stderr=slave, start_new_session=True)
    os.close(slave)
    seen = bytearray()

    def read():
        while True:
            try:
                chunk = os.read(master, 4096)
            except OSError:
                return
            if not chunk:
                return
            seen.extend(chunk)

    reader = threading.Thread(target=read, daemon=True)
    reader.start()
    deadline = time.monotonic() + HANG_GUARD_S
    while marker.encode() not in seen and process.poll() is None and time.monotonic() < deadline:
        time.sleep(0.05)
    assert process.poll() is None, f"ended before the interrupt: {bytes(seen)[-500:]!r}"
    time.sleep(0.5)                 # inside the Monte Carlo, not at its first line
    os.killpg(process.pid, signal.SIGINT)   # what a terminal's Ctrl-C does
    try:
        out, _ = process.communicate(timeout=HANG_GUARD_S)
    except subprocess.TimeoutExpired:
        os.killpg(process.pid, signal.SIGKILL)
        process.communicate()
        pytest.fail("placer did not end after SIGINT")
    reader.join(5)
    os.close(master)
    return process, out.decode(), bytes(seen).decode(errors="replace")


def test_ctrl_c_stops_a_million_sample_loop_monte_carlo(tmp_path):
    json_path = tmp_path / "loop.json"
    process, out, err = _interrupt(
        ["loop", str(ROOT / "examples" / "boost-loop.toml"), "--samples", "1000000",
         "--json", str(json_path), "--workers", "2"], "Monte Carlo builds", tmp_path)
    assert process.returncode == 130
    assert "Traceback" not in err and "Traceback" not in out
    assert "error: interrupted" in err
    assert out == ""                                     # no partial result printed
    assert list(tmp_path.iterdir()) == []                # no output, no temporary file
    time.sleep(0.5)
    assert _group_members(process.pid) == []             # no worker left behind


def test_worker_pool_terminates_running_workers():
    with pytest.raises(KeyboardInterrupt):
        with worker_pool(2) as pool:
            pids = list(results_in_order([pool.apply_async(os.getpid) for _ in range(4)]))
            pending = [pool.apply_async(time.sleep, (600,)) for _ in range(4)]
            assert not pending[0].ready()
            raise KeyboardInterrupt
    assert pids and not any(_alive(pid) for pid in set(pids))


def test_worker_pool_gives_results_in_order():
    with worker_pool(2) as pool:
        tasks = [pool.apply_async(pow, (2, k)) for k in range(10)]
        assert list(results_in_order(tasks)) == [2 ** k for k in range(10)]


def test_loop_monte_carlo_in_blocks_reports_progress_and_matches(monkeypatch):
    # Blocks start at multiples of the chunk, so the result is the same bits
    # however the builds are split; progress comes after each block.
    plant = buck_plant(12.0, 10e-6, 100e-6, 0.02, 1.0, 1.0)
    design = design_compensator(plant, 20e3, 60.0, compensator="type3")
    whole = loop_monte_carlo(design, samples=2600, seed=5)
    monkeypatch.setattr(loop_tolerance, "BLOCK", 1024)
    calls = []
    blocks = loop_monte_carlo(design, samples=2600, seed=5,
                              progress=lambda done, total: calls.append((done, total)))
    assert calls == [(0, 2600), (1024, 2600), (2048, 2600), (2600, 2600)]
    for name in ("crossover_hz", "phase_margin_deg", "gain_margin_db", "stable"):
        np.testing.assert_array_equal(getattr(whole, name), getattr(blocks, name))
