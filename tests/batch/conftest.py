"""A small in-process Dask cluster shared by the batch tests, and a small field."""

from __future__ import annotations

from pathlib import Path

import pytest

EXAMPLES = Path(__file__).resolve().parents[2] / "examples"
R7 = EXAMPLES / "ravenmoor_r7_openhole.toml"


@pytest.fixture(scope="module")
def client():
    """Two worker threads in this process: no process start-up, enough to run tasks in
    parallel and in any order."""
    distributed = pytest.importorskip("distributed")
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=False,
                                  dashboard_address=":0") as cluster, \
            distributed.Client(cluster) as c:
        yield c


def write_field(folder: Path, cases: str, *, defaults: Path = R7, extra: str = "") -> Path:
    """A field file in ``folder`` whose defaults are a shipped example scenario."""
    path = folder / "field.toml"
    path.write_text(f'title = "Ravenmoor test field"\ndefaults = "{defaults}"\n{extra}\n{cases}',
                    encoding="utf-8")
    return path
