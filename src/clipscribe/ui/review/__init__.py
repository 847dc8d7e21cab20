"""The lead's review view: the review desk (settling disagreements into gold) and the agreement
board, in one :class:`~.page.ReviewPage` that the workbench window shows as its second view."""
