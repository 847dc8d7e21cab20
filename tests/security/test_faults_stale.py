"""A caption changed elsewhere since this project object read it is not overwritten by a write
that gives no expected version: SQLite refuses the stale write as the server does, with the
writer's text kept on the error."""

from __future__ import annotations

import pytest

from clipscribe import Project
from clipscribe.errors import StaleWriteError

from ._fixtures import small_project

try:  # the throwaway PostgreSQL server of the team tests
    from team.conftest import add_clips, pg, server_project, uid  # noqa: F401
except ImportError:  # pragma: no cover - run outside the suite's layout
    pg = server_project = uid = add_clips = None


def _stale_without_version(p: Project, other: Project, who: str, clip) -> None:
    cid = p.add_caption(clip, who, "a person puts a red cup down")
    assert [c.text for c in p.caption_rows(clip=clip) if c.id == cid]  # p has seen it
    other.update_caption(cid, "a person puts the cup down")            # someone else's change
    with pytest.raises(StaleWriteError) as err:
        p.update_caption(cid, "my rewrite, based on what I saw")        # no expected_version
    assert "not saved" in str(err.value)
    assert err.value.current_text == "a person puts the cup down"
    # the refusal handed over their text and version: a write after it is an informed one,
    # so a delete is checked against a second change made elsewhere
    other.update_caption(cid, "a person sets the cup down")
    with pytest.raises(StaleWriteError):
        p.delete_caption(cid)
    assert [c.text for c in other.caption_rows() if c.id == cid] == ["a person sets the cup down"]
    p.caption_rows(clip=clip)                     # reading again takes the current version
    p.update_caption(cid, "my rewrite, after reading theirs")
    assert [c.text for c in other.caption_rows() if c.id == cid] == ["my rewrite, after reading theirs"]
    # own successive writes never refuse themselves
    p.update_caption(cid, "once more")
    p.update_caption(cid, "and again")
    p.delete_caption(cid)


def test_sqlite_refuses_a_stale_write_without_expected_version(tmp_path, make_video):
    with small_project(tmp_path / "proj", make_video, clips=1) as p, \
            Project.open(p.folder, user="lead") as other:
        _stale_without_version(p, other, "ann-a", p.clips()[0].id)


def test_a_caption_never_read_is_written_as_it_is_now(tmp_path, make_video):
    with small_project(tmp_path / "proj", make_video, clips=1) as p:
        cid = p.add_caption(1, "ann-a", "first words")
        with Project.open(p.folder, user="lead") as fresh:
            fresh.update_caption(cid, "a script that read nothing first")
        assert p.captions()[0][2] == "a script that read nothing first"


@pytest.mark.postgres
@pytest.mark.skipif(pg is None, reason="team test fixtures not importable")
def test_server_refuses_the_same_stale_write(server_project, uid):
    p = server_project
    add_clips(p, 1)
    p.add_annotator(f"ann_{uid}", password="pw-a")
    login = dict(user=f"ann_{uid}", password="pw-a")
    with Project.open(p.folder, **login) as mine, Project.open(p.folder, **login) as theirs:
        _stale_without_version(mine, theirs, login["user"], mine.clips()[0].id)
