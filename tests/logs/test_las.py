"""LAS reading: the standard's examples, unit conversion, and the malformed-LAS corpus."""

from __future__ import annotations

import tomllib
from pathlib import Path

import numpy as np
import pytest

from risk.errors import ScenarioError
from risk.logs.las import read_las

DATA = Path(__file__).parent.parent / "data" / "las"
BAD = tomllib.loads((DATA / "bad" / "expected.toml").read_text())
FT = 0.3048  # NIST SP 811, exact


def test_cwls_sample_reads() -> None:
    # The sample file of the CWLS LAS 2.0 specification (written by hand from the
    # standard's documented example, from memory): depth decreasing (STEP -0.125 m),
    # DT in US/M, RHOB in K/M3, NPHI in V/V; values 123.45 us/m, 2550 kg/m3, 0.45.
    ls = read_las(DATA / "good" / "cwls_sample.las", top=1669.75, base=1670.0,
                  required=("dt", "rhob", "phi"), optional=())
    np.testing.assert_allclose(ls.depth, [1669.75, 1669.875, 1670.0])
    np.testing.assert_allclose(ls.curves["dt"], 123.45)
    np.testing.assert_allclose(ls.curves["rhob"], 2550.0)
    np.testing.assert_allclose(ls.curves["phi"], 0.45)
    assert ls.well == "ANY ET AL OIL WELL #12"
    assert any("reverse" in n for n in ls.notes)


def test_cwls_wrapped_reads() -> None:
    # The standard's wrapped layout (WRAP. YES: the depth alone on a line, then the values
    # over several lines), written by hand after the LAS 2.0 specification's example.
    ls = read_las(DATA / "good" / "cwls_wrapped.las", top=909.75, base=910.0,
                  required=("dt", "rhob", "phi", "gr"), optional=())
    np.testing.assert_allclose(ls.curves["dt"], [320.0, 310.0, 300.0])
    np.testing.assert_allclose(ls.curves["rhob"], [2692.8137, 2712.6460, 2692.7075])
    np.testing.assert_allclose(ls.curves["gr"], [89.8492, 90.2803, 96.5306])


def _write(tmp_path: Path, text: str) -> Path:
    p = tmp_path / "x.las"
    p.write_text(text)
    return p


def test_units_converted(tmp_path: Path) -> None:
    # field units in: ft, us/ft, g/cc, % -> m, us/m, kg/m3, v/v (NIST SP 811 exact factors)
    text = (DATA / "bad" / "short_row.las").read_text().split("~A")[0].replace(
        "NPHI.V/V", "NPHI.%") + "~A\n7800.0 90 2.30 25\n7800.5 91 2.31 24\n"
    ls = read_las(_write(tmp_path, text), top=7800 * FT, base=7800.5 * FT,
                  required=("dt", "rhob", "phi"), optional=())
    np.testing.assert_allclose(ls.depth, [7800 * FT, 7800.5 * FT])
    np.testing.assert_allclose(ls.curves["dt"], [90 / FT, 91 / FT])
    np.testing.assert_allclose(ls.curves["rhob"], [2300.0, 2310.0])
    np.testing.assert_allclose(ls.curves["phi"], [0.25, 0.24])


def test_short_null_run_filled(tmp_path: Path) -> None:
    text = (DATA / "bad" / "short_row.las").read_text().split("~A")[0] + (
        "~A\n7800.0 90 2.30 0.25\n7800.5 -999.25 2.31 0.25\n7801.0 92 2.32 0.24\n")
    ls = read_las(_write(tmp_path, text), top=7800 * FT, base=7801 * FT,
                  required=("dt",), optional=())
    np.testing.assert_allclose(ls.curves["dt"], [90 / FT, 91 / FT, 92 / FT])  # linear
    assert any("filled" in n for n in ls.notes)


def test_interval_outside_logged_range() -> None:
    with pytest.raises(ScenarioError) as err:
        read_las(DATA / "good" / "cwls_sample.las", top=1600.0, base=1670.0, optional=())
    assert err.value.problems[0].key == "logs.top/logs.base"
    assert "within the logged range" in str(err.value)


@pytest.mark.parametrize("name", sorted(BAD))
def test_malformed_refused(name: str) -> None:
    case = BAD[name]
    with pytest.raises(ScenarioError) as err:
        read_las(DATA / "bad" / f"{name}.las", top=7800 * FT, base=7802 * FT,
                 required=("dt", "rhob", "phi"), optional=(), max_gap=0.5 * FT)
    text = str(err.value)
    assert case["key"] in text
    assert case["fragment"] in text
    assert "Traceback" not in text


def test_corpus_size() -> None:
    assert len(BAD) >= 15
