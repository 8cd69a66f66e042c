"""Outputs appear whole or not at all; foreign folders are never overwritten silently."""

from __future__ import annotations

import json
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from risk.errors import ScenarioError
from risk.report.writer import MARKER, check_output_dir, publish

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "ravenmoor_r7_openhole.toml"


def test_publish_replaces_whole_folder(tmp_path):
    out = tmp_path / "run"
    publish(out, {"a.txt": "1", "sub/b.txt": b"2"})
    assert (out / MARKER).exists() and (out / "sub" / "b.txt").read_bytes() == b"2"
    publish(out, {"c.txt": "3"})
    assert sorted(p.name for p in out.iterdir()) == sorted([MARKER, "c.txt"])
    assert not list(tmp_path.glob(".run.*"))  # no temporary folders left behind


def test_foreign_folder_refused_unless_forced(tmp_path):
    out = tmp_path / "mine"
    out.mkdir()
    (out / "notes.txt").write_text("keep me")
    with pytest.raises(ScenarioError, match="did not write"):
        check_output_dir(out)
    assert (out / "notes.txt").read_text() == "keep me"
    publish(out, {"x": "y"}, force=True)
    assert not (out / "notes.txt").exists()


def test_output_path_is_a_file(tmp_path):
    f = tmp_path / "f"
    f.write_text("")
    with pytest.raises(ScenarioError, match="--out"):
        check_output_dir(f)


def test_killed_run_leaves_previous_complete_outputs(tmp_path):
    # A first complete run, then a long run killed with SIGKILL part-way: the folder must
    # still hold the first run's complete results (or, at worst, nothing).
    exe = str(Path(sys.executable).parent / "risk")
    out = tmp_path / "run"
    subprocess.run([exe, "run", str(EXAMPLE), "--out", str(out), "--samples", "256", "-q"],
                   check=True)
    first = (out / "results.json").read_bytes()
    proc = subprocess.Popen([exe, "run", str(EXAMPLE), "--out", str(out), "--samples",
                             "2000000", "-q"])
    time.sleep(3.0)
    proc.send_signal(signal.SIGKILL)
    proc.wait()
    if out.exists():
        assert (out / "results.json").read_bytes() == first
        assert json.loads(first)["samples"] == 256
