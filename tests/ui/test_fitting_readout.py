"""The frame/time readout shortens to fit a narrow window instead of being cut mid-number."""

from clipscribe.ui.player import FittingLabel

FORMS = ["frame 1234 / 4999    0:41.133 / 2:46.633", "1234 / 4999  0:41.133", "1234"]


def _shown_width(label: FittingLabel) -> int:
    return label.fontMetrics().horizontalAdvance(label.text())


def test_the_longest_form_that_fits_is_shown_and_the_whole_in_the_tooltip(qtbot):
    label = FittingLabel()
    qtbot.addWidget(label)
    label.set_forms(FORMS)
    label.resize(label.sizeHint())
    label.show()
    assert label.text() == FORMS[0]
    middle = label.fontMetrics().horizontalAdvance(FORMS[1]) + 4
    label.resize(middle, label.height())
    assert label.text() == FORMS[1]
    assert _shown_width(label) <= label.contentsRect().width()
    label.resize(label.minimumSizeHint().width(), label.height())
    assert label.text() == FORMS[2]
    assert _shown_width(label) <= label.contentsRect().width()
    assert label.toolTip() == FORMS[0]
    label.resize(label.sizeHint())
    assert label.text() == FORMS[0]


def test_new_text_is_fitted_to_the_present_width(qtbot):
    label = FittingLabel()
    qtbot.addWidget(label)
    label.set_forms(FORMS)
    label.resize(label.minimumSizeHint().width() + 1, 20)
    label.set_forms(["frame 9 / 4999    0:00.300 / 2:46.633", "9 / 4999  0:00.300", "9"])
    assert label.text() == "9"
    assert label.minimumSizeHint().width() < label.sizeHint().width()
