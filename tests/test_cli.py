"""The ``placer`` command's robustness and output paths.

Exit statuses, one-line errors and warnings, ``--json`` alike on every
command, outputs checked before any computation, inputs never
overwritten. The numbers checked here come from outside the project: the
unity-gain Sallen–Key low-pass has f0 = 1/(2π·sqrt(R1·R2·C1·C2)) and
Q = sqrt(R1·R2·C1·C2)/(C2·(R1 + R2)) (C1 to the output, C2 to ground; the
textbook result, e.g. Horowitz & Hill, from memory), and errno's ENOSPC
text is the C library's ("No space left on device").
"""

from __future__ import annotations

import errno
import json
import math
import os
import tomllib
import warnings
from pathlib import Path

import numpy as np
import pytest

from placer import cli
from placer.cli import build_parser, main
from placer.errors import NumericalWarning, OutputError, SpecError, UnreachableTarget
from placer.report import files
from placer.report.files import check_output_folder, check_output_path, write_text
from placer.units import plural

ROOT = Path(__file__).resolve().parents[1]

SPEC = """\
title = "one section"

[target]
response = "lowpass"
approximation = "butterworth"
order = 2
cutoff = "1 kHz"

[candidates]
topologies = ["sallen-key-lowpass-unity"]

[tolerance]
samples = 20
"""


def _lines(text):
    return [line for line in text.splitlines() if line.strip()]


@pytest.fixture
def spec(tmp_path):
    path = tmp_path / "spec.toml"
    path.write_text(SPEC)
    return path


@pytest.fixture
def no_compute(monkeypatch):
    """Any computation after the checks is a failure of the test (exit 3)."""
    def refuse(*args, **kwargs):
        raise AssertionError("the computation ran before the outputs were checked")

    import importlib

    import placer.spec.loop_table
    # the modules, not the package's functions of the same names
    monkeypatch.setattr(importlib.import_module("placer.design"), "design", refuse)
    monkeypatch.setattr(importlib.import_module("placer.compare"), "compare", refuse)
    monkeypatch.setattr(placer.spec.loop_table, "run_loop", refuse)
    import placer.analysis.network
    monkeypatch.setattr(placer.analysis.network, "network_function", refuse)


# -- 1. exit statuses, --debug -------------------------------------------------

def _raising(error):
    def command(args):
        raise error
    return command


@pytest.mark.parametrize("error, status, start", [
    (ZeroDivisionError("division by zero"), 3, "internal error: ZeroDivisionError: division by zero"),
    (KeyError("R9"), 3, "internal error: KeyError: 'R9'"),
    (MemoryError(), 3, "internal error: MemoryError"),
    (UnreachableTarget("Q 5 is past 0.5"), 1, "cannot reach the target: Q 5 is past 0.5"),
    (SpecError("spec.toml: [target] bad"), 2, "error: spec.toml: [target] bad"),
    (OutputError("--json: disk full"), 2, "error: --json: disk full"),
    (KeyboardInterrupt(), 130, "error: interrupted"),
])
def test_every_error_is_one_line_with_its_exit_status(monkeypatch, capsys, error, status, start):
    monkeypatch.setitem(cli._COMMANDS, "topologies", _raising(error))
    assert main(["topologies"]) == status
    err = capsys.readouterr().err
    assert "Traceback" not in err
    assert len(_lines(err)) == 1
    assert err.startswith(start)
    if status == 3:
        assert err.rstrip().endswith("; run with --debug for the traceback")


@pytest.mark.parametrize("argv", [["--debug", "topologies"], ["topologies", "--debug"]])
def test_debug_prints_the_traceback_before_the_line(monkeypatch, capsys, argv):
    monkeypatch.setitem(cli._COMMANDS, "topologies", _raising(ZeroDivisionError("boom")))
    assert main(argv) == 3
    err = capsys.readouterr().err
    assert "Traceback (most recent call last)" in err
    assert "ZeroDivisionError: boom" in err
    assert err.rstrip().splitlines()[-1] == "internal error: ZeroDivisionError: boom"


def test_debug_is_accepted_by_every_command_and_defaults_off():
    parser = build_parser()
    for command in ("analyze x", "target s", "design s", "compare s", "loop s", "topologies",
                    "explore s"):
        argv = command.split()
        assert parser.parse_args(argv).debug is False
        assert parser.parse_args(argv + ["--debug"]).debug is True
        assert parser.parse_args(["--debug"] + argv).debug is True


def test_an_internal_error_message_is_cut_to_one_readable_line(monkeypatch, capsys):
    monkeypatch.setitem(cli._COMMANDS, "topologies",
                        _raising(RuntimeError("first line\nsecond " + "x" * 2000)))
    assert main(["topologies"]) == 3
    err = capsys.readouterr().err
    assert len(_lines(err)) == 1
    assert "first line second" in err
    assert len(err) < cli.MESSAGE_LENGTH + 100


def test_run_exits_with_mains_status_and_is_the_console_script(monkeypatch):
    monkeypatch.setattr(cli, "main", lambda: 3)
    with pytest.raises(SystemExit) as stop:
        cli.run()
    assert stop.value.code == 3
    project = tomllib.loads((ROOT / "pyproject.toml").read_text())
    assert project["project"]["scripts"]["placer"] == "placer.cli:run"


def test_bad_argument_is_exit_2_without_traceback(capsys):
    assert main(["design"]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "Traceback" not in err and len(_lines(err)) == 1


# -- 2. --json alike on every command -----------------------------------------

@pytest.mark.parametrize("command", ["analyze x", "target s", "design s", "compare s", "loop s",
                                     "topologies"])
def test_json_alone_means_standard_output_on_every_command(command):
    parser = build_parser()
    argv = command.split()
    assert parser.parse_args(argv + ["--json"]).json == "-"
    assert parser.parse_args(argv + ["--json", "-"]).json == "-"
    assert parser.parse_args(argv + ["--json", "out.json"]).json == "out.json"
    assert parser.parse_args(argv).json is None


def test_analyze_json_alone_is_pure_json_and_its_numbers_match_the_textbook(capsys):
    r1, r2, c1, c2 = 10e3, 22e3, 10e-9, 4.7e-9
    status = main(["analyze", "sallen-key-lowpass-unity", "--set", "R1=10k", "--set", "R2=22k",
                   "--set", "C1=10n", "--set", "C2=4.7n", "--json"])
    assert status == 0
    out, err = capsys.readouterr()
    data = json.loads(out)  # nothing but JSON on standard output
    f0 = 1 / (2 * math.pi * math.sqrt(r1 * r2 * c1 * c2))
    q = math.sqrt(r1 * r2 * c1 * c2) / (c2 * (r1 + r2))
    assert data["f0_hz"] == pytest.approx(f0, rel=1e-9)
    assert data["q"] == pytest.approx(q, rel=1e-9)
    assert data["gain_db"] == pytest.approx(0.0, abs=1e-9)
    assert "H(s) of sallen-key-lowpass-unity" in err  # the console text on standard error


def test_json_to_a_file_keeps_the_console_on_standard_output(tmp_path, capsys):
    out = tmp_path / "t.json"
    assert main(["topologies", "mfb-lowpass", "--json", str(out)]) == 0
    stdout, _ = capsys.readouterr()
    assert stdout.startswith("mfb-lowpass: ")
    assert json.loads(out.read_text())["id"] == "mfb-lowpass"


def test_design_json_alone_is_pure_json_on_standard_output(spec, capsys):
    assert main(["design", str(spec), "--json", "--quiet", "--samples", "20"]) == 0
    out, err = capsys.readouterr()
    data = json.loads(out)
    assert data["sections"][0]["topology"] == "sallen-key-lowpass-unity"
    assert "Design: one section" in err and "Caution:" in err


def test_target_json_dash_is_pure_json(spec, capsys):
    assert main(["target", str(spec), "--json", "-"]) == 0
    out, err = capsys.readouterr()
    data = json.loads(out)
    # Butterworth, order 2: one pole pair at the cutoff with Q = 1/sqrt(2) (handbook).
    assert data["sections"][0]["q"] == pytest.approx(1 / math.sqrt(2), rel=1e-6)
    assert err.strip()


@pytest.mark.parametrize("argv", [
    ["design", "{spec}", "--json", ""], ["design", "{spec}", "--bom", ""],
    ["design", "{spec}", "--report", ""], ["design", "{spec}", "--plots", ""],
    ["design", "{spec}", "--schematic", ""], ["compare", "{spec}", "--json", ""],
    ["compare", "{spec}", "--report", " "], ["loop", "{loop}", "--json", ""],
    ["target", "{spec}", "--json", ""], ["analyze", "mfb-lowpass", "--json", ""],
    ["topologies", "--json", ""], ["topologies", "mfb-lowpass", "--schematic", ""],
])
def test_an_empty_output_path_is_refused_in_one_line(spec, capsys, no_compute, argv):
    argv = [a.format(spec=spec, loop=ROOT / "examples" / "boost-loop.toml") for a in argv]
    status = main(argv)
    err = capsys.readouterr().err
    assert status == 2, err
    assert len(_lines(err)) == 1 and "give a path, not an empty one" in err


# -- 3. writability before the computation ------------------------------------

@pytest.mark.parametrize("option", ["--json", "--bom", "--report"])
def test_file_outputs_are_checked_before_designing(spec, tmp_path, capsys, no_compute, option):
    cases = {"missing": (str(tmp_path / "nope" / "out"), "does not exist"),
             "folder": (str(tmp_path), "is a folder, not a file")}
    for path, words in cases.values():
        assert main(["design", str(spec), option, path]) == 2
        err = capsys.readouterr().err
        assert len(_lines(err)) == 1 and option in err and words in err, err


@pytest.mark.parametrize("option", ["--plots", "--schematic"])
def test_folder_outputs_are_checked_before_designing(spec, tmp_path, capsys, no_compute, option):
    for path, words in ((tmp_path / "nope", "does not exist"), (spec, "is a file, not a folder")):
        assert main(["design", str(spec), option, str(path)]) == 2
        err = capsys.readouterr().err
        assert len(_lines(err)) == 1 and option in err and words in err, err


@pytest.mark.parametrize("option", ["--json", "--bom", "--report", "--plots", "--schematic"])
def test_a_read_only_folder_is_refused_before_designing(spec, tmp_path, capsys, no_compute,
                                                        monkeypatch, option):
    locked = tmp_path / "locked"
    locked.mkdir()
    real_access = os.access
    # As root os.access says yes to everything; the check asks os.access, so ask it here.
    monkeypatch.setattr(files.os, "access", lambda p, mode: (
        False if Path(p).resolve() == locked.resolve() else real_access(p, mode)))
    path = locked if option in ("--plots", "--schematic") else locked / "out.x"
    assert main(["design", str(spec), option, str(path)]) == 2
    err = capsys.readouterr().err
    assert len(_lines(err)) == 1 and "read-only" in err and option in err, err


@pytest.mark.skipif(hasattr(os, "geteuid") and os.geteuid() == 0,
                    reason="root may write into a read-only folder")
def test_a_really_read_only_folder_is_refused(tmp_path):
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o555)
    try:
        with pytest.raises(OutputError, match="read-only"):
            check_output_path(locked / "x.json", option="--json")
    finally:
        locked.chmod(0o755)


def test_the_same_file_for_two_outputs_is_refused(spec, tmp_path, capsys, no_compute):
    out = tmp_path / "both.txt"
    assert main(["design", str(spec), "--json", str(out), "--bom", str(out)]) == 2
    assert "give each output its own file" in capsys.readouterr().err


def test_a_failure_while_writing_is_one_line_naming_path_and_reason(tmp_path, capsys,
                                                                    monkeypatch):
    def full(*args):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))

    monkeypatch.setattr(files.os, "replace", full)
    out = tmp_path / "list.json"
    assert main(["topologies", "--json", str(out)]) == 2
    err = capsys.readouterr().err
    assert len(_lines(err)) == 1 and "Traceback" not in err
    assert str(out) in err and "No space left on device" in err
    assert not out.exists()
    assert list(tmp_path.iterdir()) == []  # the temporary file is gone too


def test_write_text_turns_an_os_error_into_output_error(tmp_path, monkeypatch):
    monkeypatch.setattr(files.os, "fdopen", lambda *a: (_ for _ in ()).throw(
        OSError(errno.EIO, os.strerror(errno.EIO))))
    with pytest.raises(OutputError, match=r"--bom: could not write .*: Input/output error"):
        write_text(tmp_path / "b.csv", "x", option="--bom")
    assert list(tmp_path.iterdir()) == []


# -- 4. inputs are never overwritten ------------------------------------------

def test_the_spec_is_protected_through_relative_paths_dotdot_and_links(spec, tmp_path, capsys,
                                                                       monkeypatch, no_compute):
    before = spec.read_text()
    (tmp_path / "sub").mkdir()
    link = tmp_path / "link.toml"
    link.symlink_to(spec)
    hard = tmp_path / "hard.toml"
    os.link(spec, hard)
    monkeypatch.chdir(tmp_path / "sub")
    for out in ("../spec.toml", str(tmp_path / "sub" / ".." / "spec.toml"), str(link),
                str(hard)):
        for option in ("--json", "--bom", "--report"):
            assert main(["design", "../spec.toml", option, out]) == 2
            err = capsys.readouterr().err
            assert "is an input file" in err and len(_lines(err)) == 1, (out, err)
    # The spec given through the link: the real file is protected as well.
    assert main(["design", str(link), "--json", str(spec)]) == 2
    assert "is an input file" in capsys.readouterr().err
    assert spec.read_text() == before


def test_topologies_folder_entries_are_inputs(tmp_path, capsys):
    lib = tmp_path / "lib"
    lib.mkdir()
    source = (ROOT / "placer" / "circuit" / "topologies" / "mfb-lowpass.toml").read_text()
    mine = source.replace('id = "mfb-lowpass"', 'id = "my-mfb"')
    (lib / "mfb.toml").write_text(mine)
    (lib / "notes.txt").write_text("keep me")
    for out in (lib / "mfb.toml", lib / "notes.txt", tmp_path / "lib" / ".." / "lib" / "mfb.toml"):
        assert main(["topologies", "--folder", str(lib), "--json", str(out)]) == 2
        err = capsys.readouterr().err
        assert "is an input file" in err, err
    assert main(["topologies", "my-mfb", "--folder", str(lib), "--schematic",
                 str(lib / "mfb.toml")]) == 2
    assert "is an input file" in capsys.readouterr().err
    assert (lib / "mfb.toml").read_text() == mine
    assert (lib / "notes.txt").read_text() == "keep me"


def test_a_topology_file_read_by_path_is_protected_through_a_symlink(tmp_path, capsys):
    source = ROOT / "placer" / "circuit" / "topologies" / "mfb-lowpass.toml"
    mine = tmp_path / "t.toml"
    mine.write_text(source.read_text())
    link = tmp_path / "out.svg"
    link.symlink_to(mine)
    assert main(["topologies", str(mine), "--schematic", str(link)]) == 2
    assert "is an input file" in capsys.readouterr().err
    assert main(["analyze", str(mine), "--json", str(link)]) == 2
    assert "is an input file" in capsys.readouterr().err
    assert mine.read_text() == source.read_text()


def test_design_protects_its_candidate_folder_and_files(tmp_path, capsys, no_compute):
    lib = tmp_path / "lib"
    lib.mkdir()
    source = ROOT / "placer" / "circuit" / "topologies" / "sallen-key-lowpass-unity.toml"
    (lib / "sk.toml").write_text(source.read_text().replace(
        'id = "sallen-key-lowpass-unity"', 'id = "my-sk"'))
    single = tmp_path / "single.toml"
    single.write_text(source.read_text().replace(
        'id = "sallen-key-lowpass-unity"', 'id = "single-sk"'))
    spec = tmp_path / "spec.toml"
    spec.write_text(SPEC.replace('topologies = ["sallen-key-lowpass-unity"]',
                                 'topologies = ["single.toml"]\nfolder = "lib"'))
    for command in ("design", "compare"):
        for out in (lib / "sk.toml", single, tmp_path / "lib" / ".." / "single.toml"):
            assert main([command, str(spec), "--json", str(out)]) == 2
            err = capsys.readouterr().err
            assert "is an input file" in err, (command, out, err)


def test_input_files_expands_a_folder_to_its_entries(tmp_path):
    (tmp_path / "a.toml").write_text("")
    (tmp_path / "b.txt").write_text("")
    names = sorted(p.name for p in files.input_files([str(tmp_path), "", None]))
    assert names == ["a.toml", "b.txt"]


def test_check_output_folder_accepts_a_writable_folder(tmp_path):
    assert check_output_folder(tmp_path, option="--plots") == tmp_path


# -- 5. warnings ---------------------------------------------------------------

def test_warnings_print_as_one_line_each(monkeypatch, capsys):
    def noisy(args):
        warnings.warn("the sections realise\nthe target inverted", NumericalWarning)
        np.log10(np.zeros(3))  # numpy: divide by zero encountered in log10
        warnings.warn("some library note", UserWarning)
        return 0

    monkeypatch.setitem(cli._COMMANDS, "topologies", noisy)
    with warnings.catch_warnings():
        warnings.simplefilter("default")
        np.seterr(all="warn")
        assert main(["topologies"]) == 0
    err = _lines(capsys.readouterr().err)
    assert err[0] == "warning: the sections realise the target inverted"
    assert err[1].startswith("warning: numerical trouble (RuntimeWarning, as a NumericalWarning)")
    assert "divide by zero" in err[1]
    assert err[2].startswith("warning: numerical trouble (UserWarning")
    assert len(err) == 3


def test_the_warning_hook_is_only_for_the_run(monkeypatch):
    before = warnings.showwarning
    monkeypatch.setitem(cli._COMMANDS, "topologies", lambda args: 0)
    main(["topologies"])
    assert warnings.showwarning is before


def test_a_long_warning_is_cut(monkeypatch, capsys):
    monkeypatch.setitem(cli._COMMANDS, "topologies", lambda args: warnings.warn(
        "value " + "9" * 5000, NumericalWarning) or 0)
    assert main(["topologies"]) == 0
    err = capsys.readouterr().err
    assert len(_lines(err)) == 1 and len(err) <= cli.MESSAGE_LENGTH + 20


# -- 6. console wording --------------------------------------------------------

def test_plural():
    assert [plural(n, "zero") for n in (0, 1, 2)] == ["0 zeros", "1 zero", "2 zeros"]
    assert plural(1, "op-amp") == "1 op-amp"


def test_topology_text_says_inverting_once_and_counts_in_the_singular(capsys):
    assert main(["topologies", "mfb-lowpass"]) == 0
    out = capsys.readouterr().out
    assert "1 op-amp" in out and "1 op-amps" not in out
    assert out.lower().count("inverting)") == 1 and "), inverting" not in out


def test_inverting_is_said_once():
    from placer.report.console import inverting_note

    assert inverting_note("Multiple-feedback low-pass (inverting)", True) == ""
    assert inverting_note("Sallen-Key low-pass", True) == ", inverting"
    assert inverting_note("Sallen-Key low-pass", False) == ""


def test_a_real_design_text_has_no_plural_of_one(spec, capsys):
    spec.write_text(SPEC.replace("sallen-key-lowpass-unity", "rc-lowpass")
                    .replace('order = 2', 'order = 1'))
    status = main(["design", str(spec), "--quiet", "--samples", "20"])
    out = capsys.readouterr().out
    assert status == 0
    assert "1 pole," in out and "1 poles" not in out and "1 zeros" not in out


def test_a_long_argument_value_is_cut_in_the_error(capsys):
    assert main(["compare", "s.toml", "--rank-by", "z" * 500]) == 2
    err = capsys.readouterr().err
    assert len(_lines(err)) == 1 and "z" * 60 not in err
    assert "'yield', 'error', 'parts', 'sensitivity'" in err  # what is accepted stays


def test_an_input_folder_is_refused_as_an_output_folder(tmp_path, capsys, no_compute):
    lib = tmp_path / "lib"
    lib.mkdir()
    spec = tmp_path / "spec.toml"
    spec.write_text(SPEC.replace('topologies = ["sallen-key-lowpass-unity"]', 'folder = "lib"'))
    for option in ("--plots", "--schematic"):
        assert main(["design", str(spec), option, str(tmp_path / "lib" / ".")]) == 2
        err = capsys.readouterr().err
        assert "is an input folder" in err and len(_lines(err)) == 1, err
