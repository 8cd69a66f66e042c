"""Trust under bad input: the corpus in tests/data/bad/ and the command line's bad paths.

Every corpus file must be refused by :func:`risk.scenario.load_scenario` with a
:class:`~risk.errors.ScenarioError`, and by ``risk check`` and ``risk run`` with exit code 2 and
one message that names the key, shows the value found and says what is expected, without a
traceback and without writing anything. The expectations are in ``tests/data/bad/expected.toml``
(what the README promises for bad input: "one message naming the key, the value found and what
is expected; no traceback"). Cases that show a known loader bug are strict xfails; they flip to
failures when the bug is fixed, and their mark should then be removed.

Most command-line checks use typer's CliRunner (in-process, fast); a handful run the installed
console script in a subprocess, as an engineer would.
"""

from __future__ import annotations

import os
import subprocess
import sys
import tomllib
from pathlib import Path
from typing import Any

import pytest
from typer.testing import CliRunner

from risk.cli import app
from risk.errors import ScenarioError
from risk.scenario import load_scenario
from tests.conftest import FIELD_DOC

BAD = Path(__file__).resolve().parent / "data" / "bad"
CASES: list[dict[str, Any]] = tomllib.loads(
    (BAD / "expected.toml").read_text(encoding="utf-8"))["case"]
RUNNER = CliRunner()
EXE = Path(sys.executable).parent / "risk"


def _param(case: dict[str, Any]) -> Any:
    marks = [pytest.mark.xfail(strict=True, reason=case["xfail"])] if "xfail" in case else []
    return pytest.param(case, id=case["file"], marks=marks)


PARAMS = [_param(c) for c in CASES]
BY_FILE = {c["file"]: c for c in CASES}


def _found_expected(text: str, key: str) -> list[tuple[str, str]]:
    """Every ``<key>: found <found>; expected <expected>`` line of ``text``, split in two."""
    out = []
    marker = f"{key}: found "
    for line in text.splitlines():
        at = line.find(marker)
        if at < 0:
            continue
        found, sep, expected = line[at + len(marker):].partition("; expected ")
        if sep:
            out.append((found, expected))
    return out


def assert_message(text: str, case: dict[str, Any]) -> None:
    """The message names the case's key, shows its values and its expectation fragment."""
    lines = _found_expected(text, case["key"])
    assert lines, f"no '{case['key']}: found ...; expected ...' in:\n{text}"
    ok = [(f, e) for f, e in lines
          if all(v in f for v in case["value"]) and case["expect"] in e]
    assert ok, (f"expected key {case['key']!r} with value text {case['value']} and "
                f"expectation {case['expect']!r}; got:\n{text}")


# --------------------------------------------------------------------------------------------
# The corpus itself
# --------------------------------------------------------------------------------------------


def test_corpus_is_listed_whole():
    files = {p.name for p in BAD.iterdir()} - {"expected.toml"}
    listed = [c["file"] for c in CASES]
    assert len(listed) == len(set(listed)), "a file is listed twice"
    assert files == set(listed)
    assert len(listed) >= 45
    for c in CASES:
        assert set(c) <= {"file", "key", "value", "expect", "problems", "xfail"}, c
        assert c["key"] and isinstance(c["value"], list)


def test_corpus_base_document_is_valid(tmp_path):
    # control: the document every .toml case mutates loads cleanly, so each refusal below is
    # caused by the one defect its file names
    p = tmp_path / "base.toml"
    p.write_text(FIELD_DOC, encoding="utf-8")
    assert load_scenario(p).well.completion == "perforated"


@pytest.mark.parametrize("case", PARAMS)
def test_loader_refuses(case):
    with pytest.raises(ScenarioError) as ei:
        load_scenario(BAD / case["file"])
    err = ei.value
    assert [p for p in err.problems if p.key == case["key"]], err.message
    assert len(err.problems) == case.get("problems", 1), err.message
    for p in err.problems:
        assert p.key and p.expected and str(p)
    assert_message(err.message, case)


# --------------------------------------------------------------------------------------------
# The command line on every corpus case
# --------------------------------------------------------------------------------------------


@pytest.mark.parametrize("command", ["check", "run"])
@pytest.mark.parametrize("case", PARAMS)
def test_cli_refuses(case, command, tmp_path):
    args = [command, str(BAD / case["file"])]
    outs = tmp_path / "outs"
    outs.mkdir()
    if command == "run":
        args += ["--out", str(outs / "run"), "--samples", "64"]
    r = RUNNER.invoke(app, args)
    assert r.exit_code == 2, r.output
    assert r.exception is None or isinstance(r.exception, SystemExit), repr(r.exception)
    assert "Traceback" not in r.output
    assert r.output.startswith("error:")
    assert_message(r.output, case)
    assert list(outs.iterdir()) == []  # nothing written, not even a temporary folder


# a few corpus cases through the installed console script (about 1 s each)
@pytest.mark.slow
@pytest.mark.parametrize("file,command", [
    ("ucs_negative.toml", "check"),
    ("syntax_missing_equals.toml", "run"),
    ("corr_not_positive_definite.toml", "run"),
])
def test_console_script_refuses(file, command, tmp_path):
    case = BY_FILE[file]
    args = [str(EXE), command, str(BAD / file)]
    if command == "run":
        args += ["--out", str(tmp_path / "run")]
    proc = subprocess.run(args, capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2, proc.stderr
    assert "Traceback" not in proc.stdout + proc.stderr
    assert proc.stdout == ""
    assert_message(proc.stderr, case)
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------------------------
# Bad paths and options (not files of the corpus)
# --------------------------------------------------------------------------------------------

EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "ravenmoor_r7_openhole.toml"


def _refused(args: list[str], key: str, value: str, expect: str) -> str:
    r = RUNNER.invoke(app, args)
    assert r.exit_code == 2, r.output
    assert "Traceback" not in r.output
    assert_message(r.output, {"key": key, "value": [value], "expect": expect})
    return r.output


@pytest.mark.parametrize("command", ["check", "run"])
def test_missing_file(command, tmp_path):
    missing = tmp_path / "nowhere.toml"
    out = tmp_path / "out"
    _refused([command, str(missing), "--out", str(out)] if command == "run"
             else [command, str(missing)], "scenario", "no file at", "an existing scenario file")
    assert sorted(tmp_path.iterdir()) == []


@pytest.mark.parametrize("command", ["check", "run"])
def test_folder_instead_of_file(command, tmp_path):
    folder = tmp_path / "scenarios"
    folder.mkdir()
    args = [command, str(folder)] + (["--out", str(tmp_path / "out")] if command == "run"
                                     else [])
    _refused(args, "scenario", "the folder", "not a folder")
    assert sorted(tmp_path.iterdir()) == [folder]


@pytest.mark.slow
def test_missing_file_subprocess(tmp_path):
    proc = subprocess.run([str(EXE), "check", str(tmp_path / "nowhere.toml")],
                          capture_output=True, text=True, timeout=120)
    assert proc.returncode == 2
    assert "Traceback" not in proc.stdout + proc.stderr
    assert "scenario: found no file at" in proc.stderr


def test_out_is_a_file(tmp_path):
    f = tmp_path / "results.txt"
    f.write_text("keep me")
    _refused(["run", str(EXAMPLE), "--out", str(f), "--samples", "8"], "--out", "the file",
             "a folder for the outputs")
    assert f.read_text() == "keep me"


def test_out_below_a_file(tmp_path):
    f = tmp_path / "results.txt"
    f.write_text("keep me")
    _refused(["run", str(EXAMPLE), "--out", str(f / "run"), "--samples", "8"], "--out",
             "results.txt", "a folder that can be created and written")
    assert f.read_text() == "keep me" and sorted(tmp_path.iterdir()) == [f]


def test_out_non_empty_foreign_folder(tmp_path):
    out = tmp_path / "mine"
    out.mkdir()
    (out / "notes.md").write_text("not from risk")
    _refused(["run", str(EXAMPLE), "--out", str(out), "--samples", "8"], "--out",
             "that risk did not write", "--force")
    assert [p.name for p in out.iterdir()] == ["notes.md"]
    assert sorted(p.name for p in tmp_path.iterdir()) == ["mine"]


def test_out_not_writable(tmp_path):
    locked = tmp_path / "locked"
    locked.mkdir()
    locked.chmod(0o500)
    try:
        if os.access(locked, os.W_OK):
            pytest.skip("running as root: permission bits do not stop writes here, so an "
                        "unwritable folder cannot be made (see test_out_not_writable_simulated)")
        _refused(["run", str(EXAMPLE), "--out", str(locked / "run"), "--samples", "8"],
                 "--out", "is not writable", "a folder that can be created and written")
        _refused(["run", str(EXAMPLE), "--out", str(locked), "--samples", "8"],
                 "--out", "not writable", "a writable folder")
        assert list(locked.iterdir()) == []
    finally:
        locked.chmod(0o700)


def test_out_not_writable_simulated(tmp_path, monkeypatch):
    # what a non-root user meets, simulated where root bypasses permission bits: os.access
    # says "not writable" for the locked folder, as the kernel would for chmod 0o500
    import risk.report.writer as writer

    locked = tmp_path / "locked"
    locked.mkdir()
    real_access = os.access

    def access(path: Any, mode: int, **kw: Any) -> bool:
        if Path(path) == locked and mode & os.W_OK:
            return False
        return real_access(path, mode, **kw)

    monkeypatch.setattr(writer.os, "access", access)
    _refused(["run", str(EXAMPLE), "--out", str(locked / "run"), "--samples", "8"],
             "--out", "is not writable", "a folder that can be created and written")
    _refused(["run", str(EXAMPLE), "--out", str(locked), "--samples", "8"],
             "--out", "not writable", "a writable folder")
    assert list(locked.iterdir()) == []


def test_unreadable_file(tmp_path):
    f = tmp_path / "secret.toml"
    f.write_text(FIELD_DOC, encoding="utf-8")
    f.chmod(0o000)
    try:
        if os.access(f, os.R_OK):
            pytest.skip("running as root: a chmod 000 file stays readable")
        _refused(["check", str(f)], "scenario", "Permission denied", "a readable file")
    finally:
        f.chmod(0o600)


def test_unreadable_file_simulated(tmp_path, monkeypatch):
    # what a non-root user meets with a chmod 000 file, simulated where root reads anything:
    # opening the file fails with EACCES, as open(2) does (errno 13, "Permission denied")
    f = tmp_path / "secret.toml"
    f.write_text(FIELD_DOC, encoding="utf-8")
    real_open = Path.open

    def fake_open(self: Path, *args: Any, **kwargs: Any) -> Any:
        if self == f:
            raise PermissionError(13, "Permission denied", str(self))
        return real_open(self, *args, **kwargs)

    monkeypatch.setattr(Path, "open", fake_open)
    _refused(["check", str(f)], "scenario", "Permission denied", "a readable file")


@pytest.mark.parametrize("option,value", [
    ("--samples", "0"),
    ("--samples", "-3"),
    ("--samples", "10000000001"),
    ("--seed", "-1"),
    ("--seed", str(2**63)),
    ("--samples", "many"),
    ("--seed", "1.5"),
])
def test_bad_run_options(option, value, tmp_path):
    out = tmp_path / "out"
    r = RUNNER.invoke(app, ["run", str(EXAMPLE), "--out", str(out), option, value])
    assert r.exit_code == 2, r.output
    assert "Traceback" not in r.output
    assert not out.exists()
    assert option in r.output
    assert value in r.output


@pytest.mark.parametrize("option,value", [("--samples", "many"), ("--seed", "1.5")])
def test_non_integer_run_options(option, value, tmp_path):
    # typer refuses these before risk sees them: exit 2 and the option named
    out = tmp_path / "out"
    r = RUNNER.invoke(app, ["run", str(EXAMPLE), "--out", str(out), option, value])
    assert r.exit_code == 2, r.output
    assert "Traceback" not in r.output and option in r.output
    assert not out.exists()


def test_new_refuses_folder_and_bad_units(tmp_path):
    _refused(["new", str(tmp_path)], "FILE", str(tmp_path), "a file name, not a folder")
    _refused(["new", str(tmp_path / "a.toml"), "--units", "imperial"], "--units", "imperial",
             '"field" or "si"')
    f = tmp_path / "plain.txt"
    f.write_text("x")
    _refused(["new", str(f / "a.toml")], "FILE", "a.toml", "a writable place")
    assert sorted(p.name for p in tmp_path.iterdir()) == ["plain.txt"]


def test_utf8_byte_order_mark(tmp_path):
    f = tmp_path / "bom.toml"
    f.write_bytes(FIELD_DOC.encode("utf-8-sig"))
    # a UTF-8 byte-order mark (some editors write one) is skipped: same scenario as without
    g = tmp_path / "plain.toml"
    g.write_bytes(FIELD_DOC.encode("utf-8"))
    assert load_scenario(f).inputs == load_scenario(g).inputs
