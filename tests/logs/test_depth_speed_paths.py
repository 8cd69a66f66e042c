"""The fast paths of a log run: the compiled stress rotation against an independent numpy
rotation, the same critical drawdowns with and without wall angles, and results that do not
depend on the block size or the number of worker threads; and the log run's memo as a section
of the main memo."""

from __future__ import annotations

import dataclasses
import math
import re
from pathlib import Path

import numpy as np
import pytest

from risk.limit_states import evaluate, evaluate_compaction
from risk.logs.depth import assess_depth
from risk.logs.scenario import load_log_scenario
from risk.logs.summary import summarize_depth
from risk.mechanics import stresses as st
from risk.report.memo.logs import INTERVAL_HEADING, LOG_ASSUMPTIONS, log_memo_html
from risk.report.memo.texts import ASSUMPTIONS, CAUTIONS, SECTIONS
from risk.scenario import load_scenario
from risk.uncertainty import UnitSampler, build_joint, input_columns, to_inputs
from tests.logs.test_depth import BASE, _las, _logs_table

COLLAPSE = 'pore_collapse_pressure = { dist = "normal", mean = 4300, sd = 500 }\n'


def _random_frames(rng: np.random.Generator, m: int) -> np.ndarray:
    """Proper rotations from the QR decomposition of Gaussian matrices (Mezzadri 2007,
    Notices AMS 54, 592: Haar-distributed orthogonal matrices; from memory)."""
    q, r = np.linalg.qr(rng.standard_normal((m, 3, 3)))
    q = q * np.sign(np.diagonal(r, axis1=-2, axis2=-1))[:, None, :]
    q[np.linalg.det(q) < 0, :, 0] *= -1.0
    return q


def test_compiled_rotation_equals_numpy_rotation() -> None:
    # S' = R S R^T (Fjaer et al. 2008, sec. 4.4; Zoback 2007, Appendix): the compiled closed
    # form against numpy's own three-operand einsum (an independent implementation) on
    # random symmetric tensors and random rotations, to 1e-12 of the tensor's size
    rng = np.random.default_rng(1)
    a = rng.normal(30.0, 15.0, (40, 5, 3, 3))
    tensor = 0.5 * (a + np.swapaxes(a, -1, -2))
    frames = _random_frames(rng, 7)
    got = st.local_stress_frames(tensor, frames)
    ref = np.einsum("mij,pqjk,mlk->pmqil", frames, tensor, frames)
    scale = float(np.max(np.abs(tensor)))
    for c, (i, j) in zip(got, ((0, 0), (1, 1), (2, 2), (0, 1), (0, 2), (1, 2)), strict=True):
        assert c.shape == (40, 7, 5) and c.flags.c_contiguous
        np.testing.assert_allclose(c, ref[..., i, j], rtol=0, atol=1e-12 * scale)
    # the trace is invariant under rotation (textbook identity)
    np.testing.assert_allclose(got.sxx + got.syy + got.szz,
                               np.broadcast_to(np.trace(tensor, axis1=-2, axis2=-1)[:, None, :],
                                               got.sxx.shape), rtol=0, atol=1e-12 * scale)


def test_compiled_rotation_worked_case() -> None:
    # a horizontal cavity pointing east (inclination 90 deg, azimuth 90 deg) in an Andersonian
    # field with SHmax north: its frame's x axis (high side) is up, y is south, z east, so by
    # hand (direction cosines 0 or +-1; Zoback 2007, Appendix) sxx = Sv, syy = SHmax,
    # szz = Shmin and no shear
    frame = st.cavity_frame(math.pi / 2, math.pi / 2)[None]
    tensor = st.far_field_tensor(shmax=50.0, shmin=40.0, sv=60.0, shmax_azimuth=0.0)
    loc = st.local_stress_frames(tensor[None, None], frame)
    got = [float(c[0, 0, 0]) for c in loc]
    np.testing.assert_allclose(got, [60.0, 50.0, 40.0, 0.0, 0.0, 0.0], rtol=0, atol=1e-12)


@pytest.mark.parametrize("cap_slope", [1.2, math.inf])
def test_compiled_wall_cap_equals_numpy_composition(cap_slope: float) -> None:
    # the fused kernel of the log runs' pore collapse against the numpy composition it
    # replaces: generalized Kirsch wall stresses (Fjaer et al. 2008, eqs. 4.81-4.86) and the
    # modified Cam clay excess (Roscoe & Burland 1968), maximised over frames and angles
    from risk.limit_states import _wall_cap_compiled
    from risk.mechanics import cap

    rng = np.random.default_rng(4)
    n, m = 300, 6
    loc = st.LocalStress(*(rng.normal(40.0 if j < 3 else 0.0, 8.0, (n, m)) for j in range(6)))
    p_r, dd = rng.uniform(15.0, 25.0, n), rng.uniform(0.0, 10.0, n)
    big_a, nu = rng.uniform(0.3, 0.6, n), rng.uniform(0.2, 0.3, n)
    p_star, m_slope = rng.uniform(20.0, 60.0, n), np.full(n, cap_slope)
    theta = (np.arange(48) + 0.5) * np.pi / 48
    got = _wall_cap_compiled(loc, p_r - dd, p_r, big_a, nu, p_star, m_slope, theta)
    p_w = (p_r - dd)[:, None, None]
    w = st.wall_stresses(st.LocalStress(*(c[..., None] for c in loc)), theta=theta,
                         wall_pressure=p_w, reservoir_pressure=p_r[:, None, None],
                         poro_coefficient=big_a[:, None, None], poisson_ratio=nu[:, None, None])
    ref = cap.wall_cap_excess(hoop=w.hoop - p_w, axial=w.axial - p_w, shear=w.shear_hoop_axial,
                              collapse_pressure=p_star[:, None, None],
                              m=m_slope[:, None, None]).max(axis=(-1, -2))
    np.testing.assert_allclose(got, ref, rtol=0, atol=1e-12 * float(np.max(np.abs(ref))))


def test_compiled_rotation_refuses_bad_shapes() -> None:
    with pytest.raises(ValueError, match="expected tensors"):
        st.local_stress_frames(np.zeros((3, 3)), np.eye(3)[None])


def _block(tmp_path: Path, extra: str = "") -> tuple[dict[str, np.ndarray], object]:
    (tmp_path / "s.toml").write_text(BASE.replace("[rock]\n", "[rock]\nucs = { dist = "
                                                  "\"lognormal\", median = 2500, cov = 0.3 }\n"
                                                  + extra))
    sc = load_scenario(tmp_path / "s.toml")
    names = list(sc.inputs)
    joint = build_joint(names, [sc.inputs[k] for k in names], [list(p) for p in sc.correlation])
    x, _ = to_inputs(joint, UnitSampler(sc.sampling, joint.d, np.random.default_rng(3)).draw(512))
    return input_columns(joint, x), sc


def test_evaluate_compiled_rotation_matches_einsum_path(tmp_path: Path) -> None:
    # the log runs' options (compiled rotation, no wall angles) against the single-interval
    # path's defaults on the same samples (independent check: the einsum rotation): the
    # critical drawdowns agree to the solvers' tolerance, the "never" cases exactly
    cols, sc = _block(tmp_path, COLLAPSE)
    ref = evaluate(cols, sc)
    got = evaluate(cols, sc, rotation="compiled", angles=False)
    assert set(got) == set(ref)
    for key in ref:
        a, b = ref[key].by_direction, got[key].by_direction
        assert np.array_equal(np.isinf(a), np.isinf(b)), key
        fin = np.isfinite(a)
        np.testing.assert_allclose(b[fin], a[fin], rtol=0, atol=1e-8)
        assert np.all(np.isnan(got[key].theta))
    c_ref = evaluate_compaction(cols, sc)
    c_got = evaluate_compaction(cols, sc, rotation="compiled")
    for a, b in ((c_ref.far_field, c_got.far_field), (c_ref.wall, c_got.wall),
                 (c_ref.wall_at_max_drawdown, c_got.wall_at_max_drawdown)):
        assert a is not None and b is not None
        np.testing.assert_allclose(b, a, rtol=0, atol=1e-8)
    with pytest.raises(ValueError, match="rotation"):
        evaluate(cols, sc, rotation="quaternion")


def test_well_minimum_equals_numpy_reduction() -> None:
    # the well-level minimum over directions: numpy's own reduction as the reference
    from risk.limit_states import MechanismResult

    a = np.random.default_rng(2).normal(size=(50, 6, 3))
    a[3, 2, 1] = np.inf
    a[4, :, 0] = np.inf
    r = MechanismResult("yield_onset", a, np.zeros(0))
    assert np.array_equal(r.well, a.min(axis=1))


def test_results_do_not_depend_on_blocks_or_threads(tmp_path: Path) -> None:
    # bit-identical outputs for any block size and any number of worker threads (same seed)
    _las(tmp_path / "t.las", [95.0 + 3.0 * math.sin(i) for i in range(9)])
    base = BASE.replace("[rock]\n", "[rock]\n" + COLLAPSE)
    (tmp_path / "logs.toml").write_text(base + _logs_table("2"))
    ls = load_log_scenario(tmp_path / "logs.toml")
    runs = [assess_depth(ls, samples=96, rows=rows, workers=w)
            for rows, w in ((4096, 1), (96, 1), (96, 2), (200, 3))]
    first = runs[0]
    for other in runs[1:]:
        assert set(other.dc) == set(first.dc)
        for key in first.dc:
            assert np.array_equal(other.dc[key], first.dc[key]), key
        assert np.array_equal(other.ucs, first.ucs)
        assert first.collapse_far is not None and other.collapse_far is not None
        assert np.array_equal(other.collapse_far, first.collapse_far)
        assert first.collapse_wall is not None and other.collapse_wall is not None
        assert np.array_equal(other.collapse_wall, first.collapse_wall)
        for key in first.profile:
            assert np.array_equal(other.profile[key], first.profile[key])
    with pytest.raises(ValueError, match="workers"):
        assess_depth(ls, samples=8, workers=0)
    # a worker's failure reaches the caller
    bad = dataclasses.replace(ls, scenario=dataclasses.replace(ls.scenario, criterion="nope"))
    with pytest.raises(ValueError, match="criterion"):
        assess_depth(bad, samples=8, rows=8, workers=2)


def test_log_memo_is_a_section_of_the_main_memo(tmp_path: Path) -> None:
    _las(tmp_path / "t.las", [95.0 + 3.0 * math.sin(i) for i in range(9)])
    base = BASE.replace("[rock]\n", "[rock]\n" + COLLAPSE)
    (tmp_path / "logs.toml").write_text(base + _logs_table("2"))
    s = summarize_depth(assess_depth(load_log_scenario(tmp_path / "logs.toml"), samples=64))
    png = b"\x89PNG\r\n\x1a\n" + bytes(8) + (700).to_bytes(4, "big") + bytes(8)
    html = log_memo_html(s, png, "2026-01-01 00:00 UTC", scenario_file="logs.toml")
    # the main memo's frame: masthead, one set of assumptions, cautions and reproducibility
    assert html.count('<section id="assumptions">') == 1
    assert html.count('<section id="cautions">') == 1
    assert html.count('<section id="reproducibility">') == 1
    assert "Sand-production and perforation-tunnel risk memo" in html
    # the interval study is section 1; the single-interval sections are not there
    heads = re.findall(r'<h2><span class="secnum">(\d)</span> ([^<]+)</h2>', html)
    assert heads == [("1", INTERVAL_HEADING), ("2", SECTIONS[4]), ("3", SECTIONS[5]),
                     ("4", SECTIONS[6])]
    assert '<section id="summary">' not in html and '<section id="results">' not in html
    assert "assumptions (section 2) and the safety\ncautions (section 3)" in html
    interval = html[html.index('<section id="interval">'):html.index('<section id="assump')]
    for part in ('id="interval-table"', 'id="perforation-plan"', 'id="fig-depth"',
                 'id="depth-summary-table"', "Pore collapse over depth", "Strength from logs"):
        assert part in interval, part
    assert f"{s['plan']['probability']:.3f}" in interval
    # every caution and both kinds of assumption are stated (escaped as in the page)
    from markupsafe import escape

    for text in (*CAUTIONS, ASSUMPTIONS[0], *LOG_ASSUMPTIONS):
        assert str(escape(text)) in html, text[:40]
    assert "risk run logs.toml --samples 64 --seed 5" in html
    assert "<td><code>mohr-coulomb</code></td>" in html
