"""A segment marked before the clip label is set: stored at once with no label, drawn as an
"unlabelled" box, filled by the clip label in one undo step, or labelled on its own."""

from PySide6.QtCore import Qt
from PySide6.QtGui import QColor

from clipscribe import Project
from clipscribe.ui import theme
from clipscribe.ui.workbench.timeline import OTHER_ALPHA, OTHER_H, SCALE_H, TRACK_H

from .test_editing import ready
from .test_keys import _one_segment

ME = "annotator-3"   # has no label on the sample's first clip
CTRL = Qt.KeyboardModifier.ControlModifier


def _mark(qtbot, w, p, a, b):
    """Mark frames a..b by B and E; the one new segment stored."""
    old = {g.id for g in p.segments(clip=w.clip.id, annotator=ME)}
    _one_segment(qtbot, w, a, b)
    [seg] = [g for g in p.segments(clip=w.clip.id, annotator=ME) if g.id not in old]
    return seg


def _colour_at(w, frame) -> str:
    """The timeline's colour near the top of one's own track at ``frame`` (above the text)."""
    img = w.timeline.grab().toImage()
    dpr = img.devicePixelRatio()
    x = round(w.timeline.x_of(frame + 0.5) * dpr)
    return QColor(img.pixel(x, round(8 * dpr))).name()


def test_marked_before_the_clip_label_it_is_unlabelled_then_the_label_fills_it(qtbot, sample, open_window):
    w, p = open_window(sample, ME)
    ready(qtbot, w)
    clip = w.clip.id
    assert p.my_clip_label(clip) is None
    seg = _mark(qtbot, w, p, 5, 20)
    assert (seg.label, seg.start, seg.end) == (None, 5, 21)          # stored at once, no label
    assert "unlabelled" in w.statusBar().currentMessage()
    row = w.segment_model.index([g.id for g in w.segment_model.segments()].index(seg.id))
    assert row.data() == "unlabelled: frames 5–20"
    assert _colour_at(w, 10) in (theme.UNLABELLED_FILL, theme.UNLABELLED_HATCH)

    qtbot.keyClick(w.viewer, Qt.Key.Key_S)                            # the clip label "push"
    assert p.my_clip_label(clip) == "push"
    assert next(g for g in p.segments(clip=clip, annotator=ME) if g.id == seg.id).label == "push"
    qtbot.waitUntil(lambda: _colour_at(w, 10) == QColor(w.colours["push"]).name(), timeout=3000)

    qtbot.keyClick(w.viewer, Qt.Key.Key_Z, CTRL)                      # one step takes both back
    assert p.my_clip_label(clip) is None
    assert next(g for g in p.segments(clip=clip, annotator=ME) if g.id == seg.id).label is None
    qtbot.keyClick(w.viewer, Qt.Key.Key_Z, CTRL | Qt.KeyboardModifier.ShiftModifier)   # redo
    assert p.my_clip_label(clip) == "push"
    assert next(g for g in p.segments(clip=clip, annotator=ME) if g.id == seg.id).label == "push"


def test_an_unlabelled_segment_gets_its_own_label_by_shift_key(qtbot, sample, open_window):
    w, p = open_window(sample, ME)
    ready(qtbot, w)
    clip = w.clip.id
    seg = _mark(qtbot, w, p, 30, 40)
    w.timeline.set_selected(seg.id)
    qtbot.keyClick(w.viewer, Qt.Key.Key_I, Qt.KeyboardModifier.ShiftModifier)   # "idle"
    assert next(g for g in p.segments(clip=clip, annotator=ME) if g.id == seg.id).label == "idle"
    assert p.my_clip_label(clip) is None                                      # the clip's stays unset


def test_others_unlabelled_segments_show_on_their_thin_track(qtbot, sample, open_window):
    clip = 6
    with Project.open(sample) as lead:
        lead.update_settings(blind=False)
    with Project.open(sample, user=ME) as them:
        for g in them.segments(clip=clip, annotator=ME):
            them.delete_segment(g.id)
        them.add_segment(clip, ME, None, 0, 8)
    w, p = open_window(sample, "annotator-1")
    ready(qtbot, w)
    w.open_clip(clip)
    theirs = dict(w.timeline.others)[ME]
    assert [(g.label, g.start, g.end) for g in theirs] == [(None, 0, 8)]
    row = [who for who, _ in w.timeline.others].index(ME)
    img = w.timeline.grab().toImage()          # their box in the unlabelled look, faded
    dpr = img.devicePixelRatio()
    y = 4 + TRACK_H + SCALE_H + row * OTHER_H + OTHER_H // 2
    x = round(w.timeline.x_of(4) * dpr)
    # a few pixels side by side: one of them may be an antialiased edge of a hatch line
    seen = [QColor(img.pixel(x + dx, round(y * dpr))) for dx in range(-3, 4)]
    fill = _over(theme.UNLABELLED_FILL, theme.OTHERS_BG, OTHER_ALPHA)
    hatch = _over(theme.UNLABELLED_HATCH, fill, OTHER_ALPHA)
    assert any(max(abs(a - b) for a, b in zip(c.getRgb()[:3], want)) <= 3
               for c in seen for want in (fill, hatch)), [c.name() for c in seen]


def _over(top: str, under, alpha: int) -> tuple[int, int, int]:
    """``top`` painted at ``alpha`` over ``under`` (a colour name or an rgb tuple)."""
    t = QColor(top).getRgb()[:3]
    u = QColor(under).getRgb()[:3] if isinstance(under, str) else under
    return tuple(round(a * alpha / 255 + b * (1 - alpha / 255)) for a, b in zip(t, u))
