"""Garbage is collected on the GUI thread, never by whichever worker thread allocates."""

import gc
import threading
import weakref

from clipscribe.ui import gc_guard


class Node:
    pass


def test_cycles_are_collected_on_the_gui_thread(qapp, qtbot):
    collector = gc_guard.install(qapp)
    assert gc_guard.install(qapp) is collector  # once per application
    assert not gc.isenabled()
    seen = []
    gc.callbacks.append(lambda phase, info: seen.append(threading.current_thread()))
    try:
        a, b = Node(), Node()
        a.other, b.other = b, a
        ref = weakref.ref(a)
        del a, b
        keep = [Node() for _ in range(collector.thresholds[0] + 10)]  # generation 0 over its threshold
        assert ref() is not None  # nothing collected it on the spot
        qtbot.waitUntil(lambda: ref() is None, timeout=3000)
        del keep
    finally:
        gc.callbacks.pop()
    assert seen and all(t is threading.main_thread() for t in seen)
