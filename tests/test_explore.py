"""The explorer's HTTP API, through Starlette's TestClient.

Placements are checked against the circuit they return, analysed afresh
through the MNA pencil, and against the textbook second-order pole
positions; downloads against what ``placer design`` writes for the saved
spec; the guard against the statuses HTTP defines for each refusal
(RFC 9110: 403 Forbidden, 413 Content Too Large, 421 Misdirected
Request, 422 Unprocessable Content).
"""

from __future__ import annotations

import datetime as dt
import json
import math
import tomllib
from pathlib import Path

import numpy as np
import pytest
from scipy import signal

pytest.importorskip("httpx", reason="Starlette's TestClient needs httpx (the test extra)")

from hypothesis import given, settings
from hypothesis import strategies as st
from starlette.testclient import TestClient

from placer.circuit.elements import circuit_from_dict
from placer.cli import main
from placer.explore import ExploreSession, create_app
from placer.explore.app import MAX_BODY_BYTES
from placer.explore.curves import step_from_roots
from placer.explore.server import open_socket, plan_server
from placer.explore.spec_file import toml_text
from placer.analysis.pencil import circuit_poles
from placer.spec.reader import load_spec

TOKEN = "test-token-0123456789"
BASE = "http://127.0.0.1:8000"

SPEC = """\
title = "explore test low-pass"

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
topologies = ["sallen-key-lowpass-unity"]

[tolerance]
samples = 200
"""


@pytest.fixture(scope="module")
def spec_path(tmp_path_factory):
    path = tmp_path_factory.mktemp("explore") / "lowpass.toml"
    path.write_text(SPEC, encoding="utf-8")
    return path


@pytest.fixture(scope="module")
def session(spec_path):
    return ExploreSession(load_spec(spec_path))


@pytest.fixture(scope="module")
def client(session):
    return TestClient(create_app(session, token=TOKEN), base_url=BASE,
                      headers={"X-Placer-Token": TOKEN}, raise_server_exceptions=False)


def _sections(session):
    """The spec's sections as the page sends them."""
    return [{"kind": e.kind, "f0": e.f0_hz, "q": e.q} for e in session.initial]


def _second_order_poles(f0_hz, q):
    """p = -w0/(2Q) ± j·w0·sqrt(1 - 1/(4Q²)): the textbook second-order pole pair."""
    w0 = 2 * math.pi * f0_hz
    return [complex(-w0 / (2 * q), s * w0 * math.sqrt(1 - 1 / (4 * q * q))) for s in (1, -1)]


def _entry(reply, slot):
    (entry,) = [s for s in reply["sections"] if s["slot"] == slot]
    return entry


def test_state_lists_the_spec_sections(client):
    data = client.get("/api/state").json()
    # Butterworth n = 4: Q = 0.5412 and 1.3066, f0 at the cutoff (handbook table, from memory)
    assert [round(e["q"], 4) for e in data["edits"]] == [0.5412, 1.3066]
    assert all(e["f0_hz"] == pytest.approx(5000.0, rel=1e-12) for e in data["edits"])
    assert data["downloads"]["spec"] == "lowpass-explored.toml"


def test_moved_pole_pair_comes_back_as_parts_that_put_it_there(client, session):
    reply = client.post("/api/place", json={"sections": _sections(session)})
    assert reply.status_code == 200
    sections = _sections(session)
    sections[0] = {"kind": "lowpass", "f0": 7000.0, "q": 0.9}
    moved = client.post("/api/place", json={"sections": sections})
    assert moved.status_code == 200
    data = moved.json()
    assert data["ok"] is True
    entry = _entry(data, 0)
    assert entry["target"]["f0_hz"] == pytest.approx(7000.0, rel=1e-12)
    assert entry["target"]["q"] == pytest.approx(0.9, rel=1e-12)
    # the returned circuit, analysed afresh, has its poles within the stated error
    circuit = circuit_from_dict(entry["circuit"])
    built = sorted(circuit_poles(circuit), key=lambda p: p.imag)
    wanted = sorted(_second_order_poles(7000.0, 0.9), key=lambda p: p.imag)
    stated = entry["error"]["worst_root_pct"] / 100
    for b, w in zip(built, wanted):
        assert abs(b - w) / abs(w) <= stated * (1 + 1e-6) + 1e-12
    # E96 resistors with E12 capacitors re-solved land well inside 1 % (common practice, no source)
    assert stated < 0.01
    # f0 = |p| / 2π and Q = |p| / (2|Re p|) of a pole pair (textbook definitions)
    p = built[-1]
    assert abs(p) / (2 * math.pi) == pytest.approx(entry["achieved"]["f0_hz"], rel=1e-9)
    assert abs(p) / (2 * abs(p.real)) == pytest.approx(entry["achieved"]["q"], rel=1e-9)
    assert entry["replaced"] is True
    # with the gain all in the first section the other section's target is unchanged
    # (it may still be placed again: its impedance-level rule reads the noise band,
    # which follows the whole target's poles)
    assert _entry(data, 1)["target"]["f0_hz"] == pytest.approx(5000.0, rel=1e-12)
    assert entry["schematic_svg"].lstrip().startswith("<svg")
    for part in entry["parts"]:
        assert part["name"] in entry["schematic_svg"]


def test_sections_reordered_by_q_keep_their_slots(client, session):
    # ascending-q ordering puts the Q = 2 section last; the reply maps it back to slot 0
    sections = _sections(session)
    sections[0] = {"kind": "lowpass", "f0": 6000.0, "q": 2.0}
    data = client.post("/api/place", json={"sections": sections}).json()
    assert [s["slot"] for s in data["sections"]] == [1, 0]
    assert _entry(data, 0)["target"]["q"] == pytest.approx(2.0, rel=1e-12)
    circuit = circuit_from_dict(_entry(data, 0)["circuit"])
    poles = circuit_poles(circuit)
    wanted = _second_order_poles(6000.0, 2.0)
    stated = _entry(data, 0)["error"]["worst_root_pct"] / 100
    for w in wanted:
        assert min(abs(p - w) for p in poles) / abs(w) <= stated * (1 + 1e-6) + 1e-12


def test_curves_follow_the_target(client, session):
    data = client.post("/api/place", json={"sections": _sections(session)}).json()
    curves = _entry(data, 1)["curves"]
    f = curves["frequency_hz"]
    # a second-order low-pass: |H| at f0 is Q (20·log10 Q dB), and falls 40 dB/decade
    # far above it (textbook second-order response)
    q = session.initial[1].q
    k = min(range(len(f)), key=lambda i: abs(math.log(f[i] / 5000.0)))
    assert curves["target_db"][k] == pytest.approx(20 * math.log10(q), abs=0.05)
    assert curves["target_db"][-1] - curves["target_db"][-21] == pytest.approx(
        -40 * math.log10(f[-1] / f[-21]), abs=0.1)
    # the built section, E96/E12 parts, stays within 0.5 dB of it (common practice, no source)
    assert max(abs(a - b) for a, b in zip(curves["target_db"], curves["built_db"])) < 0.5
    # unity DC gain: the step settles at 1 (final-value theorem)
    assert curves["target_step"][-1] == pytest.approx(1.0, abs=1e-3)
    assert curves["built_step"][-1] == pytest.approx(1.0, abs=1e-2)


def test_unreachable_section_shows_the_reason(client, session):
    sections = _sections(session)
    sections[0] = {"kind": "lowpass", "f0": 7000.0, "q": 60.0}
    reply = client.post("/api/place", json={"sections": sections})
    assert reply.status_code == 200
    data = reply.json()
    assert data["ok"] is False
    assert data["unreachable"]["slot"] == 0
    # the unity-gain Sallen–Key needs C1/C2 >= 4Q² (textbook design equation)
    assert "4Q^2" in data["unreachable"]["reason"]
    assert "mfb-lowpass" in data["unreachable"]["alternatives"]


def test_downloads_are_what_the_cli_writes(client, session, tmp_path, monkeypatch):
    sections = _sections(session)
    sections[0] = {"kind": "lowpass", "f0": "5.5k", "q": "0.65"}
    spec = client.post("/api/download/spec", json={"sections": sections})
    assert spec.status_code == 200
    name = "lowpass-explored.toml"
    assert spec.headers["content-disposition"] == f'attachment; filename="{name}"'
    saved = tomllib.loads(spec.text)
    assert saved["target"]["sections"][0] == {"f0": 5500.0, "q": 0.65, "kind": "lowpass"}
    assert saved["parts"] == tomllib.loads(SPEC)["parts"]
    (tmp_path / name).write_bytes(spec.content)
    monkeypatch.chdir(tmp_path)
    status = main(["design", name, "--json", "cli.json", "--bom", "cli.csv",
                   "--report", "cli.html", "--quiet"])
    assert status == 0
    for kind, file in (("json", "cli.json"), ("bom", "cli.csv"), ("html", "cli.html")):
        reply = client.post(f"/api/download/{kind}", json={"sections": sections})
        assert reply.status_code == 200, reply.text
        assert reply.content == (tmp_path / file).read_bytes(), kind
    data = json.loads((tmp_path / "cli.json").read_text())
    assert data["sections"][0]["target"]["f0_hz"] == pytest.approx(5500.0, rel=1e-12)


# -- the guard -------------------------------------------------------------------

def test_token_is_required(session):
    bare = TestClient(create_app(session, token=TOKEN), base_url=BASE)
    for path in ("/", "/api/state", "/static/app.js"):
        reply = bare.get(path)
        assert reply.status_code == 403
        assert "token" in reply.json()["error"]
    assert bare.get("/api/state", headers={"X-Placer-Token": "wrong"}).status_code == 403
    assert bare.post("/api/place", json={"sections": []},
                     headers={"X-Placer-Token": TOKEN[:-1]}).status_code == 403
    page = bare.get(f"/?token={TOKEN}")
    assert page.status_code == 200
    assert f'content="{TOKEN}"' in page.text


def test_host_must_be_loopback(session):
    app = create_app(session, token=TOKEN)
    for base in ("http://localhost:5000", "http://127.0.0.1", "http://[::1]:8000"):
        assert TestClient(app, base_url=base).get(f"/api/state?token={TOKEN}").status_code == 200
    for host in ("evil.example", "evil.example:8000", "127.0.0.1.evil.example", "10.0.0.1"):
        reply = TestClient(app, base_url=f"http://{host}").get(f"/api/state?token={TOKEN}")
        assert reply.status_code == 421
        assert "127.0.0.1" in reply.json()["error"]


def test_bodies_are_size_limited(client):
    big = b'{"sections": "' + b"x" * MAX_BODY_BYTES + b'"}'
    reply = client.post("/api/place", content=big, headers={"Content-Type": "application/json"})
    assert reply.status_code == 413

    def chunks():  # no Content-Length: the limit holds on what arrives
        for _ in range(MAX_BODY_BYTES // 1024 + 2):
            yield b" " * 1024

    assert client.post("/api/place", content=chunks()).status_code == 413


@pytest.mark.parametrize("value, field, words", [
    ("abc", "f0", "cannot read 'abc'"),
    (-5000, "f0", "must be positive"),
    ("5 kV", "f0", "expected Hz"),
    ("x" * 80, "f0", "too long"),
    (True, "f0", "expected a number"),
    (0, "q", "must be positive"),
    (0.3, "q", "above 0.5"),
    ([1], "q", "expected a number"),
])
def test_malformed_numbers_get_422_beside_the_field(client, session, value, field, words):
    sections = _sections(session)
    sections[1][field] = value
    reply = client.post("/api/place", json={"sections": sections})
    assert reply.status_code == 422
    data = reply.json()
    assert data["section"] == 1 and data["field"] == field
    assert words in data["error"]
    assert "Traceback" not in reply.text


@pytest.mark.parametrize("body", [
    b"not json", b'{"sections": [{"f0": NaN, "q": 1}, {"f0": 1, "q": 1}]}',
    b'{"sections": [{"f0": 1e400, "q": 1}, {"f0": 1000, "q": 1}]}',
    b'{"sections": []}', b'[1, 2]', b'{"sections": [{"f0": 1000, "q": 1, "gain": 3}, {}]}',
    b'{"client": "a b", "seq": 1, "sections": []}',
])
def test_malformed_requests_get_422_with_a_message(client, body):
    reply = client.post("/api/place", content=body, headers={"Content-Type": "application/json"})
    assert reply.status_code == 422
    assert reply.json()["error"]
    assert "Traceback" not in reply.text


def test_page_forbids_outside_loads(client):
    reply = client.get("/")
    policy = reply.headers["content-security-policy"]
    assert "default-src 'none'" in policy and "script-src 'self'" in policy
    assert "http" not in policy and "*" not in policy
    assert reply.headers["x-content-type-options"] == "nosniff"
    assert "http://" not in reply.text and "https://" not in reply.text
    for name in ("app.js", "app.css"):
        text = client.get(f"/static/{name}").text
        assert "http://" not in text.replace("http://www.w3.org/2000/svg", "")
        assert "https://" not in text and "@import" not in text


def test_no_request_names_a_file(client):
    for path in ("/static/session.py", "/static/..%2Fsession.py", "/static/index.html/..",
                 "/api/download/..%2F..%2Fetc%2Fpasswd"):
        assert client.get(path).status_code in (404, 405)
    assert client.post("/api/download/passwd", json={"sections": []}).status_code == 404


def test_stale_request_is_superseded(client, session):
    sections = _sections(session)
    newer = client.post("/api/place", json={"client": "page1", "seq": 5, "sections": sections})
    assert newer.json()["seq"] == 5 and newer.json()["ok"] is True
    older = client.post("/api/place", json={"client": "page1", "seq": 3, "sections": sections})
    assert older.json() == {"ok": False, "superseded": True, "seq": 3}
    other = client.post("/api/place", json={"client": "page2", "seq": 1, "sections": sections})
    assert other.json()["ok"] is True


def test_server_plan_binds_loopback_and_warns_otherwise():
    plan = plan_server()
    assert plan.loopback and plan.host == "127.0.0.1"
    # secrets.token_urlsafe(24): 24 random bytes, 32 URL-safe characters (Python docs)
    assert len(plan.token) == 32 and plan.token != plan_server().token
    assert not plan_server("0.0.0.0").loopback
    assert plan_server("192.0.2.7").allowed_hosts >= {"127.0.0.1", "localhost", "192.0.2.7"}
    sock = open_socket("127.0.0.1", 0)
    try:
        port = sock.getsockname()[1]
        with pytest.raises(Exception, match="cannot listen"):
            open_socket("127.0.0.1", port)
    finally:
        sock.close()


def test_cli_explore_bad_input_exits_2(capsys, tmp_path):
    assert main(["explore", str(tmp_path / "missing.toml"), "--no-browser"]) == 2
    assert "does not exist" in capsys.readouterr().err
    spec = tmp_path / "s.toml"
    spec.write_text(SPEC, encoding="utf-8")
    assert main(["explore", str(spec), "--no-browser", "--port", "70000"]) == 2
    assert "--port 70000" in capsys.readouterr().err


# -- the spec file writer ---------------------------------------------------------

_keys = st.text(st.characters(codec="utf-8", exclude_categories=("Cs",)), min_size=1, max_size=8)
_scalars = (st.booleans() | st.integers(-2**63, 2**63 - 1)
            | st.floats(allow_nan=False) | st.text(st.characters(codec="utf-8",
                                                                 exclude_categories=("Cs",)))
            | st.dates() | st.datetimes(timezones=st.none() | st.just(dt.timezone.utc)))
_values = st.recursive(_scalars, lambda inner: st.lists(inner, max_size=3)
                       | st.dictionaries(_keys, inner, max_size=3), max_leaves=8)


@settings(max_examples=150, deadline=None)
@given(st.dictionaries(_keys, _scalars | st.dictionaries(_keys, _values, max_size=4), max_size=5))
def test_toml_text_reads_back_with_tomllib(data):
    # the standard library's TOML 1.0 reader is the reference
    assert tomllib.loads(toml_text(data, header="a comment\nand another")) == data


def test_saved_spec_keeps_the_other_tables(session):
    edited = session.read_edits({"sections": _sections(session)})
    text = session.spec_text(edited)
    assert text.startswith("# lowpass.toml with its target")
    data = tomllib.loads(text)
    original = tomllib.loads(SPEC)
    for table in ("cascade", "parts", "tolerance"):
        assert data[table] == original[table]
    assert data["title"] == original["title"]
    assert Path(data["candidates"]["topologies"][0]).name == "sallen-key-lowpass-unity"


def test_step_from_modes_matches_scipy():
    # scipy.signal.step is the reference; a notch and a third-order low-pass
    t = np.arange(500) * 0.02
    for zeros, poles, k in (([4j, -4j], [-1 + 3j, -1 - 3j], 1.0),
                            ([], [-1 + 3j, -1 - 3j, -2.0], 20.0),
                            ([0.0], [-0.5, -3.0], 2.0)):
        _, expected = signal.step(signal.ZerosPolesGain(zeros, poles, k), T=t)
        got = step_from_roots(np.asarray(zeros, complex), np.asarray(poles, complex), k, t)
        np.testing.assert_allclose(got, np.real(expected), atol=1e-9)


def test_saved_spec_resolves_candidate_paths(tmp_path):
    from placer.explore.spec_file import edited_spec_data

    raw = {"target": {"approximation": "butterworth", "order": 2, "cutoff": 1000.0},
           "candidates": {"topologies": ["mine.toml", "mfb-lowpass"], "folder": "tops"}}
    data = edited_spec_data(raw, {"sections": [{"f0": 900.0, "q": 0.8}]}, title="t",
                            source=str(tmp_path / "specs" / "a.toml"))
    assert data["candidates"]["topologies"] == [str((tmp_path / "specs" / "mine.toml").resolve()),
                                                "mfb-lowpass"]
    assert data["candidates"]["folder"] == str((tmp_path / "specs" / "tops").resolve())
    assert list(data) == ["title", "target", "candidates"]


def test_section_above_the_opamp_gbw_is_refused(tmp_path):
    path = tmp_path / "amp.toml"
    path.write_text(SPEC + '\n[amplifier]\ngbw = "1 MHz"\n', encoding="utf-8")
    session = ExploreSession(load_spec(path))
    client = TestClient(create_app(session, token=TOKEN), base_url=BASE,
                        headers={"X-Placer-Token": TOKEN})
    sections = _sections(session)
    sections[0]["f0"] = "2 MHz"
    reply = client.post("/api/place", json={"sections": sections})
    assert reply.status_code == 422
    assert "GBW" in reply.json()["error"] or "gbw" in reply.json()["error"]
