"""Calibration to field sanding history and the value of information (issue 17).

history.py (``[[history]]``, ``[calibration]``, ``[[measurement]]`` of a scenario),
likelihood.py (censored lognormal model-error likelihood), posterior.py (reweighting, weighted
statistics, MCMC, R-hat), voi.py (given-data value of information), driver.py (what a run
does with them).
"""

from risk.calibration.driver import (
    Calibration,
    PosteriorRisk,
    VoiRow,
    calibrate,
    value_of_information_table,
)
from risk.calibration.history import (
    DEFAULT_MODEL_ERROR,
    OUTCOMES,
    CalibrationSpec,
    History,
    Measurement,
    Observation,
    parse_history,
)

__all__ = ["Calibration", "PosteriorRisk", "VoiRow", "calibrate", "value_of_information_table",
           "DEFAULT_MODEL_ERROR", "OUTCOMES", "CalibrationSpec", "History", "Measurement",
           "Observation", "parse_history"]
