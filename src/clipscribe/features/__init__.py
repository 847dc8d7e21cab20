"""Clip features for label suggestions: appearance of sampled frames and motion from dense
optical flow, with segment-based sampling and a cache keyed by file content. numpy and OpenCV
only: no Qt, no database."""

from .descriptors import (APPEARANCE_DIMS, MOTION_DIMS, appearance, dense_flow, flow_engine, hof,
                          hog, hsv_histogram, mbh, motion)
from .extract import (FEATURE_VERSION, STREAMS, ClipFeatures, FeatureJob, FeatureRecipe,
                      cached_features_path, clip_features, compute_clip_features,
                      count_uncached_features, default_feature_cache_dir, features_for)
from .sampling import SnippetPlan, snippet_plan

__all__ = [
    "APPEARANCE_DIMS", "FEATURE_VERSION", "MOTION_DIMS", "STREAMS", "ClipFeatures", "FeatureJob",
    "FeatureRecipe", "SnippetPlan", "appearance", "cached_features_path", "clip_features",
    "compute_clip_features", "count_uncached_features", "default_feature_cache_dir",
    "dense_flow", "features_for", "flow_engine", "hof", "hog", "hsv_histogram", "mbh", "motion",
    "snippet_plan",
]
