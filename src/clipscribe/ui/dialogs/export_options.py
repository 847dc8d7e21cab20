"""The option boxes of the export dialog: how to split (one split by ratios, or k rotating
splits), the label and leakage settings, and the output. Widgets only; the dialog reads them."""

from __future__ import annotations

from datetime import datetime

from PySide6.QtWidgets import (
    QCheckBox, QComboBox, QDoubleSpinBox, QFormLayout, QGroupBox, QHBoxLayout, QLabel, QLineEdit,
    QPushButton, QRadioButton, QSpinBox,
)

SPLITS = (("train", "&Train", 70), ("val", "&Val", 15), ("test", "Te&st", 15))
MEDIA_MODES = (("Leave media where they are", None), ("Copy media into the export", "copy"),
               ("Hard-link media (same disk only)", "hardlink"))
CAPTION_POLICIES = (("Gold only (else every annotator's)", "gold"),
                    ("Gold and agreeing annotators'", "gold+agreeing"))
LABEL_RULES = (("Majority of annotators", "majority"),
               ("Inferred true label (Dawid-Skene)", "inferred"))
SEGMENT_RULES = (("Gold, else the best-agreeing annotator's", "gold+best"),
                 ("Gold only (else none)", "gold"))


def _share_box(value: float, tip: str) -> QDoubleSpinBox:
    """A spin box for a share or probability (0..1, two decimals, steps of 0.05)."""
    box = QDoubleSpinBox()
    box.setRange(0.0, 1.0)
    box.setSingleStep(0.05)
    box.setDecimals(2)
    box.setValue(value)
    box.setToolTip(tip)
    return box


class ExportOptions:
    """Mixin of :class:`~.export_dialog.ExportDialog`: builds the option boxes and reads them."""

    def _build_split_box(self) -> QGroupBox:
        box = QGroupBox("Splits and labels")
        form = QFormLayout(box)
        self.one_split = QRadioButton("One split by r&atios")
        self.one_split.setToolTip("One train/val/test split with the shares below")
        self.folds = QRadioButton("K rotat&ing splits")
        self.folds.setToolTip("k splits (split-1 .. split-k): each tests on its own k-th of the "
                              "groups and trains on the rest, so every clip is tested once")
        self.one_split.setChecked(True)
        modes = QHBoxLayout()
        modes.addWidget(self.one_split)
        modes.addWidget(self.folds)
        modes.addStretch(1)
        form.addRow(modes)
        self.ratio_spins: dict[str, QSpinBox] = {}
        for name, text, value in SPLITS:
            s = QSpinBox()
            s.setRange(0, 100)
            s.setSingleStep(5)
            s.setSuffix(" %")
            s.setValue(value)
            s.setToolTip(f"Share of clips for the {name} split; 0 leaves the split out. "
                         "Shares are scaled to add up to 100 %.")
            form.addRow(text, s)
            self.ratio_spins[name] = s
        self.ratio_total = QLabel()
        form.addRow("", self.ratio_total)
        self.k = QSpinBox()
        self.k.setRange(2, 10)
        self.k.setValue(5)
        self.k.setToolTip("Number of rotating splits; at most the number of groups")
        form.addRow("N&umber of splits", self.k)
        self.val_share = QSpinBox()
        self.val_share.setRange(0, 50)
        self.val_share.setSingleStep(5)
        self.val_share.setSuffix(" %")
        self.val_share.setToolTip("Share of each split's training side held out as val "
                                  "(group-exclusive); 0 for no val")
        form.addRow("Val shar&e of training", self.val_share)
        self.seed = QSpinBox()
        self.seed.setRange(0, 2_147_483_647)
        self.seed.setToolTip("Seed for placing groups into splits; the same seed and project give "
                             "the same splits")
        form.addRow("See&d", self.seed)
        self.min_agreement = _share_box(0.6, "Without gold, the majority label must be given "
                                        "by at least this share of the clip's annotators; "
                                        "otherwise the clip is left out")
        self.label_rule = QComboBox()
        self.label_rule.setObjectName("labelRule")
        for text, value in LABEL_RULES:
            self.label_rule.addItem(text, value)
        self.label_rule.setToolTip(
            "The label of a clip without gold. Majority: the most common annotator label, when "
            "its share reaches the minimum agreement. Inferred: the label most probable given "
            "every annotator's estimated confusion (Dawid-Skene), when its probability reaches "
            "the minimum posterior. Gold wins either way; recorded in the manifest.")
        form.addRow("Label without gold", self.label_rule)
        form.addRow("Minimum a&greement", self.min_agreement)
        self.min_posterior = _share_box(0.9, "With the inferred label: the probability it "
                                        "needs; otherwise the clip is left out")
        self.min_posterior.setObjectName("minPosterior")
        form.addRow("Minimum posterior", self.min_posterior)
        self.caption_policy = QComboBox()
        self.caption_policy.setObjectName("captionPolicy")
        for text, value in CAPTION_POLICIES:
            self.caption_policy.addItem(text, value)
        self.caption_policy.setToolTip(
            "Gold only: a settled clip exports just the captions the lead ticked into gold "
            "(every annotator caption when none were ticked). Gold and agreeing annotators: also "
            "the captions of annotators whose own label equals the exported label, without "
            "repeating a text.")
        form.addRow("Captions to e&xport", self.caption_policy)
        self.segment_rule = QComboBox()
        self.segment_rule.setObjectName("segmentRule")
        for text, value in SEGMENT_RULES:
            self.segment_rule.addItem(text, value)
        self.segment_rule.setToolTip(
            "Which segments a clip is exported with. Gold, else the best-agreeing annotator's: "
            "the lead's gold segments; without them, the segments of the annotator (among those "
            "whose label equals the exported one) whose segments overlap the others' most; else "
            "none. Gold only: clips without gold segments export none. Recorded in the manifest.")
        form.addRow("Segment &basis", self.segment_rule)
        self.radius = QSpinBox()
        self.radius.setRange(0, 64)
        self.radius.setValue(8)
        self.radius.setToolTip("Two clips whose 64-bit fingerprints differ in at most this many "
                               "bits count as near-duplicate footage")
        form.addRow("Hamming &radius", self.radius)
        self.keep_splits = QCheckBox("&Keep clips in the split of the last export")
        self.keep_splits.setChecked(True)
        self.keep_splits.setToolTip("Clips exported before stay where they were, so a test set "
                                    "never leaks into a later training set")
        form.addRow(self.keep_splits)
        return box

    def _build_output_box(self) -> QGroupBox:
        box = QGroupBox("Output")
        form = QFormLayout(box)
        self.folder = QLineEdit(str(self.project.folder / "exports" /
                                    f"export-{datetime.now():%Y%m%d-%H%M}"))
        self.folder.setToolTip("A new or empty folder; the export appears there only when "
                               "complete")
        self.browse = QPushButton("C&hoose…")
        self.browse.setToolTip("Pick the output folder")
        row = QHBoxLayout()
        row.addWidget(self.folder, 1)
        row.addWidget(self.browse)
        label = QLabel("&Folder")
        label.setBuddy(self.folder)
        form.addRow(label, row)
        self.media = QComboBox()
        for text, mode in MEDIA_MODES:
            self.media.addItem(text, mode)
        self.media.setToolTip("Leave in place: records name the media path in the project. "
                              "Copy or hard-link: media go under media/<split>/ in the export.")
        form.addRow("&Media", self.media)
        self.webvtt = QCheckBox("&One WebVTT file per clip")
        self.webvtt.setToolTip("Also write webvtt/<clip>.vtt with the clip's segments and "
                               "captions")
        form.addRow(self.webvtt)
        self.overwrite = QCheckBox("Re&place the folder if it is not empty")
        self.overwrite.setToolTip("Replace an existing, non-empty output folder as a whole")
        form.addRow(self.overwrite)
        return box

    # ---- reading -----------------------------------------------------------------------
    @property
    def fold_mode(self) -> bool:
        """K rotating splits are chosen (else one split by ratios)."""
        return self.folds.isChecked()

    def ratios(self) -> dict[str, float]:
        return {n: s.value() / 100 for n, s in self.ratio_spins.items() if s.value() > 0}

    def _key(self) -> tuple:
        """The settings a check depends on; a check is current while this stays the same."""
        common = (self.seed.value(), round(self.min_agreement.value(), 4), self.radius.value(),
                  self.caption_policy.currentData(), self.segment_rule.currentData(),
                  self.label_rule.currentData(), round(self.min_posterior.value(), 4))
        if self.fold_mode:
            return ("folds", self.k.value(), self.val_share.value(), *common)
        return ("one", tuple(sorted(self.ratios().items())), *common, self.keep_splits.isChecked())

    def _option_widgets(self) -> list:
        """(widget, enabled when idle) for every option, by the mode now chosen."""
        folds = self.fold_mode
        inferred = self.label_rule.currentData() == "inferred"
        return [(self.label_rule, True), (self.min_posterior, inferred), (self.one_split, True), (self.folds, True),
                *((s, not folds) for s in self.ratio_spins.values()),
                (self.k, folds), (self.val_share, folds), (self.seed, True),
                (self.min_agreement, not inferred), (self.caption_policy, True), (self.segment_rule, True),
                (self.radius, True),
                (self.keep_splits, not folds),
                (self.folder, True), (self.browse, True), (self.media, True), (self.webvtt, True),
                (self.overwrite, not folds)]  # folds go only into a new or empty folder
