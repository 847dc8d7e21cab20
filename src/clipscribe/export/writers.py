"""Write an export plan to a folder: JSON Lines, CSV, WebVTT, media, manifest — all or nothing.

Layout of the export folder::

    manifest.json                    ExportManifest
    <split>.jsonl                    one ExportRecord per line
    <split>.csv                      one row per clip (no captions or segments)
    <split>_segments.csv             one row per segment
    <split>_captions.csv             one row per caption
    webvtt/<clip>.vtt                with webvtt=True
    media/<split>/<clip><suffix>     with media_mode="copy" or "hardlink"

Captions get their own CSV rather than being joined into one cell: caption text may hold any
separator, and one row per caption keeps the file loadable by any CSV reader without a second
parsing step. Text cells that a spreadsheet would run as a formula get a leading ``'``
(:mod:`clipscribe.export.csvsafe`); the JSON Lines files keep every text exactly.

Everything is written into a temporary folder beside ``out_dir`` and renamed into place at the
end, so a failed, blocked or cancelled export leaves nothing behind.
"""

from __future__ import annotations

import hashlib
import os
import re
import shutil
import tempfile
from datetime import datetime, timezone
from pathlib import Path
from typing import Callable, Literal, Protocol

from .._version import __version__
from ..schema.export import (
    ExportCaption, ExportManifest, ExportRecord, ExportSegment, FileEntry, LabelPolicyModel,
    LeakageReportModel, LeftOut, OverrideModel, QualityWarning,
)
from . import csvsafe, jsonl
from .inputs import ClipInput
from .plan import ExportBlocked, ExportCancelled, ExportError, ExportPlan, Override
from .checks import SPLIT_TOLERANCE
from .policy import choose_captions
from .segment_choice import describe_segment_rule
from .vtt import render

NO_LABEL = "(no label)"
_UNSAFE = re.compile(r"[^A-Za-z0-9._-]")


class CancelEvent(Protocol):
    def is_set(self) -> bool: ...


def _now() -> str:
    return datetime.now(timezone.utc).replace(microsecond=0).isoformat()


def _file_names(ids: list[str]) -> dict[str, str]:
    """Clip id -> a file-name stem safe on every platform, unique within the export."""
    out, used = {}, set()
    for cid in sorted(ids):
        stem = _UNSAFE.sub("_", cid).strip(".") or "clip"
        name, n = stem, 1
        while name.lower() in used:
            n += 1
            name = f"{stem}-{n}"
        used.add(name.lower())
        out[cid] = name
    return out


def _record(clip: ClipInput, plan: ExportPlan, media: str) -> ExportRecord:
    d = plan.decisions[clip.clip_id]
    fps = clip.fps
    seg_choice = plan.segments_of(clip)
    segments = [ExportSegment(label=s.label, start=s.start, end=s.end, start_s=s.start / fps,
                              end_s=s.end / fps) for s in seg_choice.segments]
    choice = plan.captions.get(clip.clip_id) or choose_captions(clip, d.label, plan.policy)
    captions = []
    for i, (text, seg) in enumerate(choice.captions):
        if seg is None:
            captions.append(ExportCaption(text=text, source=choice.source_of(i)))
        else:
            captions.append(ExportCaption(text=text, source=choice.source_of(i), start=seg[0],
                                          end=seg[1], start_s=seg[0] / fps, end_s=seg[1] / fps))
    return ExportRecord(
        clip=clip.clip_id, split=plan.assignment[clip.clip_id], media=media,
        sha256=clip.sha256.lower() if clip.sha256 else None,
        group=None if clip.group is None else str(clip.group), label=d.label,
        label_source=d.source, label_posterior=d.posterior, agreement=d.agreement, annotators=d.annotators,
        skipped=d.skipped, fps=fps, segment_source=seg_choice.source,
        frame_count=clip.frame_count, segments=segments, captions=captions)


def _vtt(rec: ExportRecord, duration: float | None) -> str:
    cues = [(f"segment-{i + 1}", s.start_s, s.end_s, s.label) for i, s in enumerate(rec.segments)]
    whole = duration if duration else max((s.end_s for s in rec.segments), default=None)
    for i, c in enumerate(rec.captions):
        if c.start_s is not None and c.end_s is not None:
            cues.append((f"caption-{i + 1}", c.start_s, c.end_s, c.text))
        elif whole:
            cues.append((f"caption-{i + 1}", 0.0, whole, c.text))
    label = f"label: {rec.label}" if rec.label else None
    return render(cues, note=f"clip {rec.clip}; {label}" if label else f"clip {rec.clip}")


def _sha256(path: Path) -> str:
    with open(path, "rb") as fh:
        return hashlib.file_digest(fh, "sha256").hexdigest()


def _write_csvs(tmp: Path, split: str, records: list[ExportRecord]) -> list[str]:
    names = [f"{split}.csv", f"{split}_segments.csv", f"{split}_captions.csv"]
    with open(tmp / names[0], "w", newline="", encoding="utf-8") as fh:
        w = csvsafe.writer(fh)
        w.writerow(["clip", "split", "media", "sha256", "group", "label", "label_source",
                    "agreement", "annotators", "fps", "frame_count", "segments", "captions"])
        for r in records:
            w.writerow([r.clip, r.split, r.media, r.sha256 or "", r.group or "", r.label or "",
                        r.label_source or "", "" if r.agreement is None else r.agreement,
                        r.annotators, r.fps or "", "" if r.frame_count is None else r.frame_count,
                        len(r.segments), len(r.captions)])
    with open(tmp / names[1], "w", newline="", encoding="utf-8") as fh:
        w = csvsafe.writer(fh)
        w.writerow(["clip", "index", "label", "start", "end", "start_s", "end_s"])
        for r in records:
            for i, s in enumerate(r.segments):
                w.writerow([r.clip, i, s.label, s.start, s.end, s.start_s, s.end_s])
    with open(tmp / names[2], "w", newline="", encoding="utf-8") as fh:
        w = csvsafe.writer(fh)
        w.writerow(["clip", "index", "text", "source", "start", "end", "start_s", "end_s"])
        for r in records:
            for i, c in enumerate(r.captions):
                w.writerow([r.clip, i, c.text, c.source, *("" if v is None else v for v in
                                                           (c.start, c.end, c.start_s, c.end_s))])
    return names


def _place_media(src: Path, dest: Path, mode: str) -> None:
    if not src.is_file():
        raise ExportError(f"media file {str(src)!r} does not exist")
    dest.parent.mkdir(parents=True, exist_ok=True)
    if mode == "copy":
        shutil.copyfile(src, dest)
    else:
        try:
            os.link(src, dest)
        except OSError as exc:
            raise ExportError(f"cannot hard-link {str(src)!r} into the export ({exc.strerror}); "
                              f"use media_mode='copy' across file systems") from exc


def _manifest(plan: ExportPlan, records: list[ExportRecord], files: list[FileEntry],
              media_mode: str | None, override: Override | None) -> ExportManifest:
    splits = list(plan.split.ratios) + sorted(set(plan.assignment.values())
                                              - set(plan.split.ratios))
    counts: dict[str, dict[str, int]] = {s: {} for s in splits}
    for r in records:
        key = r.label if r.label is not None else NO_LABEL
        counts[r.split][key] = counts[r.split].get(key, 0) + 1
    counts = {s: dict(sorted(c.items())) for s, c in counts.items()}
    ov = None
    if override is not None:
        ov = OverrideModel(by=override.by, reason=override.reason, at=_now(),
                           findings=len(plan.leakage.blocking))
    recipes = {
        "ratios": "target fraction of clips per split, the given ratios divided by their sum",
        "counts": "exported clips per split and decided label; " + NO_LABEL + " when the policy "
                  "allowed clips without a label",
        "totals": "exported clips per split",
        "agreement": "per record: share of the clip's annotator labels equal to the decided "
                     "label (label policy below); annotators who skipped the clip gave no label "
                     "and are counted in `skipped`, not in `annotators`",
        "warnings": f"split-empty: a split with a positive ratio got no clip; split-off-ratio: a "
                    f"split's share of the exported clips is more than "
                    f"{100 * SPLIT_TOLERANCE:.0f} percentage points from its ratio (our "
                    f"threshold); few-captions: clips exported with fewer reference captions "
                    f"than the caption guideline asks for",
        "label_policy": plan.policy.describe(),
        "splits": f"group-exclusive greedy placement, largest group first, minimising squared "
                  f"deviation from the target clip fraction plus mean squared per-label "
                  f"deviation; seed {plan.seed}; frozen clips kept ({len(plan.frozen)} given)",
        "segments": f"segment rule {plan.policy.segments!r}: "
                    f"{describe_segment_rule(plan.policy.segments)}; per record `segment_source` "
                    f"says where they came from; start_s = start / fps, end_s = end / fps; frames "
                    f"0-based, end exclusive",
        "duplicates_dropped": "reference captions left out because an equal one (same text, "
                              "same segment; under gold+agreeing also equal after "
                              "normalisation) was already among the clip's references",
        "unlabelled_segments": "annotator segments of the exported clips that had no label "
                               "(marked before their annotator chose one): never exported, "
                               "never chosen by the segment rule",
        "files": "sha256 of every written file except manifest.json, byte size",
        "leakage": "see leakage.recipe; counts are findings per kind",
        "assignment": "clip -> split of this export plus earlier frozen clips not exported now",
    }
    return ExportManifest(
        tool_version=__version__, project=plan.project, created_at=_now(),
        label_policy=LabelPolicyModel(min_agreement=plan.policy.min_agreement,
                                      require_label=plan.policy.require_label,
                                      captions=plan.policy.captions,
                                      segments=plan.policy.segments,
                                      labels=plan.policy.labels,
                                      min_posterior=plan.policy.min_posterior
                                      if plan.policy.labels == "inferred" else None,
                                      inference=plan.policy.inference,
                                      rule=plan.policy.describe()),
        seed=plan.seed, ratios=plan.split.ratios, counts=counts,
        duplicates_dropped=plan.duplicates_dropped,
        unlabelled_segments=plan.unlabelled_segments,
        totals={s: sum(c.values()) for s, c in counts.items()},
        left_out=[LeftOut(clip=d.clip_id, reason=d.reason or "",
                          media=plan.left_out_media.get(d.clip_id)) for d in plan.left_out],
        warnings=[QualityWarning.model_validate(w.to_dict()) for w in plan.warnings],
        split_conflicts=list(plan.split.conflicts), media_mode=media_mode,
        files=sorted(files, key=lambda f: f.path),
        leakage=LeakageReportModel.model_validate(plan.leakage.to_dict()), override=ov,
        recipes=recipes, assignment=dict(sorted({**plan.frozen, **plan.assignment}.items())))


def write_export(out_dir: str | os.PathLike, plan: ExportPlan, *,
                 media_mode: Literal["copy", "hardlink"] | None = None, webvtt: bool = False,
                 override: Override | None = None, overwrite: bool = False, csv_files: bool = True,
                 progress: Callable[[int, int], None] | None = None,
                 cancel: CancelEvent | None = None) -> ExportManifest:
    """Write ``plan`` into ``out_dir`` atomically and return the manifest written.

    Parameters
    ----------
    out_dir : path
        Created if missing; must be empty unless ``overwrite`` (then replaced as a whole).
    plan : ExportPlan
        From :func:`clipscribe.export.build_plan`.
    media_mode : None, "copy" or "hardlink"
        None leaves media where they are (records name ``ClipInput.media_path``).
    webvtt : bool
        One WebVTT file per clip with its segments and captions.
    override : Override, optional
        Required when the plan has blocking leakage findings; recorded in the manifest.
    progress : callable(done, total), optional
    cancel : object with ``is_set()`` (e.g. ``threading.Event``), optional

    Raises
    ------
    ExportBlocked
        Blocking findings and no override; nothing is written.
    ExportCancelled, ExportError
        Nothing is left behind.
    """
    if media_mode not in (None, "copy", "hardlink"):
        raise ValueError(f"media_mode must be None, 'copy' or 'hardlink', got {media_mode!r}")
    if plan.leakage.blocking and override is None:
        raise ExportBlocked(plan.leakage)
    for split in set(plan.split.ratios) | set(plan.assignment.values()):
        if _UNSAFE.search(split) or split.startswith("."):
            raise ExportError(f"split name {split!r} cannot be a file name; use letters, digits, "
                              f"'.', '_' or '-'")
    out = Path(out_dir)
    if out.exists() and (not out.is_dir() or (any(out.iterdir()) and not overwrite)):
        raise ExportError(f"{str(out)!r} exists and is not an empty folder; pass overwrite=True "
                          f"to replace it")
    out.parent.mkdir(parents=True, exist_ok=True)
    clips = sorted(plan.clips, key=lambda c: (plan.assignment[c.clip_id], c.clip_id))
    stems = _file_names([c.clip_id for c in clips])
    total = len(clips) * (1 + (media_mode is not None) + webvtt)
    done = 0
    remove_stale_partials(out)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out.name}.{os.getpid()}-", suffix=".partial",
                                dir=out.parent))
    if os.name == "posix":
        os.chmod(tmp, 0o755)  # mkdtemp makes it private; the export is an ordinary folder
    try:
        written: list[str] = []
        by_split: dict[str, list[ExportRecord]] = {s: [] for s in plan.split.ratios}
        for c in clips:
            if cancel is not None and cancel.is_set():
                raise ExportCancelled("export cancelled; nothing was written")
            split = plan.assignment[c.clip_id]
            media = c.media_path
            if media_mode is not None:
                src = Path(c.source_path or c.media_path)
                media = f"media/{split}/{stems[c.clip_id]}{src.suffix.lower()}"
                _place_media(src, tmp / media, media_mode)
                written.append(media)
                done += 1
            rec = _record(c, plan, media)
            by_split.setdefault(split, []).append(rec)
            done += 1
            if webvtt:
                name = f"webvtt/{stems[c.clip_id]}.vtt"
                (tmp / "webvtt").mkdir(exist_ok=True)
                (tmp / name).write_text(_vtt(rec, c.duration_s), encoding="utf-8")
                written.append(name)
                done += 1
            if progress is not None:
                progress(done, total)
        records = []
        for split, recs in by_split.items():
            with open(tmp / f"{split}.jsonl", "w", encoding="utf-8", newline="\n") as fh:
                for r in recs:
                    fh.write(jsonl.line(r.model_dump_json()))
            written.append(f"{split}.jsonl")
            if csv_files:
                written += _write_csvs(tmp, split, recs)
            records += recs
        files = [FileEntry(path=p, sha256=_sha256(tmp / p), bytes=(tmp / p).stat().st_size)
                 for p in written]
        manifest = _manifest(plan, records, files, media_mode, override)
        (tmp / "manifest.json").write_text(manifest.model_dump_json(indent=2) + "\n",
                                           encoding="utf-8")
        if cancel is not None and cancel.is_set():
            raise ExportCancelled("export cancelled; nothing was written")
        _move_into_place(tmp, out)
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    return manifest


def remove_stale_partials(out: str | os.PathLike) -> list[Path]:
    """Remove the hidden unfinished folders that a killed export to ``out`` left beside it
    (``.<name>.<pid>-….partial``, ``.<name>.folds-<pid>``, ``.<name>.replaced-<pid>-…``);
    those of a process still running are kept. Returns what was removed."""
    out = Path(out)
    removed = []
    if not out.parent.is_dir():
        return removed
    pid_at = re.compile(rf"^\.{re.escape(out.name)}\.(?:(\d+)-.*\.partial|.*\.partial|"
                        rf"folds-(\d+)|replaced-(\d+)-\d+)$")
    for p in out.parent.iterdir():
        m = pid_at.match(p.name)
        if not m or not p.is_dir():
            continue
        pid = next((int(g) for g in m.groups() if g), None)
        if pid is not None and _running(pid):
            continue
        shutil.rmtree(p, ignore_errors=True)
        if not p.exists():
            removed.append(p)
    return removed


def _running(pid: int) -> bool:
    if pid == os.getpid():
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True  # exists but belongs to someone else
    return True


def _move_into_place(tmp: Path, out: Path) -> None:
    old = None
    if out.exists():
        if any(out.iterdir()):
            old = out.with_name(f".{out.name}.replaced-{os.getpid()}-{id(tmp)}")
            os.replace(out, old)
        else:
            out.rmdir()
    try:
        os.replace(tmp, out)
    except BaseException:
        if old is not None:
            os.replace(old, out)
        raise
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
