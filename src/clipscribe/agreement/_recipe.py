"""The recipe every agreement number carries: what was computed, how, on what, by which version.

A recipe is small, frozen and JSON-safe, so it can be stored beside a result and written into
reports and export manifests; ``str(recipe)`` gives a one-line form such as
``kappa|cohen|weights=linear|raters=2|n=120|v0.1.0``.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import Any

from clipscribe._version import __version__


@dataclass(frozen=True, slots=True)
class Recipe:
    """How a number was made.

    Attributes
    ----------
    metric : str
        Family of the number: ``"kappa"``, ``"alpha"``, ``"agreement"``, ``"bleu"``, ``"cider"``,
        ``"retrieval"``, ``"segments"``.
    variant : str
        Which member of the family: ``"cohen"``, ``"fleiss"``, ``"krippendorff"``, ``"corpus"`` ...
    options : tuple of (str, str)
        Settings that change the value (weights, level, tokenization, smoothing, ...), in order.
    n_raters, n_items : int or None
        How many raters (annotators) and items (clips, frames, captions) went in.
    annotators : tuple of str
        Names of the annotators included, when known.
    label_set_version : str or None
        Version of the label set the labels came from, when the caller passes one.
    note : str or None
        A degenerate case that was hit and how it was resolved, e.g. ``"one category only"``.
    version : str
        clipscribe version that computed the number.
    """

    metric: str
    variant: str
    options: tuple[tuple[str, str], ...] = ()
    n_raters: int | None = None
    n_items: int | None = None
    annotators: tuple[str, ...] = ()
    label_set_version: str | None = None
    note: str | None = None
    version: str = field(default=__version__)

    @classmethod
    def make(cls, metric: str, variant: str, /, *, n_raters=None, n_items=None, annotators=(),
             label_set_version=None, note=None, **options: Any) -> Recipe:
        """Build a recipe; keyword options become ``options`` (``None`` values are dropped)."""
        opts = tuple((k, _fmt(v)) for k, v in options.items() if v is not None)
        return cls(metric, variant, opts, None if n_raters is None else int(n_raters),
                   None if n_items is None else int(n_items),
                   tuple(str(a) for a in annotators), label_set_version, note)

    def replace(self, **changes: Any) -> Recipe:
        """A copy with some fields changed (``options`` may be given as a dict)."""
        if isinstance(changes.get("options"), dict):
            changes["options"] = tuple((k, _fmt(v)) for k, v in changes["options"].items())
        return dataclasses.replace(self, **changes)

    def option(self, key: str, default: str | None = None) -> str | None:
        return dict(self.options).get(key, default)

    def text(self) -> str:
        """One line: ``metric|variant|key=value...|raters=R|n=N|vVERSION`` (our format)."""
        parts = [self.metric, self.variant, *(f"{k}={v}" for k, v in self.options)]
        if self.n_raters is not None:
            parts.append(f"raters={self.n_raters}")
        if self.n_items is not None:
            parts.append(f"n={self.n_items}")
        if self.label_set_version:
            parts.append(f"labelset={self.label_set_version}")
        if self.note:
            parts.append(f"note={self.note}")
        parts.append(f"v{self.version}")
        return "|".join(parts)

    __str__ = text

    def to_dict(self) -> dict[str, Any]:
        """JSON-safe dict, including the one-line form under ``"text"``."""
        return {"metric": self.metric, "variant": self.variant, "options": dict(self.options),
                "n_raters": self.n_raters, "n_items": self.n_items,
                "annotators": list(self.annotators), "label_set_version": self.label_set_version,
                "note": self.note, "version": self.version, "text": self.text()}


def _fmt(v: Any) -> str:
    if isinstance(v, float):
        return f"{v:g}"
    if isinstance(v, (list, tuple)):
        return ",".join(_fmt(x) for x in v)
    return str(v)


class Score(float):
    """A float that carries its :class:`Recipe` (``.recipe``) and its verbal band.

    It compares, prints and computes as the plain float it is; ``float(score)`` drops the recipe.
    """

    recipe: Recipe

    def __new__(cls, value: float, recipe: Recipe) -> Score:
        obj = super().__new__(cls, value)
        obj.recipe = recipe
        return obj

    @property
    def interpretation(self) -> str:
        """Landis & Koch (1977) band of the value; see :func:`clipscribe.agreement.interpret.band`."""
        from .interpret import band

        return band(float(self))

    def __repr__(self) -> str:
        return f"Score({float(self)!r}, {self.recipe.text()!r})"

    def __reduce__(self):
        return (Score, (float(self), self.recipe))
