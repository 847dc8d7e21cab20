"""Review tests run headless on copies of the sample project (its local user is the lead; the
fixtures are in tests/conftest.py)."""

import pytest


@pytest.fixture
def sample(sample_copy, sample_lead):
    """(fresh copy of the sample folder, name of its lead)."""
    return sample_copy, sample_lead


@pytest.fixture
def window(qtbot, open_window, sample, tmp_path):
    """``window(user=None, view="review")``: the workbench on a copy of the sample as ``user``
    (default the lead), once the review desk has ranked its queue."""
    from PySide6.QtCore import QSettings

    def make(user=None, view="review"):
        folder, lead = sample
        w, p = open_window(folder, user or lead, view=view,
                           settings=QSettings(str(tmp_path / "w.ini"), QSettings.Format.IniFormat))
        desk = getattr(w.review_desk, "desk", None)
        if desk is not None:  # the queue is ranked in the background
            qtbot.waitUntil(lambda: desk.ranking is None and desk.report is not None,
                            timeout=20000)
        return w, p
    return make
