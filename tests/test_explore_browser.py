"""The explorer page in a real browser: Debian's chromium driven by Playwright.

The real server (uvicorn on a free 127.0.0.1 port, in a thread) serves a
spec; the page is dragged with the mouse and worked with the keyboard.
The pole the side panel shows is checked against where it was dropped,
independently of the page's code: its angle gives Q (a constant-Q line
through the origin makes cos θ = -1/(2Q) with the real axis, the textbook
second-order pole geometry) and its distance from the origin, read against
the page's own 1 kHz and 10 kHz guide circles, gives f0 on the
log-radius scale. Skipped only where no chromium or no Playwright can be had.
"""

from __future__ import annotations

import math
import shutil
import threading
import time
import tomllib

import pytest

sync_api = pytest.importorskip("playwright.sync_api",
                               reason="Playwright's Python API is not installed (the test extra)")
CHROMIUM = shutil.which("chromium")
pytestmark = pytest.mark.skipif(
    CHROMIUM is None, reason="no chromium on PATH (Debian: apt-get install -y chromium)")

import uvicorn  # noqa: E402

from placer.explore import ExploreSession, create_app  # noqa: E402
from placer.explore.server import open_socket, plan_server  # noqa: E402
from placer.spec.reader import load_spec  # noqa: E402

SPEC = """\
title = "explore browser test"

[target]
response = "lowpass"
approximation = "butterworth"
order = 4
cutoff = "5 kHz"

[cascade]
gain_distribution = "first"

[parts]
resistor_range = ["1k", "100k"]
capacitor_range = ["1n", "1u"]

[candidates]
topologies = ["sallen-key-lowpass-unity"]

[tolerance]
samples = 200
"""
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--disable-sync", "--no-first-run"]
WAIT_MS = 120_000


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    path = tmp_path_factory.mktemp("browser") / "lowpass.toml"
    path.write_text(SPEC, encoding="utf-8")
    plan = plan_server("127.0.0.1")
    sock = open_socket("127.0.0.1", 0)
    app = create_app(ExploreSession(load_spec(path)), token=plan.token,
                     allowed_hosts=plan.allowed_hosts)
    server = uvicorn.Server(uvicorn.Config(app, log_level="warning", lifespan="off"))
    thread = threading.Thread(target=server.run, kwargs={"sockets": [sock]}, daemon=True)
    thread.start()
    deadline = time.monotonic() + 30
    while not server.started and time.monotonic() < deadline:
        time.sleep(0.05)
    assert server.started, "uvicorn did not start"
    base = f"http://127.0.0.1:{sock.getsockname()[1]}"
    yield base, f"{base}/?token={plan.token}"
    server.should_exit = True
    thread.join(15)
    sock.close()


@pytest.fixture(scope="module")
def browser():
    with sync_api.sync_playwright() as p:
        try:
            browser = p.chromium.launch(executable_path=CHROMIUM, args=ARGS)
        except sync_api.Error as error:
            pytest.skip(f"chromium does not start here: {error}")
        yield browser
        browser.close()


@pytest.fixture
def page(browser, server):
    base, url = server
    context = browser.new_context(viewport={"width": 1280, "height": 800}, accept_downloads=True)
    page = context.new_page()
    log = {"requests": [], "console": [], "replies": []}
    page.on("request", lambda r: log["requests"].append(r.url))
    page.on("console", lambda m: log["console"].append(f"{m.type}: {m.text}"))
    page.on("pageerror", lambda e: log["console"].append(f"error: {e}"))
    page.on("response", lambda r: log["replies"].append(r) if "/api/place" in r.url else None)
    page.goto(url)
    _wait_drawn(page, 1)
    yield page, log, base
    context.close()


def _drawn(page) -> int:
    return int(page.evaluate("() => Number(document.body.dataset.drawnSeq || 0)"))


def _wait_drawn(page, at_least: int) -> None:
    """Until a reply numbered `at_least` or later is drawn and nothing is pending."""
    page.wait_for_function(
        "(n) => Number(document.body.dataset.drawnSeq || 0) >= n && document.body.dataset.idle === '1'",
        arg=at_least, timeout=WAIT_MS)


def _wait_idle_after(page, before: int) -> None:
    page.wait_for_function(
        "(n) => document.body.dataset.idle === '1' && Number(document.body.dataset.drawnSeq || 0) > n",
        arg=before, timeout=WAIT_MS)


def _to_client(page):
    """The plane's SVG → client coordinates: (scale, offset x, offset y)."""
    a, e, f = page.evaluate(
        "() => { const m = document.getElementById('plane').getScreenCTM(); return [m.a, m.e, m.f]; }")
    return a, e, f


def _center(page, selector):
    box = page.locator(selector).bounding_box()
    return box["x"] + box["width"] / 2, box["y"] + box["height"] / 2


def _plane_geometry(page):
    """Origin and the 1 kHz, 10 kHz guide radii, in client pixels."""
    scale, ox, oy = _to_client(page)
    cx = float(page.get_attribute("#jw-axis", "x1")) * scale + ox
    cy = float(page.get_attribute("#real-axis", "y1")) * scale + oy
    r1 = float(page.get_attribute('path[data-f0-hz="1000"]', "data-radius")) * scale
    r10 = float(page.get_attribute('path[data-f0-hz="10000"]', "data-radius")) * scale
    return cx, cy, r1, r10


def _no_outside_loads(log, base):
    outside = [u for u in log["requests"] if not (u.startswith(base + "/") or u.startswith("data:")
                                                  or u.startswith("blob:"))]
    assert outside == []
    # a refused field is a 422 the browser logs; nothing else may go wrong (a
    # Content-Security-Policy violation would be logged as an error too)
    assert [m for m in log["console"] if m.startswith("error") and "status of 422" not in m] == []


def test_dragging_a_pole_replaces_the_parts(page, tmp_path):
    page, log, base = page
    parts_before = page.inner_text("#parts tbody")
    schematic_before = page.get_attribute("#schematic", "src")
    cx, cy, r1, r10 = _plane_geometry(page)
    x0, y0 = _center(page, '[data-key="0:pole:0"] .hit')
    # drop the upper pole at Q = 0.8 and one fifth of a decade further out
    rho = math.hypot(x0 - cx, y0 - cy) + 0.2 * (r10 - r1)
    theta = math.pi - math.acos(1 / (2 * 0.8))
    x1, y1 = round(cx + rho * math.cos(theta)), round(cy - rho * math.sin(theta))
    before = _drawn(page)
    page.mouse.move(x0, y0)
    page.mouse.down()
    page.mouse.move(x1, y1, steps=12)
    page.mouse.up()
    _wait_idle_after(page, before)

    f0 = float(page.input_value("#f0-0"))
    q = float(page.input_value("#q-0"))
    # Q from the angle of the drop point: cos θ = -1/(2Q) (textbook pole geometry)
    angle = math.atan2(cy - y1, x1 - cx)
    assert q == pytest.approx(-1 / (2 * math.cos(angle)), rel=2e-4)
    # f0 from its distance, on the log scale the 1 kHz and 10 kHz circles set
    distance = math.hypot(x1 - cx, y1 - cy)
    assert f0 == pytest.approx(1000 * 10 ** ((distance - r1) / (r10 - r1)), rel=2e-4)
    # the cross is drawn where it was dropped
    xd, yd = _center(page, '[data-key="0:pole:0"] .hit')
    assert (xd, yd) == (pytest.approx(x1, abs=0.6), pytest.approx(y1, abs=0.6))
    # the conjugate followed: mirrored in the real axis
    xc, yc = _center(page, '[data-key="0:pole:1"] .hit')
    assert (xc, yc - cy) == (pytest.approx(x1, abs=0.6), pytest.approx(cy - y1, abs=0.6))
    # the server placed that very section, and the parts and the schematic changed
    reply = log["replies"][-1].json()
    (entry,) = [s for s in reply["sections"] if s["slot"] == 0]
    assert entry["target"]["f0_hz"] == pytest.approx(f0, rel=1e-12)
    assert entry["target"]["q"] == pytest.approx(q, rel=1e-12)
    assert page.inner_text("#parts tbody") != parts_before
    assert page.get_attribute("#schematic", "src") != schematic_before
    for part in entry["parts"]:
        assert part["name"] in page.inner_text("#parts tbody")
    page.screenshot(path=str(tmp_path / "explore.png"))
    page.screenshot(path="/tmp/explore.png")
    _no_outside_loads(log, base)


def test_keyboard_alone(page):
    page, log, base = page
    keys = []
    for _ in range(20):  # Tab from the top of the page to the second section's pole
        page.keyboard.press("Tab")
        keys.append(page.evaluate("() => document.activeElement.getAttribute('data-key')"))
        if keys[-1] == "1:pole:0":
            break
    assert keys[-1] == "1:pole:0", keys
    f0_before = float(page.input_value("#f0-1"))
    before = _drawn(page)
    page.keyboard.press("Shift+ArrowLeft")
    _wait_idle_after(page, before)
    assert float(page.input_value("#f0-1")) > f0_before  # further from the origin: higher f0
    for _ in range(20):
        page.keyboard.press("Tab")
        if page.evaluate("() => document.activeElement.id") == "q-1":
            break
    assert page.evaluate("() => document.activeElement.id") == "q-1"
    before = _drawn(page)
    page.keyboard.press("Control+a")
    page.keyboard.type("0.9")
    page.keyboard.press("Enter")
    _wait_idle_after(page, before)
    reply = log["replies"][-1].json()
    (entry,) = [s for s in reply["sections"] if s["slot"] == 1]
    assert entry["target"]["q"] == pytest.approx(0.9, rel=1e-12)
    assert "Q 0.9" in page.get_attribute('[data-key="1:pole:0"]', "aria-label")
    page.keyboard.press("Control+a")
    page.keyboard.type("abc")
    page.keyboard.press("Enter")
    page.wait_for_selector("#message-1:not([hidden])", timeout=WAIT_MS)
    assert "cannot read 'abc'" in page.inner_text("#message-1")
    assert page.get_attribute("#q-1", "aria-invalid") == "true"
    _no_outside_loads(log, base)


def test_usable_at_1280_by_800(page):
    page, log, base = page
    for selector in ("#plane", "#sections", "#parts", "#schematic", "#plot-mag", "#plot-phase",
                     "#plot-step", "button.download >> nth=3"):
        box = page.locator(selector).bounding_box()
        assert box is not None, selector
        assert box["x"] >= 0 and box["y"] >= 0, selector
        assert box["x"] + box["width"] <= 1280 and box["y"] + box["height"] <= 800, selector


def test_save_spec_downloads_the_edited_target(page):
    page, log, base = page
    with page.expect_download(timeout=WAIT_MS) as info:
        page.click('button[data-kind="spec"]')
    download = info.value
    assert download.suggested_filename == "lowpass-explored.toml"
    data = tomllib.loads(open(download.path(), encoding="utf-8").read())
    sections = data["target"]["sections"]
    for i, section in enumerate(sections):
        assert section["f0"] == pytest.approx(float(page.input_value(f"#f0-{i}")), rel=1e-5)
        assert section["q"] == pytest.approx(float(page.input_value(f"#q-{i}")), rel=1e-5)  # shown to 6 digits
    _no_outside_loads(log, base)
