"""Fuzzing every input path of the ``placer`` command, in-process.

Bad and odd spec, topology and circuit files are made by mutating the
shipped examples and topology files (deleted keys, wrong types, non-finite
and extreme numbers, malformed engineering strings, unknown keys and
tables, broken TOML, bytes that are not UTF-8, deep nesting, long names,
dangling and unknown nodes, duplicate names) and run through
:func:`placer.cli.main`. Whatever the input, the command must keep the
contract of the README ("Bad input"): exit 0, 1 or 2; never a traceback;
on exit 2 exactly one ``error:`` line; and no file outside the run's
temporary folder changes.

In CI the hypothesis profile is derandomised (tests/conftest.py) and the
number of examples is fixed per command (fewer for the expensive
``design``); ``python benchmarks/fuzz.py`` runs thousands and prints the
counts by outcome.
"""

from __future__ import annotations

import contextlib
import copy
import io
import json
import os
import re
import tempfile
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from placer.cli import main

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
TOPOLOGY_DIR = ROOT / "placer" / "circuit" / "topologies"


def _read(path: Path) -> dict:
    return tomllib.loads(path.read_text(encoding="utf-8"))


SPECS = {p.name: _read(p) for p in sorted(EXAMPLES.glob("*.toml"))}
FILTER_SPECS = sorted(name for name, data in SPECS.items() if "target" in data)
LOOP_SPECS = sorted(name for name, data in SPECS.items() if "loop" in data)
TOPOLOGIES = {p.name: _read(p) for p in sorted(TOPOLOGY_DIR.glob("*.toml"))}
# Small ones for the expensive commands: fewer parts, quicker to solve.
SMALL_TOPOLOGIES = sorted(name for name, data in TOPOLOGIES.items()
                          if len(data["elements"]) <= 5)

def _element(name, kind, nodes, **more):
    return {"name": name, "kind": kind, "nodes": nodes, **more}


#: Circuits with controlled sources and feedback, whose figures can leave the
#: usual ground (right-half-plane poles, a pole at s = 0, a gain that drops the order).
CIRCUITS = [
    {"elements": [_element("R1", "resistor", ["vin", "n1"], value="1k"),
                  _element("C1", "capacitor", ["n1", "gnd"], value="1u"),
                  _element("R2", "resistor", ["n1", "n2"], value="1k"),
                  _element("C2", "capacitor", ["n2", "gnd"], value="1u"),
                  _element("E1", "vcvs", ["vout", "gnd", "n2", "gnd"], symbol="K"),
                  _element("R3", "resistor", ["vout", "n1"], value="100")]},
    {"elements": [_element("V1", "vsource", ["vin", "n1"]),
                  _element("L1", "inductor", ["n1", "vout"], symbol="L1"),
                  _element("C1", "capacitor", ["vout", "gnd"], value="1u"),
                  _element("F1", "cccs", ["vout", "gnd"], control="V1", symbol="B"),
                  _element("G1", "vccs", ["vout", "gnd", "vin", "gnd"], gain=1e-3),
                  _element("H1", "ccvs", ["n2", "gnd"], control="V1", gain="1k"),
                  _element("R2", "resistor", ["n2", "vout"], symbol="R2")]},
]

_DEFAULT_VALUE = {"resistor": "10k", "capacitor": "10n", "inductor": "1m", "vcvs": 2.0,
                  "vccs": 1e-3, "cccs": 2.0, "ccvs": 1e3}


def circuit_of(topology: dict, *, numeric: bool) -> dict:
    """A circuit file from a topology file: its elements, with values or symbols."""
    elements = []
    for element in topology["elements"]:
        element = dict(element)
        if numeric and "symbol" in element:
            key = "gain" if element["kind"] in ("vcvs", "vccs", "cccs", "ccvs") else "value"
            element[key] = _DEFAULT_VALUE[element["kind"]]
            del element["symbol"]
        elements.append(element)
    return {k: topology[k] for k in ("reference", "input", "output") if k in topology} | {
        "elements": elements}


# -- writing TOML (the standard library only reads it) ---------------------------

_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")


def toml_key(key: str) -> str:
    return key if _BARE_KEY.match(key) else json.dumps(key)


def toml_value(value: object) -> str:
    """One value as inline TOML (tables inline, so any nesting fits on a line)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if value != value:
            return "nan"
        if value in (float("inf"), float("-inf")):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value)   # ASCII with \\u escapes: a TOML basic string
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    return "{" + ", ".join(f"{toml_key(k)} = {toml_value(v)}" for k, v in value.items()) + "}"


def to_toml(data: dict) -> str:
    return "".join(f"{toml_key(k)} = {toml_value(v)}\n" for k, v in data.items())


# -- mutations ------------------------------------------------------------------

ENGINEERING = ["4k7k", "1..2", "k", "1e", "1e99999", "--1", "1 kHzz", "1 µF", "1R5", "100R",
               "2n2F", "1 fF", "0x10", " ", "", "1e-400", "1%", "-3 dB", "60 deg",
               "1 rad/s", "1 kHz", "1 H", "1 F", "1 ohm", "10 V", "1 A", "1 s", "∞", "NaN",
               "1e308k", "5e-324", "-0", "1 MΩ", "1 meg", "E97", "lowpass", "gaussian"]
NUMBERS = [0, -1, 1, 2, 12, 13, 10**20, -(2**63), 2**63 - 1, 0.0, -0.0, 5e-324, 1e-300,
           1e300, 1.7e308, float("inf"), float("-inf"), float("nan"), 0.5, 1e-9]
ODD_KEYS = ["q", "colour", "tagret", "stray", "k" * 5000, "Ω", "1", "elements", "value",
            "symbol", "id", "type", "sections", "free", "ranges"]


def odd_value(depth: int = 0):
    """A strategy for a value where another was expected."""
    leaves = (st.sampled_from(ENGINEERING) | st.sampled_from(NUMBERS) | st.booleans()
              | st.floats(allow_nan=True, allow_infinity=True)
              | st.integers(min_value=-(2**63), max_value=2**63 - 1)
              | st.text(max_size=12) | st.just("x" * 10_000))
    if depth >= 2:
        return leaves
    return (leaves | st.lists(leaves, max_size=4)
            | st.dictionaries(st.sampled_from(ODD_KEYS[:4]), leaves, max_size=2)
            | st.builds(lambda n: _nested(n), st.integers(min_value=2, max_value=300)))


def _nested(depth: int) -> list:
    value: list = []
    for _ in range(depth):
        value = [value]
    return value


def _paths(data, prefix=()):
    """Every (container, key) position in a parsed file."""
    out = []
    items = data.items() if isinstance(data, dict) else enumerate(data)
    for key, value in items:
        out.append(prefix + (key,))
        if isinstance(value, (dict, list)):
            out.extend(_paths(value, prefix + (key,)))
    return out


def _at(data, path):
    for key in path:
        data = data[key]
    return data


@st.composite
def mutated(draw, seed: dict, *, unchanged_weight: int = 1) -> dict:
    """`seed` with 0–3 mutations (none with weight `unchanged_weight` in 5)."""
    data = copy.deepcopy(seed)
    count = draw(st.sampled_from([0] * unchanged_weight + [1, 1, 2, 3]))
    for _ in range(count):
        paths = _paths(data)
        kind = draw(st.sampled_from(["delete", "replace", "replace", "add", "rename",
                                     "duplicate", "node", "long"]))
        if not paths:
            kind = "add"
        path = draw(st.sampled_from(paths)) if paths else ()
        parent = _at(data, path[:-1]) if path else data
        key = path[-1] if path else None
        if kind == "delete" and isinstance(parent, dict):
            del parent[key]
        elif kind == "replace":
            parent[key] = draw(odd_value())
        elif kind == "add":
            target = parent if isinstance(parent, dict) else data
            target[draw(st.sampled_from(ODD_KEYS))] = draw(odd_value())
        elif kind == "rename" and isinstance(parent, dict):
            parent[key[:-1] or "x"] = parent.pop(key)
        elif kind == "duplicate" and isinstance(parent, list):
            parent.append(copy.deepcopy(parent[key]))
        elif kind == "node" and isinstance(parent, list) and all(
                isinstance(x, str) for x in parent):
            parent[key] = draw(st.sampled_from(["n99", "gnd", "vin", "vout", "U1.int", ""]))
        elif kind == "long" and isinstance(parent, dict):
            parent[key] = "N" * draw(st.sampled_from([300, 5000]))
    return data


@st.composite
def file_bytes(draw, data: dict) -> bytes:
    """The file's bytes: usually its TOML, sometimes broken text or bytes."""
    text = to_toml(data)
    how = draw(st.sampled_from(["toml"] * 10 + ["truncate", "garbage", "latin1", "deep",
                                                 "duplicate"]))
    if how == "truncate":
        text = text[:draw(st.integers(min_value=0, max_value=len(text)))]
    elif how == "garbage":
        at = draw(st.integers(min_value=0, max_value=len(text)))
        text = text[:at] + draw(st.sampled_from(["[", "]]", "=", '"', "\\", "\x00", "\n[x\n",
                                                 "= = ="])) + text[at:]
    elif how == "deep":
        text = "deep = " + "[" * 600 + "]" * 600 + "\n" + text
    elif how == "duplicate":
        text = text + text.split("\n", 1)[0] + "\n"
    if how == "latin1":
        return text.encode("utf-8") + "# café\n".encode("latin-1")
    return text.encode("utf-8", errors="surrogatepass")


# -- running one case --------------------------------------------------------------

@dataclass(frozen=True)
class Case:
    """Files to write into a fresh folder, and the command line to run there."""

    files: dict
    argv: tuple


@dataclass
class Outcome:
    """How a case ended: exit status, stderr, and any broken promise."""

    status: int | None
    stderr: str
    problems: list = field(default_factory=list)


_SKIP = {".git", "__pycache__", ".hypothesis", ".pytest_cache", "build", ".eggs"}


def snapshot(root: Path = ROOT) -> dict:
    """Path → (size, mtime) of every file of the repository."""
    out = {}
    for folder, dirs, files in os.walk(root):
        dirs[:] = [d for d in dirs if d not in _SKIP and not d.endswith(".egg-info")]
        for name in files:
            path = os.path.join(folder, name)
            with contextlib.suppress(OSError):
                stat = os.stat(path)
                out[path] = (stat.st_size, stat.st_mtime_ns)
    return out


def run_case(case: Case) -> Outcome:
    """Run one case in a temporary folder and check the command's promises."""
    before = snapshot()
    with tempfile.TemporaryDirectory(prefix="placer-fuzz-") as folder:
        for name, data in case.files.items():
            path = Path(folder, name)
            path.parent.mkdir(parents=True, exist_ok=True)
            path.write_bytes(data)
        argv = [a.replace("{dir}", folder) for a in case.argv]
        out, err = io.StringIO(), io.StringIO()
        here = os.getcwd()
        status, problems = None, []
        try:
            os.chdir(folder)
            with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
                status = main(argv)
        except BaseException as error:  # anything escaping main is a broken promise
            problems.append(f"raised {type(error).__name__}: {str(error)[:300]}")
        finally:
            os.chdir(here)
    stderr = err.getvalue()
    if status not in (0, 1, 2):
        problems.append(f"exit status {status!r}")
    if "Traceback" in stderr:
        problems.append("a traceback on stderr")
    if status == 2:
        errors = [line for line in stderr.splitlines() if line.startswith("error:")]
        if len(errors) != 1:
            problems.append(f"{len(errors)} 'error:' lines on exit 2: {stderr[:300]!r}")
    changed = {p for p, v in snapshot().items() if before.get(p) != v} | (
        set(before) - set(snapshot()))
    if changed:
        problems.append(f"files outside the temporary folder changed: {sorted(changed)[:3]}")
    return Outcome(status, stderr, problems)


# -- the cases, one strategy per command ------------------------------------------

def _path_argument(draw, name: str) -> str:
    """Usually the file; sometimes a folder, a missing file or a path too long."""
    return draw(st.sampled_from([name] * 12 + ["{dir}", "missing.toml", "a" * 5000 + ".toml"]))


@st.composite
def target_cases(draw) -> Case:
    seed = draw(st.sampled_from(FILTER_SPECS + LOOP_SPECS))
    data = draw(mutated(SPECS[seed]))
    json_option = draw(st.sampled_from([[], ["--json"], ["--json", "out.json"]]))
    return Case({"spec.toml": draw(file_bytes(data))},
                ("target", _path_argument(draw, "spec.toml"), *json_option))


@st.composite
def design_cases(draw) -> Case:
    seed = draw(st.sampled_from(FILTER_SPECS))
    data = copy.deepcopy(SPECS[seed])
    # Few candidates, so a design that passes validation finishes quickly.
    data["target"] = {"approximation": "butterworth", "order": 2, "cutoff": "1 kHz"}
    data["candidates"] = {"topologies": ["sallen-key-lowpass-unity"]}
    files = {}
    if draw(st.booleans()):  # the user's own topology, by folder and id
        topology = draw(mutated(TOPOLOGIES["sallen-key-lowpass-unity.toml"]))
        if isinstance(topology.get("id"), str):
            topology["id"] = "mine"
        files["topos/mine.toml"] = draw(file_bytes(topology))
        data["candidates"] = {"folder": "topos", "topologies": ["mine"]}
    data = draw(mutated(data, unchanged_weight=2))
    files["spec.toml"] = draw(file_bytes(data))
    return Case(files, ("design", "spec.toml", "--samples", "10", "--quiet", "--workers", "1"))


@st.composite
def loop_cases(draw) -> Case:
    data = draw(mutated(SPECS[draw(st.sampled_from(LOOP_SPECS))], unchanged_weight=2))
    return Case({"spec.toml": draw(file_bytes(data))},
                ("loop", _path_argument(draw, "spec.toml"), "--samples", "10", "--quiet",
                 "--workers", "1"))


@st.composite
def analyze_cases(draw) -> Case:
    kind = draw(st.sampled_from(["topology", "circuit", "numeric circuit", "feedback circuit"]))
    if kind == "feedback circuit":
        seed = draw(st.sampled_from(CIRCUITS))
        data = seed
    else:
        seed = TOPOLOGIES[draw(st.sampled_from(SMALL_TOPOLOGIES))]
        data = seed if kind == "topology" else circuit_of(seed,
                                                          numeric=kind == "numeric circuit")
    data = draw(mutated(data, unchanged_weight=2))
    settings_ = []
    symbols = [e.get("symbol") for e in seed["elements"] if "symbol" in e]
    if kind != "numeric circuit" and draw(st.booleans()):
        for symbol in symbols:
            value = draw(st.sampled_from(["10k", "10n", "1", "0", "-1k", "1e200", "1 kHz",
                                          "abc", "1 uF", "2", "1.1", "-1", "5", "1e-13",
                                          "11", "1m"]))
            settings_ += ["--set", f"{symbol}={value}"]
    return Case({"file.toml": draw(file_bytes(data))},
                ("analyze", _path_argument(draw, "file.toml"), *settings_,
                 *draw(st.sampled_from([[], ["--json"], ["--latex"]]))))


@st.composite
def topologies_cases(draw) -> Case:
    data = draw(mutated(TOPOLOGIES[draw(st.sampled_from(SMALL_TOPOLOGIES))]))
    files = {"topos/mine.toml": draw(file_bytes(data))}
    argv = draw(st.sampled_from([
        ("topologies", "--folder", "topos", "--json"),
        ("topologies", "--folder", "topos"),
        ("topologies", "topos/mine.toml", "--json"),
        ("topologies", "--folder", "topos/mine.toml"),
    ]))
    return Case(files, argv)


def _settings(examples: int):
    return settings(max_examples=examples, deadline=None, database=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large,
                                           HealthCheck.filter_too_much])


def _check(case: Case) -> None:
    outcome = run_case(case)
    assert not outcome.problems, (case.argv, outcome.problems)


@_settings(300)
@given(target_cases())
def test_fuzz_target(case):
    _check(case)


@_settings(250)
@given(analyze_cases())
def test_fuzz_analyze(case):
    _check(case)


@_settings(80)
@given(topologies_cases())
def test_fuzz_topologies(case):
    _check(case)


@_settings(40)
@given(loop_cases())
def test_fuzz_loop(case):
    _check(case)


@_settings(25)
@given(design_cases())
def test_fuzz_design(case):
    _check(case)


def test_the_writer_round_trips_the_examples():
    # the fuzz cases stand on the TOML writer: every shipped file reads back unchanged
    for data in list(SPECS.values()) + list(TOPOLOGIES.values()):
        assert tomllib.loads(to_toml(data)) == data
