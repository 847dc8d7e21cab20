"""A labelled data set whose classes differ by colour (appearance) and by direction (motion)."""

from __future__ import annotations

import numpy as np
import pytest

from clipscribe import features as F

from .synth import sliding_clip

TINY = F.FeatureRecipe(snippets=4, pairs=2, height=64)
DIRECTIONS = {"left": (-2, 0), "right": (2, 0)}


@pytest.fixture(scope="session")
def colour_and_motion(tmp_path_factory):
    """(X by stream, labels, groups, clip ids): 4 classes = {red, blue} x {left, right}, 16 clips
    each in 8 groups; colour is only in the picture, direction only in the motion."""
    folder = tmp_path_factory.mktemp("colour-motion")
    X = {s: [] for s in F.STREAMS}
    y, g, ids = [], [], []
    n = 0
    for colour in ("red", "blue"):
        for d, (dx, dy) in DIRECTIONS.items():
            for i in range(16):
                n += 1
                clip = sliding_clip(folder / f"{colour}-{d}-{i}.avi", dx=dx, dy=dy,
                                    colour=colour, seed=n)
                f = F.clip_features(clip, TINY, use_cache=False)
                for s in F.STREAMS:
                    X[s].append(f.stream(s))
                y.append(f"{colour} {d}")
                g.append(f"g{i % 8}")
                ids.append(n)
    return {s: np.array(v) for s, v in X.items()}, y, g, ids
