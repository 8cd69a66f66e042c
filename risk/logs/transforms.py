"""Published log-to-strength transforms for sandstone, each with its calibration range.

Each transform is a pure function in the units it was published in (named after its source),
and a :class:`Transform` entry of :data:`UCS_TRANSFORMS` / :data:`FRICTION_TRANSFORMS` that
feeds it from a :class:`~risk.logs.las.LogSet` (internal units) and knows the range of log
values it was published for. Outside that range the value is still computed but the run
warns (:func:`range_warnings`): an empirical relation says nothing beyond its data.

The transforms' scatter against laboratory tests is large (a factor of two is common, Chang,
Zoback & Khaksar 2006, figs. 2-4): the run samples it as a lognormal error of the stated
coefficient of variation, correlated along depth (:mod:`risk.logs.depth`).

References
----------
Chang, C., Zoback, M.D., Khaksar, A. (2006). Empirical relations between rock strength and
physical properties in sedimentary rocks. J. Petrol. Sci. Eng. 51, 223-237, Table 1
(sandstones), which collects:
McNally, G.H. (1987). Estimation of coal measures rock strength using sonic and neutron
logs. Geoexploration 24, 381-395.
Fjaer, E., Holt, R.M., Horsrud, P., Raaen, A.M., Risnes, R. (1992). Petroleum Related Rock
Mechanics. Elsevier.
Moos, D., Zoback, M.D., Bailey, L. (1999). Feasibility study of the stability of openhole
multilaterals, Cook Inlet, Alaska. SPE 52186.
Vernik, L., Bruno, M., Bovberg, C. (1993). Empirical relations between compressive strength
and porosity of siliciclastic rocks. Int. J. Rock Mech. Min. Sci. 30, 677-680.
Bradford, I.D.R., Fuller, J., Thompson, P.J., Walsgrove, T.R. (1998). Benefits of assessing
the solids production risk in a North Sea reservoir using elastoplastic modelling.
SPE/ISRM 47360.
Weingarten, J.S., Perkins, T.K. (1995). Prediction of sand production in gas wells: methods
and Gulf of Mexico case studies. J. Petrol. Technol. 47, 596-600.
Zhang, J. (2019). Applied Petroleum Geomechanics. Gulf Professional Publishing, eqs. 3.17
and 3.22 (McNally; Bradford et al.), against which those two were checked. The others are
written from memory of Chang et al. (2006), Table 1.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from types import MappingProxyType
from typing import Final

import numpy as np
from numpy.typing import ArrayLike, NDArray

Array = NDArray[np.float64]

__all__ = ["mcnally_1987", "fjaer_1992", "gulf_coast_weak_sandstone", "moos_1999",
           "vernik_1993", "chang_2006_porosity", "bradford_1998", "weingarten_perkins_1995",
           "dynamic_moduli", "eissa_kazi_1988", "static_elastic", "Transform", "UCS_TRANSFORMS",
           "FRICTION_TRANSFORMS", "range_warnings"]

_US_PER_FT_PER_US_PER_M: Final = 0.3048  # [us/ft] = [us/m] x 0.3048 (exact)


def mcnally_1987(*, dt: ArrayLike) -> Array:
    """UCS [MPa] = 1200 exp(-0.036 dt), dt compressional slowness [us/ft].

    Fine-grained consolidated and unconsolidated sandstones, Bowen Basin, Australia.

    References
    ----------
    McNally (1987), as listed by Chang et al. (2006), Table 1; Zhang (2019), eq. 3.17.
    """
    return np.asarray(1200.0 * np.exp(-0.036 * np.asarray(dt, dtype=float)))


def fjaer_1992(*, vp: ArrayLike) -> Array:
    """UCS [MPa] = 0.035 Vp - 31.5, Vp compressional velocity [m/s].

    Sandstones of Thuringia, Germany.

    References
    ----------
    Fjaer et al. (1992), as listed by Chang et al. (2006), Table 1 (from memory).
    """
    return np.asarray(0.035 * np.asarray(vp, dtype=float) - 31.5)


def gulf_coast_weak_sandstone(*, dt: ArrayLike) -> Array:
    """UCS [MPa] = 1.4138e7 dt^-3, dt compressional slowness [us/ft].

    Weak and unconsolidated sandstones of the Gulf Coast.

    References
    ----------
    Chang et al. (2006), Table 1 (from memory).
    """
    return np.asarray(1.4138e7 * np.asarray(dt, dtype=float) ** -3)


def moos_1999(*, rho: ArrayLike, vp: ArrayLike) -> Array:
    """UCS [MPa] = 1.745e-9 rho Vp^2 - 21, rho bulk density [kg/m3], Vp [m/s].

    Coarse-grained sands and conglomerates, Cook Inlet, Alaska.

    References
    ----------
    Moos et al. (1999), as listed by Chang et al. (2006), Table 1 (from memory).
    """
    v = np.asarray(vp, dtype=float)
    return np.asarray(1.745e-9 * np.asarray(rho, dtype=float) * v * v - 21.0)


def vernik_1993(*, phi: ArrayLike) -> Array:
    """UCS [MPa] = 254 (1 - 2.7 phi)^2, phi porosity [v/v].

    Very clean, well-consolidated sandstones with porosity below 0.30.

    References
    ----------
    Vernik et al. (1993), as listed by Chang et al. (2006), Table 1 (from memory).
    """
    a = 1.0 - 2.7 * np.asarray(phi, dtype=float)
    return np.asarray(254.0 * a * a)


def chang_2006_porosity(*, phi: ArrayLike) -> Array:
    """UCS [MPa] = 277 exp(-10 phi), phi porosity [v/v].

    Sandstones with 2 < UCS < 360 MPa and 0.002 < phi < 0.33.

    References
    ----------
    Chang et al. (2006), Table 1 (from memory).
    """
    return np.asarray(277.0 * np.exp(-10.0 * np.asarray(phi, dtype=float)))


def bradford_1998(*, young_modulus: ArrayLike) -> Array:
    """UCS [MPa] = 2.28 + 4.1089 E, E static Young's modulus [GPa].

    Weak reservoir sandstones (worldwide data).

    References
    ----------
    Bradford et al. (1998), as listed by Chang et al. (2006), Table 1; Zhang (2019), eq. 3.22.
    """
    return np.asarray(2.28 + 4.1089 * np.asarray(young_modulus, dtype=float))


def weingarten_perkins_1995(*, phi: ArrayLike) -> Array:
    """Internal friction angle [deg] = 57.8 - 105 phi, phi porosity [v/v] (sandstones).

    References
    ----------
    Weingarten & Perkins (1995), as listed by Chang et al. (2006) (from memory).
    """
    return np.asarray(57.8 - 105.0 * np.asarray(phi, dtype=float))


def dynamic_moduli(*, rho: ArrayLike, vp: ArrayLike, vs: ArrayLike) -> tuple[Array, Array]:
    """Dynamic Young's modulus [Pa] and Poisson's ratio [-] of an isotropic elastic solid.

    E = rho Vs^2 (3 Vp^2 - 4 Vs^2)/(Vp^2 - Vs^2), nu = (Vp^2 - 2 Vs^2)/(2 (Vp^2 - Vs^2)),
    rho [kg/m3], Vp, Vs [m/s]. Static moduli of weak sands are lower: a run takes a stated
    static/dynamic factor.

    References
    ----------
    Mavko, G., Mukerji, T., Dvorkin, J. (2009). The Rock Physics Handbook, 2nd ed., Cambridge
    University Press, sec. 2.2 (isotropic elastic constants from velocities).
    """
    r = np.asarray(rho, dtype=float)
    p2 = np.asarray(vp, dtype=float) ** 2
    s2 = np.asarray(vs, dtype=float) ** 2
    e = r * s2 * (3.0 * p2 - 4.0 * s2) / (p2 - s2)
    nu = (p2 - 2.0 * s2) / (2.0 * (p2 - s2))
    return np.asarray(e), np.asarray(nu)


def eissa_kazi_1988(*, e_dynamic: ArrayLike) -> Array:
    """Static Young's modulus [GPa] = 0.74 E_dyn - 0.82, E_dyn dynamic modulus [GPa].

    Fitted to 76 rocks of many kinds (sedimentary and igneous); the static/dynamic gap it
    describes is largest for soft rock, where it is least certain.

    References
    ----------
    Eissa, E.A., Kazi, A. (1988). Relation between static and dynamic Young's moduli of
    rocks. Int. J. Rock Mech. Min. Sci. & Geomech. Abstr. 25(6), 479-482 (from memory).
    """
    return np.asarray(0.74 * np.asarray(e_dynamic, dtype=float) - 0.82)


def static_elastic(curves: Mapping[str, Array]) -> tuple[Array, Array]:
    """Static Young's modulus [MPa] and Poisson's ratio [-] over depth from the dt, dts and
    rhob logs (internal units): :func:`dynamic_moduli`, then :func:`eissa_kazi_1988` for the
    modulus; the dynamic Poisson's ratio is taken as the static one (common practice)."""
    e_dyn, nu = dynamic_moduli(rho=curves["rhob"], vp=_vp(curves),
                               vs=1.0e6 / np.asarray(curves["dts"]))
    return np.asarray(1e3 * eissa_kazi_1988(e_dynamic=e_dyn * 1e-9)), nu


def _dt_ft(c: Mapping[str, Array]) -> Array:
    return np.asarray(c["dt"]) * _US_PER_FT_PER_US_PER_M


def _vp(c: Mapping[str, Array]) -> Array:
    return np.asarray(1.0e6 / np.asarray(c["dt"]))  # [m/s] from [us/m]


@dataclass(frozen=True)
class Transform:
    """A published transform fed from logs (internal units).

    name : key a scenario uses; source : citation; lithology : what it was fitted to
    needs : log roles it reads; apply : logs -> value [MPa for UCS, deg for friction]
    ranges : role or "value" -> (low, high, text) of its published calibration range
    """

    name: str
    source: str
    lithology: str
    needs: tuple[str, ...]
    apply: Callable[[Mapping[str, Array]], Array]
    ranges: Mapping[str, tuple[float, float, str]]


_DT_FT = 0.3048  # [us/m] -> [us/ft] factor used in the range texts

#: UCS transforms [MPa] by scenario name. Calibration ranges are those the source states for
#: its data where Chang et al. (2006) give them, else the span of its data (from memory).
UCS_TRANSFORMS: Final[Mapping[str, Transform]] = MappingProxyType({
    "mcnally_1987": Transform(
        "mcnally_1987", "McNally (1987)", "fine-grained sandstones, Bowen Basin", ("dt",),
        lambda c: mcnally_1987(dt=_dt_ft(c)),
        {"dt": (60.0 / _DT_FT, 150.0 / _DT_FT, "60 to 150 us/ft (from memory)")}),
    "fjaer_1992": Transform(
        "fjaer_1992", "Fjaer et al. (1992)", "sandstones, Thuringia", ("dt",),
        lambda c: fjaer_1992(vp=_vp(c)),
        {"value": (1.0, 200.0, "UCS above 1 MPa (the linear relation turns negative below "
                   "Vp = 900 m/s)")}),
    "gulf_coast_weak_sandstone": Transform(
        "gulf_coast_weak_sandstone", "Chang et al. (2006), Gulf Coast",
        "weak and unconsolidated sandstones", ("dt",),
        lambda c: gulf_coast_weak_sandstone(dt=_dt_ft(c)),
        {"dt": (80.0 / _DT_FT, 180.0 / _DT_FT, "80 to 180 us/ft (from memory)")}),
    "moos_1999": Transform(
        "moos_1999", "Moos et al. (1999)", "coarse sands and conglomerates, Cook Inlet",
        ("dt", "rhob"), lambda c: moos_1999(rho=c["rhob"], vp=_vp(c)),
        {"value": (1.0, 200.0, "UCS above 1 MPa (the relation turns negative at low "
                   "rho Vp^2)")}),
    "vernik_1993": Transform(
        "vernik_1993", "Vernik et al. (1993)", "clean, well-consolidated sandstones",
        ("phi",), lambda c: vernik_1993(phi=c["phi"]),
        {"phi": (0.0, 0.30, "porosity below 0.30 v/v")}),
    "chang_2006_porosity": Transform(
        "chang_2006_porosity", "Chang et al. (2006)", "sandstones, 2 < UCS < 360 MPa",
        ("phi",), lambda c: chang_2006_porosity(phi=c["phi"]),
        {"phi": (0.002, 0.33, "porosity 0.002 to 0.33 v/v")}),
})

#: Friction-angle transforms [deg] by scenario name.
FRICTION_TRANSFORMS: Final[Mapping[str, Transform]] = MappingProxyType({
    "weingarten_perkins_1995": Transform(
        "weingarten_perkins_1995", "Weingarten & Perkins (1995)", "sandstones", ("phi",),
        lambda c: weingarten_perkins_1995(phi=c["phi"]),
        {"phi": (0.05, 0.40, "porosity 0.05 to 0.40 v/v (from memory)")}),
})


def range_warnings(t: Transform, curves: Mapping[str, Array], depth: Array,
                   value: Array, *, show_depth: Callable[[float], str],
                   key: str = "logs.ucs_transform") -> list[str]:
    """One warning per calibration range the logs (or the value) leave, with the share of
    depths outside and the first depth where it happens."""
    out: list[str] = []
    for role, (lo, hi, text) in t.ranges.items():
        x = np.asarray(value if role == "value" else curves[role])
        bad = (x < lo) | (x > hi)
        if np.any(bad):
            i = int(np.nonzero(bad)[0][0])
            what = "its value" if role == "value" else f"the {role} log"
            out.append(f"{key}: {t.name} ({t.source}) applied outside its "
                       f"published range at {100.0 * bad.mean():.0f}% of the depths (first at "
                       f"{show_depth(float(depth[i]))}): {what} should be {text}")
    if not math.isfinite(float(np.min(value))) or float(np.min(value)) <= 0.0:
        out.append(f"{key}: {t.name} gives no positive value at some depths")
    return out
