"""UI tests: headless, on copies of the sample project (the fixtures are in tests/conftest.py)."""

import pytest


@pytest.fixture
def sample(sample_copy):
    """A fresh copy of the sample project folder for one test."""
    return sample_copy


def wait_frame(qtbot, w, frame=None, timeout=5000):
    """Wait until the viewer shows ``frame`` (or any frame)."""
    qtbot.waitUntil(lambda: w.viewer.frame_number is not None and
                    (frame is None or w.viewer.frame_number == frame), timeout=timeout)
