"""Segment-based sampling: where in a clip the snippets are taken.

The clip's ``N`` frames are split into ``K`` equal segments and one snippet is taken from each
(Wang et al. 2016, "Temporal Segment Networks", ECCV, doi:10.1007/978-3-319-46484-8_2). We take
each segment's centre rather than a random frame, so a clip always gives the same features:

- appearance frame of segment ``j``: ``c_j = floor((j + 0.5) * N / K)``;
- motion: ``L`` consecutive frame pairs around ``c_j``, frames ``s_j .. s_j + L`` with
  ``s_j = clamp(c_j - floor(L / 2), 0, N - 1 - L)`` (fewer pairs when the clip is shorter);
- the single frame: the clip's middle frame ``floor(N / 2)``.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


@dataclass(frozen=True)
class SnippetPlan:
    """Frame numbers to read for one clip of ``frame_count`` frames."""

    frame_count: int
    centres: tuple[int, ...]
    flow_starts: tuple[int, ...]
    pairs: int
    middle: int

    @property
    def flow_frames(self) -> frozenset[int]:
        """Every frame that takes part in a flow pair."""
        return frozenset(i for s in self.flow_starts for i in range(s, s + self.pairs + 1))

    @property
    def wanted(self) -> frozenset[int]:
        """Every frame the features need."""
        return self.flow_frames | set(self.centres) | {self.middle}


def snippet_plan(frame_count: int, snippets: int, pairs: int) -> SnippetPlan:
    """The frames of ``snippets`` segment centres and ``pairs`` flow pairs around each."""
    if frame_count < 1:
        raise ValueError(f"a clip needs at least one frame, got {frame_count}")
    if snippets < 1 or pairs < 1:
        raise ValueError(f"snippets and pairs must be positive, got {snippets} and {pairs}")
    n = frame_count
    j = np.arange(snippets, dtype=np.float64)
    centres = np.minimum(((j + 0.5) * n / snippets).astype(np.int64), n - 1)
    usable = min(pairs, n - 1)
    starts = np.clip(centres - usable // 2, 0, n - 1 - usable) if usable else np.array([], np.int64)
    return SnippetPlan(n, tuple(int(c) for c in centres), tuple(int(s) for s in starts),
                       usable, n // 2)
