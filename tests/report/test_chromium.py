"""The memo HTML renders in a real browser: headless Chromium takes a screenshot of it.

Chromium is required in CI (``CI=true``: the test fails without it); locally the test is
skipped when ``/usr/bin/chromium`` is absent.
"""

from __future__ import annotations

import io
import os
import shutil
import subprocess
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
