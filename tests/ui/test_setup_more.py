"""Set up project: Return belongs to the field it is typed in, unchanged labels make no new
version, unsaved edits are asked about on Close, and caption rules, label keys and colours are
set here and from the command line alike."""

import pytest
from PySide6.QtCore import Qt

from clipscribe import Project
from clipscribe.cli import main
from clipscribe.ui.dialogs.setup import ProjectSetup


@pytest.fixture
def empty(tmp_path):
    with Project.create(tmp_path / "fresh") as p:
        p.define_labels(["pick up", "put down"])
        yield p


def _dialog(qtbot, project, answers=()):
    asked = []
    replies = list(answers)
    d = ProjectSetup(project, pick=lambda caption: "", ask=lambda what: asked.append(what) or (replies.pop(0) if replies else "discard"))
    qtbot.addWidget(d)
    d.asked = asked
    return d


def test_return_in_the_person_name_adds_the_person_and_saves_no_labels(qtbot, empty):
    d = _dialog(qtbot, empty, ["discard"])
    d.show()
    qtbot.waitExposed(d)
    v = empty.label_set_version()
    d.label_text.setPlainText("pick up\nput down\nstack")     # an edit not meant to be saved yet
    d.people.name.setFocus()
    qtbot.keyClicks(d.people.name, "annotator-9")
    qtbot.keyClick(d.people.name, Qt.Key.Key_Return)
    assert "annotator-9" in [a.name for a in empty.annotators()]
    assert empty.label_set_version() == v
    assert [lab.name for lab in empty.labels()] == ["pick up", "put down"]


def test_saving_unchanged_labels_makes_no_new_version(qtbot, empty):
    v = empty.label_set_version()
    empty.define_labels([{"name": l.name, "key": l.key, "colour": l.colour} for l in empty.labels()])
    assert empty.label_set_version() == v                     # the project itself
    d = _dialog(qtbot, empty)
    for _ in range(3):
        assert d.save_labels()
    assert empty.label_set_version() == v                     # and the dialog
    assert "Nothing to save" in d.label_note.text()
    d.label_text.setPlainText(d.label_text.toPlainText() + "\nstack")
    assert d.save_labels() and empty.label_set_version() == v + 1


@pytest.mark.parametrize("answer,closed,saved", [("stay", False, False), ("discard", True, False),
                                                 ("save", True, True)])
def test_close_asks_about_unsaved_label_edits(qtbot, empty, answer, closed, saved):
    d = _dialog(qtbot, empty, [answer])
    d.show()
    d.label_text.setPlainText("pick up\nput down\nidle")
    d.reject()
    assert d.asked == ["labels"]
    assert d.isVisible() is not closed
    assert ("idle" in [lab.name for lab in empty.labels()]) is saved


def test_close_without_edits_does_not_ask(qtbot, empty):
    d = _dialog(qtbot, empty)
    d.show()
    d.reject()
    assert d.asked == [] and not d.isVisible()


def test_caption_rules_from_the_dialog_and_the_command_line(qtbot, empty, capsys):
    d = _dialog(qtbot, empty)
    d.per_clip.setValue(3)
    d.min_words.setValue(2)
    d.max_words.setValue(30)
    assert d.save_caption_rules() and d.changed
    g = empty.settings.caption_guideline
    assert (g.captions_per_clip, g.min_words, g.max_words) == (3, 2, 30)
    d.min_words.setValue(31)
    assert not d.save_caption_rules() and "min_words" in d.rules_note.text()
    folder = str(empty.folder)
    assert main(["caption-rules", folder, "--per-clip", "4", "--max-words", "25"]) == 0
    assert "4 captions per clip, 2–25 words each" in capsys.readouterr().out
    assert main(["caption-rules", folder, "--min-words", "40"]) == 1
    assert "min_words 40 is more than max_words 25" in capsys.readouterr().err
    with Project.open(empty.folder) as again:
        assert again.settings.caption_guideline.captions_per_clip == 4


def test_label_keys_and_colours_from_the_dialog_and_the_command_line(qtbot, empty, capsys):
    d = _dialog(qtbot, empty)
    assert "pick up  [1]" in d.label_text.toPlainText()       # shown in the form it is read
    d.label_text.setPlainText("pick up [p] #112233\nput down\nstack [k]")
    assert d.save_labels()
    got = {lab.name: (lab.key, lab.colour) for lab in empty.labels()}
    assert got["pick up"] == ("p", "#112233")
    assert got["put down"][0] == "2"                          # kept its key
    assert got["stack"][0] == "k"
    assert main(["labels", str(empty.folder), "pick up", "put down [d] #445566", "stack"]) == 0
    with Project.open(empty.folder) as again:
        got = {lab.name: (lab.key, lab.colour) for lab in again.labels()}
    assert got["put down"] == ("d", "#445566") and got["pick up"] == ("p", "#112233")


def test_labels_past_the_tenth_get_keys_that_no_command_uses(tmp_path):
    with Project.create(tmp_path / "many") as p:
        p.define_labels([f"action {i}" for i in range(14)])
        keys = [lab.key for lab in p.labels()]
    assert keys[:10] == list("1234567890")
    assert all(keys) and len(set(keys)) == 14
    assert not set(keys) & set("belm")                         # Mark start/end, Loop, Merge
