"""The façade's services, built once per open project and handed to each other here.

Each service is a plain class over the shared :class:`~clipscribe.project.context.Context`;
a service that needs another reaches it through ``peers`` (never through the façade).
"""

from __future__ import annotations

from .analysis import Analysis
from .annotate import Annotation
from .catalog import Catalog
from .clip_facts import ClipFacts
from .context import Context
from .exporting import Exporting
from .gold import Gold
from .history import History
from .records import Records
from .review import Review
from .team import Team
from .workbench import Workbench


class Peers:
    """Every service of one open project, by name."""

    def __init__(self, ctx: Context) -> None:
        self.catalog = Catalog(ctx, self)
        self.clip_facts = ClipFacts(ctx, self)
        self.annotation = Annotation(ctx, self)
        self.workbench = Workbench(ctx, self)
        self.gold = Gold(ctx, self)
        self.history = History(ctx, self)
        self.records = Records(ctx, self)
        self.review = Review(ctx, self)
        self.analysis = Analysis(ctx, self)
        self.exporting = Exporting(ctx, self)
        self.team = Team(ctx, self)
