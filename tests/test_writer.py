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
from risk.report.writer import MANIFEST, STATE_DIR, check_output_dir, publish

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "ravenmoor_r7_openhole.toml"


def test_publish_replaces_its_own_outputs(tmp_path):
    out = tmp_path / "run"
    publish(out, {"a.txt": "1", "sub/b.txt": b"2"})
    assert (out / STATE_DIR / MANIFEST).exists() and (out / "sub" / "b.txt").read_bytes() == b"2"
    publish(out, {"c.txt": "3"})
    assert sorted(p.name for p in out.iterdir()) == sorted([STATE_DIR, "c.txt"])
    assert sorted(p.name for p in (out / STATE_DIR).iterdir()) == ["lock", MANIFEST]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["run"]  # nothing beside it


def test_foreign_folder_refused_even_when_forced(tmp_path):
    out = tmp_path / "mine"
    out.mkdir()
    (out / "notes.txt").write_text("keep me")
    for force in (False, True):
        with pytest.raises(ScenarioError, match="did not write"):
            check_output_dir(out, force=force)
        with pytest.raises(ScenarioError, match="did not write"):
            publish(out, {"x": "y"}, force=force)
    assert sorted(p.name for p in out.iterdir()) == ["notes.txt"]
    assert (out / "notes.txt").read_text() == "keep me"


def test_output_path_is_a_file(tmp_path):
    f = tmp_path / "f"
    f.write_text("")
    with pytest.raises(ScenarioError, match="--out"):
        check_output_dir(f)


@pytest.mark.slow
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
