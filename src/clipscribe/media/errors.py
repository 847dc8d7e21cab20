"""Media errors."""


class MediaError(Exception):
    """A media file that cannot be used; the message names the file and the problem."""


class JobCancelled(Exception):
    """A background media job stopped early because its cancel signal was set."""
