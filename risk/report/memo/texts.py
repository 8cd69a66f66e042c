"""The memo's fixed texts: section headings, figure captions, assumptions and safety cautions."""

from __future__ import annotations

from typing import Final

#: Section headings, in order (tests look for each one).
SECTIONS: Final[tuple[str, ...]] = (
    "Summary",
    "The scenario",
    "Results per mechanism",
    "Sensitivity and what to measure next",
    "Assumptions and limitations",
    "Safety cautions",
    "Reproducibility",
)

_SECTION_TITLES: Final[dict[str, str]] = {
    "well": "Well and completion", "stress": "Stresses and pore pressure", "rock": "Rock",
    "production": "Production", "analysis": "Analysis",
}

#: Figure captions (what the reader should look for), by figure name.
CAPTIONS: Final[dict[str, str]] = {
    "sand_free": (
        "Sand-free drawdown limit at every depletion stage (the drawdown at which the "
        "probability that an enabled sand-production mechanism predicts sand reaches the "
        "accepted risk), with its one-sided 95% lower bound shaded; for perforated wells also "
        "the gun chosen for the life of the well, and every completion option of the scenario "
        "on the same samples. A limit at zero means sand is expected with no drawdown."),
    "input_histograms": "Sampled inputs in the scenario's units, with P10, P50 and P90 marked.",
    "input_correlation": "Rank (Spearman) correlation between the sampled inputs, as sampled.",
    "calibration": (
        "Calibration to the field history: the sand-free limit over depletion and the first "
        "stage's failure curves before (prior) and after (posterior) the history, and the "
        "calibrated inputs' densities."),
    "value_of_information": (
        "Value of information: the expected gain of the sand-free drawdown limit at the "
        "accepted risk per measurement and stage; bars show two Monte-Carlo standard errors."),
    "failure_probability": (
        "Probability of failure vs drawdown for each mechanism and depletion stage, with its "
        "95% confidence band. The dashed line is the accepted risk; each dot marks the drawdown "
        "limit, its whisker reaches down to the 95% lower confidence bound (limits beyond the "
        "largest drawdown considered are in the tables only)."),
    "envelope": (
        "Operating envelope over depletion: the critical flowing wall pressure (below it, that "
        "share of samples fails) vs reservoir pressure. Shading gives the share of samples "
        "failing; the straight line is zero drawdown; the labelled dashed line is the accepted "
        "risk (reservoir pressure minus the drawdown limit)."),
    "shot_directions": (
        "Risk per perforation direction: the drawdown limit at the accepted risk of tunnels shot "
        "in each direction (longer is better); the best direction is highlighted where the "
        "limits differ between directions. Angles are measured {angles}."),
    "tunnel_collapse": (
        "Tunnel collapse: plastic radius ratio and wall plastic strain vs drawdown, median "
        "(solid) with the P10-P90 band (dotted edges), per depletion stage."),
    "pore_collapse": (
        "Pore collapse: probability vs reservoir pressure with its 95% band and the P10, P50 and "
        "P90 critical reservoir pressures."),
    "sensitivity": (
        "Sensitivity indices with their intervals at the first stage (pore collapse: over "
        "depletion) of the capped critical drawdown (pore collapse: of the critical reservoir "
        "pressure); diamonds are Shapley effects where the surrogate gave them. With correlated "
        "inputs the first-order index is the full one (with everything correlated with the "
        "input) and the total the independent one, so first can exceed total; where the "
        "surrogate did not fit, the Shapley effects come from Monte Carlo on the model."),
    "tunnel_root": (
        "Effective-strength onset of the perforation tunnels: drawdown limit at the accepted risk "
        "per depletion stage with the tunnel in the far-field stress and at its root in the "
        "wellbore's generalized Kirsch field (the worst over the root and the first three "
        "wellbore radii)."),
    "water_weakening": (
        "Water weakening: the rise in water saturation of the near-well rock per stage and the "
        "resulting strength factor on UCS, k TWC and the critical plastic strain (P10-P90 band "
        "and P50 over the samples)."),
    "tornado": (
        "Tornado chart: the critical drawdown (pore collapse: the critical reservoir pressure) "
        "when one input at a time is moved to its P10 or P90 value, the others held at their "
        "base values. The axis ends at the first stage's reservoir pressure, where the outputs "
        "are capped: a hatched bar with an arrow reaches the cap (no failure within the "
        "available drawdown). Inputs that barely move the output are named under each panel; "
        "the table lists every input."),
}


ASSUMPTIONS: Final[tuple[str, ...]] = (
    "Linear elastic, isotropic rock and a plane-strain idealisation at the cavity wall (open "
    "hole or perforation tunnel); stresses at the wall from the generalized Kirsch solution.",
    "Failure is checked with Terzaghi effective stresses (total stress minus pore pressure); "
    "Biot's coefficient enters only the poroelastic terms (the inflow term at the wall and the "
    "depletion stress path).",
    "The steady radial Darcy inflow term is exact for an unbounded medium; a bounded hollow "
    "cylinder (a laboratory sample or a finite drainage radius) differs.",
    "Perforation tunnels: the far-field stress governs the effective-strength onset unless "
    "analysis.tunnel_stress = \"root-and-far-field\"; the tunnel root in the wellbore's "
    "generalized Kirsch field (Kirsch 1898; Hiramatsu & Oka 1962; Fairhurst 1968) is computed "
    "beside it by superposing the two elastic solutions, with casing and cement carrying no "
    "load. The TWC factor k was calibrated with far-field stresses, and where the wellbore "
    "wall itself yields the elastic root field overstates the stress, so the root result is "
    "a conservative check, not a recalibrated prediction. Yield onset and tunnel collapse use "
    "the far field only.",
    "The effective-strength factor is an empirical calibration: k \u2248 3.1 (Willson et al. "
    "2002); 3.8\u20134.6 in perforation-collapse tests (Yeow et al. 2004); field sanding onset "
    "at 0.5\u20131\u00d7 the predicted critical bottom-hole flowing pressure (Palmer et al. "
    "2003) \u2014 all as quoted in Bellarby (2009).",
    "Log correlations for UCS carry factor-of-two scatter outside the basin they were fitted "
    "in (McNally 1987; Chang, Zoback & Khaksar 2006).",
    "Not modelled: transient and cyclic loading (start-ups, shut-ins), multiphase flow (water "
    "breakthrough enters only as a strength reduction, when the scenario gives "
    "production.water_saturation), rate-dependent erosion and sand transport, strain "
    "softening and large strains, thermal effects.",
    "Yield onset at the wall is the earliest and most conservative signal: it marks the "
    "first permanent deformation, not sand production, which needs the tunnel to fail "
    "(tunnel collapse) or the calibrated effective-strength onset.",
    "Tunnel collapse (when computed): an axisymmetric elastic-perfectly plastic cavity "
    "(Mohr\u2013Coulomb with dilation, or Hoek\u2013Brown) in an equivalent hydrostatic in-plane "
    "stress (3\u03c3\u2081 \u2212 \u03c3\u2083)/2, with steady Darcy flow to a fixed drainage "
    "radius and unchanged permeability; small strain, monotonic loading, no softening. "
    "Collapse is taken when the wall plastic hoop strain reaches the calibrated critical value, "
    "or when the seepage gradient at the yielded wall reaches the unconfined strength. Where "
    "the axial stress at the yielded wall exceeds the hoop stress the plane-strain solution is "
    "approximate; the share of such samples is in results.json (plane_strain_flag_fraction) "
    "and flagged in the results section when it is not zero.",
    "Effective-strength onset at a perforation tip (when chosen) treats the tip as a spherical "
    "cavity in the triaxial far-field total stress, with the full elastic stress concentration "
    "(Southwell & Gough 1926; Goodier 1933) maximised over the tip surface; the inflow term is "
    "that of the cylinder. A sphere has no direction, so the tip result is the same for every "
    "shot.",
    "Pore collapse (when computed): compaction starts on a cap in the p\u2032\u2013q plane "
    "through the pore-collapse pressure P* of hydrostatic tests (modified Cam clay, the "
    "default; Roscoe & Burland 1968), or, with analysis.compaction_cap = \"mean-stress\", when "
    "the mean effective stress reaches P*. The wall is checked at zero drawdown (critical "
    "reservoir pressure) and at the largest drawdown assessed (probability per stage).",
    "Mogi\u2013Coulomb (when chosen; Al-Ajmi & Zimmerman 2005): its elastic domain is not "
    "convex near triaxial extension, so at one wall angle the failing wall pressures can form "
    "a band between full drawdown and none. The yield-onset search takes the highest failing "
    "wall pressure at each angle, bands included (checked against a brute-force scan of "
    "angles and pressures); such bands occur mainly at friction angles above about 50\u00b0.",
    "Hoek\u2013Brown (when chosen): GSI below 100 applies a rock-mass reduction to a cavity a "
    "few centimetres across; a warning is given when the scenario does so.",
    "Sensitivity indices describe the critical drawdown capped at the reservoir pressure; "
    "outcomes stuck at zero drawdown or at the full reservoir pressure make the output "
    "non-smooth, in which case a Monte-Carlo estimator on the model (independent inputs) "
    "replaces the polynomial surrogate. With "
    "correlated inputs, Shapley effects rank the inputs where the surrogate holds; where it "
    "does not, full first-order indices from the sample itself (given data; estimates below "
    "zero from sampling noise are shown as 0) rank them; the "
    "tornado varies one input at a time "
    "and ignores correlation.",
    "P10 of a critical drawdown is the drawdown at or below which 10% of the samples fail "
    "(pessimistic end); for pore collapse, the reservoir pressure at or above which 10% have "
    "compacted.",
    "Sampling error: every probability is estimated from a finite number of samples. Failure "
    "curves carry 95% confidence bands and each drawdown limit a one-sided 95% lower "
    "confidence bound; use the bound, not the estimate, when the two differ.",
)

CAUTIONS: Final[tuple[str, ...]] = (
    "This is a screening tool. It does not replace engineering judgement.",
    "Local regulations, codes and operator standards take precedence; have the decision "
    "reviewed by a licensed professional.",
    "Calibrate the model against the local sanding history (offset wells, sand-production "
    "events, core tests) before relying on its limits.",
    "Produced sand erodes chokes, flowlines and equipment and can lead to loss of containment "
    "or loss of well control.",
    "Ramp rates up slowly after start-up and after every shut-in.",
    "Monitor sand production (acoustic or intrusive detectors, separator and sample checks).",
)
