"""clipscribe: build video datasets with labels, segments and reference captions."""

from ._version import __version__
from .errors import ProjectError, RecordError

__all__ = ["Project", "ProjectError", "RecordError", "__version__"]


def __getattr__(name: str):
    # The façade pulls in SQLAlchemy; import it on first use so `clipscribe.media` and
    # `clipscribe.agreement` stay light for scripts that only need them.
    if name == "Project":
        from .project import Project
        return Project
    raise AttributeError(name)
