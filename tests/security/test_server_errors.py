"""Every refusal by a team server reaches the person as one clear line: never a traceback,
never "unexpected <Exception>", never the SQL, its parameters or a password verifier."""

from __future__ import annotations

import pytest

from clipscribe import Project
from clipscribe.cli import main

from .conftest import add_clips

pytestmark = pytest.mark.postgres


def _one_clear_line(err: str) -> str:
    line = err.strip()
    assert "\n" not in line, line
    assert line.startswith("clipscribe: error: "), line
    for leak in ("unexpected", "Traceback", "SCRAM-SHA-256$", "[SQL:", "INSERT", "CREATE ROLE",
                 "sqlalche.me"):
        assert leak not in line, line
    return line


@pytest.mark.parametrize("name, why", [
    ("pg_helper", "reserved"),          # PostgreSQL reserves role names starting with pg_
    ("public", "reserved"),             # and the pseudo-role PUBLIC
    ("none", "reserved"),
    ("x" * 300, "1 to 63 bytes"),       # NAMEDATALEN - 1 (PostgreSQL, "Identifiers")
    ("y" * 70, "1 to 63 bytes"),
])
def test_unusable_person_names_give_one_line(server_project, name, why, monkeypatch, capsys):
    p = server_project
    monkeypatch.setenv("CLIPSCRIBE_NEW_PASSWORD", "pw-x")
    monkeypatch.setattr("sys.stdin.isatty", lambda: False)
    assert main(["add-person", str(p.folder), name]) == 1
    line = _one_clear_line(capsys.readouterr().err)
    assert why in line and repr(name)[:20] in line
    assert name not in [a.name for a in p.annotators()]  # nothing half-made


def test_nul_in_a_caption_is_refused_clearly(server_project, capsys):
    p = server_project
    c1, = add_clips(p, 1)
    with pytest.raises(ValueError, match="NUL") as err:
        p.add_caption(c1, p.user, "a hand\x00 picks up a cup")
    assert "\n" not in str(err.value)
    assert p.captions() == []
    rec = p.folder / "nul.jsonl"
    rec.write_text('{"type": "caption", "clip": "%d", "annotator": "%s", "text": "a\\u0000b"}\n'
                   % (c1, p.user))
    assert main(["import", str(p.folder), str(rec)]) == 1
    assert "NUL" in _one_clear_line(capsys.readouterr().err)
    assert p.captions() == []


def test_wrong_password_is_one_line(server_project, uid, monkeypatch, capsys):
    p = server_project
    p.add_annotator(f"ann_{uid}", password="right-pw")
    monkeypatch.setenv("CLIPSCRIBE_PASSWORD", "wrong-pw")
    assert main(["stats", str(p.folder), "--user", f"ann_{uid}"]) == 1
    line = _one_clear_line(capsys.readouterr().err)
    assert "password authentication failed" in line and f"ann_{uid}" in line
    assert "wrong-pw" not in line


def test_agreement_as_an_annotator_says_why_it_is_refused(server_project, uid, monkeypatch,
                                                          capsys):
    p = server_project
    c1, = add_clips(p, 1)
    ann, bob = f"ann_{uid}", f"bob_{uid}"
    for who in (ann, bob):
        p.add_annotator(who, password=f"pw-{who}")
        with Project.open(p.folder, user=who, password=f"pw-{who}") as a:
            a.set_clip_label(c1, who, "stack")
            a.add_caption(c1, who, f"a hand stacks two cups, says {who}")
    monkeypatch.setenv("CLIPSCRIBE_PASSWORD", f"pw-{ann}")
    assert main(["agreement", str(p.folder), "--user", ann, "--boot", "10"]) == 1
    line = _one_clear_line(capsys.readouterr().err)
    assert "lead" in line and "blind" in line and ann in line
    # a lead gets the report
    monkeypatch.delenv("CLIPSCRIBE_PASSWORD")
    assert main(["agreement", str(p.folder), "--boot", "10"]) == 0
