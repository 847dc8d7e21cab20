"""Frame-exact video access, frame index, bounded cache and background jobs. No Qt, no database."""

from .cache import DEFAULT_CACHE_BYTES, FrameCache
from .errors import JobCancelled, MediaError
from .fingerprint import clip_fingerprint, dct_hash, fingerprint, hamming
from .index import FrameIndex, build_frame_index
from .jobs import motion_curve, sample_indices, shared_cache_dir, thumbnail_strip
from .probe import VIDEO_SUFFIXES, ProbeInfo, file_sha256, probe
from .video import Video, open_video

__all__ = [
    "DEFAULT_CACHE_BYTES", "FrameCache", "FrameIndex", "JobCancelled", "MediaError", "ProbeInfo",
    "VIDEO_SUFFIXES", "Video", "build_frame_index", "clip_fingerprint", "dct_hash", "file_sha256",
    "fingerprint", "hamming", "motion_curve", "open_video", "probe", "sample_indices",
    "shared_cache_dir", "thumbnail_strip",
]
