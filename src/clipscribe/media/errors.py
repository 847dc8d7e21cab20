"""Media errors (under the package's one exception root)."""

from ..errors import ClipscribeError


class MediaError(ClipscribeError):
    """A media file that cannot be used; the message names the file and the problem."""


class JobCancelled(ClipscribeError):
    """A background media job stopped early because its cancel signal was set."""
