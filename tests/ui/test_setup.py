"""Setting a project up in the window: labels and videos, without the command line."""

import threading

import pytest

from clipscribe import Project
from clipscribe.media import copy_in
from clipscribe.ui.dialogs import start
from clipscribe.ui.dialogs.setup import GROUPINGS, ProjectSetup


@pytest.fixture
def empty(tmp_path):
    with Project.create(tmp_path / "fresh") as p:
        yield p


@pytest.fixture
def shoot(tmp_path, make_video):
    src = tmp_path / "shoot"
    for c, cam in enumerate(("cam-a", "cam-b")):
        for k in range(2):
            make_video(src / cam / f"take-{k}.mp4", n=8, seed=10 * c + k)
    return src


def _dialog(qtbot, project, *picks):
    answers = [str(p) for p in picks]
    d = ProjectSetup(project, pick=lambda caption: answers.pop(0))
    qtbot.addWidget(d)
    return d


def test_labels_are_saved_in_order_and_kept_labels_keep_their_keys(qtbot, empty):
    d = _dialog(qtbot, empty)
    d.label_text.setPlainText("pick up\n\n  put down  \nstack\n")
    d.ordinal.setChecked(True)
    assert d.save_labels() and d.changed
    assert [lab.name for lab in empty.labels()] == ["pick up", "put down", "stack"]
    assert empty.labels_ordinal() is True
    keys = {lab.name: lab.key for lab in empty.labels()}
    d.label_text.setPlainText("stack\npick up\nidle")   # reorder, retire one, add one
    assert d.save_labels()
    after = {lab.name: lab.key for lab in empty.labels()}
    assert [lab.name for lab in empty.labels()] == ["stack", "pick up", "idle"]
    assert after["stack"] == keys["stack"] and after["pick up"] == keys["pick up"]
    assert "label set v2" in d.label_note.text()


def test_bad_label_lists_are_refused_with_the_reason(qtbot, empty):
    d = _dialog(qtbot, empty)
    d.label_text.setPlainText("   \n")
    assert not d.save_labels() and "at least one" in d.label_note.text()
    d.label_text.setPlainText("push\npush")
    assert not d.save_labels() and d.label_note.text().startswith("Not saved:")
    assert empty.labels() == [] and not d.changed


def test_copy_in_adds_the_clips_grouped_by_folder(qtbot, empty, shoot):
    d = _dialog(qtbot, empty, shoot)
    d.grouping.setCurrentText(next(k for k, v in GROUPINGS.items() if v))
    d.copy_in()
    assert not d.progress.isHidden() and not d.copy_button.isEnabled()
    qtbot.waitUntil(lambda: d.progress.isHidden(), timeout=30000)
    assert "Added 4 clip(s)" in d.video_note.text() and d.changed
    assert sorted({c.group for c in empty.clips()}) == ["shoot/cam-a", "shoot/cam-b"]
    assert (empty.media_root / "shoot" / "cam-a" / "take-0.mp4").is_file()
    assert "4 clips in this project" in d.video_count.text()


def test_scan_adds_what_is_already_in_the_media_folder_once(qtbot, empty, make_video):
    make_video(empty.media_root / "take-1.mp4", n=8, seed=1)
    (empty.media_root / "broken.mp4").write_bytes(b"not a video")
    d = _dialog(qtbot, empty)
    d.grouping.setCurrentText(next(k for k, v in GROUPINGS.items() if v is None))
    d._ingest(None)
    qtbot.waitUntil(lambda: d.progress.isHidden(), timeout=30000)
    text = d.video_note.text()
    assert "Added 1 clip(s)" in text and "1 skipped" in text and "broken.mp4" in text
    d._ingest(None)
    qtbot.waitUntil(lambda: d.progress.isHidden(), timeout=30000)
    assert "Added 0 clip(s)" in d.video_note.text() and "1 already present" in d.video_note.text()
    assert [c.group for c in empty.clips()] == [None]


def test_cancelling_a_copy_leaves_nothing_and_close_waits_for_it(qtbot, empty, shoot, monkeypatch):
    monkeypatch.setattr(copy_in, "CHUNK", 256)
    gate = threading.Event()
    real = copy_in.check_cancel

    def slow_check(cancel, what):
        gate.wait(5)  # hold the copy until the test has pressed Cancel
        real(cancel, what)
    monkeypatch.setattr(copy_in, "check_cancel", slow_check)
    d = _dialog(qtbot, empty, shoot)
    d.copy_in()
    d.reject()                                    # closing now is refused
    assert "wait, or press Cancel" in d.video_note.text()
    d.cancel_button.click()
    gate.set()
    qtbot.waitUntil(lambda: d.progress.isHidden(), timeout=30000)
    assert "Cancelled" in d.video_note.text() and not d.changed
    assert not (empty.media_root / "shoot").exists() and empty.clip_count() == 0


def test_the_window_offers_setup_to_a_lead_and_reopens_after_a_change(qtbot, open_window, sample,
                                                                     monkeypatch):
    w, p = open_window(sample, "annotator-1")
    assert not w.actions_["setup"].isEnabled()            # annotators do not set projects up
    lead = [a.name for a in p.annotators() if a.role == "lead"][0]
    w2, p2 = open_window(sample, lead)
    assert w2.actions_["setup"].isEnabled()

    class Changed:
        def __init__(self, project, parent):
            self.changed = True

        def exec(self):
            return 0
    monkeypatch.setattr("clipscribe.ui.dialogs.setup.ProjectSetup", Changed)
    w2.actions_["setup"].trigger()
    assert not w2.isVisible() and start.take_switch() == p2.folder


def test_an_empty_project_says_how_to_add_clips(qtbot, open_window, empty):
    folder = empty.folder
    empty.close()
    w, _ = open_window(folder, None)
    assert "Set up project" in w.empty_note()


def test_people_are_added_and_change_role_and_refusals_are_said(qtbot, empty):
    d = _dialog(qtbot, empty)
    people = d.people
    assert people.password.isHidden() and people.password_button.isHidden()  # no logins locally
    lead = empty.user
    assert [people.list.item(i).text() for i in range(people.list.count())] == [f"{lead} — lead"]
    people.name.setText("annotator-4")
    assert people.add_person() and d.changed
    assert people.name.text() == "" and "Added annotator-4 as annotator" in people.note.text()
    assert [(a.name, a.role) for a in empty.annotators()] == [(lead, "lead"), ("annotator-4", "annotator")]
    people.name.setText("annotator-4")                       # the same name again
    assert not people.add_person() and people.note.text().startswith("Not saved:")
    assert people.selected() == ("annotator-4", "annotator")  # the one just added stays selected
    people.list.setCurrentRow(0)                              # the only lead cannot step down
    assert not people.toggle_role() and "at least one lead" in people.note.text()
    assert empty.role(lead) == "lead"
    people.list.setCurrentRow(1)
    assert people.toggle_button.text().replace("&", "") == "Make lead"
    assert people.toggle_role() and empty.role("annotator-4") == "lead"
    assert people.toggle_button.text().replace("&", "") == "Make annotator"
    people.list.setCurrentRow(0)                              # now the local user may step down,
    assert people.toggle_role() and empty.role(lead) == "annotator"
    people.list.setCurrentRow(1)                              # and, no longer a lead, changes nothing
    assert not people.toggle_role() and "only leads" in people.note.text()
    assert empty.role("annotator-4") == "lead"
    people.name.setText("  ")
    assert not people.add_person() and "name first" in people.note.text()
