"""Label suggestions in the workbench: trained in the background, shown on the label buttons as a
thin probability bar (never set automatically), accepted with one key.

What the annotator sees is the lead's decision (``Project.suggestion_visibility``): "off",
"after-look" (once this person has seen the clip's last frame, or has labelled it) or "on".
Suggestions can anchor people, so the panel says so. Training and the suggestion of a clip whose
features are not cached run on worker threads; the model is retrained as labels accumulate.
"""

from __future__ import annotations

from PySide6.QtCore import QObject, Signal, Slot

from ...project.suggestions import NO_MODEL, features_wait
from ..workers import Job, JobRunner

#: retrain after this many new labels in this window
RETRAIN_EVERY = 10
ANCHORING = ("A suggestion can anchor you: look at the clip first, then decide. It is learned "
             "from this project's labels, mistakes included.")


def _train(project, *, cancel, progress):  # worker thread
    from ...errors import NotEnoughLabels
    if wait := features_wait(project):  # a big project: hours of features on this machine
        return f"Suggestions wait: {wait}"
    try:
        return project.train_suggester(progress=progress, cancel=cancel)
    except NotEnoughLabels as exc:
        return str(exc)


class SuggestionFeed(QObject):
    """The suggestion of the clip on screen, as far as this person may see it."""

    shown = Signal(int, list, str)   # clip id, [(label, probability)] (empty: none), note
    trained = Signal(str)            # status text after a training run
    ordered = Signal(list)           # clip ids, least certain first (after each training)

    def __init__(self, project, parent: QObject | None = None) -> None:
        super().__init__(parent)
        self.project = project
        self.runner = JobRunner(self)
        self.visibility = project.suggestion_visibility()
        self.training: Job | None = None
        self.has_model = False
        self.problem = ""  # why the last training failed
        self.looked: set[int] = set()   # clips whose last frame this person has seen
        self.labelled_since = 0
        self.clip: int | None = None
        self.labelled = False
        self._generation = 0
        self.current: list[tuple[str, float]] = []

    # ---- training ----------------------------------------------------------------------
    def train(self) -> None:
        """Train (again) in the background; a run already going is left to finish."""
        if self.visibility == "off" or self.training is not None:
            return
        job = self.training = Job("training label suggestions",
                                  lambda cancel, progress: _train(self.project, cancel=cancel,
                                                                  progress=progress))
        job.signals.finished.connect(self._trained)
        job.signals.failed.connect(lambda msg: self._trained(f"suggestions: {msg}"))
        job.signals.cancelled.connect(lambda: setattr(self, "training", None))
        self.runner.start(job)
        if not self.has_model:
            self.update()  # "learning from the labels…"

    @Slot(object)
    def _trained(self, out) -> None:
        self.training = None
        if isinstance(out, str):
            self.problem = out
            self.trained.emit(out)
        else:
            self.has_model, self.problem = True, ""
            self.trained.emit(f"Label suggestions learned from {out.trained_on} labelled clips")
            job = Job("least certain first", lambda cancel, progress: [
                c for c, _ in self.project.least_certain_first()])
            job.signals.finished.connect(self.ordered.emit)
            self.runner.start(job)
        self.update()

    def label_set(self) -> None:
        """A label was set in this window: retrain now and then as labels accumulate."""
        self.labelled = True
        self.labelled_since += 1
        if self.labelled_since >= RETRAIN_EVERY:
            self.labelled_since = 0
            self.train()
        self.update()

    # ---- showing -----------------------------------------------------------------------
    def show_clip(self, clip: int, labelled: bool) -> None:
        self.clip, self.labelled = clip, labelled
        self.update()

    def frame_seen(self, frame: int, frame_count: int) -> None:
        if self.clip is not None and frame >= frame_count - 1 and self.clip not in self.looked:
            self.looked.add(self.clip)
            self.update()

    def may_see(self) -> bool:
        if self.visibility == "on":
            return True
        return self.visibility == "after-look" and (self.labelled or self.clip in self.looked)

    def update(self) -> None:
        """Work out the suggestion of the clip on screen (off the UI thread) and emit it."""
        self._generation += 1
        gen, clip = self._generation, self.clip
        self.current = []
        if clip is None:
            return
        if self.visibility == "off":
            self.shown.emit(clip, [], "")
            return
        if not self.may_see():
            self.shown.emit(clip, [], "Suggestion shown once you have watched the clip to its "
                                      "last frame (End) or labelled it")
            return
        if not self.has_model:
            reason = self.project.suggestion_reason(clip)
            if self.training is not None:
                reason = "No suggestion yet: learning from the labels…"
            elif reason == NO_MODEL:  # the window trains on its own: no API advice here
                reason = self.problem or ("No suggestion yet: the model learns from the labels "
                                          f"when the window opens and after every {RETRAIN_EVERY} labels")
            self.shown.emit(clip, [], reason[:1].upper() + reason[1:])
            return
        job = Job(f"suggestion for clip {clip}",
                  lambda cancel, progress: self.project.suggest(clip))
        job.signals.finished.connect(lambda ranked, g=gen, c=clip: self._ready(g, c, ranked))
        self.runner.start(job)

    def _ready(self, gen: int, clip: int, ranked) -> None:
        if gen != self._generation:
            return
        self.current = list(ranked)
        note = "" if ranked else self.project.suggestion_reason(clip)
        self.shown.emit(clip, self.current, note)

    def best(self) -> str | None:
        return self.current[0][0] if self.current else None

    def cancel(self) -> None:
        self.runner.cancel_all()

    def wait(self, msecs: int = 10000) -> bool:
        return self.runner.wait(msecs)
