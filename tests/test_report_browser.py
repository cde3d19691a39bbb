"""The report in a real browser: headless Chromium loads it with no missing resource.

Skipped when chromium is absent locally; fails in CI (CI=true), where .ci/run
installs it.
"""

from __future__ import annotations

import numpy as np
from browser import probe, screenshot
from PIL import Image

from trajectory.outputs.report import write_report
from trajectory.outputs.style import STATUS_COLOURS


def test_probe_detects_a_missing_image(tmp_path):
    # control: the detector must catch a broken page, or the next test proves nothing
    bad = tmp_path / "bad.html"
    bad.write_text('<!DOCTYPE html><html><body><img src="missing.png" alt="x"></body></html>')
    found = probe(bad, tmp_path)
    assert any(b.startswith("img:") for b in found["bad"])


def test_report_loads_in_chromium_and_renders(demo_result, tmp_path):
    _, out = demo_result
    page = write_report(out, tmp_path / "report.html")
    found = probe(page, tmp_path)
    # the browser decodes every figure the page holds: four core figures, the margin
    # band, the return period held (the demo has standards), one options figure per
    # deficit stretch drawn (the demo has two), one piping figure per short piping
    # stretch drawn (three), one stability section per stretch short on inner-slope
    # stability (the demo has one)
    assert found["bad"] == []
    assert found["images"] == page.read_text(encoding="utf-8").count("<img ") == 12
    png = screenshot(page, tmp_path / "report.png", height=1400)
    rgb = np.asarray(Image.open(png).convert("RGB")).astype(int)
    assert rgb.std() > 20          # not a blank page
    # the deficit colour of the summary bar and strip is on the first screen
    target = np.array([int(STATUS_COLOURS["deficit"][i:i + 2], 16) for i in (1, 3, 5)])
    assert (np.abs(rgb - target).sum(axis=2) < 30).sum() > 500
