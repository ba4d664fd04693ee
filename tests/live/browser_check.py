"""The page at ``/`` in a real headless browser: Debian's Chromium driven by Playwright.

Starts ``ibl serve`` (one worker) on 127.0.0.1 at a free port, opens the page in a fresh
browser profile and checks, step by step:

1. the page loads, with its caution;
2. the built-in demonstration case runs: the figure appears with a nonzero size and the
   events table has a row for each side of the contour;
3. the result downloads as JSON and the station table as CSV (download events);
4. a malformed CSV shows a message next to the CSV field naming the line and the value;
5. a bad flow value is explained next to its field;
6. a CSV of taps uploaded through the file input runs, and so does a case file;
7. nothing went to the browser console as an error, no page error was raised and no
   request left the service's own address.

Prints each step and the console messages, saves a screenshot (the path is printed),
exits non-zero on the first failure. No browser is downloaded: Chromium comes from the
distribution (``apt-get install chromium``); Playwright's Python package is pinned in
``.ci/run``.

    python tests/live/browser_check.py [--chromium /usr/bin/chromium] [--python PYTHON]
        [--screenshots DIR]
"""

from __future__ import annotations

import argparse
import json
import math
import os
import socket
import subprocess
import sys
import tempfile
import time
import urllib.request
from pathlib import Path
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:  # imported in main(): the test suite collects this file without Playwright
    from playwright.sync_api import Page

ROOT = Path(__file__).resolve().parents[2]

#: Chromium's switches: headless, no sandbox (CI runs as root), nothing that reaches out.
CHROMIUM_ARGS = [
    "--headless",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-dev-shm-usage",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]

#: How long the page may take for one step [ms] (a figure is drawn by matplotlib; the first
#: request of a worker may wait for the start-up analysis).
STEP_TIMEOUT_MS = 60_000

MALFORMED_CSV = "x,y,cp\n1.0,0.0,0.2\n0.5,abc,-0.5\n0.0,0.0,1.0\n0.5,-0.05,-0.5\n"


def free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        port: int = sock.getsockname()[1]
        return port


def start_server(python: str, port: int, log: Path) -> subprocess.Popen[bytes]:
    command = [python, "-m", "ibl.cli", "serve", "--host", "127.0.0.1", "--port", str(port)]
    command += ["--workers", "1"]
    with log.open("wb") as out:
        server = subprocess.Popen(command, cwd=ROOT, stdout=out, stderr=subprocess.STDOUT)
    deadline = time.monotonic() + 300
    while time.monotonic() < deadline:
        if server.poll() is not None:
            sys.stdout.write(log.read_text(errors="replace"))
            raise SystemExit("browser check: the server exited before it was ready")
        try:
            with urllib.request.urlopen(f"http://127.0.0.1:{port}/health/ready", timeout=2):
                return server
        except OSError:
            time.sleep(0.5)
    server.terminate()
    raise SystemExit("browser check: the server was not ready within 180 s")


def step(text: str) -> None:
    print(f"  - {text}", flush=True)


def check(condition: bool, what: str) -> None:
    if not condition:
        raise AssertionError(what)


def _flat_plate_case() -> dict[str, Any]:
    """A single surface at constant edge velocity (a flat plate), as a case file."""
    count = 41
    return {
        "name": "flat plate, case-file upload",
        "surface": {"s": [0.01 + 0.99 * i / (count - 1) for i in range(count)]},
        "pressure": {"edge_velocity": [1.0] * count},
        "flow": {"reynolds": 2.0e6},
        "transition": {"criterion": "michel"},
    }


def _ellipse_csv(points: int = 81, ratio: float = 0.12) -> str:
    """Taps on an ellipse of chord 1 at zero incidence, with the exact potential-flow
    Cp = 1 - (1 + r)^2 sin^2 t / (sin^2 t + r^2 cos^2 t), r the thickness ratio
    (Milne-Thomson, Theoretical Hydrodynamics: the flow past an elliptic cylinder)."""
    rows = ["x,y,cp"]
    for i in range(points):
        t = 2 * math.pi * (i + 0.5) / points
        s2, c2 = math.sin(t) ** 2, math.cos(t) ** 2
        cp = 1 - (1 + ratio) ** 2 * s2 / (s2 + ratio**2 * c2)
        rows.append(f"{0.5 + 0.5 * math.cos(t)!r},{0.5 * ratio * math.sin(t)!r},{cp!r}")
    return "\n".join(rows) + "\n"


def _run_and_wait(page: Page) -> None:
    page.click("#run")
    page.wait_for_function(
        "() => { const t = document.getElementById('run-status').textContent;"
        " return t.startsWith('Done') || t.startsWith('Not analysed'); }",
        timeout=STEP_TIMEOUT_MS,
    )


def _side_rows(page: Page) -> list[str]:
    names: list[str] = page.eval_on_selector_all(
        "#events tbody tr th[scope=row]", "cells => cells.map(c => c.textContent)"
    )
    return names


def run_checks(page: Page, base: str, shots: Path) -> None:
    step("page loads")
    answer = page.goto(base + "/", wait_until="load")
    check(answer is not None and answer.status == 200, "GET / answers 200")
    check("Boundary-layer" in page.title() or "boundary-layer" in page.title(), "page title")
    caution = page.inner_text(".caution")
    check("Early-design estimates" in caution and page.is_visible(".caution"), "caution shown")
    check(page.is_visible("label[for=reynolds]"), "labelled Reynolds number field")

    step("demonstration case runs")
    page.click("#demo")
    page.wait_for_function(
        "() => document.getElementById('run-status').textContent.startsWith('Done')",
        timeout=STEP_TIMEOUT_MS,
    )
    page.wait_for_function(
        "() => { const i = document.getElementById('figure');"
        " return i.complete && i.naturalWidth > 0; }",
        timeout=STEP_TIMEOUT_MS,
    )
    box = page.locator("#figure").bounding_box()
    check(box is not None and box["width"] > 100 and box["height"] > 100, f"figure size {box}")
    sides = _side_rows(page)
    check(sorted(sides) == ["lower", "upper"], f"events rows for each side: {sides}")
    cells = page.eval_on_selector_all(
        "#events tbody tr td", "cells => cells.map(c => c.textContent)"
    )
    check(any(c.replace(".", "", 1).isdigit() for c in cells), "events table holds numbers")
    check(page.locator("#warnings li").count() >= 1, "warnings listed")
    headers = page.eval_on_selector_all("#events thead th", "h => h.map(x => x.textContent)")
    check(any("[m]" in h for h in headers), f"lengths in metres for speed and viscosity: {headers}")
    step(f"figure {box['width']:.0f} x {box['height']:.0f} px; sides {', '.join(sides)}")
    shot = shots / "page-demo.png"
    page.screenshot(path=str(shot), full_page=True)
    step(f"screenshot {shot}")

    step("downloads: result JSON and station table CSV")
    with page.expect_download(timeout=STEP_TIMEOUT_MS) as waiting:
        page.click("#download-json")
    saved = shots / "ibl-result.json"
    waiting.value.save_as(saved)
    result = json.loads(saved.read_text())
    check(len(result["sides"]) == 2, "JSON download holds the result")
    with page.expect_download(timeout=STEP_TIMEOUT_MS) as waiting:
        page.click("#download-csv")
    saved = shots / "ibl-stations.csv"
    waiting.value.save_as(saved)
    lines = saved.read_text().splitlines()
    check(lines[0].startswith("side,s [m]"), f"CSV download header: {lines[0][:60]}")
    stations = sum(len(side["s"]) for side in result["sides"])
    check(len(lines) == 1 + stations, f"CSV rows {len(lines) - 1} == stations {stations}")
    step(f"JSON {len(result['sides'])} sides; CSV {len(lines) - 1} station rows")

    step("malformed CSV shows a clear message")
    page.check("#source-csv")
    page.fill("#csv-text", MALFORMED_CSV)
    page.check("#mode-reynolds")
    page.fill("#reynolds", "1e6")
    _run_and_wait(page)
    message = page.inner_text("#csv-text-error")
    check(page.is_visible("#csv-text-error"), "message next to the CSV field")
    check("line 3" in message and "abc" in message and "not a number" in message, message)
    check(page.is_hidden("#results"), "no result on view for a table that was not analysed")
    step(f"message: {message}")
    page.screenshot(path=str(shots / "page-csv-error.png"), full_page=True)

    step("a bad flow value is explained next to its field")
    page.fill("#csv-text", MALFORMED_CSV.replace("abc", "0.05"))
    page.fill("#reynolds", "0.5")
    _run_and_wait(page)
    message = page.inner_text("#reynolds-error")
    check(page.is_visible("#reynolds-error") and "at least" in message, f"reynolds: {message}")
    step(f"message: {message}")

    step("uploaded CSV of taps runs")
    page.set_input_files(
        "#csv-file",
        files=[{"name": "taps.csv", "mimeType": "text/csv", "buffer": _ellipse_csv().encode()}],
    )
    page.wait_for_function("() => document.getElementById('csv-text').value.startsWith('x,y,cp')")
    page.fill("#reynolds", "2e6")
    _run_and_wait(page)
    status = page.inner_text("#run-status")
    check(status.startswith("Done"), f"CSV analysed: {status}")
    check(sorted(_side_rows(page)) == ["lower", "upper"], f"rows: {_side_rows(page)}")
    headers = page.eval_on_selector_all("#events thead th", "h => h.map(x => x.textContent)")
    check(any("[coordinate unit]" in h for h in headers), "lengths in the coordinate unit")
    step(f"{status}")

    step("pasted CSV with semicolons, decimal commas and a comment, with a trip, runs")
    european = _ellipse_csv().replace(",", ";").replace(".", ",")
    page.fill("#csv-text", "\ufeff# taps, exported\n" + european)
    page.select_option("#criterion", "granville")
    page.fill("#turbulence_intensity", "0.001")
    page.fill("#trip-upper", "0.05")
    _run_and_wait(page)
    status = page.inner_text("#run-status")
    check(status.startswith("Done"), f"CSV analysed: {status}")
    causes = page.eval_on_selector_all(
        "#events tbody tr",
        "rows => rows.map(r => r.cells[0].textContent + ':' + r.cells[2].textContent)",
    )
    check("upper:trip" in causes, f"upper side tripped: {causes}")
    page.fill("#trip-upper", "")
    step(f"causes of transition: {', '.join(causes)}")

    step("case-file upload runs")
    page.check("#source-case")
    body = json.dumps(_flat_plate_case()).encode()
    page.set_input_files(
        "#case-file", files=[{"name": "plate.json", "mimeType": "application/json", "buffer": body}]
    )
    page.wait_for_function(
        "() => document.getElementById('data-status').textContent.includes('plate.json')"
    )
    check(page.input_value("#reynolds") == "2000000", "form filled from the case file")
    _run_and_wait(page)
    status = page.inner_text("#run-status")
    check(status.startswith("Done"), f"case file analysed: {status}")
    check(_side_rows(page) == ["surface"], f"one row for the surface: {_side_rows(page)}")
    page.screenshot(path=str(shots / "page-case-file.png"), full_page=True)


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--chromium", default="/usr/bin/chromium")
    parser.add_argument("--python", default=sys.executable, help="runs `ibl serve`")
    parser.add_argument("--screenshots", type=Path, default=None, help="default: a temp folder")
    args = parser.parse_args(argv)
    from playwright.sync_api import sync_playwright

    shots = args.screenshots or Path(tempfile.mkdtemp(prefix="ibl-browser-"))
    shots.mkdir(parents=True, exist_ok=True)

    port = free_port()
    base = f"http://127.0.0.1:{port}"
    log = shots / "server.log"
    server = start_server(args.python, port, log)
    console: list[tuple[str, str]] = []
    page_errors: list[str] = []
    elsewhere: list[str] = []
    failed = False
    started = time.monotonic()
    try:
        with tempfile.TemporaryDirectory(prefix="ibl-chromium-") as profile:
            with sync_playwright() as playwright:
                context = playwright.chromium.launch_persistent_context(
                    profile,
                    executable_path=args.chromium,
                    headless=True,
                    args=CHROMIUM_ARGS,
                    accept_downloads=True,
                    viewport={"width": 1280, "height": 900},
                )
                try:
                    page = context.pages[0] if context.pages else context.new_page()
                    page.set_default_timeout(STEP_TIMEOUT_MS)
                    page.on("console", lambda m: console.append((m.type, m.text)))
                    page.on("pageerror", lambda error: page_errors.append(str(error)))
                    page.on(
                        "request",
                        lambda request: (
                            None
                            if request.url.startswith((base + "/", "blob:", "data:"))
                            else elsewhere.append(request.url)
                        ),
                    )
                    print(f"browser check: {args.chromium} against {base}", flush=True)
                    run_checks(page, base, shots)
                finally:
                    context.close()
    except Exception as error:  # a failed check, or a step that timed out
        print(f"browser check FAILED: {type(error).__name__}: {error}", file=sys.stderr)
        failed = True
    finally:
        server.terminate()
        try:
            server.wait(timeout=30)
        except subprocess.TimeoutExpired:
            server.kill()
    errors = [text for kind, text in console if kind == "error"]
    print(f"console messages: {len(console)} ({len(errors)} errors)")
    for kind, text in console:
        print(f"  console {kind}: {text}")
    for text in page_errors:
        print(f"  page error: {text}")
    for url in elsewhere:
        print(f"  request elsewhere: {url}")
    print(f"screenshots and downloads in {shots}")
    if errors or page_errors or elsewhere:
        print("browser check FAILED: console errors, page errors or foreign requests")
        failed = True
    seconds = math.ceil(time.monotonic() - started)
    print(f"browser check: {'FAIL' if failed else 'PASS'} in {seconds} s")
    return 1 if failed else 0


if __name__ == "__main__":
    os.environ.setdefault("PLAYWRIGHT_SKIP_BROWSER_DOWNLOAD", "1")
    raise SystemExit(main())
