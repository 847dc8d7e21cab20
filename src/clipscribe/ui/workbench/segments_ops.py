"""Segment commands of the workbench window (mark, split, merge, delete, select, loop)."""

from __future__ import annotations

from PySide6.QtCore import Slot

from ..segment_look import UNLABELLED


class SegmentOps:
    """Mixed into MainWindow; uses ``player``, ``timeline``, ``segment_model``, ``editor``."""

    def _say(self, text: str) -> None:
        self.statusBar().showMessage(text, 6000)

    def _target(self):
        """The selected segment, else the one under the playhead."""
        g = self.segment_model.by_id(self.timeline.selected)
        return g or self.segment_model.at_frame(self.player.frame)

    def _segment_label(self) -> str | None:
        """The label a new segment takes: one's clip label; None (unlabelled) while there is
        none — setting the clip label then fills it."""
        return self.project.my_clip_label(self.clip.id) if self.clip else None

    @Slot()
    def mark_start(self) -> None:
        if self.clip is None:
            return
        self.timeline.set_pending_start(self.player.frame)
        self._say(f"Start marked at frame {self.player.frame}; move on and Mark end (E)")

    @Slot()
    def mark_end(self) -> None:
        start = self.timeline.pending_start
        if start is None:
            self._say("Mark start (B) first")
            return
        label = self._segment_label()
        a, b = sorted((start, self.player.frame))
        if self.editor.add_segment(label, a, b + 1) is not None:
            self.timeline.set_pending_start(None)
            if label is None:
                self._say(f"Segment frames {a}–{b} marked {UNLABELLED}: setting the clip label "
                          "fills it, or Shift+label key gives it one")
            else:
                self._say(f"Segment “{label}” frames {a}–{b}; Shift+label key changes its label")

    @Slot(int)
    def _segment_selected(self, segment_id: int) -> None:
        self.timeline.set_selected(None if segment_id < 0 else segment_id)

    def select_segment(self, step: int) -> None:
        rows = self.segment_model.segments()
        if not rows:
            return
        ids = [g.id for g in rows]
        cur = self.timeline.selected
        i = ids.index(cur) + step if cur in ids else (0 if step > 0 else len(ids) - 1)
        g = rows[min(len(rows) - 1, max(0, i))]
        self.timeline.set_selected(g.id)
        self.player.seek(g.start)

    def relabel_segment(self, label: str) -> None:
        g = self._target()
        if g is None:
            self._say("No segment selected or under the playhead")
            return
        self.editor.relabel_segment(g.id, label)

    @Slot()
    def split_segment(self) -> None:
        at = self.player.frame
        g = self.segment_model.at_frame(at)
        if g is None:
            self._say("No segment under the playhead to split")
            return
        self.editor.split_segment(g.id, at)

    @Slot()
    def merge_segment(self) -> None:
        g = self._target()
        rows = self.segment_model.segments()
        later = [r for r in rows if r.id != (g.id if g else None) and g and r.start >= g.start]
        if g is None or not later:
            self._say("Select a segment that has another after it")
            return
        self.editor.merge_segments(g.id, later[0].id)

    @Slot()
    def delete_segment(self) -> None:
        g = self._target()
        if g is None:
            self._say("No segment selected or under the playhead")
            return
        self.editor.delete_segment(g.id)
        self.timeline.set_selected(None)

    @Slot()
    def toggle_loop(self) -> None:
        if self.player.loop is not None:
            self.player.set_loop(None)
            self.player.pause()
            return
        g = self._target()
        if g is None:
            self._say("Select a segment to loop")
            self.actions_["loop"].setChecked(False)
            return
        self.player.set_loop((g.start, g.end))

    def nudge_edge(self, edge: str, step: int) -> None:
        """Move the start or end edge of the selected segment (else the one under the
        playhead) by ``step`` frames, as one edit; the playhead follows the edge."""
        g = self._target()
        if g is None:
            self._say("No segment selected or under the playhead")
            return
        start, end = g.start, g.end
        if edge == "start":
            start = max(0, min(end - 1, start + step))
        else:
            end = max(start + 1, min(self.player.frame_count, end + step))
        if (start, end) == (g.start, g.end):
            return
        self.timeline.set_selected(g.id)
        if self.editor.move_segment(g.id, start, end) is not None:
            self.player.seek(start if edge == "start" else end - 1)

    def jump_to_edge(self, edge: str) -> None:
        """Playhead to the first (start) or last (end) frame of the selected segment, else of
        the one under the playhead."""
        g = self._target()
        if g is None:
            self._say("No segment selected or under the playhead")
            return
        self.timeline.set_selected(g.id)
        self.player.seek(g.start if edge == "start" else g.end - 1)
