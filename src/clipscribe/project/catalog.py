"""Label set, annotators and clips: definition, ingest and queries."""

from __future__ import annotations

import csv
import os
import re
import warnings
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from pydantic import ValidationError
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from ..errors import DuplicateMediaWarning, RecordError
from ..schema.settings import LabelSpec, check_name_text
from ..store.models import (
    ROLES,
    Annotator,
    Assignment,
    Caption,
    Clip,
    ClipLabel,
    GoldLabel,
    Label,
    Segment,
    Setting,
)
from ..types import (  # noqa: F401 (re-exported)
    AnnotatorInfo,
    ClipInfo,
    ClipRef,
    IngestReport,
    LabelInfo,
    clip_state_word,
    duplicate_warning,
)
from .context import Service, row_dict

if TYPE_CHECKING:  # the video code loads only where media is read (not for counts or lists)
    from .. import media

# Our own palette: evenly spread hues, readable on dark and light backgrounds.
PALETTE = ("#e4572e", "#29a0b1", "#f3a712", "#6a4c93", "#43aa8b", "#d64d8a", "#8fbc3a",
           "#4d7cd6", "#b5651d", "#5c946e", "#c0392b", "#7f8c8d")
#: keys given to labels that have none: the digits for the first ten, then letters the workbench
#: does not use for a command of its own (B, E, L and M mark, loop and merge segments)
AUTO_KEYS = "1234567890qwrtyuiopasdfghjkzxcvn"
from ..types import BY_FOLDER  # noqa: E402,F401 (re-exported)

Progress = Callable[[int, int], None]












def clip_info(c: Clip) -> ClipInfo:
    return ClipInfo(c.id, c.path, c.sha256, c.fps, c.frame_count, c.duration, c.width, c.height,
                    c.group_key, c.source, c.licence, c.consent, c.state, c.fingerprint)


#: the columns of a ClipInfo, in its order
INFO_COLUMNS = (Clip.id, Clip.path, Clip.sha256, Clip.fps, Clip.frame_count, Clip.duration,
                Clip.width, Clip.height, Clip.group_key, Clip.source, Clip.licence, Clip.consent,
                Clip.state, Clip.fingerprint)


class Catalog(Service):
    # ---- label set --------------------------------------------------------------------
    def define_labels(self, labels: Sequence[str | dict | LabelSpec], *,
                      ordinal: bool | None = None) -> list[LabelInfo]:
        """Set the label set, in order. Names not given again are retired (kept for history).

        Items are names or label specs (``name``, ``key``, ``colour``, ``guideline``). Keys and
        colours are filled in when missing. Raises RecordError on duplicates or bad specs.
        """
        specs: list[LabelSpec] = []
        for i, item in enumerate(labels):
            try:
                spec = LabelSpec(name=item) if isinstance(item, str) else LabelSpec.model_validate(
                    item if isinstance(item, dict) else item.model_dump())
            except ValidationError as exc:
                err = exc.errors()[0]
                raise RecordError(f"label #{i + 1}: {'.'.join(map(str, err['loc']))}: {err['msg']}") from None
            specs.append(spec)
        names = [s.name for s in specs]
        dup = {n for n in names if names.count(n) > 1}
        if dup:
            raise RecordError(f"label set: duplicate names {sorted(dup)}")
        keys = [s.key for s in specs if s.key]
        if len(keys) != len(set(keys)):
            raise RecordError("label set: two labels share a shortcut key")
        free = iter(k for k in AUTO_KEYS if k not in keys)
        specs = [s if s.key else s.model_copy(update={"key": next(free, None)}) for s in specs]

        def work(s: Session) -> list[LabelInfo]:
            self.ctx.lead_only(s, "change the label set")
            existing = {l.name: l for l in s.scalars(select(Label))}
            now = [(l.name, l.key, l.colour or PALETTE[pos % len(PALETTE)], l.guideline or "")
                   for pos, l in enumerate(sorted((l for l in existing.values() if not l.retired),
                                                  key=lambda l: l.position))]
            wanted = [(sp.name, sp.key, sp.colour or PALETTE[pos % len(PALETTE)], sp.guideline or "")
                      for pos, sp in enumerate(specs)]
            same_order = s.get(Setting, "label_set.ordinal")
            if now == wanted and (ordinal is None or bool(same_order and same_order.value) == bool(ordinal)):
                return self._labels(s)  # nothing changed: no new label-set version
            for l in existing.values():  # free keys first so reassignments don't collide
                l.key = None
                l.retired = l.name not in names
            s.flush()
            for pos, spec in enumerate(specs):
                row = existing.get(spec.name)
                if row is None:
                    row = Label(name=spec.name)
                    s.add(row)
                row.key = spec.key
                row.colour = spec.colour or PALETTE[pos % len(PALETTE)]
                row.guideline = spec.guideline
                row.position = pos
                row.retired = False
            version = (s.get(Setting, "label_set.version").value if s.get(Setting, "label_set.version") else 0) + 1
            s.merge(Setting(key="label_set.version", value=version))
            if ordinal is not None:
                s.merge(Setting(key="label_set.ordinal", value=bool(ordinal)))
            s.flush()
            self.ctx.log(s, "define", "label_set", None, None, None, {"labels": names, "version": version})
            return self._labels(s)
        return self.ctx.write(work)

    def labels(self) -> list[LabelInfo]:
        """The current label set, in order."""
        return self.ctx.read(self._labels)

    @staticmethod
    def _labels(s: Session) -> list[LabelInfo]:
        rows = s.scalars(select(Label).where(Label.retired.is_(False)).order_by(Label.position))
        return [LabelInfo(l.id, l.name, l.key, l.colour or PALETTE[0], l.guideline, l.position) for l in rows]

    def label_set_version(self) -> int:
        return self.ctx.read(lambda s: (s.get(Setting, "label_set.version").value
                                     if s.get(Setting, "label_set.version") else 0))

    def labels_ordinal(self) -> bool:
        return self.ctx.read(lambda s: bool(s.get(Setting, "label_set.ordinal").value
                                         if s.get(Setting, "label_set.ordinal") else False))

    # ---- people -----------------------------------------------------------------------
    def add_annotator(self, name: str, role: str = "annotator", password: str | None = None, *,
                      exist_ok: bool = False) -> int:
        """Add a person. In a server project ``password`` creates their database login."""
        name = (name or "").strip()
        if not name:
            raise RecordError("annotator name is empty")
        try:
            check_name_text(name, "annotator name")
        except ValueError as exc:
            raise RecordError(str(exc)) from None
        if role not in ROLES:
            raise RecordError(f"annotator {name!r}: role must be one of {', '.join(ROLES)}, not {role!r}")
        if self.ctx.is_server and password is not None:
            self.peers.team.check_login_name(name)  # refused before anything is written

        def work(s: Session) -> int:
            row = s.scalar(select(Annotator).where(Annotator.name == name))
            if row is not None:
                if exist_ok:
                    return row.id
                raise RecordError(f"annotator {name!r}: already exists")
            self.ctx.lead_only(s, "add people")
            row = Annotator(name=name, role=role)
            s.add(row)
            s.flush()
            if self.ctx.is_server:
                self.peers.team.give_login(s, row, password)
            self.ctx.log(s, "add", "annotator", row.id, None, None, row_dict(row))
            return row.id
        return self.ctx.write(work)

    def annotators(self) -> list[AnnotatorInfo]:
        return self.ctx.read(lambda s: [AnnotatorInfo(a.id, a.name, a.role) for a in
                                     s.scalars(select(Annotator).order_by(Annotator.id))])

    def role(self, name: str | None = None) -> str | None:
        def q(s: Session) -> str | None:
            try:
                return self.ctx.annotator(s, name).role
            except RecordError:
                return None
        return self.ctx.read(q)

    # ---- clips ------------------------------------------------------------------------
    def add_clip(self, media_path: str | os.PathLike, group: str | None = None, *,
                 source: str | None = None, licence: str | None = None,
                 consent: bool | None = None) -> int:
        """Register one media file that lies inside the media root; returns the clip id."""
        from .. import media
        self.ctx.check_lead("add clips")
        rel = self.ctx.relative_media_path(media_path)
        try:
            info, digest = probe_media(self.ctx.media_root / rel)
        except (media.MediaError, OSError) as exc:
            raise RecordError(_media_problem(self.ctx.media_root / rel, exc)) from None
        same = self.ctx.read(lambda s: s.scalar(select(Clip.path).where(Clip.sha256 == digest,
                                                                    Clip.path != rel).limit(1)))
        cid = self.ctx.write(lambda s: self._insert_clip(s, rel, digest, info, group, source, licence, consent))
        if same is not None:
            warnings.warn(duplicate_warning(rel, same), DuplicateMediaWarning, stacklevel=3)
        return cid

    def _insert_clip(self, s: Session, rel: str, digest: str, info: media.ProbeInfo,
                     group: str | None, source: str | None, licence: str | None,
                     consent: bool | None) -> int:
        self.ctx.lead_only(s, "add clips")  # every door: add_clip, add_media, clip records
        if s.scalar(select(Clip.id).where(Clip.path == rel)) is not None:
            raise RecordError(f"{rel}: already in the project")
        clip = Clip(path=rel, sha256=digest, fps=info.fps, frame_count=info.frame_count,
                    duration=info.duration, width=info.width, height=info.height, group_key=group,
                    source=source, licence=licence, consent=consent)
        s.add(clip)
        s.flush()
        self.ctx.log(s, "add", "clip", clip.id, clip.id, None, row_dict(clip))
        return clip.id

    def add_media(self, folder: str | os.PathLike, *, group_pattern: str | None = None,
                  group_csv: str | os.PathLike | None = None, progress: Progress | None = None,
                  source: str | None = None, licence: str | None = None,
                  consent: bool | None = None, workers: int | None = None,
                  scheduler: str | None = None, path_map: Any = None) -> IngestReport:
        """Add every video below ``folder`` (recursive). Unreadable files are skipped with the
        reason. The group key comes from ``group_pattern`` (a regular expression with a named
        group ``group``, searched in the path relative to the media root; :data:`BY_FOLDER`
        groups by folder, as the CLI and the setup dialog do by default) or from ``group_csv``
        (columns ``path,group``); with neither, every clip is its own group. A file with the same
        SHA-256 as a clip already present (or added earlier in the same call) is added and
        listed in ``duplicates``."""
        from .. import media
        from ..media.scan import find_videos
        self.ctx.check_lead("add clips")
        base = Path(folder)
        if not base.is_dir():
            raise RecordError(f"{folder}: not a folder")
        if base.resolve() != self.ctx.media_root.resolve():
            self.ctx.relative_media_path(base)  # RecordError when the folder lies outside the root
        pattern = None
        if group_pattern:
            try:
                pattern = re.compile(group_pattern)
            except re.error as exc:
                raise RecordError(f"group pattern {group_pattern!r}: {exc}") from None
            if "group" not in pattern.groupindex:
                raise RecordError(f"group pattern {group_pattern!r}: needs a named group (?P<group>...)")
        groups = _read_group_csv(group_csv) if group_csv else {}
        found = find_videos(base)  # links, unreadable folders and non-UTF-8 names set aside
        files = found.files
        known = set(self.ctx.read(lambda s: list(s.scalars(select(Clip.path)))))
        by_digest = dict(self.ctx.read(lambda s: list(s.execute(
            select(Clip.sha256, func.min(Clip.path)).group_by(Clip.sha256)).all())))
        report = IngestReport(skipped=[(_shown_below(self.ctx.media_root, p), why) for p, why in found.skipped])
        if workers is not None or scheduler is not None:
            self._add_on_workers(files, known, by_digest, report, groups, pattern,
                                 (source, licence, consent), progress=progress, workers=workers,
                                 scheduler=scheduler, path_map=path_map)
            return report
        for i, path in enumerate(files):
            if progress:
                progress(i, len(files))
            rel = self.ctx.relative_media_path(path)
            if rel in known:
                report.already_present.append(rel)
                continue
            group = _group_of(rel, groups, pattern)
            try:
                info, digest = probe_media(path)
            except (media.MediaError, OSError) as exc:
                report.skipped.append((rel, _media_problem(path, exc)))
                continue
            report.added.append(self.ctx.write(
                lambda s: self._insert_clip(s, rel, digest, info, group, source, licence, consent)))
            if digest in by_digest:
                report.duplicates.append((rel, by_digest[digest]))
            else:
                by_digest[digest] = rel
        if progress:
            progress(len(files), len(files))
        return report

    def _add_on_workers(self, files: list[Path], known: set[str], by_digest: dict[str, str],
                        report: IngestReport, groups: dict[str, str], pattern: Any,
                        facts: tuple[Any, Any, Any], *, progress: Progress | None,
                        workers: int | None, scheduler: str | None, path_map: Any) -> None:
        """:meth:`add_media` with the files read on worker processes; each batch of results is
        written in one transaction (a kill loses only the batch in flight)."""
        from .. import media
        todo: list[Path] = []
        for path in files:
            rel = self.ctx.relative_media_path(path)
            if rel in known:
                report.already_present.append(rel)
            else:
                todo.append(path)

        def write(batch: list[tuple[Path, Any]]) -> None:
            rows = []
            for path, f in batch:
                rel = self.ctx.relative_media_path(path)
                if f.problem is not None:
                    report.skipped.append((rel, f.problem))
                    continue
                info = media.ProbeInfo(fps=f.fps, frame_count=f.frame_count, width=f.width,
                                       height=f.height)
                rows.append((rel, f.sha256, info))

            def work(s: Session) -> list[int]:
                return [self._insert_clip(s, rel, digest, info, _group_of(rel, groups, pattern), *facts)
                        for rel, digest, info in rows]
            report.added.extend(self.ctx.write(work) if rows else [])
            for rel, digest, _info in rows:
                if digest in by_digest:
                    report.duplicates.append((rel, by_digest[digest]))
                else:
                    by_digest[digest] = rel

        self.peers.compute.probe_files(todo, write, workers=workers, scheduler=scheduler,
                                       path_map=path_map, progress=progress)

    def copy_media_in(self, source: str | os.PathLike, *, cancel: Any = None,
                      progress: Progress | None = None) -> Path:
        """Copy the videos below ``source``, a folder outside the media root, into a folder of
        the media root named after it (``name``, ``name-2``…), keeping sub-folders; all or
        nothing. Copying the same source again resumes in the same folder (files already there
        and identical are kept), so a retry after a kill makes no second copy. Returns the
        folder; :meth:`add_media` on it adds the clips (those present already are not added
        twice)."""
        from .. import media
        from ..media.copy_in import copy_target, copy_videos
        self.ctx.check_lead("copy media into the project")
        src = Path(os.path.realpath(source))
        root = Path(os.path.realpath(self.ctx.media_root))
        if src == root or root in src.parents:
            raise RecordError(f"{source}: already inside the media root {self.ctx.media_root}; "
                              "add it without copying")
        root.mkdir(parents=True, exist_ok=True)
        dest = copy_target(root, src.name or "videos", src)  # an interrupted copy is resumed
        try:
            copy_videos(src, dest, cancel=cancel, progress=progress)
        except (media.MediaError, OSError) as exc:
            raise RecordError(str(exc)) from None
        return dest

    def clip(self, ref: Any) -> ClipInfo:
        return self.ctx.read(lambda s: clip_info(self.ctx.clip(s, ref)))

    def clips(self, *, state: str | None = None, group: str | None = None,
              label: str | None = None, assignee: str | None = None,
              offset: int = 0, limit: int | None = None) -> list[ClipInfo]:
        """Clips in id order, optionally filtered; ``offset``/``limit`` page through them."""
        def q(s: Session) -> list[ClipInfo]:
            stmt = self._clip_query(s, state, group, label, assignee).order_by(Clip.id).offset(offset)
            if limit is not None:
                stmt = stmt.limit(limit)
            # plain columns, not clip objects: a big project has a hundred thousand of them
            return [ClipInfo(*r) for r in s.connection().execute(stmt.with_only_columns(*INFO_COLUMNS))]
        return self.ctx.read(q)

    def clip_count(self, **filters: Any) -> int:
        def q(s: Session) -> int:
            sub = self._clip_query(s, filters.get("state"), filters.get("group"),
                                   filters.get("label"), filters.get("assignee")).subquery()
            return s.scalar(select(func.count()).select_from(sub)) or 0
        return self.ctx.read(q)

    def _clip_query(self, s: Session, state, group, label, assignee):
        stmt = select(Clip)
        if state:
            stmt = stmt.where(Clip.state == state)
        if group:
            stmt = stmt.where(Clip.group_key == group)
        if label:
            lab = self.ctx.label(s, label)
            stmt = stmt.where(Clip.id.in_(select(ClipLabel.clip_id).where(ClipLabel.label_id == lab.id)))
        if assignee:
            who = self.ctx.annotator(s, assignee)
            stmt = stmt.where(Clip.id.in_(select(Assignment.clip_id).where(Assignment.annotator_id == who.id)))
        return stmt

    def groups(self) -> list[str]:
        return self.ctx.read(lambda s: [g for g in s.scalars(
            select(Clip.group_key).where(Clip.group_key.is_not(None)).distinct().order_by(Clip.group_key))])

    def set_fingerprint(self, clip: ClipRef, value: int) -> None:
        """Store a clip's 64-bit perceptual fingerprint (kept as a signed 64-bit integer)."""
        signed = value - (1 << 64) if value >= (1 << 63) else value
        def work(s: Session) -> None:
            self.ctx.lead_only(s, "record clip fingerprints")
            self.ctx.clip(s, clip).fingerprint = signed
        self.ctx.write(work)

    def stats(self) -> dict[str, Any]:
        """Counts for a quick overview (``clipscribe stats``)."""
        def q(s: Session) -> dict[str, Any]:
            count = lambda model: s.scalar(select(func.count()).select_from(model)) or 0  # noqa: E731
            by_state = {clip_state_word(k): n for k, n in
                        s.execute(select(Clip.state, func.count()).group_by(Clip.state)).all()}
            per_annotator = {name: n for name, n in s.execute(
                select(Annotator.name, func.count(ClipLabel.id)).join(ClipLabel, isouter=True)
                .group_by(Annotator.name).order_by(Annotator.name)).all()}
            return {
                "project": self.ctx.settings.name, "clips": count(Clip), "clips_by_state": by_state,
                "groups": s.scalar(select(func.count(func.distinct(Clip.group_key)))) or 0,
                "annotators": count(Annotator), "labels": len(self._labels(s)),
                "clip_labels": count(ClipLabel), "segments": count(Segment), "captions": count(Caption),
                "gold_labels": count(GoldLabel), "labels_per_annotator": per_annotator,
                "duration_s": round(s.scalar(select(func.coalesce(func.sum(Clip.duration), 0.0))) or 0.0, 3),
            }
        return self.ctx.read(q)




def probe_media(path: Path) -> tuple[media.ProbeInfo, str]:
    """Header facts, SHA-256 and the true frame count (from the frame index, which is cached
    by content hash so the viewer does not index the file again)."""
    from .. import media
    from ..media.index import load_or_build_index
    header = media.probe(path)
    digest = media.file_sha256(path)
    index = load_or_build_index(path, digest)
    info = media.ProbeInfo(fps=header.fps, frame_count=index.frame_count, width=header.width,
                           height=header.height)
    return info, digest


def _group_of(rel: str, groups: dict[str, str], pattern: Any) -> str | None:
    """A file's group: from the CSV, else from the pattern, else none."""
    group = groups.get(rel)
    if group is None and pattern is not None:
        m = pattern.search(rel)
        group = m.group("group") if m else None
    return group


def _shown_below(root: Path, path: Path) -> str:
    """``path`` relative to the media root where it lies below it, as printable text."""
    from ..media._common import shown
    try:
        path = path.relative_to(root)
    except ValueError:
        pass
    return shown(path.as_posix())


def _media_problem(path: Path, exc: Exception) -> str:
    if isinstance(exc, OSError):
        return f"{path}: {exc.strerror or exc}"
    return str(exc)


def _read_group_csv(path: str | os.PathLike) -> dict[str, str]:
    from ..export.csvsafe import read_cell
    out: dict[str, str] = {}
    try:
        with open(path, newline="", encoding="utf-8") as f:
            reader = csv.DictReader(f)
            if not reader.fieldnames or not {"path", "group"} <= set(reader.fieldnames):
                raise RecordError(f"{path}: needs the columns 'path' and 'group'")
            for line, row in enumerate(reader, start=2):
                if not row["path"]:
                    raise RecordError(f"{path}:{line}: path is empty")
                out[read_cell(row["path"]).replace("\\", "/")] = read_cell(row["group"] or "") or None
    except OSError as exc:
        raise RecordError(f"{path}: {exc.strerror or exc}") from None
    except UnicodeDecodeError as exc:
        raise RecordError(f"{path}: not UTF-8 text ({exc.reason} at byte {exc.start})") from None
    except csv.Error as exc:
        raise RecordError(f"{path}: not a readable CSV file ({exc})") from None
    return out
