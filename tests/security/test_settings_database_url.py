"""A settings file whose database_url names another SQLite file is refused with one line: a
project's SQLite database lives in the project folder, and clipscribe never creates its
tables inside an unrelated file."""

from __future__ import annotations

import json
import sqlite3

import pytest

from clipscribe import Project, ProjectError
from clipscribe.cli import main

from ._fixtures import one_error_line

SETTINGS = "clipscribe-project.json"


@pytest.fixture
def folder(tmp_path):
    with Project.create(tmp_path / "proj", user="lead") as p:
        p.define_labels(["stack"])
    return tmp_path / "proj"


def _point_at(folder, url):
    path = folder / SETTINGS
    cfg = json.loads(path.read_text())
    cfg["database_url"] = url
    path.write_text(json.dumps(cfg))
    return path


def test_a_url_to_another_sqlite_file_is_refused_and_the_file_left_alone(folder, tmp_path, capsys):
    other = tmp_path / "elsewhere" / "other.db"
    other.parent.mkdir()
    with sqlite3.connect(other) as conn:
        conn.execute("CREATE TABLE notes (body TEXT)")
    settings = _point_at(folder, f"sqlite:///{other}")
    with pytest.raises(ProjectError) as err:
        Project.open(folder)
    assert str(settings) in str(err.value) and str(other) in str(err.value)
    assert "\n" not in str(err.value)
    with sqlite3.connect(other) as conn:
        assert [r[0] for r in conn.execute("SELECT name FROM sqlite_master")] == ["notes"]
    assert main(["stats", str(folder)]) == 1
    assert str(other) in one_error_line(capsys.readouterr().err)


@pytest.mark.parametrize("url", ["sqlite:///{tmp}/new.db", "sqlite://", "sqlite:///relative.db",
                                 "sqlite:///file:{tmp}/new.db?mode=rwc&uri=true"])
def test_no_other_sqlite_database_is_made(folder, tmp_path, url, monkeypatch):
    monkeypatch.chdir(tmp_path)
    _point_at(folder, url.format(tmp=tmp_path))
    with pytest.raises(ProjectError, match="lives in its folder"):
        Project.open(folder)
    assert not (tmp_path / "new.db").exists() and not (tmp_path / "relative.db").exists()


def test_the_folders_own_file_named_by_url_still_opens(folder):
    _point_at(folder, f"sqlite:///{(folder / 'project.sqlite').resolve()}")
    with Project.open(folder) as p:
        assert [l.name for l in p.labels()] == ["stack"]


def test_create_refuses_a_sqlite_url_outside_the_folder(tmp_path):
    with pytest.raises(ProjectError, match="database_url names the SQLite file"):
        Project.create(tmp_path / "new", database_url=f"sqlite:///{tmp_path}/shared.db")
    assert not (tmp_path / "shared.db").exists() and not (tmp_path / "new" / SETTINGS).exists()
