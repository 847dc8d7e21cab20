"""The export dialog: check first (nothing written), blocking findings need an override and a
reason, writing produces the manifest and split files, errors are one line, leads only."""

import json
import shutil
import threading

import jsonschema
import pytest
import webvtt
from PySide6.QtCore import Qt
from PySide6.QtTest import QAbstractItemModelTester
from PySide6.QtWidgets import QMainWindow

from clipscribe import Project
from clipscribe.export import ExportCancelled, Finding, export_schemas
from clipscribe.ui.app import application
from clipscribe.ui.dialogs.export_dialog import ExportDialog, open_export_dialog
from clipscribe.ui.dialogs.leakage_model import LeakageModel, RowsModel, split_label_rows

WAIT_MS = 15000


@pytest.fixture
def lead(sample):
    application()
    with Project.open(sample) as p:  # the local user is the sample's lead
        yield p


def make_dialog(qtbot, project, out, parent=None):
    dlg = ExportDialog(project, parent)
    qtbot.addWidget(parent or dlg)
    dlg.folder.setText(str(out))
    dlg.show()
    return dlg


def run_check(qtbot, dlg):
    dlg.check_btn.click()
    assert dlg.busy
    qtbot.waitUntil(lambda: not dlg.busy, timeout=WAIT_MS)
    assert dlg.plan is not None, dlg.message.text()


def run_write(qtbot, dlg):
    assert dlg.write_btn.isEnabled(), dlg.write_btn.toolTip()
    dlg.write_btn.click()
    qtbot.waitUntil(lambda: not dlg.busy, timeout=WAIT_MS)


def add_cross_split_duplicate(p, folder):
    """Copy one clip's media into a new group and find a seed that puts the two copies in
    different splits: identical sha256 across splits is a blocking finding."""
    src = p.clips()[6]
    (folder / "media" / "other").mkdir()
    dst = folder / "media" / "other" / "copy.mp4"
    shutil.copy(p.media_path(src.id), dst)
    new = p.add_clip(dst, group="other")
    p.set_clip_label(new, "annotator-1", "push")
    for seed in range(20):
        if any(f.kind == "duplicate-media" for f in p.plan_export(seed=seed).leakage.blocking):
            return seed, {str(src.id), str(new)}
    pytest.fail("no seed in 0..19 split the two copies; the crafted case no longer works")


def test_check_shows_the_report_and_writes_nothing(qtbot, lead, tmp_path):
    out = tmp_path / "out"
    dlg = make_dialog(qtbot, lead, out)
    assert not dlg.write_btn.isEnabled() and "check" in dlg.write_btn.toolTip()
    run_check(qtbot, dlg)
    assert not out.exists()
    plan, res = dlg.plan, dlg.results
    assert plan.assignment == lead.plan_export(seed=0).assignment  # same settings, same splits
    assert res.leak_model.rowCount() == len(plan.leakage.findings) >= 1  # sample: a shared caption
    assert res.leak_model.index(0, 1).data() == plan.leakage.findings[0].kind
    assert "Leakage (0 blocking, 1 warning)" == res.tabs.tabText(2)
    totals = res.split_model.rows[-1]
    assert totals[0] == "All labels" and totals[-1] == len(plan.assignment)
    for split in ("train", "val", "test"):
        n = sum(1 for s in plan.assignment.values() if s == split)
        assert f"{split} {n}" in res.summary.text()
    assert dlg.write_btn.isEnabled() and not dlg.override.isEnabled()


def test_changed_settings_after_check_turn_write_off(qtbot, lead, tmp_path):
    dlg = make_dialog(qtbot, lead, tmp_path / "out")
    run_check(qtbot, dlg)
    assert dlg.write_btn.isEnabled()
    dlg.seed.setValue(3)
    assert not dlg.write_btn.isEnabled() and "check again" in dlg.write_btn.toolTip()
    dlg.seed.setValue(0)  # back to the checked settings
    assert dlg.write_btn.isEnabled()


def test_blocking_finding_needs_override_and_reason(qtbot, lead, sample, tmp_path):
    seed, pair = add_cross_split_duplicate(lead, sample)
    out = tmp_path / "out"
    dlg = make_dialog(qtbot, lead, out)
    dlg.seed.setValue(seed)
    run_check(qtbot, dlg)
    m = dlg.results.leak_model
    assert m.blocking_count() == 1
    first = m.index(0, 0)  # blocking rows come first, marked by text and icon as well as colour
    assert first.data() == "Blocking" and not first.data(Qt.ItemDataRole.DecorationRole).isNull()
    assert first.data(Qt.ItemDataRole.BackgroundRole) is not None
    assert set(m.finding(0).clips) == pair
    assert dlg.results.tabs.currentWidget() is dlg.results.leak_view
    assert not dlg.write_btn.isEnabled() and dlg.override.isEnabled() and not dlg.reason.isEnabled()
    dlg.reason.setText("second camera angle; accepted for the pilot")
    assert not dlg.write_btn.isEnabled()  # a reason alone is not enough: tick the box too
    dlg.override.setChecked(True)
    assert dlg.write_btn.isEnabled() and dlg.reason.isEnabled()
    dlg.reason.setText("   ")
    assert not dlg.write_btn.isEnabled()  # nor is the box without a reason
    dlg.reason.setText("second camera angle; accepted for the pilot")
    run_write(qtbot, dlg)
    manifest = json.loads((out / "manifest.json").read_text(encoding="utf-8"))
    assert manifest["override"]["reason"] == "second camera angle; accepted for the pilot"
    assert manifest["override"]["by"] == lead.user
    assert [f["kind"] for f in manifest["leakage"]["blocking"]] == ["duplicate-media"]


def test_write_produces_manifest_split_files_and_vtt(qtbot, lead, tmp_path):
    out = tmp_path / "out"
    win = QMainWindow()
    dlg = make_dialog(qtbot, lead, out, parent=win)
    dlg.webvtt.setChecked(True)
    dlg.media.setCurrentIndex(dlg.media.findData("copy"))
    run_check(qtbot, dlg)
    spy = []
    dlg.exported.connect(lambda folder, n: spy.append((folder, n)))
    run_write(qtbot, dlg)
    files = sorted(p.relative_to(out).as_posix() for p in out.rglob("*") if p.is_file())
    assert spy == [(str(out), len(files))]
    assert f"Wrote {len(files)} files" in dlg.message.text()
    assert win.statusBar().currentMessage().startswith(f"Wrote {len(files)} files")
    manifest = json.loads((out / "manifest.json").read_text(encoding="utf-8"))
    # outside reference: the manifest validates against its published JSON Schema (jsonschema)
    jsonschema.validate(manifest, export_schemas()["ExportManifest"])
    assert manifest["assignment"] == dict(sorted(dlg.plan.assignment.items()))
    assert manifest["media_mode"] == "copy"
    for split in ("train", "val", "test"):
        rows = (out / f"{split}.jsonl").read_text(encoding="utf-8").splitlines()
        assert len(rows) == sum(1 for s in dlg.plan.assignment.values() if s == split)
    vtts = [f for f in files if f.endswith(".vtt")]
    assert len(vtts) == len(dlg.plan.assignment)
    webvtt.read(str(out / vtts[0]))  # outside reference: webvtt-py parses what we wrote
    assert len([f for f in files if f.startswith("media/")]) == len(dlg.plan.assignment)


def test_failed_write_is_one_readable_line(qtbot, lead, tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("someone's notes")
    dlg = make_dialog(qtbot, lead, out)
    run_check(qtbot, dlg)
    run_write(qtbot, dlg)
    text = dlg.message.text()
    assert "not an empty folder" in text and "\n" not in text and "Traceback" not in text
    assert sorted(p.name for p in out.iterdir()) == ["keep.txt"]
    assert dlg.manifest is None


def test_cancel_stops_a_running_write(qtbot, lead, tmp_path, monkeypatch):
    started = threading.Event()

    def slow_write(out_dir, plan, *, cancel, progress, **kw):
        progress(1, 10)
        started.set()
        assert cancel.wait(WAIT_MS / 1000)
        raise ExportCancelled("export cancelled; nothing was written")

    monkeypatch.setattr(lead, "write_export", slow_write)
    dlg = make_dialog(qtbot, lead, tmp_path / "out")
    run_check(qtbot, dlg)
    dlg.write_btn.click()
    assert started.wait(WAIT_MS / 1000)
    qtbot.waitUntil(lambda: dlg.progress.maximum() == 10, timeout=WAIT_MS)
    assert dlg.cancel_btn.isEnabled() and not dlg.check_btn.isEnabled()
    dlg.cancel_btn.click()
    qtbot.waitUntil(lambda: not dlg.busy, timeout=WAIT_MS)
    assert "cancelled" in dlg.message.text() and dlg.manifest is None
    assert not (tmp_path / "out").exists()


def test_keyboard_mnemonics_are_unique_and_every_control_has_a_tooltip(qtbot, lead, tmp_path):
    from PySide6.QtWidgets import QAbstractButton, QLabel, QWidget
    dlg = make_dialog(qtbot, lead, tmp_path / "out")
    texts = [w.text() for w in dlg.findChildren(QAbstractButton) + dlg.findChildren(QLabel)]
    keys = [t[t.index("&") + 1].lower() for t in texts if "&" in t and not t.endswith("&")]
    assert len(keys) >= 15 and len(keys) == len(set(keys)), sorted(keys)
    for w in (*dlg.ratio_spins.values(), dlg.seed, dlg.min_agreement, dlg.radius, dlg.folder,
              dlg.browse, dlg.media, dlg.webvtt, dlg.overwrite, dlg.check_btn, dlg.cancel_btn,
              dlg.write_btn, dlg.override, dlg.reason, dlg.keep_splits):
        assert isinstance(w, QWidget) and w.toolTip(), w
        assert w.focusPolicy() & Qt.FocusPolicy.TabFocus, w


def test_leads_only(qtbot, sample, open_window):
    w, p = open_window(sample, "annotator-1")
    act = w.actions_["export"]
    assert not act.isEnabled() and "lead" in act.toolTip()
    assert open_export_dialog(w) is None and w.findChild(ExportDialog) is None
    dlg = ExportDialog(p)
    qtbot.addWidget(dlg)
    assert not dlg.check_btn.isEnabled() and not dlg.write_btn.isEnabled()
    assert "Only a lead" in dlg.message.text()
    dlg.check()
    assert not dlg.busy and dlg.plan is None


def test_lead_opens_the_dialog_from_the_action(qtbot, sample, open_window):
    w, _ = open_window(sample, None)
    act = w.actions_["export"]
    assert act.isEnabled() and act in w.menuBar().actions()[0].menu().actions()
    act.trigger()
    dlg = w.findChild(ExportDialog)
    assert dlg is not None and dlg.isVisible()
    act.trigger()
    assert len(w.findChildren(ExportDialog)) == 1  # one dialog per window
    dlg.close()


def _findings():
    return [Finding("duplicate-caption", "warning", "caption shared across splits", ("2", "11")),
            Finding("group-split", "blocking", "group g1 is in train and test",
                    tuple(str(i) for i in range(12))),
            Finding("no-fingerprint", "warning", "clip 5 has no fingerprint", ("5",))]


def test_leakage_model_passes_the_model_tester(qtbot):
    m = LeakageModel()
    QAbstractItemModelTester(m, QAbstractItemModelTester.FailureReportingMode.Fatal)
    m.set_findings(_findings())
    assert [m.index(r, 0).data() for r in range(3)] == ["Blocking", "Warning", "Warning"]
    assert m.index(0, 3).data().endswith("(+4)")  # long clip lists are shortened in the cell
    assert "11" in m.index(0, 3).data(Qt.ItemDataRole.ToolTipRole)
    assert m.index(1, 0).data(Qt.ItemDataRole.BackgroundRole) is None
    assert m.index(1, 3).data() == "2, 11"  # clip ids in reading order
    m.set_findings([])
    assert m.rowCount() == 0


def test_rows_model_and_label_split_table(qtbot):
    headers, rows = split_label_rows({"1": "train", "2": "train", "3": "test"},
                                     {"1": "push", "2": "idle", "3": "push"}, ["train", "val", "test"])
    assert headers == ["Label", "train", "val", "test", "Total"]
    assert rows == [("idle", 1, 0, 0, 1), ("push", 1, 0, 1, 2), ("All labels", 2, 0, 1, 3)]
    m = RowsModel(["a"], total_row=True)
    QAbstractItemModelTester(m, QAbstractItemModelTester.FailureReportingMode.Fatal)
    m.set_rows(rows, headers)
    assert m.columnCount() == 5 and m.index(2, 4).data() == "3"
    assert m.index(2, 0).data(Qt.ItemDataRole.FontRole).bold()


def test_inferred_label_rule_is_planned_and_recorded(qtbot, lead, tmp_path):
    dlg = make_dialog(qtbot, lead, tmp_path / "out")
    assert dlg.min_agreement.isEnabled() and not dlg.min_posterior.isEnabled()
    assert dlg.label_rule.toolTip() and dlg.min_posterior.toolTip()
    run_check(qtbot, dlg)
    dlg.label_rule.setCurrentIndex(dlg.label_rule.findData("inferred"))
    assert dlg.min_posterior.isEnabled() and not dlg.min_agreement.isEnabled()
    assert not dlg.write_btn.isEnabled()          # the rule changed: check again
    dlg.min_posterior.setValue(0.8)
    run_check(qtbot, dlg)
    assert (dlg.plan.policy.labels, dlg.plan.policy.min_posterior) == ("inferred", 0.8)
    assert {d.source for d in dlg.plan.decisions.values()} <= {"gold", "inferred"}
    run_write(qtbot, dlg)
    manifest = json.loads((tmp_path / "out" / "manifest.json").read_text())
    assert manifest["label_policy"]["labels"] == "inferred"
