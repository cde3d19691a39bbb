"""Headless Chromium helpers for the report tests (not a test module itself).

A probe script is added to a copy of the page; once the page has loaded, it
lists every image that did not decode, every reference that is not a
``data:`` URI or an in-page anchor, and every resource the browser fetched,
and writes the list into the DOM, which ``--dump-dom`` returns.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import pytest

PROBE = """<script>window.addEventListener("load", function () {
  var bad = [];
  for (const i of document.images) {
    if (!(i.complete && i.naturalWidth > 0)) bad.push("img:" + i.src.slice(0, 60));
  }
  for (const e of document.querySelectorAll("[src],[href]")) {
    var u = e.getAttribute("src") || e.getAttribute("href");
    if (!/^(data:|#)/.test(u)) bad.push("ref:" + u);
  }
  for (const r of performance.getEntriesByType("resource")) bad.push("load:" + r.name);
  var p = document.createElement("pre"); p.id = "probe";
  p.textContent = JSON.stringify({images: document.images.length, bad: bad});
  document.body.appendChild(p);
});</script>"""


def chromium() -> str:
    """Path of the chromium binary; skip when absent locally, fail in CI (CI=true)."""
    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if exe:
        return exe
    msg = "chromium not installed (Debian: apt-get install -y chromium)"
    if os.environ.get("CI", "").lower() == "true":
        pytest.fail(f"{msg}; CI must install it (see .ci/run)")
    pytest.skip(msg)


def _run(args: list[str]) -> subprocess.CompletedProcess:
    base = [chromium(), "--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
            "--no-first-run", "--disable-extensions", "--virtual-time-budget=10000"]
    return subprocess.run(base + args, capture_output=True, text=True, timeout=120,
                          check=False)


def probe(page: Path, tmp: Path) -> dict:
    """Load ``page`` in Chromium with the probe; return {'images': n, 'bad': [...]}."""
    html = page.read_text(encoding="utf-8")
    probed = tmp / f"probe_{page.name}"
    probed.write_text(html.replace("</body>", PROBE + "</body>"), encoding="utf-8")
    res = _run(["--dump-dom", probed.resolve().as_uri()])
    m = re.search(r'<pre id="probe">(.*?)</pre>', res.stdout, flags=re.S)
    assert m, f"the probe did not run: {res.stderr[-2000:]}"
    return json.loads(m[1].replace("&quot;", '"').replace("&amp;", "&"))


def screenshot(page: Path, png: Path, *, width: int = 1280, height: int = 4000) -> Path:
    """Render ``page`` to ``png`` (full window of ``width`` x ``height`` pixels)."""
    res = _run([f"--window-size={width},{height}", f"--screenshot={png}",
                page.resolve().as_uri()])
    assert png.is_file(), res.stderr[-2000:]
    return png
