"""Leakage checks over a split assignment: what could let a model see its test data in training.

Blocking kinds (stop an export unless overridden): ``group-split``, ``duplicate-media``,
``near-duplicate-media``, ``missing-consent``, ``missing-licence``. Warning kinds:
``duplicate-media-in-split``, ``near-duplicate-media-in-split``, ``duplicate-caption``,
``near-duplicate-caption``, ``no-checksum``, ``no-fingerprint``. Caption findings are warnings because short captions of
different clips often coincide; the media checks decide whether the same footage crossed splits.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field
from typing import Callable, Literal, Mapping, Sequence

import numpy as np

from .caption_groups import CaptionGroups, caption_groups
from .checks import name_files
from .clusters import Clusters
from .inputs import ClipInput
from .neardup import as_uint64, near_clusters
from .textdup import caption_clusters

Severity = Literal["blocking", "warning"]
_KIND_ORDER = ["group-split", "duplicate-media", "near-duplicate-media", "missing-consent",
               "missing-licence", "duplicate-media-in-split", "near-duplicate-media-in-split",
               "duplicate-caption",
               "near-duplicate-caption", "no-checksum", "no-fingerprint"]


@dataclass(frozen=True)
class Finding:
    """One leakage finding: ``kind``, ``severity``, a sentence naming the files, the clips
    involved (ids, and ``files``: their media paths in the same order), details."""

    kind: str
    severity: Severity
    message: str
    clips: tuple[str, ...]
    details: dict = field(default_factory=dict, compare=False)
    files: tuple[str, ...] = field(default=(), compare=False)

    def to_dict(self) -> dict:
        return {"kind": self.kind, "severity": self.severity, "message": self.message,
                "clips": list(self.clips), "files": list(self.files), "details": self.details}


@dataclass(frozen=True)
class LeakageReport:
    """Every finding of :func:`check_leakage` and the settings that produced them."""

    findings: tuple[Finding, ...]
    recipe: dict

    @property
    def blocking(self) -> list[Finding]:
        return [f for f in self.findings if f.severity == "blocking"]

    @property
    def warnings(self) -> list[Finding]:
        return [f for f in self.findings if f.severity == "warning"]

    def counts(self) -> dict[str, int]:
        out: dict[str, int] = {}
        for f in self.findings:
            out[f.kind] = out.get(f.kind, 0) + 1
        return out

    def to_dict(self) -> dict:
        """Plain dict in the shape of ``schema.export.LeakageReportModel``."""
        return {"blocking": [f.to_dict() for f in self.blocking],
                "warnings": [f.to_dict() for f in self.warnings],
                "counts": self.counts(), "recipe": dict(self.recipe)}


def _split_counts(clips: Sequence[str], assignment: Mapping[str, str]) -> dict[str, int]:
    out: dict[str, int] = {}
    for c in clips:
        out[assignment[c]] = out.get(assignment[c], 0) + 1
    return dict(sorted(out.items()))


def _describe(counts: Mapping[str, int]) -> str:
    return ", ".join(f"{s} ({n})" for s, n in counts.items())


def _paths(clips: Sequence[ClipInput]) -> dict[str, str]:
    return {c.clip_id: c.media_path for c in clips}


def _files(ids: Sequence[str], path: Mapping[str, str]) -> tuple[str, ...]:
    return tuple(path.get(c, c) for c in ids)


def _where(ids: Sequence[str], path: Mapping[str, str], assignment: Mapping[str, str]) -> str:
    """``a.mp4 (train), b.mp4 (test)``, files in name order (at most a few named)."""
    named = sorted((path.get(c, c), assignment[c]) for c in ids)
    return name_files([f"{p} ({s})" for p, s in named])


def _groups(clips: Sequence[ClipInput], assignment: Mapping[str, str]) -> list[Finding]:
    by_group: dict[str, list[str]] = defaultdict(list)
    for c in clips:
        if c.group is not None:
            by_group[str(c.group)].append(c.clip_id)
    out = []
    for g, members in sorted(by_group.items()):
        counts = _split_counts(members, assignment)
        if len(counts) > 1:
            ids = tuple(sorted(members))
            out.append(Finding("group-split", "blocking",
                               f"group {g!r} is in {len(counts)} splits: {_describe(counts)}",
                               ids, {"group": g, "splits": counts}, _files(ids, _paths(clips))))
    return out


def _identical_media(clips: Sequence[ClipInput], assignment: Mapping[str, str]) -> list[Finding]:
    by_sha: dict[str, list[str]] = defaultdict(list)
    for c in clips:
        if c.sha256:
            by_sha[c.sha256.lower()].append(c.clip_id)
    out, path = [], _paths(clips)
    for sha, members in sorted((k, v) for k, v in by_sha.items() if len(v) > 1):
        counts = _split_counts(members, assignment)
        ids = tuple(sorted(members))
        if len(counts) > 1:
            out.append(Finding("duplicate-media", "blocking",
                               f"identical files (same sha256) are in several splits: "
                               f"{_where(ids, path, assignment)}",
                               ids, {"sha256": sha, "splits": counts}, _files(ids, path)))
        else:
            out.append(Finding("duplicate-media-in-split", "warning",
                               f"identical files (same sha256) in split {next(iter(counts))!r}: "
                               f"{name_files(sorted(_files(ids, path)))}",
                               ids, {"sha256": sha, "splits": counts}, _files(ids, path)))
    return out


def _file_key(c: ClipInput) -> str:
    return f"sha256:{c.sha256.lower()}" if c.sha256 else f"clip:{c.clip_id}"


def _source_key(c: ClipInput) -> str:
    return f"group:{c.group}" if c.group is not None else _file_key(c)


def _near_media(clips: Sequence[ClipInput], assignment: Mapping[str, str], radius: int,
                cluster_media: Callable[[np.ndarray, int], Clusters] = near_clusters
                ) -> list[Finding]:
    """One finding per cluster of look-alike clips (a connected component of "fingerprints
    within ``radius``"; see :mod:`clipscribe.export.clusters`) that holds more than one file.

    A cluster in several splits blocks: some near pair of it crosses splits, and the split is
    free of such pairs only when every cluster lies in one split. A cluster in one split with
    clips of different groups is a warning: the grouping probably missed that they share a
    source, so a later split could part them. A cluster of one group is expected (takes of the
    same source) and not reported; copies of one file are the duplicate-media findings.
    """
    have = [c for c in clips if c.fingerprint is not None]
    if len(have) < 2:
        return []
    clusters = cluster_media(as_uint64([c.fingerprint for c in have]), radius)
    links = clusters.links_of()
    out, path = [], _paths(have)
    for members in clusters.groups():
        group = [have[x] for x in members.tolist()]
        if len({_file_key(c) for c in group}) < 2:
            continue
        ids = tuple(sorted(c.clip_id for c in group))
        counts = _split_counts(ids, assignment)
        lk = sorted([*sorted((have[a].clip_id, have[b].clip_id)), int(d)]
                    for a, b, d in links[int(clusters.label[members[0]])])
        if len(counts) > 1:
            crossing = [x for x in lk if assignment[x[0]] != assignment[x[1]]]
            a, b, d = min(crossing, key=lambda x: (x[2], x[0], x[1]))
            if len(ids) == 2:
                what = (f"{_where(ids, path, assignment)} look alike: fingerprints differ in "
                        f"{d} of 64 bits (radius {radius})")
            else:
                what = (f"{len(ids)} clips in {_describe(counts)} look alike (joined by "
                        f"fingerprints within {radius} of 64 bits): "
                        f"{_where(ids, path, assignment)}; e.g. "
                        f"{_where((a, b), path, assignment)} differ in {d}")
            out.append(Finding("near-duplicate-media", "blocking", what, ids,
                               {"splits": counts, "hamming": max(x[2] for x in lk),
                                "links": lk, "crossing": crossing}, _files(ids, path)))
        elif len({_source_key(c) for c in group}) > 1:
            split = next(iter(counts))
            out.append(Finding(
                "near-duplicate-media-in-split", "warning",
                f"{len(ids)} clips of different groups in split {split!r} look alike "
                f"(fingerprints within {radius} of 64 bits): "
                f"{name_files(sorted(_files(ids, path)))}; check their groups, or a later "
                f"split may part them", ids, {"split": split, "links": lk}, _files(ids, path)))
    return sorted(out, key=lambda f: (f.kind, f.clips))


def _captions(clips: Sequence[ClipInput], assignment: Mapping[str, str],
              groups: CaptionGroups) -> list[Finding]:
    path = _paths(clips)
    by_text = groups.by_text
    out = []
    for t in sorted(by_text):  # the texts of several clips
        ids = sorted(by_text[t])
        counts = _split_counts(ids, assignment)
        if len(counts) > 1:
            out.append(Finding("duplicate-caption", "warning",
                               f"caption {t!r} is written for clips in several splits: "
                               f"{_where(ids, path, assignment)}", tuple(ids),
                               {"text": t, "splits": counts}, _files(ids, path)))
    if groups.clusters is not None:
        out += _near_captions(groups, assignment, path)
    return out


def _near_captions(groups: CaptionGroups, assignment: Mapping[str, str],
                   path: Mapping[str, str]) -> list[Finding]:
    """One warning per cluster of near-identical texts (a connected component of "Jaccard >=
    threshold") whose clips lie in several splits."""
    texts, by_text, clusters = groups.texts, groups.by_text, groups.clusters
    assert clusters is not None
    links = clusters.links_of()
    out = []
    for members in clusters.groups():
        ids = sorted(set().union(*(by_text[texts[k]] for k in members.tolist())))
        counts = _split_counts(ids, assignment)
        if len(counts) < 2:
            continue
        lk = [[texts[a], texts[b], round(1.0 - d, 4)]
              for a, b, d in links[int(clusters.label[members[0]])]]
        weakest = min(x[2] for x in lk)
        if len(members) == 2:
            what = f"captions {lk[0][0]!r} and {lk[0][1]!r} are near-identical (Jaccard {weakest:.2f})"
        else:
            a, b, sim = max(lk, key=lambda x: x[2])
            what = (f"{len(members)} captions are near-identical, each within Jaccard "
                    f"{groups.threshold:.2f} of another (e.g. {a!r} and {b!r}, "
                    f"Jaccard {sim:.2f})")
        out.append(Finding("near-duplicate-caption", "warning",
                           f"{what} across splits: {_where(ids, path, assignment)}", tuple(ids),
                           {"texts": sorted(texts[k] for k in members.tolist()),
                            "jaccard": weakest, "links": lk, "splits": counts},
                           _files(ids, path)))
    return out


def _consent(clips: Sequence[ClipInput], require_consent: bool,
             require_licence: bool) -> list[Finding]:
    out, path = [], _paths(clips)
    if require_consent:
        missing = sorted(c.clip_id for c in clips if c.consent is not True)
        if missing:
            out.append(Finding("missing-consent", "blocking",
                               f"{len(missing)} clips have no recorded consent, which this "
                               f"project requires: {name_files(sorted(_files(missing, path)))}",
                               tuple(missing), {"count": len(missing)}, _files(missing, path)))
    if require_licence:
        missing = sorted(c.clip_id for c in clips if not (c.licence or "").strip())
        if missing:
            out.append(Finding("missing-licence", "blocking",
                               f"{len(missing)} clips have no licence, which this project "
                               f"requires: {name_files(sorted(_files(missing, path)))}",
                               tuple(missing), {"count": len(missing)}, _files(missing, path)))
    return out


def _unchecked(clips: Sequence[ClipInput]) -> list[Finding]:
    out, path = [], _paths(clips)
    for kind, attr, what in (("no-checksum", "sha256", "identical-media"),
                             ("no-fingerprint", "fingerprint", "near-duplicate")):
        missing = sorted(c.clip_id for c in clips if getattr(c, attr) is None)
        if missing:
            out.append(Finding(kind, "warning",
                               f"{len(missing)} clips have no {attr}; the {what} check could "
                               f"not cover them: {name_files(sorted(_files(missing, path)))}",
                               tuple(missing), {"count": len(missing)}, _files(missing, path)))
    return out


def check_leakage(clips: Sequence[ClipInput], assignment: Mapping[str, str], *,
                  require_consent: bool = False, require_licence: bool = False,
                  hamming_radius: int = 8, caption_threshold: float = 0.9,
                  captions: Mapping[str, Sequence[str]] | None = None,
                  cluster_captions: Callable[[list[str], float], Clusters] = caption_clusters,
                  caption_groups_of: Callable[[], CaptionGroups] | None = None,
                  cluster_media: Callable[[np.ndarray, int], Clusters] = near_clusters
                  ) -> LeakageReport:
    """Look for leakage between splits.

    Only clips present in ``assignment`` are checked. Messages name the clips' media files
    (``ClipInput.media_path``); ``Finding.clips`` keeps their ids. Near-duplicate media: 64-bit
    perceptual fingerprints within ``hamming_radius`` bits (Hamming distance) are near, and the
    clips are grouped into clusters, the connected components of that relation (a chain of near
    pairs joins a cluster; see :mod:`clipscribe.export.clusters`), found exactly without listing
    every near pair. A cluster in several splits blocks (one finding naming all its files, with
    its links and the links that cross splits in ``details``); one in a single split with clips
    of different groups is a warning (a grouping that missed a shared source leaks in a later
    split). Captions: identical after normalisation, or clusters of texts joined by word 3-gram
    shingle Jaccard >= ``caption_threshold`` whose clips lie in several splits (see
    :mod:`clipscribe.export.textdup`); ``caption_threshold=1.0`` keeps only identical text.

    Parameters
    ----------
    clips : sequence of ClipInput
    assignment : mapping of clip id to split
    require_consent, require_licence : bool
        Report clips lacking ``consent=True`` / a licence as blocking.
    hamming_radius : int
        0..63; 8 of 64 bits is a common practice for perceptual hashes of the same footage.
    caption_threshold : float
        In (0, 1].
    captions : mapping of clip id to caption texts, optional
        The captions each clip is exported with (the plan's caption policy); by default
        :func:`clipscribe.export.policy.caption_texts`.
    cluster_captions : callable, optional
        ``(distinct normalised texts, threshold) -> Clusters``, by default
        :func:`clipscribe.export.textdup.caption_clusters`; a project passes one that keeps
        its answer for the same texts (the clusters depend on nothing else).
    caption_groups_of : callable, optional
        Returns the :func:`caption_groups` of the checked clips when they are already being
        found (e.g. a worker's ``Future.result``); by default they are found here, from
        ``captions`` and ``cluster_captions``.
    cluster_media : callable, optional
        ``(fingerprints as uint64, radius) -> Clusters``, by default
        :func:`clipscribe.export.neardup.near_clusters`; a project passes one that keeps its
        answer for the same fingerprints (the clusters depend on nothing else).

    Returns
    -------
    LeakageReport
    """
    if not 0 <= hamming_radius < 64:
        raise ValueError(f"hamming_radius must lie in [0, 63], got {hamming_radius!r}")
    if not 0.0 < caption_threshold <= 1.0:
        raise ValueError(f"caption_threshold must lie in (0, 1], got {caption_threshold!r}")
    clips = [c for c in clips if c.clip_id in assignment]
    findings = (_groups(clips, assignment) + _identical_media(clips, assignment)
                + _near_media(clips, assignment, hamming_radius, cluster_media)
                + _consent(clips, require_consent, require_licence)
                + _captions(clips, assignment, caption_groups_of() if caption_groups_of else
                            caption_groups(clips, caption_threshold, captions, cluster_captions))
                + _unchecked(clips))
    findings.sort(key=lambda f: _KIND_ORDER.index(f.kind))
    recipe = {
        "clips_checked": len(clips),
        # not compared for near duplicates (also the no-fingerprint finding)
        "clips_without_fingerprint": sum(c.fingerprint is None for c in clips),
        "hamming_radius": hamming_radius,
        "near_duplicate_media": "64-bit perceptual fingerprints with Hamming distance <= radius; "
                                "one finding per cluster (connected component of near pairs): "
                                "in several splits blocking, in one split across groups a "
                                "warning; exact, multi-index hashing with leader cover",
        "identical_media": "equal sha256 of the media file",
        "caption_normalisation": "NFKC, case fold, punctuation to space, collapse whitespace",
        "caption_threshold": caption_threshold,
        "near_identical_captions": "Jaccard of word 3-gram shingle sets >= threshold; one "
                                   "finding per cluster (connected component of near pairs) "
                                   "whose clips lie in several splits; exact, union-find over "
                                   "keys of the shingles two texts share or leader cover over a "
                                   "prefix-filtered index, whichever a sample says is cheaper",
        "require_consent": require_consent,
        "require_licence": require_licence,
    }
    return LeakageReport(tuple(findings), recipe)
