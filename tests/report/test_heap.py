"""risk.report.heap.settled: the collector kept off older objects within the block only.

Reference: the Python documentation of the gc module (gc.freeze, gc.unfreeze,
gc.get_freeze_count: objects frozen are moved to a permanent generation and ignored by all
future collections until unfrozen)."""

from __future__ import annotations

import gc

from risk.report.heap import settled


def test_frozen_within_the_block_and_given_back_after():
    before = gc.get_freeze_count()
    assert before == 0  # the test process freezes nothing itself
    with settled():
        assert gc.get_freeze_count() > 0
        with settled():  # nested: still frozen, and still after the inner block
            pass
        assert gc.get_freeze_count() > 0
    assert gc.get_freeze_count() == 0


def test_garbage_made_within_the_block_is_collected():
    class Node:
        pass

    with settled():
        a, b = Node(), Node()
        a.other, b.other = b, a  # a reference cycle: only the cyclic collector frees it
        kept = [id(a), id(b)]
        del a, b
        gc.collect()
        assert not any(id(o) in kept for o in gc.get_objects() if isinstance(o, Node))


def test_a_freeze_made_by_the_program_is_not_undone():
    gc.freeze()
    try:
        frozen = gc.get_freeze_count()
        with settled():
            pass
        assert gc.get_freeze_count() == frozen
    finally:
        gc.unfreeze()
