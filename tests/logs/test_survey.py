"""Minimum-curvature TVD against closed forms of simple well paths."""

from __future__ import annotations

import math

import numpy as np
import pytest

from risk.logs.survey import minimum_curvature_tvd


def test_constant_build_arc_closed_form() -> None:
    # a build from vertical at a constant rate is a circular arc of radius R = 1/rate:
    # TVD(MD) = R sin(I(MD)), I = MD/R (plane geometry of a circle; minimum curvature is
    # exact on it, Sawaryn & Thorogood 2005) — also between stations
    rate = math.radians(3.0) / 30.48  # 3 deg per 100 ft [rad/m]
    md_st = np.arange(0.0, 900.0, 30.48)
    st = np.column_stack([md_st, md_st * rate, np.full(md_st.size, math.radians(40.0))])
    md = np.linspace(0.0, md_st[-1], 1001)
    got = minimum_curvature_tvd(md=md, stations=st, tvd0=100.0)
    np.testing.assert_allclose(got, 100.0 + np.sin(md * rate) / rate, rtol=0, atol=1e-9)


def test_hold_and_turn_closed_forms() -> None:
    # a straight hold at inclination I: TVD = MD cos I (common practice); a turn in azimuth
    # at 90 deg inclination stays level: TVD constant
    inc = math.radians(35.0)
    st = np.array([[1000.0, inc, 0.3], [1500.0, inc, 0.3], [2200.0, inc, 0.3]])
    md = np.array([1000.0, 1234.5, 2200.0])
    np.testing.assert_allclose(minimum_curvature_tvd(md=md, stations=st, tvd0=900.0),
                               900.0 + (md - 1000.0) * math.cos(inc), atol=1e-9)
    flat = np.array([[0.0, math.pi / 2, 0.0], [300.0, math.pi / 2, 1.0]])
    assert minimum_curvature_tvd(md=np.array([150.0, 300.0]), stations=flat,
                                 tvd0=2500.0) == pytest.approx([2500.0, 2500.0], abs=1e-9)


def test_build_to_hold_matches_the_ratio_factor() -> None:
    # the station increment dTVD = dMD/2 (cos I1 + cos I2) RF, RF = 2/beta tan(beta/2)
    # (Sawaryn & Thorogood 2005; the textbook minimum-curvature formula), here with a
    # change in both inclination and azimuth
    i1, i2, a1, a2, d = 0.2, 0.6, 0.5, 1.1, 90.0
    cb = math.cos(i2 - i1) - math.sin(i1) * math.sin(i2) * (1 - math.cos(a2 - a1))
    beta = math.acos(cb)
    rf = 2.0 / beta * math.tan(beta / 2.0)
    want = d / 2.0 * (math.cos(i1) + math.cos(i2)) * rf
    got = minimum_curvature_tvd(md=np.array([d]), stations=np.array([[0.0, i1, a1],
                                                                     [d, i2, a2]]))
    assert got[0] == pytest.approx(want, rel=1e-12)


def test_bad_survey_is_refused() -> None:
    with pytest.raises(ValueError, match="increase strictly"):
        minimum_curvature_tvd(md=np.array([1.0]), stations=np.array([[0.0, 0, 0], [0.0, 0, 0]]))
    with pytest.raises(ValueError, match="span"):
        minimum_curvature_tvd(md=np.array([5.0]), stations=np.array([[0.0, 0, 0], [1.0, 0, 0]]))
