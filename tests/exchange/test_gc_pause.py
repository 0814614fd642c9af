"""The import defers the collector's full passes and always gives them back.

A 10,000-row dry run of deposition runs spent 1.3-2.2 s of 7.5-8.3 s in 7-8 full
(generation 2) passes, each walking every object the process holds; the young generations
still collect the short-lived cycles of each row.  What matters for a lab is that the
setting comes back, after an error too, and with two imports at once in one process.
"""

from __future__ import annotations

import gc
import threading

import pytest

from exchange.gc_pause import full_collections_deferred


def test_the_threshold_comes_back_after_the_block_and_after_an_error():
    before = gc.get_threshold()
    with full_collections_deferred():
        assert gc.get_threshold()[:2] == before[:2]  # young passes as ever
        assert gc.get_threshold()[2] > 10**8
    assert gc.get_threshold() == before
    with pytest.raises(RuntimeError), full_collections_deferred():
        raise RuntimeError("a row crashed")
    assert gc.get_threshold() == before


def test_overlapping_imports_restore_the_setting_only_when_the_last_ends():
    # Two imports in two threads of one worker: the first to end must not switch full
    # passes back on under the other, nor the last leave them off.
    before = gc.get_threshold()
    first_in, second_in, first_out = threading.Event(), threading.Event(), threading.Event()
    seen = {}

    def first():
        with full_collections_deferred():
            first_in.set()
            second_in.wait(5)
        first_out.set()

    def second():
        first_in.wait(5)
        with full_collections_deferred():
            second_in.set()
            first_out.wait(5)
            seen["while the second runs"] = gc.get_threshold()[2]

    threads = [threading.Thread(target=first), threading.Thread(target=second)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(10)
    assert seen["while the second runs"] > 10**8
    assert gc.get_threshold() == before


def test_an_import_runs_inside_the_block(monkeypatch, maker, today, db):
    from exchange import importer

    thresholds = []
    real_run = importer._run
    monkeypatch.setattr(importer, "_run", lambda *a, **k: thresholds.append(
        gc.get_threshold()[2]) or real_run(*a, **k))
    content = b"Material,Nominal diameter (nm),Solids (%),Received on\n" \
              b"polystyrene,600,10,2026-05-01\n"
    report = importer.import_sheet(kind="sphere_lots", content=content, file_name="lots.csv",
                                   actor=maker, commit=False)
    assert report.ok and thresholds and thresholds[0] > 10**8
    assert gc.get_threshold()[2] < 10**8


def test_the_garbage_an_import_leaves_is_freed_when_it_ends():
    # A cycle that grew old within the block (two young passes survived) is freed by the
    # full pass at its end, not left for whenever the collector would next run one.
    import weakref

    class Node:
        pass

    with full_collections_deferred():
        node = Node()
        node.self = node
        gone = weakref.ref(node)
        gc.collect(1)
        gc.collect(1)  # now in the oldest generation
        del node
        gc.collect(1)
        assert gone() is not None  # the young passes do not reach it
    assert gone() is None
