"""The results of an export check: a one-line summary and three tables (label x split counts,
or train/val/test counts per rotating split; clips left out; leakage findings of every split)
over the read-only models of :mod:`.leakage_model`."""

from __future__ import annotations

from PySide6.QtCore import Qt
from PySide6.QtWidgets import (
    QAbstractItemView, QHeaderView, QLabel, QTableView, QTabWidget, QVBoxLayout, QWidget,
)

from .leakage_model import LeakageModel, RowsModel, split_label_rows


#: quality warnings stand out from the grey summary: dark amber text on a pale ground, readable
#: in light and dark themes alike
WARNING_STYLE = ("QLabel { color: #5c3c00; background: #fff4d6; border: 1px solid #e0b64a; "
                 "border-radius: 3px; padding: 4px; }")


def _warnings(n: int) -> str:
    return f"{n} warning" + ("" if n == 1 else "s")


class CheckResults(QWidget):
    """Shows an :class:`clipscribe.export.ExportPlan` (or nothing, before a check)."""

    def __init__(self, parent: QWidget | None = None) -> None:
        super().__init__(parent)
        lay = QVBoxLayout(self)
        lay.setContentsMargins(0, 0, 0, 0)
        self.summary = QLabel("Not checked yet.")
        self.summary.setObjectName("exportSummary")
        self.summary.setWordWrap(True)
        lay.addWidget(self.summary)
        self.warnings = QLabel()
        self.warnings.setObjectName("exportWarnings")
        self.warnings.setWordWrap(True)
        self.warnings.setTextFormat(Qt.TextFormat.PlainText)
        self.warnings.setTextInteractionFlags(Qt.TextInteractionFlag.TextSelectableByMouse)
        self.warnings.setStyleSheet(WARNING_STYLE)
        self.warnings.hide()
        lay.addWidget(self.warnings)
        self.split_model = RowsModel(["Label", "train", "val", "test", "Total"], self,
                                     total_row=True)
        self.left_model = RowsModel(["File", "Clip", "Annotators", "Why it is left out"], self)
        self.leak_model = LeakageModel(self)
        self.tabs = QTabWidget()
        self.split_view = self._table(self.split_model, "splitTable", stretch=0)
        self.left_view = self._table(self.left_model, "leftOutTable", stretch=3)
        self.leak_view = self._table(self.leak_model, "leakageTable", stretch=2)
        self.leak_view.setWordWrap(True)
        self.tabs.addTab(self.split_view, "Splits")
        self.tabs.addTab(self.left_view, "Left out")
        self.tabs.addTab(self.leak_view, "Leakage")
        lay.addWidget(self.tabs, 1)

    @staticmethod
    def _table(model, name: str, *, stretch: int) -> QTableView:
        v = QTableView()
        v.setObjectName(name)
        v.setModel(model)
        v.setSelectionBehavior(QAbstractItemView.SelectionBehavior.SelectRows)
        v.setEditTriggers(QAbstractItemView.EditTrigger.NoEditTriggers)
        v.setTabKeyNavigation(False)  # Tab leaves the table, arrows move inside it
        v.verticalHeader().hide()
        h = v.horizontalHeader()
        h.setSectionResizeMode(QHeaderView.ResizeMode.ResizeToContents)
        h.setMinimumSectionSize(72)
        if stretch:
            h.setSectionResizeMode(stretch, QHeaderView.ResizeMode.Stretch)
        return v

    def show_plans(self, plans: list | None, *, folds: bool = False) -> None:
        """Show one checked plan, or with ``folds`` the plans of split 1..k; None empties."""
        if plans and folds:
            self.show_folds(plans)
        else:
            self.show_plan(plans[0] if plans else None)

    def show_folds(self, plans: list) -> None:
        """Counts per rotating split, the clips left out (the same in every split) and the
        leakage findings of all splits, each row naming its split."""
        names = [f"split {i}" for i in range(1, len(plans) + 1)]
        cols = ["train", "val", "test"]
        rows = []
        for name, pl in zip(names, plans):
            n = {c: sum(1 for s in pl.assignment.values() if s == c) for c in cols}
            rows.append((name, *(n[c] for c in cols), len(pl.assignment)))
        rows.append(("All splits", *(sum(r[i] for r in rows) for i in range(1, 5))))
        self.split_model.set_rows(rows, ["Split", *cols, "Total"])
        left = plans[0].left_out
        self._left_out(plans[0])
        self._show_warnings([(name, w) for name, pl in zip(names, plans) for w in pl.warnings])
        findings = [(name, f) for name, pl in zip(names, plans) for f in pl.leakage.findings]
        self.leak_model.set_findings([f for _, f in findings], [n for n, _ in findings])
        n_block = sum(len(pl.leakage.blocking) for pl in plans)
        n_warn = sum(len(pl.leakage.warnings) for pl in plans)
        bad = [n for n, pl in zip(names, plans) if pl.leakage.blocking]
        once = all(sum(pl.assignment.get(c) == "test" for pl in plans) == 1
                   for c in plans[0].assignment)
        self.summary.setText(
            f"{len(plans)} rotating splits of {len(plans[0].assignment)} clips"
            + ("; each clip is tested in exactly one" if once else "; some clips are tested "
               "more than once or never") + f" · {len(left)} left out in every split · leakage: "
            f"{n_block} blocking" + (f" (in {', '.join(bad)})" if bad else "")
            + f", {_warnings(n_warn)}")
        self.tabs.setTabText(1, f"Left out ({len(left)})")
        self.tabs.setTabText(2, f"Leakage ({n_block} blocking, {_warnings(n_warn)})")
        self._stretch_message()
        self.leak_view.resizeRowsToContents()

    def _left_out(self, plan) -> None:
        media = getattr(plan, "left_out_media", {})
        self.left_model.set_rows([(media.get(d.clip_id, ""), d.clip_id,
                                   f"{d.annotators} (+{d.skipped} skipped)" if d.skipped else d.annotators,
                                   d.reason or "") for d in plan.left_out])

    def _show_warnings(self, warnings: list) -> None:
        """Quality warnings (split balance, reference captions) above the tables, one per
        line; hidden when there are none."""
        lines = [f"⚠ {f'{where}: ' if where else ''}{w.message}" for where, w in warnings]
        self.warnings.setText("\n".join(lines))
        self.warnings.setVisible(bool(lines))

    def _stretch_message(self) -> None:
        """Give the spare width to the "What was found" column, wherever it is now."""
        h = self.leak_view.horizontalHeader()
        cols = self.leak_model.headers
        for i in range(len(cols)):
            h.setSectionResizeMode(i, QHeaderView.ResizeMode.Stretch if cols[i] == "What was found"
                                   else QHeaderView.ResizeMode.ResizeToContents)

    def show_plan(self, plan) -> None:
        """Fill the summary and the tables from ``plan``; ``None`` empties them."""
        if plan is None:
            self.summary.setText("Not checked yet.")
            self.split_model.set_rows([])
            self.left_model.set_rows([])
            self.leak_model.set_findings([])
            self._show_warnings([])
            for i, text in enumerate(("Splits", "Left out", "Leakage")):
                self.tabs.setTabText(i, text)
            return
        counts: dict[str, int] = {s: 0 for s in plan.split.ratios}
        for s in plan.assignment.values():
            counts[s] = counts.get(s, 0) + 1
        sources: dict[str, int] = {}
        for d in plan.decisions.values():
            sources[d.source or "none"] = sources.get(d.source or "none", 0) + 1
        rep = plan.leakage
        self.summary.setText(
            f"{len(plan.assignment)} clips to export: "
            + ", ".join(f"{s} {n}" for s, n in counts.items())
            + " · labels: " + ", ".join(f"{n} {s}" for s, n in sorted(sources.items()))
            + f" · {len(plan.left_out)} left out · leakage: {len(rep.blocking)} blocking, "
            f"{_warnings(len(rep.warnings))}"
            + "".join(f" · {s} has no clips" for s, n in counts.items() if n == 0))
        headers, rows = split_label_rows(plan.assignment,
                                         {c: d.label for c, d in plan.decisions.items()},
                                         list(plan.split.ratios))
        self.split_model.set_rows(rows, headers)
        self._left_out(plan)
        self._show_warnings([(None, w) for w in plan.warnings])
        self.leak_model.set_findings(rep.findings)
        self._stretch_message()
        self.tabs.setTabText(1, f"Left out ({len(plan.left_out)})")
        self.tabs.setTabText(2, f"Leakage ({len(rep.blocking)} blocking, "
                                f"{_warnings(len(rep.warnings))})")
        self.leak_view.resizeRowsToContents()

