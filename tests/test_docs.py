"""The documentation against the code, so that neither drifts from the other.

- ``docs/spec-format.md``: every table and key of ``placer.schema.SPEC_TABLES``
  and ``PLANT_TABLES`` is documented, nothing else is, with the schema's
  type and unit; the accepted choices are the code's own lists; the stated
  defaults are those a spec without the key gets; the default tolerances
  are ``placer.eseries.usual_tolerance`` (common practice: the tolerance
  each IEC 60063 series is usually sold in).
- ``docs/topology-format.md``: the topology, circuit, element and drawing
  keys, and the element kinds with their node counts and units.
- ``README.md``: every option of every command of ``placer.cli.build_parser``
  is in that command's table, written as ``placer COMMAND --help`` writes it,
  and nothing else is; every key of its TOML examples is accepted; every
  ``placer`` command line of its shell blocks runs and exits 0.

Tables are found by the HTML comment before them (``<!-- keys: spec
"target" -->``) or by the heading above them (README commands).
"""

from __future__ import annotations

import argparse
import re
import shlex
import shutil
import tomllib
from pathlib import Path

import pytest

from placer import cli
from placer.circuit.drawing import DRAWING_KEYS
from placer.circuit.elements import KIND_UNITS, NODE_COUNT
from placer.eseries import SERIES_NAMES, usual_tolerance
from placer.evidence.tolerance import DISTRIBUTIONS
from placer.loops.compensator import COMPENSATOR_FAMILIES
from placer.loops.plants import PLANT_TYPES
from placer.place.level import DEFAULT_MIN_LOAD
from placer.place.opamp import AMPLIFIER_PRESETS
from placer.schema import (
    CIRCUIT_KEYS,
    ELEMENT_KEYS,
    PLANT_TABLES,
    SPEC_TABLES,
    TOPOLOGY_KEYS,
    TYPES,
)
from placer.spec.loop_table import loop_from_table
from placer.spec.reader import NoiseSpec, SignalSpec, spec_from_dict
from placer.target.approximations import APPROXIMATIONS, BESSEL_NORMS
from placer.target.sections import GAIN_RULES, ORDERINGS
from placer.target.targets import RESPONSES, ROOT_UNITS, SECTION_KINDS
from placer.units import parse_value

ROOT = Path(__file__).resolve().parents[1]
SPEC_PAGE = ROOT / "docs" / "spec-format.md"
TOPOLOGY_PAGE = ROOT / "docs" / "topology-format.md"
README = ROOT / "README.md"


# -- reading markdown ------------------------------------------------------------

def _cells(line: str) -> list[str]:
    return [cell.strip() for cell in line.strip().strip("|").split("|")]


def _table_after(lines: list[str], start: int) -> list[list[str]]:
    """The rows (header and separator dropped) of the first table from `start`."""
    i = start
    while i < len(lines) and not lines[i].startswith("|"):
        i += 1
    rows = []
    while i < len(lines) and lines[i].startswith("|"):
        rows.append(_cells(lines[i]))
        i += 1
    assert len(rows) >= 2 and set(rows[1][0]) <= set("-: "), f"no table after line {start + 1}"
    return rows[2:]


def _marked_tables(path: Path) -> dict[str, list[list[str]]]:
    """Marker text (``keys: spec "target"``) → rows of the table after it."""
    lines = path.read_text(encoding="utf-8").splitlines()
    tables = {}
    for i, line in enumerate(lines):
        found = re.fullmatch(r"<!-- (.+?) -->", line.strip())
        if found:
            assert found.group(1) not in tables, f"{path.name}: {found.group(1)} twice"
            tables[found.group(1)] = _table_after(lines, i + 1)
    return tables


def _names(cell: str) -> list[str]:
    """The backticked names of a first cell (`above`, `below` → both)."""
    return re.findall(r"`([^`]+)`", cell)


def _by_key(rows: list[list[str]]) -> dict[str, list[str]]:
    out = {}
    for row in rows:
        for name in _names(row[0]):
            assert name not in out, f"{name} documented twice"
            out[name] = row
    return out


SPEC_DOC = _marked_tables(SPEC_PAGE)
_SPEC_COLUMNS = ("key", "type", "unit", "default", "accepted", "meaning")


def _spec_rows(kind: str, name: str) -> dict[str, dict[str, str]]:
    rows = _by_key(SPEC_DOC[f'keys: {kind} "{name}"'])
    for key, row in rows.items():
        assert len(row) == len(_SPEC_COLUMNS), f"{name}.{key}: {len(row)} columns"
    return {key: dict(zip(_SPEC_COLUMNS, row)) for key, row in rows.items()}


# -- docs/spec-format.md -----------------------------------------------------------

def test_every_schema_table_is_documented_and_no_other():
    documented = {m for m in SPEC_DOC if m.startswith("keys: ")}
    expected = {f'keys: spec "{name}"' for name in SPEC_TABLES}
    expected |= {f'keys: plant "{name}"' for name in PLANT_TABLES}
    assert documented == expected


@pytest.mark.parametrize("kind,name", [("spec", n) for n in SPEC_TABLES]
                         + [("plant", n) for n in PLANT_TABLES])
def test_spec_keys_match_the_schema(kind, name):
    schema = (SPEC_TABLES if kind == "spec" else PLANT_TABLES)[name]
    rows = _spec_rows(kind, name)
    missing = sorted(set(schema) - set(rows))
    extra = sorted(set(rows) - set(schema))
    assert not missing, f"[{name}] accepts {missing} but docs/spec-format.md does not list them"
    assert not extra, f"docs/spec-format.md lists {extra} under [{name}], which it does not accept"
    for key, row in rows.items():
        assert row["type"] == schema[key].type, f"[{name}] {key}: type"
        if schema[key].unit:
            assert schema[key].unit in row["unit"], f"[{name}] {key}: unit {schema[key].unit}"
        assert len(row["meaning"]) > 10 and row["default"] and row["accepted"], \
            f"[{name}] {key}: describe it (default, accepted values, meaning)"


def test_types_table_is_the_schemas():
    rows = {_names(row[0])[0]: row[1] for row in SPEC_DOC["types"]}
    assert rows == TYPES


# The code's own list of each choice key's accepted values.
CHOICES = {
    ("target", "response"): RESPONSES,
    ("target", "approximation"): APPROXIMATIONS,
    ("target", "bessel_norm"): BESSEL_NORMS,
    ("target", "units"): ROOT_UNITS,
    ("target.sections", "kind"): SECTION_KINDS,
    ("cascade", "ordering"): ORDERINGS,
    ("cascade", "gain_distribution"): GAIN_RULES,
    ("parts", "resistor_series"): SERIES_NAMES,
    ("parts", "capacitor_series"): SERIES_NAMES,
    ("parts", "inductor_series"): SERIES_NAMES,
    ("tolerance", "distribution"): DISTRIBUTIONS,
    ("amplifier", "preset"): tuple(f'"{name}"' for name in AMPLIFIER_PRESETS),
    ("loop", "compensator"): COMPENSATOR_FAMILIES,
}


@pytest.mark.parametrize("table,key", sorted(CHOICES))
def test_accepted_choices_are_the_codes(table, key):
    cell = _spec_rows("spec", table)[key]["accepted"]
    shown = set(_names(cell))
    assert set(CHOICES[table, key]) <= shown, f"[{table}] {key}: {cell}"


def test_plant_types_are_the_codes():
    assert set(PLANT_TABLES) == set(PLANT_TYPES)
    for name in PLANT_TABLES:
        assert _spec_rows("plant", name)["type"]["accepted"] == f"`{name}`"


def test_presets_figures_are_the_codes():
    cell = _spec_rows("spec", "amplifier")["preset"]["accepted"]
    for name, figures in AMPLIFIER_PRESETS.items():
        found = re.search(re.escape(f'`"{name}"`') + r" \(([^)]*)\)", cell)
        gbw, gain, resistance = found.group(1).split(", ")
        assert parse_value(gbw, unit="Hz") == pytest.approx(figures["gbw"])
        assert 10 ** (parse_value(gain, unit="dB") / 20) == pytest.approx(figures["gain"])
        assert parse_value(resistance.replace("Ω", "ohm"), unit="ohm") == pytest.approx(
            figures["output_resistance"])


def _default(table: str, key: str) -> str:
    return _spec_rows("spec", table)[key]["default"]


def _first_value(cell: str, unit: str | None = None) -> float:
    return parse_value(_names(cell)[0], unit=unit)


def test_defaults_are_what_a_bare_spec_gets():
    spec = spec_from_dict({"target": {"approximation": "butterworth", "order": 2,
                                      "cutoff": "1k"}})
    assert f"`{spec.ordering}`" in _default("cascade", "ordering")
    assert f"`{spec.gain_distribution}`" in _default("cascade", "gain_distribution")
    for kind in ("resistor", "capacitor", "inductor"):
        assert _default("parts", f"{kind}_series") == f"`{spec.parts.series[kind]}`"
        low, high = tomllib.loads("x = " + _names(_default("parts", f"{kind}_range"))[0])["x"]
        unit = {"resistor": "ohm", "capacitor": "F", "inductor": "H"}[kind]
        assert (parse_value(low, unit=unit), parse_value(high, unit=unit)) == pytest.approx(
            spec.parts.ranges[kind])
    tolerance = spec.tolerance
    assert _first_value(_default("tolerance", "samples")) == tolerance.samples
    assert _first_value(_default("tolerance", "seed")) == tolerance.seed
    assert f"`{tolerance.distribution}`" == _default("tolerance", "distribution")
    for key in ("f0", "q"):
        assert _first_value(_default("tolerance", key)) == pytest.approx(tolerance.windows[key])
    # Part tolerances: the default series' usual tolerance, stated as "(E96: 1 %)".
    for kind in ("resistor", "capacitor", "inductor"):
        series, percent = re.search(r"\((E\d+): ([\d.]+) %\)", _default("tolerance", kind)).groups()
        assert series == spec.parts.series[kind]
        assert float(percent) / 100 == pytest.approx(tolerance.tolerances[kind])
    assert _first_value(_default("target", "gain"), "dB") == spec.target.gain_db == 0.0
    assert _first_value(_default("amplifier", "min_load"), "ohm") == DEFAULT_MIN_LOAD
    assert f"`{NoiseSpec().temperature_k:g}` K" in _default("noise", "temperature")
    assert _first_value(_default("signal", "amplitude"), "V") == SignalSpec().amplitude_v
    loop = loop_from_table({"crossover": "1k", "phase_margin": 45,
                            "plant": {"type": "roots", "poles": [-10], "dc_gain": 10}})
    assert _default("loop", "compensator") == f"`{loop.compensator}`"
    assert _first_value(_default("loop", "r1"), "ohm") == loop.r1
    assert f"`{loop.resistor_series}`" in _default("loop", "resistor_series")
    assert f"`{loop.capacitor_series}`" in _default("loop", "capacitor_series")


def test_usual_tolerances_listed_are_the_codes():
    # The [tolerance] prose lists each series' usual tolerance (common practice).
    text = SPEC_PAGE.read_text(encoding="utf-8")
    listed = dict(re.findall(r"(E\d+) ([\d.]+) %", text.split("## `[tolerance]`")[1]
                             .split("<!--")[0]))
    assert set(listed) == set(SERIES_NAMES)
    for series, percent in listed.items():
        assert float(percent) / 100 == pytest.approx(usual_tolerance(series)), series


def test_order_of_a_band_response_is_the_prototypes():
    # The page says a band-pass of prototype order n has 2n poles; so it is.
    assert "twice as many poles" in _spec_rows("spec", "target")["order"]["meaning"]
    spec = spec_from_dict({"target": {"response": "bandpass", "approximation": "butterworth",
                                      "order": 3, "center": "1k", "bandwidth": "200"}})
    assert len(spec.target.poles) == 6


# -- docs/topology-format.md --------------------------------------------------------

TOPOLOGY_DOC = _marked_tables(TOPOLOGY_PAGE)


@pytest.mark.parametrize("marker,accepted", [
    ("keys: topology", TOPOLOGY_KEYS), ("keys: circuit", CIRCUIT_KEYS),
    ("keys: element", ELEMENT_KEYS), ("keys: drawing", DRAWING_KEYS)])
def test_topology_keys_match_the_code(marker, accepted):
    rows = _by_key(TOPOLOGY_DOC[marker])
    assert set(rows) == set(accepted), (sorted(set(accepted) - set(rows)),
                                        sorted(set(rows) - set(accepted)))
    for row in rows.values():
        assert len(row[-1]) > 10


def test_element_kinds_nodes_and_units():
    rows = {_names(row[0])[0]: row for row in TOPOLOGY_DOC["kinds"]}
    assert list(rows) == list(NODE_COUNT)
    for kind, (_, nodes, unit, _meaning) in rows.items():
        assert len(nodes.split(", ")) == NODE_COUNT[kind], kind
        assert unit == KIND_UNITS[kind], kind
    # The op-amp's node order is the schema's (placer.circuit: nodes[0] is +).
    assert rows["opamp"][1] == "non-inverting, inverting, output"


# -- README: the command tables -------------------------------------------------------

def _subparsers(parser: argparse.ArgumentParser) -> dict[str, argparse.ArgumentParser]:
    for action in parser._actions:
        if isinstance(action, argparse._SubParsersAction):
            return dict(action.choices)
    return {}


def _invocations(parser: argparse.ArgumentParser) -> set[str]:
    """Each option as ``--help`` shows it (``--json [OUT]``, ``--gbw {built,rule,model}``)."""
    formatter = argparse.HelpFormatter(parser.prog)
    return {formatter._format_action_invocation(action) for action in parser._actions
            if action.option_strings and not isinstance(action, (argparse._HelpAction,
                                                                 argparse._SubParsersAction))}


def _readme_command_tables() -> dict[str, set[str]]:
    """Command ("" for the top level) → the options its README table lists."""
    lines = README.read_text(encoding="utf-8").splitlines()
    out = {}
    for i, line in enumerate(lines):
        found = re.match(r"### `placer(?: ([a-z][a-z-]*))?", line)
        if found:
            command = found.group(1) or ""
            assert command not in out, f"README: two tables for {command!r}"
            out[command] = {_names(row[0])[0] for row in _table_after(lines, i + 1)}
    return out


def test_readme_lists_every_option_of_every_command():
    parser = cli.build_parser()
    commands = {"": parser, **_subparsers(parser)}
    tables = _readme_command_tables()
    assert set(tables) == set(commands), "README: a command without a table, or the reverse"
    # an option every command takes (``--debug``, before or after the command)
    # is documented once, in the top-level table
    everywhere = set.intersection(*(_invocations(sub) for sub in commands.values()))
    for name, sub in commands.items():
        documented, actual = tables[name], _invocations(sub)
        if name:
            actual -= everywhere
        assert documented == actual, (
            f"placer {name}: options not in the README {sorted(actual - documented)}, "
            f"in the README but not options (or written otherwise) {sorted(documented - actual)}")


def test_readme_overview_names_every_command():
    text = README.read_text(encoding="utf-8")
    overview = text.split("## Commands")[1].split("###")[0]
    for name in _subparsers(cli.build_parser()):
        assert f"| `placer {name}` |" in overview, name


# -- README: its TOML and shell examples ---------------------------------------------

def _blocks(language: str) -> list[str]:
    text = README.read_text(encoding="utf-8")
    return re.findall(rf"```{language}\n(.*?)```", text, flags=re.S)


def test_readme_toml_keys_are_accepted():
    blocks = _blocks("toml")
    assert len(blocks) >= 2
    for block in blocks:
        spec_from_dict(tomllib.loads(block), source="README")   # the live keys load
        table = ""
        for line in block.splitlines():
            header = re.match(r"\s*\[+([a-z._]+)\]+", line)
            if header:
                table = header.group(1)
                assert table in SPEC_TABLES or table == "loop.plant", table
                continue
            # Every `key =` on the line, live or commented, is a key of its table.
            accepted = (set().union(*map(set, PLANT_TABLES.values())) if table == "loop.plant"
                        else set(SPEC_TABLES[table]))
            for key in re.findall(r"(?:^|[\s#/])([a-z_0-9]+) =", line):
                assert key in accepted, f"README: [{table}] {key} is not accepted"


def _readme_command_lines() -> list[str]:
    lines = []
    for block in _blocks("sh"):
        for line in block.splitlines():
            if re.search(r"(^|&& )placer ", line):
                lines.append(line.strip())
    return lines


COMMAND_LINES = _readme_command_lines()
#: Monte Carlo builds for a documentation run (the README's own counts are larger).
SMALL_SAMPLES = "40"


def test_readme_has_command_examples():
    assert len(COMMAND_LINES) >= 8
    used = {shlex.split(line.split("&& ")[-1])[1] for line in COMMAND_LINES}
    assert {"target", "design", "compare", "loop", "topologies", "analyze"} <= used


@pytest.mark.parametrize("line", COMMAND_LINES)
def test_readme_command_runs(line, tmp_path, monkeypatch, capsys):
    """Each ``placer`` line of the README, from a copy of the repository's examples."""
    shutil.copytree(ROOT / "examples", tmp_path / "examples")
    monkeypatch.chdir(tmp_path)
    for segment in line.split("&&"):
        words = shlex.split(segment)
        if words[0] == "mkdir":
            for folder in (w for w in words[1:] if not w.startswith("-")):
                (tmp_path / folder).mkdir(parents=True, exist_ok=True)
            continue
        if words[0] != "placer":
            continue       # pip, python: the install, not the tool
        args = words[1:]
        if args[0] in ("design", "compare", "loop"):
            if "--samples" in args:
                args[args.index("--samples") + 1] = SMALL_SAMPLES
            else:
                args += ["--samples", SMALL_SAMPLES]
        status = cli.main(args)
        captured = capsys.readouterr()
        assert status == 0, f"{line}: exit {status}: {captured.err[-2000:]}"
        assert "Traceback" not in captured.err
    # Outputs stay in the run's folder, beside the copied examples.
    outputs = {p.name for p in tmp_path.rglob("*") if "examples" not in p.parts}
    for word in shlex.split(line):
        if re.search(r"\.(html|csv|json|svg)$", word):
            assert word in outputs, f"{line}: {word} not written"
