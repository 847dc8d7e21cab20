"""Security tests: the PostgreSQL fixtures and helpers of the team tests, shared as they are
(one throwaway server per session, a new database per project)."""

from __future__ import annotations

from team.conftest import (  # noqa: F401  (fixtures are found by name)
    add_clips, connect_as, pg, server_project, uid, write_clip,
)
from team.pg_cluster import ADMIN, ADMIN_PASSWORD, SUPERUSER  # noqa: F401
