"""The façade's services, built for an open project on first use and handed to each other here.

Each service is a plain class over the shared :class:`~clipscribe.project.context.Context`;
a service that needs another reaches it through ``peers`` (never through the façade). A
service's module is imported when the service is first asked for, so a command that only
counts rows (``clipscribe stats``) never loads the agreement, export or video code.
"""

from __future__ import annotations

import importlib
from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from .analysis import Analysis
    from .annotate import Annotation
    from .catalog import Catalog
    from .checks import Checks
    from .clip_facts import ClipFacts
    from .compute import Compute
    from .context import Context
    from .disputed import Disputed
    from .exporting import Exporting
    from .gold import Gold
    from .history import History
    from .records import Records
    from .results import Results
    from .review import Review
    from .suggestions import Suggestions
    from .team import Team
    from .work_log import WorkLog
    from .workbench import Workbench

#: service name -> (module in this package, class)
SERVICES = {
    "catalog": ("catalog", "Catalog"), "clip_facts": ("clip_facts", "ClipFacts"),
    "annotation": ("annotate", "Annotation"),
    "workbench": ("workbench", "Workbench"), "gold": ("gold", "Gold"),
    "history": ("history", "History"), "records": ("records", "Records"),
    "review": ("review", "Review"), "analysis": ("analysis", "Analysis"),
    "exporting": ("exporting", "Exporting"), "team": ("team", "Team"),
    "suggestions": ("suggestions", "Suggestions"), "compute": ("compute", "Compute"),
    "checks": ("checks", "Checks"), "results": ("results", "Results"),
    "disputed": ("disputed", "Disputed"), "work_log": ("work_log", "WorkLog"),
}


class Peers:
    """Every service of one open project, by name; each made once, when first asked for."""

    catalog: Catalog
    clip_facts: ClipFacts
    annotation: Annotation
    workbench: Workbench
    gold: Gold
    history: History
    records: Records
    review: Review
    analysis: Analysis
    exporting: Exporting
    team: Team
    suggestions: Suggestions
    compute: Compute
    checks: Checks
    results: Results
    disputed: Disputed
    work_log: WorkLog

    def __init__(self, ctx: Context) -> None:
        self._ctx = ctx

    def __getattr__(self, name: str) -> Any:
        try:
            module, cls = SERVICES[name]
        except KeyError:
            raise AttributeError(f"no service {name!r}") from None
        made = getattr(importlib.import_module(f".{module}", __package__), cls)(self._ctx, self)
        setattr(self, name, made)  # found as an attribute from now on
        return made
