"""Benchmark: the section page (``python -m mapsection.bench view``).

On the sample area it times, in one run:

* the baseline: a full ``build`` of one section (read the inputs, construct, check, write
  every figure and file), as ``mapsection build --section`` runs it;
* ``POST /api/section`` over HTTP to a running page server, for lines moved about the
  saved one: without the draft (median), with the draft and the four checks (median), and
  without the draft again on a copy of the project with N (default 100 000) invented
  attitudes (made as in the ``move`` benchmark);
* in a real browser (Debian's chromium through Playwright, when both are installed): the
  page measures with ``performance.now()`` the time from each drag step (a pointer move
  while dragging a vertex) to the profile and dips redrawn, and from the end of a drag to
  the draft and verdicts redrawn.

Times are printed in ms and as ratios against the full build measured in the same run.
Targets: section <= 30 ms (<= 100 ms with 100 000 attitudes), with draft and checks
<= 300 ms; in the browser drag step <= 100 ms, drag end <= 500 ms.
"""

from __future__ import annotations

import argparse
import http.client
import json
import os
import shutil
import sys
import tempfile
import time
from pathlib import Path

import numpy as np

from ._report import median_ms, sample_project

TARGETS_MS = {"section": 30.0, "section_100k": 100.0, "draft": 300.0, "drag_step": 100.0,
              "drag_end": 500.0}
CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic",
                 "--no-first-run", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync"]


class _Client:
    """A keep-alive HTTP client for the page server (the standard library's)."""

    def __init__(self, port: int, token: str) -> None:
        import socket

        self.conn = http.client.HTTPConnection("127.0.0.1", port, timeout=60)
        self.conn.connect()
        # http.client sends the headers and the body in two writes: without TCP_NODELAY the
        # body waits for the server's delayed ACK (~40 ms) and that would be measured.
        self.conn.sock.setsockopt(socket.IPPROTO_TCP, socket.TCP_NODELAY, 1)
        self.token = token

    def post(self, path: str, body: dict) -> tuple[float, dict]:
        data = json.dumps(body).encode()
        t = time.perf_counter()
        self.conn.request("POST", path, body=data, headers={
            "X-Token": self.token, "Content-Type": "application/json"})
        resp = self.conn.getresponse()
        raw = resp.read()
        dt = time.perf_counter() - t
        if resp.status != 200:
            raise RuntimeError(f"{path}: HTTP {resp.status}: {raw[:200]!r}")
        return dt, json.loads(raw)


def _moved(base: np.ndarray, rng: np.random.Generator, shift: float = 300.0) -> np.ndarray:
    c = base.mean(axis=0)
    t = np.radians(rng.uniform(-8.0, 8.0))
    rot = np.array([[np.cos(t), -np.sin(t)], [np.sin(t), np.cos(t)]])
    return (base - c) @ rot.T + c + rng.uniform(-shift, shift, 2)


def time_requests(port: int, token: str, section: str, base: np.ndarray, n: int, draft: bool,
                  seed: int = 5) -> tuple[list[float], list[float]]:
    """Wall times (s) of ``n`` POST /api/section for lines moved about ``base``, and the
    server's own computing times (s) it reports in ``timing_ms``."""
    client = _Client(port, token)
    rng = np.random.default_rng(seed)
    lines = [_moved(base, rng) for _ in range(n + 2)]
    for line in lines[:2]:  # warm-up
        client.post("/api/section", {"line": line.tolist(), "section": section, "draft": draft})
    wall, server = [], []
    for line in lines[2:]:
        dt, res = client.post("/api/section", {"line": line.tolist(), "section": section,
                                               "draft": draft})
        wall.append(dt)
        server.append(1e-3 * (res["timing_ms"]["section"] + (res["timing_ms"]["draft"] or 0)))
    return wall, server


def launch_browser(playwright):
    """Debian's chromium, headless, never a downloaded browser."""
    return playwright.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS,
                                      headless=True)


def open_page(browser, url: str, outside: list[str] | None = None, errors: list[str] | None
              = None):
    """A new page at ``url``; requests leaving 127.0.0.1 are aborted and listed in ``outside``;
    console errors and page errors are listed in ``errors``."""
    from urllib.parse import urlparse

    outside = [] if outside is None else outside
    errors = [] if errors is None else errors
    context = browser.new_context(viewport={"width": 1400, "height": 820})
    page = context.new_page()

    def route(r):
        host = urlparse(r.request.url).hostname
        if r.request.url.startswith("data:") or host in ("127.0.0.1", "localhost"):
            r.continue_()
        else:
            outside.append(r.request.url)
            r.abort()

    page.route("**/*", route)
    page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.goto(url)
    page.wait_for_selector("body[data-ready]", timeout=30_000)
    wait_for_verdicts(page)
    return page


def wait_for_verdicts(page, timeout_ms: float = 30_000) -> None:
    """Until the checks table shows the verdicts of the newest line drawn."""
    page.wait_for_function(
        """() => {
            const c = document.querySelector('#checks'), s = document.querySelector('#section');
            return c && s && c.getAttribute('data-seq') && +c.getAttribute('data-seq') >=
                +s.getAttribute('data-seq') && !document.querySelector('#checks .pending')
                && document.querySelectorAll('#checks .verdict[data-status]').length === 4;
        }""", timeout=timeout_ms)


def drag_vertex(page, index: int, dx: float, dy: float, steps: int = 20,
                step_ms: float = 30.0) -> None:
    """Drag vertex ``index`` of the line by (dx, dy) screen pixels in ``steps`` pointer moves."""
    box = page.locator(f"path.vertex-{index}").bounding_box()
    x0, y0 = box["x"] + box["width"] / 2, box["y"] + box["height"] / 2
    page.mouse.move(x0, y0)
    page.mouse.down()
    for k in range(1, steps + 1):
        page.mouse.move(x0 + dx * k / steps, y0 + dy * k / steps)
        page.wait_for_timeout(step_ms)
    page.mouse.up()
    wait_for_verdicts(page)


def browser_timings(url: str, drags: int = 6, screenshot: Path | None = None) -> dict:
    """Drag-step and drag-end times measured in the page (ms), and what left the machine.

    With ``screenshot``, the page as first shown (VE 2, the pointer on the map) is saved
    there as PNG before the drags."""
    from playwright.sync_api import sync_playwright

    outside: list[str] = []
    errors: list[str] = []
    with sync_playwright() as p:
        browser = launch_browser(p)
        try:
            page = open_page(browser, url, outside, errors)
            if screenshot is not None:
                page.fill("#ve", "2")
                page.dispatch_event("#ve", "input")
                box = page.locator("#map").bounding_box()
                page.mouse.move(box["x"] + 0.4 * box["width"], box["y"] + 0.55 * box["height"])
                page.wait_for_timeout(300)
                page.screenshot(path=str(screenshot))
                page.fill("#ve", "1")
                page.dispatch_event("#ve", "input")
            page.evaluate("() => { const t = window.__mapsectionTimings; "
                          "t.drag_step.length = 0; t.drag_end.length = 0; }")
            for k in range(drags):
                sign = 1 if k % 2 == 0 else -1
                drag_vertex(page, k % 2, 60 * sign, 30 * sign)
            t = page.evaluate("() => window.__mapsectionTimings")
        finally:
            browser.close()
    return {"drag_step": t["drag_step"], "drag_end": t["drag_end"], "outside": outside,
            "errors": errors}


def _write_attitudes(path: Path, project, n: int, rng: np.random.Generator) -> None:
    """N invented attitudes, made as the line-moving benchmark makes them."""
    from .shift import _write_attitudes as write

    write(path, project, n, rng)


def _project_with_attitudes(src: Path, folder: Path, n: int) -> Path:
    """A copy of the project whose attitudes file holds ``n`` invented attitudes."""
    from mapsection.project import load_project

    project = load_project(src)
    csv = folder / "attitudes_many.csv"
    _write_attitudes(csv, project, n, np.random.default_rng(11))
    text = src.read_text(encoding="utf-8")
    for path in (project.dem_path, project.map_path):
        text = text.replace(f'"{path.name}"', json.dumps(str(path)))
    text = text.replace(f'"{project.attitudes_path.name}"', json.dumps(str(csv)))
    out = folder / "project_many.toml"
    out.write_text(text, encoding="utf-8")
    return out


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(prog="python -m mapsection.bench view", description=__doc__,
                                formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--project", type=Path, default=sample_project())
    p.add_argument("--section", default=None, help="section name (default: the first)")
    p.add_argument("--requests", type=int, default=40, help="requests without the draft")
    p.add_argument("--drafts", type=int, default=15, help="requests with the draft")
    p.add_argument("--attitudes", type=int, default=100_000,
                   help="attitudes in the large variant (0: skip it)")
    p.add_argument("--no-browser", action="store_true", help="skip the browser timings")
    p.add_argument("--browser-many", action="store_true",
                   help="also time the browser on the large attitude set (no target)")
    p.add_argument("--screenshot", type=Path, default=None, metavar="PNG",
                   help="also save a screenshot of the page (as in docs/view.png)")
    return p


def _time_browser(url: str, screenshot: Path | None, results: dict[str, float]) -> None:
    """The drag timings in a real browser, when chromium and playwright are installed."""
    if not os.path.exists(CHROMIUM):
        print(f"browser timings skipped: {CHROMIUM} missing (apt-get install chromium)")
        return
    try:
        bt = browser_timings(url, screenshot=screenshot)
    except ImportError:
        print("browser timings skipped: playwright not installed")
        return
    results["drag_step"] = median_ms(bt["drag_step"], 1.0)
    results["drag_end"] = median_ms(bt["drag_end"], 1.0)
    print(f"browser: {len(bt['drag_step'])} drag steps, {len(bt['drag_end'])} "
          f"drag ends measured; requests leaving 127.0.0.1: "
          f"{len(bt['outside'])}; console errors: {len(bt['errors'])}")


def _time_page(args, spec, base: np.ndarray, quiet: list[str], results: dict[str, float],
               computing: dict[str, float]) -> None:
    """Start the page server and time its requests (and the browser's drags)."""
    from mapsection.web.api import ViewState
    from mapsection.web.app import BackgroundServer

    t = time.perf_counter()
    state = ViewState(args.project, spec.name, warn=quiet.append)
    state.warm()
    print(f"page server start (load the project once, first draft): "
          f"{time.perf_counter() - t:.2f} s")
    server = BackgroundServer(state)
    try:
        for key, n, draft in (("section", args.requests, False), ("draft", args.drafts, True)):
            wall, inside = time_requests(server.port, server.token, spec.name, base, n, draft)
            results[key] = median_ms(wall)
            computing[key] = median_ms(inside)
        if not args.no_browser:
            _time_browser(server.url, args.screenshot, results)
    finally:
        server.stop()
        state.close()


def _time_many(args, spec, base: np.ndarray, quiet: list[str], results: dict[str, float],
               computing: dict[str, float]) -> None:
    """The requests without the draft on a copy of the project with many attitudes."""
    from mapsection.web.api import ViewState
    from mapsection.web.app import BackgroundServer

    with tempfile.TemporaryDirectory() as tmp:
        many = _project_with_attitudes(args.project, Path(tmp), args.attitudes)
        state = ViewState(many, spec.name, warn=quiet.append)
        state.warm()
        server = BackgroundServer(state)
        try:
            wall, inside = time_requests(server.port, server.token, spec.name, base,
                                         args.requests, False)
            results["section_100k"] = median_ms(wall)
            computing["section_100k"] = median_ms(inside)
            if args.browser_many and os.path.exists(CHROMIUM):
                bt = browser_timings(server.url, drags=3)
                print(f"browser with {args.attitudes} attitudes (no target): drag step "
                      f"median {median_ms(bt['drag_step'], 1.0):.0f} ms, drag end median "
                      f"{median_ms(bt['drag_end'], 1.0):.0f} ms")
        finally:
            server.stop()
            state.close()
        shutil.rmtree(tmp, ignore_errors=True)


def _print_results(args, results: dict[str, float], computing: dict[str, float],
                   build_s: float) -> bool:
    """Print each timing against the full build and its target; True when all are met."""
    labels = {"section": "POST /api/section, no draft",
              "section_100k": f"POST /api/section, no draft, {args.attitudes} attitudes",
              "draft": "POST /api/section with draft and checks",
              "drag_step": "browser: drag step to profile and dips redrawn",
              "drag_end": "browser: drag end to draft and verdicts redrawn"}
    ok = True
    for key, label in labels.items():
        if key not in results:
            continue
        ms = results[key]
        met = ms <= TARGETS_MS[key]
        ok &= met
        inside = f", of which computing {computing[key]:.1f} ms" if key in computing else ""
        print(f"{label}: median {ms:.1f} ms{inside} (ratio to the full build "
              f"{ms / 1e3 / build_s:.4f}; target <= {TARGETS_MS[key]:.0f} ms: "
              f"{'met' if met else 'MISSED'})")
    print("targets met" if ok else "TARGETS MISSED")
    return ok


def main(argv: list[str] | None = None) -> int:
    args = _parser().parse_args(argv)

    from mapsection.build import build_project
    from mapsection.project import load_project

    if not args.project.exists():
        print(f"mapsection.bench view: error: {args.project}: no project file", file=sys.stderr)
        return 2
    project = load_project(args.project)
    spec = project.section(args.section) if args.section else project.sections[0]
    base = np.asarray(spec.line, float)
    quiet: list[str] = []
    results: dict[str, float] = {}
    computing: dict[str, float] = {}  # the server's own time, without HTTP

    with tempfile.TemporaryDirectory() as tmp:
        t = time.perf_counter()
        build_project(args.project, Path(tmp) / "out", section=spec.name, warn=quiet.append)
        build_s = time.perf_counter() - t
    print(f"project {args.project.name}, section {spec.name}: full build {build_s:.2f} s "
          "(the baseline of every ratio below)")
    _time_page(args, spec, base, quiet, results, computing)
    if args.attitudes:
        _time_many(args, spec, base, quiet, results, computing)
    return 0 if _print_results(args, results, computing, build_s) else 1
