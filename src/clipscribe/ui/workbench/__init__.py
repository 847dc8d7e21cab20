"""The workbench: the annotator's screen (clip queue, viewer and player, scrub bar, timeline,
clip panel, captions) in :class:`~.main_window.MainWindow`, which also holds the review view."""
