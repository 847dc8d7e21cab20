"""The one place the review desk writes: gold label, gold segments, gold captions and comments
of the clip under review, each one transaction through the project with the lead's name, and an
undo command on the desk's own stack (the workbench's undo machinery, reused)."""

from __future__ import annotations

from typing import Any

from ..editor import ClipEditor


class ReviewEditor(ClipEditor):
    """Same signals as :class:`ClipEditor` (changed, saved, notSaved, saving)."""

    def settle_label(self, label: str | None) -> Any:
        what = f"Settle label “{label}”" if label else "Unsettle label"
        return self.apply(what, lambda: self.project.set_gold_label(self.clip, label,
                                                                    lead=self.me))

    def settle_segments(self, segments: list[tuple[str, int, int]], what: str = "Gold segments") -> Any:
        return self.apply(what, lambda: self.project.set_gold_segments(
            self.clip, [tuple(g) for g in segments], lead=self.me))

    def settle_captions(self, items: list[tuple[str, int | None]]) -> Any:
        return self.apply("Gold captions", lambda: self.project.set_gold_captions(
            self.clip, list(items), lead=self.me))

    def comment(self, text: str, annotator: str | None) -> Any:
        # comments are messages, not data: they are kept (no undo), like a sent note
        return self.apply("Comment", lambda: self.project.add_comment(
            self.clip, text, annotator=annotator, lead=self.me), undoable=False)
