"""Frame-exact video access, frame index, bounded cache and background jobs. No Qt, no database."""

from .errors import MediaError
from .probe import VIDEO_SUFFIXES, ProbeInfo, file_sha256, probe

__all__ = ["MediaError", "ProbeInfo", "VIDEO_SUFFIXES", "file_sha256", "probe"]
