"""Dataset export from a project: gathers plain inputs for the Qt-free export engine.

Label policy: gold first, else majority vote (``min_agreement``). Segments: by the segment
rule, which the export engine applies (gold only, or gold else the agreeing annotator who agrees
best). Captions: by the caption policy (gold only, or gold plus agreeing annotators). Skips are
not labels. Splits stay stable across exports: the
assignment of the last export is kept in the project and passed in as ``frozen``.
"""

from __future__ import annotations

import dataclasses
import json
import os
import threading
from collections import defaultdict
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from sqlalchemy import func, select

from .. import agreement, export, media
from ..errors import RecordError
from ..store.columns import plain_rows
from ..store.models import Annotator, Caption, Clip, Setting
from .context import Service
from .results import content_key

Progress = Callable[[int, int], None] | None
ASSIGNMENT_KEY = "export.assignment"
#: worker processes when a plan is asked to compute missing fingerprints (0: in this process;
#: ``clipscribe compute`` and :meth:`Project.compute` choose their own)
FINGERPRINT_WORKERS = 0


class Exporting(Service):
    #: unfinished folders of a killed export that the last export removed
    last_export_cleaned: list[str] = []

    def compute_fingerprints(self, *, progress: Progress = None,
                             cancel: threading.Event | None = None) -> int:
        """Compute the perceptual fingerprint of every clip that lacks one; returns how many."""
        self.ctx.check_lead("record clip fingerprints")
        todo = [c for c in self.peers.catalog.clips() if c.fingerprint is None]
        for i, c in enumerate(todo):
            if progress:
                progress(i, len(todo))
            try:
                value = media.clip_fingerprint(self.ctx.media_path(c.id), cancel=cancel)
            except media.MediaError:
                continue  # reported by the leakage check as a clip without fingerprint
            self.peers.catalog.set_fingerprint(c.id, value)
        if progress:
            progress(len(todo), len(todo))
        return len(todo)

    def missing_fingerprints(self) -> int:
        """How many clips have no perceptual fingerprint (one count query): the near-duplicate
        check of an export cannot cover them until they are computed."""
        return self.ctx.read(lambda s: s.scalar(
            select(func.count(Clip.id)).where(Clip.fingerprint.is_(None)))) or 0

    def _compute_missing(self, compute_missing: bool, progress: Progress,
                         cancel: threading.Event | None) -> None:
        """Fingerprints of the clips that lack one, through the compute path, when asked.

        A check never computes them unasked: a clip without one is reported as not checked for
        near duplicates (the ``no-fingerprint`` finding, counted in the manifest)."""
        if compute_missing and self.missing_fingerprints():
            self.peers.compute.compute(["fingerprint"], workers=FINGERPRINT_WORKERS,
                                       progress=progress, cancel=cancel)

    def export_inputs(self) -> list[export.ClipInput]:
        """Every clip as the export engine's plain input (leads' own labels excluded)."""
        with self.ctx.snapshot():  # one state of the database for every read below
            return self._export_inputs()

    def _export_inputs(self) -> list[export.ClipInput]:
        leads = {a.name for a in self.peers.catalog.annotators() if a.role == "lead"}
        labels: dict[int, list[tuple[str, str]]] = defaultdict(list)
        for clip, who, label in self.peers.analysis._voting_labels(leads):
            labels[clip].append((who, label))
        skips: dict[int, list[tuple[str, str]]] = defaultdict(list)
        for clip, who, reason in self.peers.review.skips():
            if who not in leads:
                skips[clip].append((who, reason))
        segs: dict[int, dict[str, list]] = defaultdict(lambda: defaultdict(list))
        unlabelled: dict[int, int] = defaultdict(int)  # never exported; counted in the manifest
        all_segments = self.peers.annotation.segments()
        for g in all_segments:  # ordered by clip, then name
            if g.annotator in leads:
                continue
            if g.label is None:
                unlabelled[g.clip] += 1
            else:
                segs[g.clip][g.annotator].append(export.SegmentInput(g.label, g.start, g.end))
        caps: dict[int, list[export.CaptionInput]] = defaultdict(list)
        skipped = {(c, who) for c, v in skips.items() for who, _ in v}
        frames = {g.id: (g.start, g.end) for g in all_segments}
        caption = export.CaptionInput
        for clip, who, text, segment in self._caption_columns():  # every caption: kept lean
            if who in leads:
                continue
            # a skipper's left-over captions are not references
            caps[clip].append(caption(text, who, not skipped or (clip, who) not in skipped,
                                      frames.get(segment) if segment else None))
        gold_labels, gold_caps = self.peers.gold.gold_labels(), self.peers.gold.gold_captions()
        gold_segs: dict[int, list] = defaultdict(list)
        for clip, label, start, end in self.peers.gold.gold_segments():
            gold_segs[clip].append(export.SegmentInput(label, start, end))
        out = []
        media_root = self.ctx.media_root  # one path for every clip (read from the settings)
        root = str(media_root)
        for c in self.peers.catalog.clips():
            votes = labels.get(c.id, [])
            own = tuple((who, tuple(v)) for who, v in segs.get(c.id, {}).items())
            fp = c.fingerprint
            out.append(export.ClipInput(
                clip_id=str(c.id), media_path=c.path, group=c.group, sha256=c.sha256,
                fingerprint=None if fp is None else fp & 0xFFFFFFFFFFFFFFFF, fps=c.fps,
                frame_count=c.frame_count, labels=tuple(v for _, v in votes),
                annotator_labels=tuple(votes), skipped=tuple(skips.get(c.id, ())),
                gold_label=gold_labels.get(c.id), captions=tuple(caps.get(c.id, ())),
                gold_captions=tuple(gold_caps[c.id]) if c.id in gold_caps else None,
                segments=tuple(gold_segs.get(c.id, ())), annotator_segments=own,
                unlabelled_segments=unlabelled.get(c.id, 0),
                consent=c.consent, licence=c.licence,
                source_path=media_file(root, c.path) or str(media_root / c.path)))
        return out

    def _caption_columns(self) -> list[tuple[int, str, str, int | None]]:
        """(clip, annotator, text, segment) of every caption in the order of
        ``caption_rows``, as plain columns: an export reads every caption of the project, and
        caption objects would cost far more (and record versions no export edits)."""
        stmt = (select(Caption.clip_id, Annotator.name, Caption.text, Caption.segment_id)
                .join(Annotator, Annotator.id == Caption.annotator_id)
                .order_by(Caption.clip_id, Annotator.name, Caption.position, Caption.id))
        return self.ctx.read(lambda s: plain_rows(s, stmt))

    def plan_export(self, ratios: Mapping[str, float] | None = None, *, seed: int = 0,
                    min_agreement: float = 0.6, frozen: Mapping[str, str] | str | os.PathLike | None = None,
                    hamming_radius: int = 8, caption_threshold: float = 0.9,
                    progress: Progress = None, captions: str = "gold",
                    segments: str = "gold+best", labels: str = "majority",
                    min_posterior: float = 0.9, compute_missing: bool = False,
                    cancel: threading.Event | None = None) -> export.ExportPlan:
        """Decide labels, assign splits and run every leakage check; writes nothing.

        Fingerprints are not computed here unless ``compute_missing`` (then first, with
        ``progress`` and ``cancel``); clips without one are reported as not checked for near
        duplicates (see :meth:`missing_fingerprints`).

        ``frozen`` defaults to the assignment of this project's last export; a path to an
        export manifest (or its folder) uses that manifest's assignment instead. ``captions``
        is the caption policy, ``"gold"`` or ``"gold+agreeing"`` (see
        :class:`clipscribe.export.LabelPolicy`); clips with fewer references than the caption
        guideline's captions per clip, and splits empty or far from their ratios, are in the
        plan's ``warnings``. ``segments`` is the segment rule, ``"gold+best"`` or ``"gold"``
        (see :mod:`clipscribe.export.segment_choice`); both are recorded in the manifest.
        ``labels`` is the label rule without gold: ``"majority"`` (``min_agreement``) or
        ``"inferred"``: the label Dawid-Skene infers from every annotator's labels when its
        posterior is at least ``min_posterior`` (the inference's recipe goes into the
        manifest). Gold wins under either rule.
        """
        self._require_lead("export")
        self._compute_missing(compute_missing, progress, cancel)
        if frozen is None:
            frozen = self.ctx.read(lambda s: (s.get(Setting, ASSIGNMENT_KEY).value
                                           if s.get(Setting, ASSIGNMENT_KEY) else {}))
        elif isinstance(frozen, (str, os.PathLike)):
            frozen = _manifest_assignment(Path(frozen))
        try:
            inputs, inference = self._inputs(labels)
            return export.build_plan(
                inputs, ratios or {"train": 0.7, "val": 0.15, "test": 0.15},
                project=self.ctx.settings.name, seed=seed, frozen=frozen,
                **self._plan_options(min_agreement, captions, hamming_radius, caption_threshold,
                                     segments, labels, min_posterior, inference))
        except ValueError as exc:
            raise RecordError(f"export: {exc}") from None

    def write_export(self, out_dir: str | os.PathLike, plan: export.ExportPlan, *,
                     media_mode: str | None = None, webvtt: bool = False,
                     override_reason: str | None = None, overwrite: bool = False,
                     progress: Progress = None, cancel: threading.Event | None = None):
        """Write a planned export atomically; remember its assignment for the next export.
        Blocking leakage findings stop it unless ``override_reason`` is given (recorded)."""
        self._require_lead("export")
        self.ctx.check_writable("export")  # the export is recorded in the project: check first
        #: unfinished folders of an earlier, killed export to the same place, removed now
        self.last_export_cleaned = export.remove_stale_partials(out_dir)
        override = export.Override(by=self.ctx.user or "unknown", reason=override_reason) if override_reason else None
        manifest = export.write_export(out_dir, plan, media_mode=media_mode, webvtt=webvtt,
                                       override=override, overwrite=overwrite,
                                       progress=progress, cancel=cancel)
        assignment = dict(manifest.assignment)

        def work(s) -> None:
            s.merge(Setting(key=ASSIGNMENT_KEY, value=assignment))
            self.ctx.log(s, "export", "dataset", None, None, None,
                      {"folder": str(out_dir), "clips": len(plan.clips), "override": override_reason})
        _recorded_or_removed(lambda: self.ctx.write(work), Path(out_dir))
        return manifest

    def plan_folds(self, k: int, *, seed: int = 0, val_fraction: float = 0.0,
                   min_agreement: float = 0.6, hamming_radius: int = 8,
                   caption_threshold: float = 0.9, progress: Progress = None,
                   captions: str = "gold", segments: str = "gold+best", labels: str = "majority",
                   min_posterior: float = 0.9, compute_missing: bool = False,
                   cancel: threading.Event | None = None) -> list[export.ExportPlan]:
        """k rotating group-exclusive folds (split 1..k, each testing on one k-th of the
        groups), each planned and leakage-checked like a single export; writes nothing.
        Missing fingerprints as in :meth:`plan_export`."""
        self._require_lead("export")
        self._compute_missing(compute_missing, progress, cancel)
        try:
            inputs, inference = self._inputs(labels)
            opts = dict(project=self.ctx.settings.name, seed=seed,
                        **self._plan_options(min_agreement, captions, hamming_radius,
                                             caption_threshold, segments, labels, min_posterior,
                                             inference))
            base = export.build_plan(inputs, {"all": 1.0}, **opts)
            items = [(c.clip_id, c.group, base.decisions[c.clip_id].label) for c in base.clips]
            folds = export.assign_folds(items, k, seed=seed, val_fraction=val_fraction)
            ratios = {"train": (k - 1) / k * (1 - val_fraction), "test": 1 / k}
            if val_fraction:
                ratios["val"] = (k - 1) / k * val_fraction
            # every kept clip is frozen to its fold's split, so planning only checks leakage
            return [export.build_plan(inputs, ratios, frozen=fold, **opts) for fold in folds]
        except ValueError as exc:
            raise RecordError(f"export: {exc}") from None

    def write_folds(self, out_dir: str | os.PathLike, plans: list[export.ExportPlan], *,
                    media_mode: str | None = None, webvtt: bool = False,
                    override_reason: str | None = None, progress: Progress = None,
                    cancel: threading.Event | None = None) -> list:
        """Write folds as ``out_dir/split-1 .. split-k``, all or nothing: nothing is written when
        any fold has blocking findings (unless overridden) or a write fails."""
        self._require_lead("export")
        out = Path(out_dir)
        if out.exists() and any(out.iterdir()):
            raise RecordError(f"{out}: exists and is not empty")
        self.ctx.check_writable("export")
        self.last_export_cleaned = export.remove_stale_partials(out)
        blocked = [i + 1 for i, pl in enumerate(plans) if pl.leakage.blocking]
        if blocked and not override_reason:
            raise export.ExportBlocked(plans[blocked[0] - 1].leakage)
        override = export.Override(by=self.ctx.user or "unknown", reason=override_reason) if override_reason else None
        tmp = out.with_name(f".{out.name}.folds-{os.getpid()}")
        manifests = []
        try:
            for i, plan in enumerate(plans, start=1):
                manifests.append(export.write_export(
                    tmp / f"split-{i}", plan, media_mode=media_mode, webvtt=webvtt, override=override,
                    progress=(lambda d, n, i=i: progress((i - 1) * n + d, len(plans) * n)) if progress else None,
                    cancel=cancel))
            if out.exists():
                out.rmdir()
            os.replace(tmp, out)
        finally:
            if tmp.exists():
                import shutil
                shutil.rmtree(tmp, ignore_errors=True)
        _recorded_or_removed(lambda: self.ctx.write(lambda s: self.ctx.log(
            s, "export", "dataset", None, None, None,
            {"folder": str(out), "folds": len(plans), "override": override_reason})), out)
        return manifests

    def _inputs(self, labels: str) -> tuple[list[export.ClipInput], dict | None]:
        """The export inputs; under the ``"inferred"`` label rule each with its posterior
        (Dawid-Skene over the same annotator labels the majority would count), and the
        inference's recipe."""
        if labels != "inferred":
            return self.export_inputs(), None
        with self.ctx.snapshot():  # the labels and the posteriors from one state
            inputs = self._export_inputs()
            rows = self.peers.analysis._voting_labels(
                {a.name for a in self.peers.catalog.annotators() if a.role == "lead"})
            order = [l.name for l in self.peers.catalog.labels()]
            version = f"v{self.peers.catalog.label_set_version()}"
        if not rows:
            return inputs, None
        inf = agreement.dawid_skene(rows, label_order=order, label_set_version=version)
        post = {str(c): tuple((str(k), float(p)) for k, p in v.items())
                for c, v in inf.posterior.items()}
        return ([dataclasses.replace(c, posterior=post.get(c.clip_id, ())) for c in inputs],
                inf.recipe.to_dict())

    def _plan_options(self, min_agreement: float, captions: str, hamming_radius: int,
                      caption_threshold: float, segments: str, labels: str = "majority",
                      min_posterior: float = 0.9, inference: dict | None = None
                      ) -> dict[str, Any]:
        """Options of :func:`clipscribe.export.build_plan` that come from the project."""
        policy = export.LabelPolicy(min_agreement=min_agreement, captions=captions,
                                    segments=segments, labels=labels,  # type: ignore[arg-type]
                                    min_posterior=min_posterior, inference=inference)
        return dict(policy=policy,
                    require_consent=self.ctx.settings.require_consent, hamming_radius=hamming_radius,
                    caption_threshold=caption_threshold,
                    captions_wanted=self.ctx.settings.caption_guideline.captions_per_clip,
                    cluster_captions=self._cluster_captions, cluster_media=self._cluster_media)

    def _cluster_captions(self, texts: list[str], threshold: float) -> Any:
        """:func:`clipscribe.export.caption_clusters` of ``texts``, kept in the result cache
        under a key made of the texts themselves, the threshold and the export engine's code.
        The clusters depend on nothing else, so a second plan of the same captions (other
        ratios, another seed, the folds of a cross-validation) reuses them: at 100k clips they
        are half of a dry run. Any changed caption changes the key."""
        return self._kept_by_content(
            "caption-clusters", content_key("caption-clusters", texts, {"threshold": threshold},
                                            "export"),
            lambda: export.caption_clusters(texts, threshold))

    def _cluster_media(self, codes: Any, radius: int) -> Any:
        """:func:`clipscribe.export.neardup.near_clusters` of the fingerprints, kept as the
        caption clusters are, under a key made of the fingerprints themselves (in order), the
        radius and the export engine's code. Fingerprints change only when clips come or go,
        so the plans after captions changed reuse them (2.6 s of a 100k-clip dry run)."""
        return self._kept_by_content(
            "media-clusters", content_key("media-clusters", [codes.tobytes().hex()],
                                          {"radius": radius}, "export"),
            lambda: export.near_clusters(codes, radius))

    def _kept_by_content(self, name: str, key: str, compute: Callable[[], Any]) -> Any:
        """What ``compute()`` gives, or what was kept under ``name`` for the same ``key`` (a
        key made of the inputs themselves can never be stale); one entry per name is kept."""
        kept = self.peers.results.kept(name)
        if isinstance(kept, tuple) and len(kept) == 2 and kept[0] == key:
            return kept[1]
        value = compute()
        self.peers.results.keep(name, (key, value))
        return value

    def _require_lead(self, what: str) -> None:
        self.peers.team.require_export_right()  # on a server the database decides by the login too


def media_file(root: str, rel: str) -> str | None:
    """``str(Path(root) / rel)`` by joining strings, or None when ``rel`` is not a plain
    relative POSIX path (then the caller asks pathlib). An export reads every clip's path, and
    pathlib's parsing costs several times the rest of a clip's input."""
    if (os.sep != "/" or not rel or rel[0] == "/" or rel[-1] == "/" or "//" in rel
            or rel == "." or rel.startswith("./") or rel.endswith("/.") or "/./" in rel):
        return None
    if root == ".":
        return rel
    return ("" if root == "/" else root) + "/" + rel


def _recorded_or_removed(record: Callable[[], Any], out: Path) -> None:
    """Record a written export in the project; when that fails, remove the export again so
    the command's failure and its effect agree (nothing half-done is left)."""
    try:
        record()
    except Exception:
        import shutil
        shutil.rmtree(out, ignore_errors=True)
        raise


def _manifest_assignment(path: Path) -> dict[str, str]:
    file = path / "manifest.json" if path.is_dir() else path
    try:
        data: Any = json.loads(file.read_text(encoding="utf-8"))
        return {str(k): str(v) for k, v in data["assignment"].items()}
    except (OSError, ValueError, KeyError, AttributeError) as exc:
        raise RecordError(f"{file}: not an export manifest with an assignment ({exc})") from None
