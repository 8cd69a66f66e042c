"""The memo HTML renders in a real browser: headless Chromium takes a screenshot of it.

Chromium is required in CI (``CI=true``: the test fails without it); locally the test is
skipped when ``/usr/bin/chromium`` is absent.
"""

from __future__ import annotations

import io
import json
import os
import re
import shutil
import subprocess
from html import unescape as html_unescape
from pathlib import Path

import matplotlib.image as mpimg
import numpy as np
import pytest

CHROMIUM = "/usr/bin/chromium"
# Table-header colour of the memo's stylesheet (--head: #23395b), as 0-1 RGB.
HEAD_RGB = np.array([0x23, 0x39, 0x5B]) / 255.0


def _chromium() -> str | None:
    if Path(CHROMIUM).exists():
        return CHROMIUM
    return shutil.which("chromium")


@pytest.mark.slow
def test_memo_renders_in_headless_chromium(tmp_path, perforated_memo):
    exe = _chromium()
    if exe is None:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(f"{CHROMIUM} is required in CI to check the memo in a browser")
        pytest.skip(f"{CHROMIUM} not installed")
    page = tmp_path / "memo.html"
    page.write_text(perforated_memo.html, encoding="utf-8")
    shot = tmp_path / "shot.png"
    cmd = [exe, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
           "--disable-background-networking", "--disable-component-update", "--disable-sync",
           f"--user-data-dir={tmp_path / 'profile'}", "--hide-scrollbars",
           "--window-size=1000,1600", f"--screenshot={shot}", page.as_uri()]
    run = subprocess.run(cmd, capture_output=True, text=True, timeout=120, check=False)
    assert run.returncode == 0, run.stderr[-2000:]
    png = shot.read_bytes()
    assert png[:8] == b"\x89PNG\r\n\x1a\n"
    px = np.asarray(mpimg.imread(io.BytesIO(png), format="png"))[..., :3]
    assert px.shape[:2] == (1600, 1000)
    assert float(px.std()) > 0.05
    non_white = float(np.mean((px < 0.9).any(axis=2)))
    assert 0.02 < non_white < 0.9
    # the inline stylesheet was applied: the summary table's header colour is on screen
    head = np.all(np.abs(px - HEAD_RGB) < 0.03, axis=2)
    assert float(head.mean()) > 0.005


# Page widths at CSS 96 px/in (CSS Values and Units Level 3, 5.2: 1in = 96px): A4 210 mm
# (ISO 216) and US letter 8.5 in.
PAGE_WIDTHS = {"A4": round(210 / 25.4 * 96), "letter": round(8.5 * 96)}

# Appended to a copy of the memo (the memo itself carries no script): after load, list every
# element that sticks out of the page or whose content overflows its own box.
_PROBE = """<script>
window.addEventListener("load", () => {
  const W = window.innerWidth, bad = [];
  const root = document.documentElement;
  if (root.scrollWidth > W) bad.push(["page", root.scrollWidth, W]);
  for (const el of document.querySelectorAll("img, table, figure, pre, code, td, th")) {
    const r = el.getBoundingClientRect();
    if (r.right > W + 0.5 || r.left < -0.5)
      bad.push([el.tagName, Math.round(r.left), Math.round(r.right), W]);
    if (el.tagName !== "IMG" && el.scrollWidth > el.clientWidth + 1 && el.clientWidth > 0)
      bad.push([el.tagName + " content", el.scrollWidth, el.clientWidth,
                (el.textContent || "").slice(0, 40)]);
  }
  const out = document.createElement("pre");
  out.id = "overflow-report";
  out.textContent = "OVERFLOW" + JSON.stringify(bad) + "END";
  document.body.appendChild(out);
});
</script>"""


def _memos(example_runs, perforated_memo) -> dict[str, str]:
    out = {name: (folder / "memo.html").read_text(encoding="utf-8")
           for name, folder in example_runs.items()}
    out["perforated fixture"] = perforated_memo.html
    return out


@pytest.mark.slow
@pytest.mark.parametrize("paper", list(PAGE_WIDTHS))
def test_nothing_overflows_the_page_width(tmp_path, example_runs, perforated_memo, paper):
    """Every memo (each shipped example and the fixture) in a window as wide as the paper:
    the page does not scroll sideways, no image, table or cell sticks out and no cell's
    content overflows it (checked in the browser with scrollWidth and getBoundingClientRect)."""
    exe = _chromium()
    if exe is None:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(f"{CHROMIUM} is required in CI to check the memo in a browser")
        pytest.skip(f"{CHROMIUM} not installed")
    width = PAGE_WIDTHS[paper]
    for name, html in _memos(example_runs, perforated_memo).items():
        page = tmp_path / f"{name.replace(' ', '_')}.html"
        page.write_text(html.replace("</body>", _PROBE + "\n</body>"), encoding="utf-8")
        cmd = [exe, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
               "--disable-background-networking", "--disable-component-update",
               "--disable-sync", f"--user-data-dir={tmp_path / 'profile'}", "--hide-scrollbars",
               f"--window-size={width},1200", "--virtual-time-budget=10000", "--dump-dom",
               page.as_uri()]
        run = subprocess.run(cmd, capture_output=True, text=True, timeout=180, check=False)
        assert run.returncode == 0, run.stderr[-2000:]
        found = re.search(r'<pre id="overflow-report">OVERFLOW(.*?)END</pre>', run.stdout, re.S)
        assert found, (name, "the probe did not run", run.stdout[-500:])
        assert json.loads(html_unescape(found.group(1))) == [], (name, paper)
