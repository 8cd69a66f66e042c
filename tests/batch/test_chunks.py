"""One case split over workers in sample chunks equals the single-process run bit for bit.

Reference: the single-process ``assess`` with the same scenario, samples and seed (the
reproducibility promise of DEVELOPERS.md, "Runs, memory and reproducibility").
"""

from __future__ import annotations

import numpy as np
import pytest

from risk.assessment import CHUNK, assess, chunk_count, evaluate_chunks
from risk.batch import run_field
from risk.report.results import summarize
from risk.report.writer import dumps
from risk.scenario import load_scenario

from .conftest import R7, write_field

SAMPLES = CHUNK + 100  # two chunks, the last one short


def _same(a, b):
    assert a.keys() == b.keys()
    for k in a:
        assert np.array_equal(a[k], b[k], equal_nan=True), k


@pytest.mark.parametrize("rule", ["sobol", pytest.param("random", marks=pytest.mark.slow),
                                  pytest.param("lhs", marks=pytest.mark.slow)])
def test_chunks_evaluated_apart_and_fed_back_equal_one_run(rule):
    import dataclasses

    sc = dataclasses.replace(load_scenario(R7), sampling=rule)
    whole = assess(sc, samples=SAMPLES, seed=11)
    assert chunk_count(sc, samples=SAMPLES) == 2
    parts = (evaluate_chunks(sc, samples=SAMPLES, seed=11, start=1, stop=2)  # any order
             + evaluate_chunks(sc, samples=SAMPLES, seed=11, start=0, stop=1))
    by_index = {c.index: c for c in parts}
    split = assess(sc, samples=SAMPLES, seed=11, chunks=by_index.__getitem__)
    for key in whole.mechanisms:
        assert np.array_equal(whole.mechanisms[key].by_direction,
                              split.mechanisms[key].by_direction, equal_nan=True)
        assert np.array_equal(whole.mechanisms[key].theta, split.mechanisms[key].theta,
                              equal_nan=True)
    _same(whole.inputs, split.inputs)
    assert np.array_equal(whole.xi, split.xi)
    assert dumps(summarize(whole)) == dumps(summarize(split))


def test_a_chunk_in_the_wrong_place_is_refused():
    sc = load_scenario(R7)
    parts = evaluate_chunks(sc, samples=SAMPLES, seed=1, start=0, stop=2)
    with pytest.raises(ValueError, match="chunk 1"):
        assess(sc, samples=SAMPLES, seed=1, chunks=lambda i: parts[1])


def test_one_case_split_over_two_workers_equals_the_single_process_run(tmp_path, client):
    path = write_field(tmp_path, f'[[case]]\nwell = "R-7"\nscenario = "{R7}"\n')
    events = []
    res = run_field(path, client=client, samples=SAMPLES, seed=5, split_samples=CHUNK,
                    memos=False, progress=events.append)
    assert not res.failed
    # progress of a split case counts the samples of the whole case, summed over its ranges
    shown = [(e.done, e.total) for e in events if e.kind == "case"]
    assert shown and all(total == SAMPLES and 0 < done <= total for done, total in shown)
    reference = summarize(assess(load_scenario(R7), samples=SAMPLES, seed=5))
    assert dumps(res.summaries["R-7"]) == dumps(reference)


def test_progress_of_a_split_case_adds_up_its_ranges():
    from risk.batch.runner import _case_event

    done: dict[str, dict[int, int]] = {"A": {}}
    total = {"A": 3000}
    steps = [({"case": "A", "part": 0, "done": 512, "total": 1024}, 512),
             ({"case": "A", "part": 1, "done": 1024, "total": 1976}, 1536),
             ({"case": "A", "part": 0, "done": 1024, "total": 1024}, 2048),
             # range 1 retried on another worker after a worker died: its count restarts
             ({"case": "A", "part": 1, "done": 0, "total": 1976}, 1024),
             ({"case": "A", "part": 1, "done": 1976, "total": 1976}, 3000)]
    for msg, expected in steps:
        ev = _case_event(msg, done, total)
        assert (ev.kind, ev.case, ev.done, ev.total) == ("case", "A", expected, 3000)
    # a whole case reports its own counts
    ev = _case_event({"case": "B", "done": 7, "total": 9}, done, total)
    assert (ev.done, ev.total) == (7, 9)
