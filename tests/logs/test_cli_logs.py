"""Log scenarios through the command line: the demo's outputs, reruns, and refusals (exit 2,
the curve or section named, no traceback, nothing written)."""

from __future__ import annotations

import json
import tomllib
from pathlib import Path

import pandas as pd
import pytest
from typer.testing import CliRunner

from risk.cli import app

RUNNER = CliRunner()
ROOT = Path(__file__).resolve().parents[2]
EXAMPLE = ROOT / "examples" / "logs" / "ravenmoor_r9_logs.toml"
BAD = ROOT / "tests" / "data" / "las" / "bad"
CASES = tomllib.loads((BAD / "expected.toml").read_text())


def _scenario(tmp_path: Path, las: Path, extra: str = "") -> Path:
    text = EXAMPLE.read_text().replace('file = "ravenmoor_r9_logs.las"', f'file = "{las}"')
    text = text.replace("top = 7800\nbase = 7905", "top = 7800\nbase = 7802")
    p = tmp_path / "s.toml"
    p.write_text(text.replace("max_gap", "max_gap") + extra)
    return p


@pytest.mark.parametrize("name", sorted(CASES))
def test_malformed_las_exit_2(tmp_path: Path, name: str) -> None:
    out = tmp_path / "out"
    sc = _scenario(tmp_path, BAD / f"{name}.las", "max_gap = 0.5\n")
    r = RUNNER.invoke(app, ["run", str(sc), "--out", str(out)])
    assert r.exit_code == 2, r.output
    flat = " ".join(r.output.split())
    assert CASES[name]["key"] in flat
    assert "Traceback" not in r.output
    assert not out.exists()  # nothing written


@pytest.mark.parametrize("edit,fragment", [
    (("ucs_transform = \"mcnally_1987\"", "ucs_transform = \"mcnaly_1987\""), "did you mean"),
    (("ucs_cov = 0.3 ", "ucs_cov = -1 "), "logs.ucs_cov"),
    (("[rock]\n", "[rock]\nucs = 3000\n"), "rock.ucs"),
    (("top = 7800", "top = 7000"), "logs.top/logs.base"),
    (("zone_thickness = 2 ", "zone_thikness = 2 "), "logs.zone_thikness"),
    (("core_influence = 10 ", "core_influence = -3 "), "logs.core_influence"),
    (("zone_thickness = 2 ", 'depth_reference = "md"\nsurvey = [[7000, 10, 400]]\n'
      "zone_thickness = 2 "), "logs.survey[0]"),
    (("zone_thickness = 2 ", 'depth_reference = "md"\nsurvey = [[7000, 10, 40], '
      "[7850, 12, 40]]\nzone_thickness = 2 "), "logs.survey"),
    (("zone_thickness = 2 ", 'elastic = "logs"\nzone_thickness = 2 '), "logs.elastic"),
])
def test_bad_logs_table_exit_2(tmp_path: Path, edit: tuple[str, str], fragment: str) -> None:
    text = EXAMPLE.read_text()
    assert edit[0] in text
    p = tmp_path / "s.toml"
    p.write_text(text.replace(edit[0], edit[1]).replace(
        'file = "ravenmoor_r9_logs.las"', f'file = "{EXAMPLE.parent / "ravenmoor_r9_logs.las"}"'))
    out = tmp_path / "out"
    r = RUNNER.invoke(app, ["run", str(p), "--out", str(out)])
    assert r.exit_code == 2, r.output
    assert fragment in " ".join(r.output.split())
    assert "Traceback" not in r.output
    assert not out.exists()


def test_check_log_scenario() -> None:
    r = RUNNER.invoke(app, ["check", str(EXAMPLE)])
    assert r.exit_code == 0, r.output
    assert "211 depths" in r.output and "dt = DTC" in r.output


@pytest.mark.slow
def test_log_example_outputs_and_rerun(tmp_path: Path) -> None:
    outs = []
    for name in ("a", "b"):
        out = tmp_path / name
        r = RUNNER.invoke(app, ["run", str(EXAMPLE), "--out", str(out), "--samples", "128",
                                "--quiet"])
        assert r.exit_code == 0, r.output
        outs.append(out)
    a, b = outs
    assert (a / "results.json").read_bytes() == (b / "results.json").read_bytes()
    for f in ("depth.csv", "depth.parquet", "figures/depth.png", "memo.html", "memo.pdf",
              "run.json"):
        assert (a / f).is_file(), f
    summary = json.loads((a / "results.json").read_text())
    assert summary["kind"] == "logs" and summary["seed"] == 9 and summary["samples"] == 128
    csv = pd.read_csv(a / "depth.csv")
    parquet = pd.read_parquet(a / "depth.parquet")
    assert list(csv.columns) == list(parquet.columns) and len(csv) == 211
    pd.testing.assert_series_equal(csv["depth [ft]"], parquet["depth [ft]"].astype(float))
    plan = summary["plan"]
    assert plan["probability"] <= summary["accepted_risk"]
    assert plan["length"] == pytest.approx(float(csv["perforated [-]"].sum()) * 0.5, abs=2.0)
    memo = (a / "memo.html").read_text()
    assert "Safety cautions" in memo and "Assumptions and limitations" in memo
    # the demo's pore collapse over depth and its local core calibration reach the outputs
    assert "Pore collapse over depth" in memo and "Core calibration: local factors" in memo
    assert "P(pore collapse) stage 1 [-]" in csv.columns
    assert len(summary["pore_collapse"]["probability_whole"]) == len(summary["stages"])
    r = RUNNER.invoke(app, ["memo", str(a)])
    assert r.exit_code == 0, r.output


def test_output_into_the_las_folder_refused(tmp_path: Path) -> None:
    # the folder holding an input (the scenario or its LAS file) is never an output folder
    las_dir = tmp_path / "las"
    las_dir.mkdir()
    las = las_dir / "r9.las"
    las.write_bytes((EXAMPLE.parent / "ravenmoor_r9_logs.las").read_bytes())
    sc = _scenario(tmp_path, las)
    r = RUNNER.invoke(app, ["run", str(sc), "--out", str(las_dir), "--samples", "8"])
    assert r.exit_code == 2, r.output
    assert sorted(p.name for p in las_dir.iterdir()) == ["r9.las"]
