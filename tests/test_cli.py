"""The command line: exit codes, messages without tracebacks, results.json, reruns."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from risk.cli import app

ROOT_DIR = Path(__file__).resolve().parents[1]

RUNNER = CliRunner()
EXAMPLE = Path(__file__).resolve().parents[1] / "examples" / "ravenmoor_r7_openhole.toml"


def test_check_ok():
    r = RUNNER.invoke(app, ["check", str(EXAMPLE)])
    assert r.exit_code == 0, r.output
    assert "rock.ucs" in r.output and "psi" in r.output


def test_run_writes_results(tmp_path, write, field_doc):
    out = tmp_path / "out"
    r = RUNNER.invoke(app, ["run", str(write(field_doc)), "--out", str(out)])
    assert r.exit_code == 0, r.output
    data = json.loads((out / "results.json").read_text())
    assert data["units"]["pressure"] == "psi" and data["seed"] == 1
    stage = data["mechanisms"]["yield_onset"]["stages"][0]
    assert stage["reservoir_pressure"] == 4140
    assert set(stage["critical_drawdown"]) == {"p10", "p50", "p90", "mean"}
    assert len(stage["shots"]) == 6 and "worst_shot_angle" in stage
    assert "never_fraction" in stage


@pytest.mark.slow
def test_rerun_is_byte_identical(tmp_path):
    outs = []
    for name in ("a", "b"):
        r = RUNNER.invoke(app, ["run", str(EXAMPLE), "--out", str(tmp_path / name),
                                "--samples", "600", "--quiet"])
        assert r.exit_code == 0, r.output
        outs.append((tmp_path / name / "results.json").read_bytes())
    assert outs[0] == outs[1]
    assert json.loads(outs[0])["samples"] == 600


@pytest.mark.parametrize("args,fragment", [
    (["check", "missing.toml"], "no file"),
    (["run", "missing.toml"], "no file"),
    (["run", str(EXAMPLE), "--samples", "0"], "--samples"),
])
def test_bad_input_exit_2_no_traceback(args, fragment):
    r = RUNNER.invoke(app, args)
    assert r.exit_code == 2
    assert fragment in r.output
    assert "Traceback" not in r.output


@pytest.mark.slow
def test_bad_scenario_subprocess_exit_2(write, field_doc):
    # the installed console script, as an engineer runs it
    bad = write(field_doc.replace("ucs = 9000", "ucs = -9000"))
    exe = Path(sys.executable).parent / "risk"
    proc = subprocess.run([str(exe), "check", str(bad)], capture_output=True, text=True)
    assert proc.returncode == 2
    assert "rock.ucs" in proc.stderr and "-9000" in proc.stderr
    assert "Traceback" not in proc.stderr + proc.stdout


def test_out_is_a_file(tmp_path):
    f = tmp_path / "file.txt"
    f.write_text("x")
    r = RUNNER.invoke(app, ["run", str(EXAMPLE), "--out", str(f), "--samples", "8"])
    assert r.exit_code == 2 and "--out" in r.output


@pytest.mark.slow
def test_json_flag(tmp_path):
    r = RUNNER.invoke(app, ["run", str(EXAMPLE), "--out", str(tmp_path), "--samples", "64",
                            "--json"])
    assert r.exit_code == 0
    assert json.loads(r.stdout)["samples"] == 64


@pytest.mark.parametrize("units", ["field", "si"])
def test_new_template_is_valid_and_not_overwritten(tmp_path, units):
    f = tmp_path / f"{units}.toml"
    r = RUNNER.invoke(app, ["new", str(f), "--units", units])
    assert r.exit_code == 0, r.output
    r = RUNNER.invoke(app, ["check", str(f)])
    assert r.exit_code == 0, r.output
    r = RUNNER.invoke(app, ["new", str(f)])
    assert r.exit_code == 2 and "--force" in r.output


def test_templates_describe_the_same_well(tmp_path):
    # the SI template is the field one converted (to the rounding of its numbers, about 1%)
    import tomllib

    from risk.scenario import parse_scenario
    from risk.template import scenario_template

    f = parse_scenario(tomllib.loads(scenario_template("field")))
    s = parse_scenario(tomllib.loads(scenario_template("si")))
    assert s.well.depth == pytest.approx(f.well.depth, rel=0.01)
    for name in ("ucs", "tensile_strength", "young_modulus", "pore_collapse_pressure"):
        assert s.inputs[name].median == pytest.approx(f.inputs[name].median, rel=0.01)
    for a, b in zip(s.reservoir_pressure, f.reservoir_pressure, strict=True):
        assert a == pytest.approx(b, rel=0.01)


@pytest.mark.slow
def test_every_output_records_seed_version_and_hash(tmp_path):
    out = tmp_path / "o"
    r = RUNNER.invoke(app, ["run", str(EXAMPLE), "--out", str(out), "--samples", "128",
                            "--seed", "9", "-q"])
    assert r.exit_code == 0, r.output
    res = json.loads((out / "results.json").read_text())
    sha, version = res["scenario_sha256"], res["version"]
    run = json.loads((out / "run.json").read_text())
    assert (run["seed"], run["scenario_sha256"], run["version"]) == (9, sha, version)
    html = (out / "memo.html").read_text()
    assert sha in html and "9" in html
    for png in (out / "figures").glob("*.png"):
        data = png.read_bytes()
        assert sha.encode() in data and b"seed 9" in data  # PNG tEXt chunk


@pytest.mark.slow
def test_memo_rerenders_without_recomputing(tmp_path):
    out = tmp_path / "run"
    r = RUNNER.invoke(app, ["run", str(EXAMPLE), "--out", str(out), "--samples", "128", "-q"])
    assert r.exit_code == 0, r.output
    before = (out / "results.json").read_bytes()
    (out / "memo.html").unlink()
    (out / "memo.pdf").unlink()
    r = RUNNER.invoke(app, ["memo", str(out)])
    assert r.exit_code == 0, r.output
    assert (out / "memo.html").exists() and (out / "memo.pdf").read_bytes()[:5] == b"%PDF-"
    assert (out / "results.json").read_bytes() == before  # nothing recomputed or rewritten
    r = RUNNER.invoke(app, ["memo", str(tmp_path / "nothing")])
    assert r.exit_code == 2 and "results.json" in r.output and "Traceback" not in r.output


@pytest.mark.slow
def test_progress_display_path_gives_the_same_results(tmp_path):
    # the progress bar (a terminal nicety) must not change what is computed or written
    from risk.api import run_scenario

    a = run_scenario(EXAMPLE, out=tmp_path / "a", samples=64, show_progress=True)
    b = run_scenario(EXAMPLE, out=tmp_path / "b", samples=64, show_progress=False)
    assert (tmp_path / "a" / "results.json").read_bytes() == (
        tmp_path / "b" / "results.json").read_bytes()
    assert a.summary["samples"] == b.summary["samples"] == 64


def test_version_and_short_help():
    from risk import __version__

    r = RUNNER.invoke(app, ["--version"])
    assert r.exit_code == 0 and r.output.strip() == f"risk {__version__}"
    for args in (["-h"], ["run", "-h"], ["memo", "-h"], ["new", "-h"], ["check", "-h"]):
        r = RUNNER.invoke(app, args)
        assert r.exit_code == 0 and "Usage:" in r.output
        # flags carry no type tag, numbers are not shown as text, markup is not eaten
        assert "<bool>" not in r.output and "<str>" not in r.output
    r = RUNNER.invoke(app, ["run", "-h"])
    assert "--samples N" in r.output and "analysis.samples" in r.output


def test_python_dash_m_risk_is_the_same_command_line(tmp_path):
    from risk import __version__

    r = subprocess.run([sys.executable, "-m", "risk", "--version"], capture_output=True,
                       text=True, cwd=tmp_path, env={**os.environ, "PYTHONPATH": str(ROOT_DIR)})
    assert r.returncode == 0 and r.stdout.strip() == f"risk {__version__}"


@pytest.mark.slow
def test_memo_redraw_reuses_unchanged_figures_but_not_edited_ones(tmp_path, write, field_doc,
                                                                   monkeypatch):
    # `risk memo` on an untouched run draws no figure again; a figure edited by hand (and
    # replaced with --force) is drawn again, never kept
    from risk.report.figures import render as rn

    out = tmp_path / "out"
    r = RUNNER.invoke(app, ["run", str(write(field_doc)), "--out", str(out), "--samples", "64",
                            "-q"])
    assert r.exit_code == 0, r.output
    before = {p.name: p.read_bytes() for p in (out / "figures").glob("*.png")}
    drawn: list[str] = []
    real = rn._render_one

    def counting(name, res, key=""):
        png = real(name, res, key)
        if png is not None:  # figures that do not apply are asked again (cheap: no drawing)
            drawn.append(name)
        return png

    monkeypatch.setattr(rn, "_render_one", counting)
    monkeypatch.setattr(rn, "_workers", lambda: 1)
    from risk.report.memo import render as mr

    laid_out: list[int] = []
    real_pdf = mr.render_pdf
    monkeypatch.setattr(mr, "render_pdf", lambda *a, **k: laid_out.append(1) or real_pdf(*a, **k))
    pdf = (out / "memo.pdf").read_bytes()
    r = RUNNER.invoke(app, ["memo", str(out)])
    assert r.exit_code == 0, r.output
    assert drawn == [] and laid_out == []  # same page: the PDF is kept, not laid out again
    assert (out / "memo.pdf").read_bytes() == pdf
    assert {p.name: p.read_bytes() for p in (out / "figures").glob("*.png")} == before
    name = sorted(before)[0]
    edited = out / "figures" / name
    edited.write_bytes(before[name][:-12] + b"edited" + before[name][-6:])
    r = RUNNER.invoke(app, ["memo", str(out), "--force"])
    assert r.exit_code == 0, r.output
    assert drawn == [name[:-4]] and edited.read_bytes() == before[name]
    assert laid_out == [1]
