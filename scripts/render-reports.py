#!/usr/bin/env python3
"""Renders fieldgrade reports in headless Chromium and checks that they load whole.

    scripts/render-reports.py OUT_DIR REPORT_FOLDER...

For every results folder given, opens its report.html from disk (file://, no server, no
network) in Debian's Chromium driven through chromedriver's W3C WebDriver HTTP interface
(the standard library only: no Python packages), and fails when

- the browser logs an error (a load failure, a malformed document, a script error),
- a figure holds no drawn SVG (zero size) or a picture's raster does not decode,
- the page has fewer figures than pictures and plots beside it in the folder.

It saves OUT_DIR/<folder name>.png, a screenshot of the whole page, and
OUT_DIR/<folder name>-top.png, the first 2400 px (the verdicts and the stress map).

scripts/render-reports.sh installs Chromium when absent, runs `check` on every demo model
and calls this script.
"""

import base64
import json
import os
import shutil
import socket
import subprocess
import sys
import tempfile
import time
import urllib.request
from pathlib import Path

CHECK_JS = r"""
const done = arguments[arguments.length - 1];
const hrefs = [];
document.querySelectorAll('img').forEach(i => hrefs.push(i.src));
document.querySelectorAll('svg image').forEach(i =>
    hrefs.push(i.getAttribute('href') || i.getAttributeNS('http://www.w3.org/1999/xlink', 'href')));
const figures = Array.from(document.querySelectorAll('figure'));
const empty = figures.filter(f => {
    const s = f.querySelector('svg');
    if (!s) return true;
    const r = s.getBoundingClientRect();
    return r.width < 10 || r.height < 10;
}).map(f => f.id);
Promise.all(hrefs.map(h => new Promise(r => {
    const im = new Image();
    im.onload = () => r({ok: im.naturalWidth > 0, what: h.slice(0, 48)});
    im.onerror = () => r({ok: false, what: h.slice(0, 48)});
    im.src = h;
}))).then(images => done({
    figures: figures.length,
    empty: empty,
    images: images,
    height: document.documentElement.scrollHeight,
    title: document.title,
}));
"""


def free_port():
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Driver:
    """A chromedriver process and one browser session."""

    def __init__(self, profile):
        self.port = free_port()
        self.proc = subprocess.Popen(
            ["chromedriver", f"--port={self.port}"], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL
        )
        self.base = f"http://127.0.0.1:{self.port}"
        for _ in range(100):
            try:
                if self.call("GET", "/status")["value"].get("ready"):
                    break
            except OSError:
                time.sleep(0.1)
        else:
            raise SystemExit("chromedriver did not start")
        # The flags this machine's closed network needs (no background connections).
        args = [
            "--headless=new",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            "--hide-scrollbars",
            f"--user-data-dir={profile}",
            "--window-size=1200,900",
        ]
        caps = {
            "capabilities": {
                "alwaysMatch": {
                    "browserName": "chrome",
                    "goog:chromeOptions": {"binary": shutil.which("chromium") or "/usr/bin/chromium", "args": args},
                    "goog:loggingPrefs": {"browser": "ALL"},
                }
            }
        }
        self.session = self.call("POST", "/session", caps)["value"]["sessionId"]

    def call(self, method, path, body=None):
        data = None if body is None else json.dumps(body).encode()
        req = urllib.request.Request(self.base + path, data=data, method=method)
        req.add_header("Content-Type", "application/json")
        with urllib.request.urlopen(req, timeout=120) as r:
            return json.loads(r.read())

    def s(self, method, path, body=None):
        return self.call(method, f"/session/{self.session}{path}", body)["value"]

    def close(self):
        try:
            self.call("DELETE", f"/session/{self.session}")
        finally:
            self.proc.terminate()
            self.proc.wait()


def screenshot(d, path, height):
    d.s("POST", "/window/rect", {"width": 1200, "height": height})
    png = base64.b64decode(d.s("GET", "/screenshot"))
    path.write_bytes(png)
    return len(png)


def render(d, folder, out):
    page = (folder / "report.html").resolve()
    if not page.is_file():
        return [f"{folder}: no report.html"]
    d.s("POST", "/url", {"url": page.as_uri()})
    got = d.s("POST", "/execute/async", {"script": CHECK_JS, "args": []})
    problems = []
    for e in d.s("POST", "/se/log", {"type": "browser"}):
        if e.get("level") in ("SEVERE", "ERROR"):
            problems.append(f"browser log: {e.get('message')}")
    for im in got["images"]:
        if not im["ok"]:
            problems.append(f"a picture's raster does not load: {im['what']}…")
    for f in got["empty"]:
        problems.append(f"figure {f} has no drawn picture")
    beside = sorted(p.name for p in folder.glob("*.svg"))
    if got["figures"] < len(beside):
        problems.append(f"{got['figures']} figures in the page for {len(beside)} SVG files beside it")
    name = folder.name
    full = screenshot(d, out / f"{name}.png", min(max(got["height"], 900), 30000))
    top = screenshot(d, out / f"{name}-top.png", 2400)
    print(
        f"{name}: '{got['title']}', {got['figures']} figures, {len(got['images'])} rasters decoded, "
        f"page {got['height']} px; {name}.png {full // 1024} KiB, {name}-top.png {top // 1024} KiB"
    )
    return [f"{name}: {p}" for p in problems]


def main():
    if len(sys.argv) < 3:
        raise SystemExit(__doc__)
    out = Path(sys.argv[1])
    out.mkdir(parents=True, exist_ok=True)
    if not shutil.which("chromedriver"):
        raise SystemExit("chromedriver not found: run scripts/render-reports.sh (it installs chromium-driver)")
    problems = []
    with tempfile.TemporaryDirectory() as profile:
        d = Driver(profile)
        try:
            for folder in sys.argv[2:]:
                problems += render(d, Path(folder), out)
        finally:
            d.close()
    for p in problems:
        print("FAIL", p, file=sys.stderr)
    sys.exit(1 if problems else 0)


if __name__ == "__main__":
    main()
