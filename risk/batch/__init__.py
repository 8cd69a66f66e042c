"""A whole field in one batch: many wells and intervals, on a local Dask cluster by default or
on an existing ``dask.distributed`` cluster.

From a notebook::

    import risk.batch
    res = risk.batch.run_field("examples/field/ravenmoor_field.toml", out="reports/field",
                               workers=2, samples=4096)
    res.table                       # pandas: one row per well x interval x mechanism x stage
    res.failed                      # cases that did not finish, with their messages
    res.summaries["R-7/Lower Tarn"]  # that case's results.json as a dict

With ``out=None`` nothing is written (and nothing reused). ``client=`` runs on a
``distributed.Client`` the notebook already holds. The command line: ``risk batch FIELD --out
DIR`` (exit 0: every case finished; 3: the batch ran and at least one case failed; 2: bad
input to the batch itself, nothing run).
"""

from __future__ import annotations

from risk.batch.field import Case, Field, load_field
from risk.batch.runner import (
    CASES_DIR,
    EXIT_CASES_FAILED,
    SPLIT_SAMPLES,
    CaseStatus,
    FieldResult,
    ProgressEvent,
    run_field,
)

__all__ = ["Case", "Field", "load_field", "run_field", "FieldResult", "CaseStatus",
           "ProgressEvent", "EXIT_CASES_FAILED", "SPLIT_SAMPLES", "CASES_DIR"]
