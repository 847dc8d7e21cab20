"""``clipscribe.Project``, the one door to a project, and the services behind it.

:mod:`.facade` holds :class:`Project` (opening, settings, and one delegating method per use
case); :mod:`.context` the state every service shares; one module per service (catalog,
annotate, workbench, gold, history, records, review, analysis, exporting, team).
"""

from .facade import DB_FILE, Project, check_sqlite_file

__all__ = ["DB_FILE", "Project", "check_sqlite_file"]
