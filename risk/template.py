"""The commented scenario template written by ``risk new`` (field or SI units).

The template is a complete, valid scenario of a fictional well (tests load it), so an engineer
can run it at once and then replace the numbers.
"""

from __future__ import annotations

__all__ = ["scenario_template"]

_FIELD = '''\
# Scenario for `risk` (field units: psi, ft, in, degrees, gradients in psi/ft).
# Every number of [stress], [rock] and drainage_radius may instead be a distribution, e.g.
#   ucs = { dist = "lognormal", median = 3000, cov = 0.25, source = "core plugs, well X-1" }
# Distributions: fixed (value), normal (mean, sd), lognormal (median + cov, or mean + sd),
# uniform (low, high), triangular (low, mode, high), truncnormal (mean, sd, low, high),
# pert (low, mode, high). The example values below are invented.
title = "New scenario"
units = "field"

[well]
depth = 8000                    # true vertical depth of the interval [ft]
inclination = 30                # [deg] from vertical
azimuth = 90                    # [deg] clockwise from north
completion = "perforated"       # or "openhole" (then drop shot_angles and tunnel_diameter)
shot_angles = [0, 60, 120, 180, 240, 300]   # [deg] around the well from the high side
tunnel_diameter = 0.5           # [in]
# phasings = [0, 60, 90, 120, 180]   # [deg] gun phasings compared for the life of the well

[stress]                        # each of sv, shmax, shmin, pp: value [psi] or *_gradient [psi/ft]
sv_gradient = 1.0
shmax_gradient = { dist = "uniform", low = 0.80, high = 0.92, source = "offset breakouts" }
shmin_gradient = { dist = "normal", mean = 0.72, sd = 0.02, source = "leak-off tests" }
shmax_azimuth = 60              # [deg] clockwise from north
pp_gradient = 0.45              # initial pore pressure
# depletion_path = 0.6          # dSh/dPp [-]; omitted: uniaxial strain from poisson_ratio, biot

[rock]
ucs = { dist = "lognormal", median = 4000, cov = 0.25, source = "core plugs" }
friction_angle = { dist = "normal", mean = 32, sd = 2 }   # [deg]
tensile_strength = 300          # [psi]
poisson_ratio = 0.25            # [-]
biot = 0.9                      # [-]
twc_ratio = { dist = "uniform", low = 1.2, high = 2.0 }   # TWC/UCS (or twc = ... [psi])
twc_factor = 3.1                # k in U = k TWC (Willson et al. 2002)
young_modulus = 1.5e6           # [psi]
dilation_angle = 5              # [deg]
critical_plastic_strain = { dist = "uniform", low = 0.01, high = 0.03 }   # wall plastic hoop strain
pore_collapse_pressure = 5000   # [psi] mean effective stress at pore collapse
# cap_m = 1.2                   # compaction-cap slope M (default 6 sin(phi)/(3 - sin(phi)))
# wet_strength_ratio = { dist = "uniform", low = 0.5, high = 0.9 }   # with water_saturation
# strength_multiplier = { dist = "lognormal", median = 1.0, cov = 0.2 }   # on UCS (default 1)
# hb_mi = 17                    # Hoek-Brown m_i (criterion = "hoek-brown"); gsi = 100

[production]
reservoir_pressure = [3600, 3100, 2600]   # [psi] depletion stages
# reservoir_pressure = { from = "initial", to = 2600, stages = 3 }   # or by rule [psi]
#                                 # (or to_fraction = 0.7 instead of to; from = 3600 [psi])
max_drawdown = 2000             # [psi] largest drawdown to assess
accepted_risk = 0.10            # accepted probability of failure [-]
drainage_radius = 1.0           # [ft] radius of the steady-inflow boundary around a tunnel
# water_saturation = [0, 0, 0.4]  # rise in water saturation per stage (water weakening)
# operating_points = [[3600, 3000], { reservoir_pressure = 3100, drawdown = 500 }]   # [psi]
#                                 # planned [reservoir pressure, flowing wall pressure], or
#                                 # { reservoir_pressure, drawdown } (or wall_pressure)

[analysis]
criterion = "mohr-coulomb"      # drucker-prager-{circumscribed,middle,inscribed}, mogi-coulomb,
                                # modified-lade, hoek-brown
samples = 8192
seed = 1
sampling = "sobol"              # or "lhs", "random"
# tunnel_stress = "far-field"   # or "root-and-far-field" (the tunnel root can govern)
# compaction_cap = "modified-cam-clay"   # or "mean-stress"

[correlation]
pairs = [["ucs", "friction_angle", 0.4]]   # Spearman rank correlations

# Completion options compared with [well] in one run (at most 12): each a name and any of
# completion, shot_angles, tunnel_diameter, hole_diameter, replacing those of [well].
# [[option]]
# name = "big-hole charges"
# tunnel_diameter = 0.75          # [in]
# [[option]]
# name = "open hole"
# completion = "openhole"         # shot_angles and tunnel_diameter are then not inherited
# hole_diameter = 8.5             # [in]
'''

_SI = (_FIELD
       .replace("field units: psi, ft, in, degrees, gradients in psi/ft",
                "SI units: MPa, m, mm, degrees, gradients in kPa/m")
       .replace('units = "field"', 'units = "si"')
       .replace("median = 3000, cov", "median = 20, cov")
       .replace("depth = 8000                    # true vertical depth of the interval [ft]",
                "depth = 2440                    # true vertical depth of the interval [m]")
       .replace("tunnel_diameter = 0.5           # [in]",
                "tunnel_diameter = 12.7          # [mm]")
       .replace("value [psi] or *_gradient [psi/ft]", "value [MPa] or *_gradient [kPa/m]")
       .replace("sv_gradient = 1.0", "sv_gradient = 22.6")
       .replace("low = 0.80, high = 0.92", "low = 18.1, high = 20.8")
       .replace("mean = 0.72, sd = 0.02", "mean = 16.3, sd = 0.45")
       .replace("pp_gradient = 0.45", "pp_gradient = 10.2")
       .replace("median = 4000, cov", "median = 27.5, cov")
       .replace("tensile_strength = 300          # [psi]", "tensile_strength = 2.07         # [MPa]")
       .replace("(or twc = ... [psi])", "(or twc = ... [MPa])")
       .replace("young_modulus = 1.5e6           # [psi]", "young_modulus = 10340           # [MPa]")
       .replace("pore_collapse_pressure = 5000   # [psi]", "pore_collapse_pressure = 34.5   # [MPa]")
       .replace("[3600, 3100, 2600]   # [psi]", "[24.8, 21.4, 17.9]   # [MPa]")
       .replace("max_drawdown = 2000             # [psi]", "max_drawdown = 13.8             # [MPa]")
       .replace("drainage_radius = 1.0           # [ft]", "drainage_radius = 0.3           # [m]")
       .replace("to = 2600, stages = 3 }   # or by rule [psi]",
                "to = 17.9, stages = 3 }   # or by rule [MPa]")
       .replace("from = 3600 [psi])", "from = 24.8 [MPa])")
       .replace("[[3600, 3000], { reservoir_pressure = 3100, drawdown = 500 }]   # [psi]",
                "[[24.8, 20.7], { reservoir_pressure = 21.4, drawdown = 3.45 }]   # [MPa]")
       .replace("tunnel_diameter = 0.75          # [in]", "tunnel_diameter = 19            # [mm]")
       .replace("hole_diameter = 8.5             # [in]", "hole_diameter = 216             # [mm]"))


def scenario_template(units: str = "field") -> str:
    """The template text for ``units`` ("field" or "si")."""
    if units == "field":
        return _FIELD
    if units == "si":
        return _SI
    raise ValueError(f"units must be 'field' or 'si', got {units!r}")
