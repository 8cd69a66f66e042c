"""The output folder never loses a file the tool did not write (README "Output folders").

Every test works inside its own ``tmp_path`` only (HOME and the working directory are pointed
there with monkeypatch where a rule about them is tested). The rules checked here are the ones
of ``risk/report/writer.py``; they follow common practice of careful Unix tools (git, rsync):
refuse rather than guess, replace atomically, lock while writing.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import signal
import subprocess
import sys
import textwrap
import time
from pathlib import Path

import pytest
from typer.testing import CliRunner

from risk.cli import app
from risk.errors import ScenarioError
from risk.report.writer import (
    LEGACY_MARKER,
    MANIFEST,
    STATE_DIR,
    OutputFolder,
    check_output_dir,
    publish,
    read_manifest,
)

RUNNER = CliRunner()
EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "ravenmoor_r7_openhole.toml"
RISK = str(Path(sys.executable).parent / "risk")


def tree(root: Path) -> dict[str, str]:
    """Every file below ``root`` (links as their target text) with its sha256."""
    out: dict[str, str] = {}
    for p in sorted(root.rglob("*")):
        rel = str(p.relative_to(root))
        if p.is_symlink():
            out[rel] = "link:" + os.readlink(p)
        elif p.is_file():
            out[rel] = hashlib.sha256(p.read_bytes()).hexdigest()
    return out


def user_files(root: Path) -> dict[str, str]:
    """A folder of user data: the files an engineer keeps beside a study."""
    root.mkdir(parents=True, exist_ok=True)
    (root / "thesis.txt").write_text("chapter 1\n")
    (root / "sub").mkdir(exist_ok=True)
    (root / "sub" / "data.csv").write_text("a,b\n1,2\n")
    return tree(root)


@pytest.fixture
def scenario(tmp_path: Path) -> Path:
    """The shipped example, copied into a folder of its own (with the user's notes)."""
    folder = tmp_path / "study"
    folder.mkdir()
    target = folder / "well.toml"
    shutil.copy(EXAMPLE, target)
    (folder / "notes.md").write_text("why these ranges\n")
    return target


def run(*args: str) -> tuple[int, str]:
    r = RUNNER.invoke(app, list(args))
    return r.exit_code, r.output


def refused(code: int, text: str, *fragments: str) -> None:
    assert code == 2, text
    assert "Traceback" not in text
    assert "--out" in text or "DIR" in text
    for f in fragments:
        assert f in text, (f, text)


# --------------------------------------------------------------------- refusals (item 1) ----

def test_root_refused_by_the_check_alone() -> None:
    # checked on the pure check only: no test may point a writing command at a real folder
    with pytest.raises(ScenarioError, match="filesystem root"):
        check_output_dir("/", force=True)


def test_home_and_its_parent_refused(tmp_path: Path, scenario: Path,
                                     monkeypatch: pytest.MonkeyPatch) -> None:
    home = tmp_path / "home"
    before = user_files(home)
    monkeypatch.setenv("HOME", str(home))
    for out in (home, tmp_path):
        code, text = run("run", str(scenario), "--out", str(out), "--samples", "8", "--force")
        refused(code, text, "home folder")
    assert tree(home) == before


def test_current_folder_and_parents_refused(tmp_path: Path, scenario: Path,
                                            monkeypatch: pytest.MonkeyPatch) -> None:
    work = tmp_path / "work"
    before = user_files(work)
    monkeypatch.chdir(work)
    for out in (".", str(work), str(tmp_path), ".."):
        code, text = run("run", str(scenario), "--out", out, "--samples", "8", "--force")
        refused(code, text, "current folder")
    assert tree(work) == before


def test_scenario_folder_and_its_parents_refused(tmp_path: Path, scenario: Path) -> None:
    before = tree(scenario.parent)
    for out in (scenario.parent, tmp_path):
        code, text = run("run", str(scenario), "--out", str(out), "--samples", "8", "--force")
        refused(code, text, "holds the input file")
    assert tree(scenario.parent) == before


@pytest.mark.parametrize("force", [False, True])
def test_folder_of_foreign_files_refused_even_with_force(tmp_path: Path, scenario: Path,
                                                         force: bool) -> None:
    out = tmp_path / "data"
    before = user_files(out)
    code, text = run("run", str(scenario), "--out", str(out), "--samples", "8",
                     *(["--force"] if force else []))
    refused(code, text, "did not write", "thesis.txt")
    assert tree(out) == before


def test_symlinked_and_dangling_output_refused(tmp_path: Path, scenario: Path) -> None:
    real = tmp_path / "real"
    before = user_files(real)
    link = tmp_path / "link"
    link.symlink_to(real, target_is_directory=True)
    code, text = run("run", str(scenario), "--out", str(link), "--samples", "8", "--force")
    refused(code, text, "symbolic link")
    dangling = tmp_path / "dangling"
    dangling.symlink_to(tmp_path / "nowhere")
    code, text = run("run", str(scenario), "--out", str(dangling), "--samples", "8")
    refused(code, text, "dangling symbolic link")
    assert os.readlink(link) == str(real) and os.readlink(dangling) == str(tmp_path / "nowhere")
    assert tree(real) == before and not (tmp_path / "nowhere").exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["dangling", "link", "real", "study"]


def test_refused_run_leaves_no_folder_behind(tmp_path: Path, scenario: Path) -> None:
    # a bad option found after the folder checks: nothing created
    out = tmp_path / "new" / "deeper"
    code, _ = run("run", str(scenario), "--out", str(out), "--samples", "0")
    assert code == 2 and not (tmp_path / "new").exists()


# ------------------------------------------------------------- reruns and manifest (item 1) ----

@pytest.mark.slow
def test_rerun_keeps_foreign_files_and_replaces_outputs(tmp_path: Path, scenario: Path) -> None:
    out = tmp_path / "r7"
    code, text = run("run", str(scenario), "--out", str(out), "--samples", "64", "--seed", "1")
    assert code == 0, text
    manifest = read_manifest(out)
    assert manifest is not None and "results.json" in manifest and "memo.pdf" in manifest
    assert all(hashlib.sha256((out / rel).read_bytes()).hexdigest() == d
               for rel, d in manifest.items())
    (out / "my notes.txt").write_text("keep me")
    (out / "figures" / "annotated.png").write_bytes(b"not risk's")
    foreign = {k: v for k, v in tree(out).items()
               if k in ("my notes.txt", "figures/annotated.png")}
    for extra in ([], ["--force"]):
        code, text = run("run", str(scenario), "--out", str(out), "--samples", "64",
                         "--seed", "2", *extra)
        assert code == 0, text
        assert "did not write" in text and "my notes.txt" in text
        assert {k: v for k, v in tree(out).items() if k in foreign} == foreign
        assert json.loads((out / "results.json").read_text())["seed"] == 2


def test_edited_output_needs_force_and_unlisted_names_never_replaced(tmp_path: Path) -> None:
    out = tmp_path / "o"
    publish(out, {"a.txt": "1", "sub/b.txt": "2"})
    (out / "a.txt").write_text("edited by hand")
    with pytest.raises(ScenarioError, match="changed since risk wrote them"):
        publish(out, {"a.txt": "3"})
    assert (out / "a.txt").read_text() == "edited by hand"
    publish(out, {"a.txt": "3"}, force=True)  # --force: an edited output may be replaced
    assert (out / "a.txt").read_text() == "3" and not (out / "sub").exists()
    (out / "c.txt").write_text("the user's")
    for force in (False, True):
        with pytest.raises(ScenarioError, match="not written by risk"):
            publish(out, {"a.txt": "4", "c.txt": "5"}, force=force)
    assert (out / "c.txt").read_text() == "the user's" and (out / "a.txt").read_text() == "3"
    kept = publish(out, {"d/e.txt": "6"})
    assert kept == ["c.txt"] and not (out / "a.txt").exists()
    assert sorted(read_manifest(out) or {}) == ["d/e.txt"]


def test_empty_folder_adopted_and_version_0_1_folder_adopted(tmp_path: Path) -> None:
    empty = tmp_path / "empty"
    empty.mkdir()
    publish(empty, {"results.json": "{}"})
    assert read_manifest(empty) == {"results.json": hashlib.sha256(b"{}").hexdigest()}
    old = tmp_path / "old"
    (old / "figures").mkdir(parents=True)
    for rel in (LEGACY_MARKER, "results.json", "memo.html", "figures/curves.png"):
        (old / rel).write_text("0.1")
    (old / "figures" / "mine.txt").write_text("the user's")
    kept = publish(old, {"results.json": "new"})
    assert kept == ["figures/mine.txt"]
    assert sorted(tree(old)) == [f"{STATE_DIR}/lock", f"{STATE_DIR}/{MANIFEST}",
                                 "figures/mine.txt", "results.json"]


def test_outputs_honour_the_umask(tmp_path: Path) -> None:
    old = os.umask(0o027)
    try:
        publish(tmp_path / "o", {"results.json": "{}", "figures/a.png": b"x"})
    finally:
        os.umask(old)
    assert (tmp_path / "o" / "results.json").stat().st_mode & 0o777 == 0o640
    assert (tmp_path / "o" / "figures").stat().st_mode & 0o777 == 0o750
    assert (tmp_path / "o").stat().st_mode & 0o777 == 0o750


# ------------------------------------------------------------------ interruption (item 2) ----

_PUBLISH = textwrap.dedent("""
    import sys
    from risk.report.writer import publish
    tag = sys.argv[2]
    files = {"results.json": tag, "run.json": tag, "figures/a.png": tag}
    if tag == "new":
        files["figures/b.png"] = tag
    else:
        files["memo.html"] = tag
    publish(sys.argv[1], files)
""")


@pytest.mark.parametrize("step,expect", [
    ("staged", "old"), ("journal", "new"), ("removed", "new"), ("installed-1", "new"),
    ("installed", "new"), ("manifest", "new")])
def test_killed_at_every_step_of_the_swap(tmp_path: Path, step: str, expect: str) -> None:
    out = tmp_path / "o"
    subprocess.run([sys.executable, "-c", _PUBLISH, str(out), "old"], check=True)
    old = tree(out)
    (out / "user.txt").write_text("the user's")
    proc = subprocess.run([sys.executable, "-c", _PUBLISH, str(out), "new"],
                          env={**os.environ, "RISK_TEST_KILL_AT": step})
    assert proc.returncode == -signal.SIGKILL
    # the next process that opens the folder completes (or discards) the interrupted swap
    with OutputFolder(out, create=False):
        pass
    now = {k: v for k, v in tree(out).items() if not k.startswith(STATE_DIR)}
    assert now.pop("user.txt") == hashlib.sha256(b"the user's").hexdigest()
    new = {"results.json", "run.json", "figures/a.png", "figures/b.png"}
    if expect == "old":
        assert now == {k: v for k, v in old.items() if not k.startswith(STATE_DIR)}
    else:
        assert set(now) == new
        assert all(v == hashlib.sha256(b"new").hexdigest() for v in now.values())
    manifest = read_manifest(out) or {}
    assert now == manifest  # the manifest tells the truth
    assert sorted(p.name for p in (out / STATE_DIR).iterdir()) == ["lock", MANIFEST]


@pytest.mark.slow
def test_run_killed_in_the_swap_then_risk_memo_completes_it(tmp_path: Path,
                                                            scenario: Path) -> None:
    out = tmp_path / "r7"
    subprocess.run([RISK, "run", str(scenario), "--out", str(out), "--samples", "64", "-q"],
                   check=True)
    proc = subprocess.run([RISK, "run", str(scenario), "--out", str(out), "--samples", "128",
                           "-q"], env={**os.environ, "RISK_TEST_KILL_AT": "installed-1"})
    assert proc.returncode == -signal.SIGKILL
    memo = subprocess.run([RISK, "memo", str(out)], capture_output=True, text=True)
    assert memo.returncode == 0, memo.stderr
    assert json.loads((out / "results.json").read_text())["samples"] == 128
    assert json.loads((out / "run.json").read_text())["samples"] == 128
    manifest = read_manifest(out) or {}
    assert all(hashlib.sha256((out / rel).read_bytes()).hexdigest() == d
               for rel, d in manifest.items())


@pytest.mark.slow
@pytest.mark.parametrize("sig", [signal.SIGINT, signal.SIGTERM])
def test_sigint_and_sigterm_leave_the_previous_outputs(tmp_path: Path, scenario: Path,
                                                       sig: signal.Signals) -> None:
    out = tmp_path / "r7"
    subprocess.run([RISK, "run", str(scenario), "--out", str(out), "--samples", "64", "-q"],
                   check=True)
    before = tree(out)
    proc = subprocess.Popen([RISK, "run", str(scenario), "--out", str(out), "--samples",
                             "2000000", "-q"], stderr=subprocess.PIPE, text=True)
    deadline = time.monotonic() + 60
    # wait until the run holds the folder (it writes its pid into the lock file)
    while time.monotonic() < deadline and str(proc.pid) not in (
            out / STATE_DIR / "lock").read_text():
        time.sleep(0.05)
    time.sleep(1.0)
    proc.send_signal(sig)
    _, err = proc.communicate(timeout=60)
    assert proc.returncode == 130, err
    assert "interrupted; no output was changed" in err and "Traceback" not in err
    after = tree(out)
    assert {k: v for k, v in after.items() if k != f"{STATE_DIR}/lock"} == {
        k: v for k, v in before.items() if k != f"{STATE_DIR}/lock"}


# ------------------------------------------------------------------- concurrency (item 3) ----

@pytest.mark.slow
def test_second_process_on_a_held_folder_is_refused(tmp_path: Path, scenario: Path) -> None:
    out = tmp_path / "r7"
    code, text = run("run", str(scenario), "--out", str(out), "--samples", "32")
    assert code == 0, text
    before = tree(out)
    with OutputFolder(out):  # this test process holds the folder, as a long run would
        for args in (["run", str(scenario), "--out", str(out), "--samples", "32"],
                     ["memo", str(out)]):
            proc = subprocess.run([RISK, *args], capture_output=True, text=True)
            assert proc.returncode == 2, proc.stderr
            assert "in use by risk process" in proc.stderr and str(os.getpid()) in proc.stderr
            assert "Traceback" not in proc.stderr
    assert tree(out) == before


@pytest.mark.slow
def test_two_concurrent_runs_leave_one_consistent_run(tmp_path: Path, scenario: Path) -> None:
    out = tmp_path / "r7"
    procs = [subprocess.Popen([RISK, "run", str(scenario), "--out", str(out), "--samples",
                               str(n), "-q"], stderr=subprocess.PIPE, text=True)
             for n in (300, 500)]
    results = [(p.wait(timeout=300), p.stderr.read() if p.stderr else "") for p in procs]
    assert all(code in (0, 2) for code, _ in results), results
    assert any(code == 0 for code, _ in results)
    for code, err in results:
        if code == 2:
            assert "in use by risk process" in err
    manifest = read_manifest(out) or {}
    assert all(hashlib.sha256((out / rel).read_bytes()).hexdigest() == d
               for rel, d in manifest.items())
    samples = {json.loads((out / name).read_text())["samples"]
               for name in ("results.json", "run.json")}
    assert len(samples) == 1  # one run's results, never a mix
    assert not list((out / STATE_DIR).glob("staging-*"))


# ---------------------------------------------------------------------- risk memo (item 2) ----

@pytest.mark.slow
def test_memo_refuses_an_edited_results_json(tmp_path: Path, scenario: Path) -> None:
    out = tmp_path / "r7"
    code, text = run("run", str(scenario), "--out", str(out), "--samples", "32")
    assert code == 0, text
    data = json.loads((out / "results.json").read_text())
    data["accepted_risk"] = 0.5
    (out / "results.json").write_text(json.dumps(data))
    memo_before = (out / "memo.html").read_bytes()
    code, text = run("memo", str(out))
    assert code == 2 and "results.json" in text and "changed since the run" in text
    assert (out / "memo.html").read_bytes() == memo_before


@pytest.mark.slow
def test_control_characters_in_paths_never_reach_the_terminal(tmp_path: Path,
                                                             scenario: Path) -> None:
    # an ESC in a folder name (legal on Linux) is shown as \x1b, in every message
    out = tmp_path / "run\x1b[31mred"
    code, text = run("run", str(scenario), "--out", str(out), "--samples", "16", "-q")
    assert code == 0, text
    code, text = run("memo", str(out))
    assert code == 0 and "\x1b" not in text and "\\x1b" in text
    (out / "memo.html").write_text("edited")
    code, text = run("run", str(scenario), "--out", str(out), "--samples", "16")
    assert code == 2 and "\x1b" not in text and "\\x1b" in text
    f = tmp_path / "new\x07.toml"
    code, text = run("new", str(f))
    assert code == 0 and "\x07" not in text and "\\x07" in text


def test_recovery_never_touches_files_put_there_after_a_kill(tmp_path: Path) -> None:
    # A swap decided (journal written) and killed; before the next process opens the folder a
    # user puts files at a name the swap installs and at a name it removes. Recovery must
    # keep both (derived from rule 1: a file the tool did not write is never replaced).
    out = tmp_path / "o"
    subprocess.run([sys.executable, "-c", _PUBLISH, str(out), "old"], check=True)
    proc = subprocess.run([sys.executable, "-c", _PUBLISH, str(out), "new"],
                          env={**os.environ, "RISK_TEST_KILL_AT": "journal"})
    assert proc.returncode == -signal.SIGKILL
    (out / "figures" / "b.png").write_text("the user's plot")   # installed by the swap
    (out / "memo.html").write_text("the user's memo")           # removed by the swap
    with pytest.raises(ScenarioError, match="not written by risk"):
        with OutputFolder(out, create=False):
            pass
    assert (out / "figures" / "b.png").read_text() == "the user's plot"
    assert (out / "memo.html").read_text() == "the user's memo"


def test_foreign_state_folder_and_forged_journal_are_never_acted_on(tmp_path: Path) -> None:
    # a .risk folder the tool did not make (entries not of its shapes) makes the folder
    # foreign; a journal naming paths outside the folder is not a journal of this tool
    out = tmp_path / "o"
    (out / STATE_DIR / "staging-notes").mkdir(parents=True)
    (out / STATE_DIR / "staging-notes" / "keep.txt").write_text("mine")
    with pytest.raises(ScenarioError, match="did not write"):
        check_output_dir(out)
    assert (out / STATE_DIR / "staging-notes" / "keep.txt").read_text() == "mine"
    out2 = tmp_path / "o2"
    publish(out2, {"a.txt": "1"})
    victim = tmp_path / "victim.txt"
    victim.write_text("outside")
    (out2 / STATE_DIR / "journal.json").write_text(json.dumps(
        {"tool": "risk", "staging": "staging-1-0000abcd", "install": [],
         "remove": ["../victim.txt"], "manifest": {}}))
    with OutputFolder(out2, create=False):
        pass
    assert victim.read_text() == "outside" and (out2 / "a.txt").read_text() == "1"
