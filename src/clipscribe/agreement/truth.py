r"""Inferred true labels and per-annotator confusion matrices by EM (Dawid & Skene 1979).

Each clip i has an unknown true label :math:`z_i`; each annotator a answers label l for a clip
whose true label is k with probability :math:`\pi^{(a)}_{kl}` (one row per true label), and
true labels occur with prior probabilities :math:`p_k`. The EM algorithm estimates the priors,
the confusion matrices and, per clip, the posterior :math:`T_{ik} = P(z_i = k \mid \text{answers})`.

Source: Dawid, A.P. & Skene, A.M. (1979). Maximum likelihood estimation of observer error-rates
using the EM algorithm. Journal of the Royal Statistical Society, Series C (Applied Statistics)
28(1):20-28. https://doi.org/10.2307/2346806 . The one-coin variant (one accuracy per
annotator, errors spread evenly over the other labels) is the restricted model discussed by
Zhang, Chen, Zhou & Jordan (2016), Spectral methods meet EM. JMLR 17(102):1-44.

All arithmetic is vectorised over the (clip, annotator, label) triples: one ``bincount`` per
label and step, so 50k clips x 5 annotators take a fraction of a second.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from operator import itemgetter
from typing import Any, Iterable, Sequence

import numpy as np

from . import _checks
from ._encode import category_order
from ._recipe import Recipe

EPS = 1e-10   # floor for probabilities before logs (priors, confusion entries, posteriors)
MODELS = ("full", "one-coin")
DAWID_SKENE_1979 = ("Dawid, A.P. & Skene, A.M. (1979). Maximum likelihood estimation of observer "
                    "error-rates using the EM algorithm. Applied Statistics 28(1):20-28. "
                    "doi:10.2307/2346806")
ONE_LABEL = "one label only: every clip gets it with probability 1"


@dataclass(frozen=True, eq=False)
class InferredLabels:
    """Result of :func:`dawid_skene`.

    The arrays are the primary data (cheap for 100k clips); the dict views ``labels``,
    ``posterior``, ``confusion`` and ``priors`` are built on first use.

    Attributes
    ----------
    items, annotators, label_order : list
        Clips (first-seen order), annotators (sorted) and labels (the category order).
    posterior_matrix : ndarray (items, labels)
        :math:`T_{ik}`; rows sum to 1.
    confusion_matrix : ndarray (annotators, labels, labels)
        ``[a, k, l]`` = P(annotator a answers l | true label k); each row sums to 1 over the
        labels a used (a label an annotator never gave has probability 0).
    prior_vector : ndarray (labels,)
    iterations : int
        EM rounds run (E-step then M-step).
    converged : bool
        True when the stopping rule was met before ``max_iter`` rounds.
    log_bound : list of float
        The stopping quantity after each round (see :func:`dawid_skene`).
    """

    items: list
    annotators: list[str]
    label_order: list
    posterior_matrix: np.ndarray = field(repr=False)
    confusion_matrix: np.ndarray = field(repr=False)
    prior_vector: np.ndarray = field(repr=False)
    iterations: int
    converged: bool
    log_bound: list[float] = field(repr=False)
    recipe: Recipe

    @cached_property
    def label_codes(self) -> np.ndarray:
        """Index into ``label_order`` of each item's inferred label (ties: first label)."""
        return np.argmax(self.posterior_matrix, axis=1)

    @cached_property
    def certainty(self) -> np.ndarray:
        """Posterior probability of each item's inferred label."""
        return self.posterior_matrix[np.arange(len(self.items)), self.label_codes]

    @cached_property
    def labels(self) -> dict[Any, Any]:
        """{item: most probable label}."""
        cats = self.label_order
        return {it: cats[k] for it, k in zip(self.items, self.label_codes.tolist())}

    @cached_property
    def posterior(self) -> dict[Any, dict[Any, float]]:
        """{item: {label: probability}}."""
        cats = self.label_order
        return {it: dict(zip(cats, row)) for it, row in zip(self.items,
                                                             self.posterior_matrix.tolist())}

    @cached_property
    def confusion(self) -> dict[str, dict[Any, dict[Any, float]]]:
        """{annotator: {true_label: {given_label: probability}}}."""
        cats = self.label_order
        return {a: {k: dict(zip(cats, row)) for k, row in zip(cats, m)}
                for a, m in zip(self.annotators, self.confusion_matrix.tolist())}

    @cached_property
    def priors(self) -> dict[Any, float]:
        """{label: prior probability of the true label}."""
        return dict(zip(self.label_order, self.prior_vector.tolist()))

    @cached_property
    def accuracy(self) -> dict[str, float]:
        r"""Estimated accuracy per annotator: :math:`\sum_k p_k \pi^{(a)}_{kk}`."""
        diag = np.einsum("akk->ak", self.confusion_matrix)
        return dict(zip(self.annotators, (diag @ self.prior_vector).tolist()))

    def to_dict(self, *, items: bool = True) -> dict:
        """JSON-safe dict; ``items=False`` leaves out the per-item labels and posteriors."""
        out = {"labels_order": [str(x) for x in self.label_order],
               "annotators": list(self.annotators),
               "priors": {str(k): v for k, v in self.priors.items()},
               "confusion": {a: {str(k): {str(g): p for g, p in row.items()}
                                 for k, row in m.items()} for a, m in self.confusion.items()},
               "accuracy": self.accuracy, "iterations": self.iterations,
               "converged": self.converged, "recipe": self.recipe.to_dict()}
        if items:
            names = [str(c) for c in self.label_order]
            out["items"] = [{"item": str(it), "label": names[k], "posterior": dict(zip(names, row))}
                            for it, k, row in zip(self.items, self.label_codes.tolist(),
                                                  self.posterior_matrix.tolist())]
        return out


def _codes(values: Sequence[Any], keys: Sequence[Any]) -> np.ndarray:
    index = {x: i for i, x in enumerate(keys)}
    return np.fromiter(map(index.__getitem__, values), dtype=np.int64, count=len(values))


def _encode_triples(triples: Iterable[Sequence[Any]], label_order):
    rows = triples if isinstance(triples, list) else list(triples)
    if not rows:
        raise ValueError("triples hold no label: nothing to infer")
    try:
        bad = next((n for n, size in enumerate(map(len, rows)) if size != 3), None)
    except TypeError:
        bad = next(n for n, r in enumerate(rows) if not hasattr(r, "__len__"))
    if bad is not None:
        raise ValueError(f"triples[{bad}] must be an (item, annotator, label) tuple")
    item_t, ann_t, lab_t = (list(map(itemgetter(k), rows)) for k in range(3))
    distinct = list(dict.fromkeys(lab_t))
    if any(_checks.is_missing(v) for v in distinct):
        keep = [i for i, v in enumerate(lab_t) if not _checks.is_missing(v)]
        item_t, ann_t, lab_t = ([t[i] for i in keep] for t in (item_t, ann_t, lab_t))
        distinct = [v for v in distinct if not _checks.is_missing(v)]
        if not keep:
            raise ValueError("triples hold no label: nothing to infer")
    if not all(isinstance(a, str) for a in dict.fromkeys(ann_t)):
        ann_t = list(map(str, ann_t))
    items = list(dict.fromkeys(item_t))
    annotators = sorted(set(ann_t))
    cats = category_order(distinct, label_order)
    unknown = set(distinct) - set(cats)
    if unknown:
        raise ValueError(f"label {next(iter(unknown))!r} is not among the declared labels")
    it, an, lab = _codes(item_t, items), _codes(ann_t, annotators), _codes(lab_t, cats)
    pair = it * len(annotators) + an
    if np.bincount(pair).max() > 1:             # a repeated pair keeps the last row
        last = len(pair) - 1 - np.unique(pair[::-1], return_index=True)[1]
        last.sort()
        it, an, lab = it[last], an[last], lab[last]
    return items, annotators, cats, it, an, lab


def _group_sums(index: np.ndarray, weights: np.ndarray, n_groups: int) -> np.ndarray:
    """Rows of ``weights`` (triples x K) summed by ``index``: one bincount per column."""
    return np.stack([np.bincount(index, weights=weights[:, k], minlength=n_groups)
                     for k in range(weights.shape[1])], axis=1)


class _Model:
    """The triples encoded once, and the E- and M-steps over them."""

    def __init__(self, it, an, lab, n_items, n_annot, n_cats, one_coin):
        self.it, self.an, self.lab = it, an, lab
        self.n_items, self.n_annot, self.k = n_items, n_annot, n_cats
        self.one_coin = one_coin
        self.cell = an * n_cats + lab               # (annotator, given label) of each triple
        used = np.bincount(self.cell, minlength=n_annot * n_cats) > 0
        self.used = used.reshape(n_annot, n_cats)   # labels each annotator gave at least once

    def majority(self) -> np.ndarray:
        """Initial posteriors: each item's share of votes per label."""
        counts = np.bincount(self.it * self.k + self.lab, minlength=self.n_items * self.k)
        counts = counts.reshape(self.n_items, self.k).astype(np.float64)
        return counts / counts.sum(axis=1, keepdims=True)

    def m_step(self, post: np.ndarray) -> np.ndarray:
        """Confusion ``[a, given, true]`` from posteriors (floored at EPS on given labels used)."""
        k = self.k
        if self.one_coin:
            hit = post[self.it, self.lab]
            skill = np.bincount(self.an, weights=hit, minlength=self.n_annot)
            skill /= np.bincount(self.an, minlength=self.n_annot)
            off = (1.0 - skill) / (k - 1)
            err = np.where(np.eye(k, dtype=bool)[None], skill[:, None, None],
                           off[:, None, None])
            err = np.clip(err, EPS, 1.0 - EPS)
            return np.where(self.used[:, :, None], err, 0.0)
        counts = _group_sums(self.cell, post[self.it], self.n_annot * k).reshape(
            self.n_annot, k, k)
        counts = np.where(self.used[:, :, None], np.maximum(counts, EPS), 0.0)
        return counts / counts.sum(axis=1, keepdims=True)

    def log_errors(self, err: np.ndarray) -> np.ndarray:
        with np.errstate(divide="ignore"):
            return np.log(err).reshape(self.n_annot * self.k, self.k)

    def e_step(self, priors: np.ndarray, log_err: np.ndarray) -> np.ndarray:
        ll = _group_sums(self.it, log_err[self.cell], self.n_items)
        ll += np.log(np.maximum(priors, EPS))
        ll -= ll.max(axis=1, keepdims=True)
        p = np.exp(ll)
        return p / p.sum(axis=1, keepdims=True)

    def bound(self, post, priors, log_err) -> float:
        """Expected complete-data log-likelihood plus posterior entropy, per triple."""
        tp = post[self.it]
        joint = float(np.sum(tp * (log_err[self.cell] + np.log(np.maximum(priors, EPS)))))
        pc = np.maximum(post, EPS)
        entropy = -float(np.sum(np.log(pc) * pc))
        return (joint + entropy) / len(self.it)


def dawid_skene(triples: Iterable[Sequence[Any]], *, max_iter: int = 100, tol: float = 1e-5,
                model: str = "full", label_order: Sequence[Any] | None = None,
                label_set_version: str | None = None) -> InferredLabels:
    r"""Inferred true labels, per-annotator confusion matrices and label priors by EM.

    Parameters
    ----------
    triples : iterable of (item, annotator, label)
        One answer per item and annotator (a repeated pair keeps the last row); ``None``/NaN
        labels are skipped.
    max_iter : int
        Most EM rounds.
    tol : float
        Stop when the bound :math:`B` (below) improves by less than ``tol`` in a round.
    model : {"full", "one-coin"}
        ``"full"``: a K x K confusion matrix per annotator (Dawid & Skene 1979).
        ``"one-coin"``: one accuracy :math:`s_a` per annotator,
        :math:`\pi^{(a)}_{kl} = s_a` if :math:`l = k` else :math:`(1 - s_a)/(K-1)`; fewer
        parameters, for small projects where full matrices overfit.
    label_order : sequence, optional
        The label set in order (labels nobody gave still get a prior and a row); default the
        sorted distinct labels.
    label_set_version : str, optional
        Written into the recipe.

    Returns
    -------
    InferredLabels
        ``.labels`` {item: label}, ``.posterior`` {item: {label: p}}, ``.confusion``
        {annotator: {true_label: {given_label: p}}}, ``.priors``, ``.iterations``,
        ``.converged``, ``.recipe``, and the same as arrays.

    Notes
    -----
    Start: :math:`T_{ik}` = share of item i's answers that are k (majority-vote posteriors), then
    an M-step. Each round then runs

    E-step: :math:`T_{ik} \propto p_k \prod_{a \in A_i} \pi^{(a)}_{k, y_{ia}}`
    (in logs, with :math:`p_k` floored at :math:`10^{-10}`),

    M-step: :math:`p_k = \frac1N \sum_i T_{ik}`, and
    :math:`\pi^{(a)}_{kl} = \sum_{i: y_{ia} = l} T_{ik} / \sum_{i \in I_a} T_{ik}` with each
    count floored at :math:`10^{-10}` over the labels a used (one-coin:
    :math:`s_a = \frac{1}{|I_a|}\sum_{i \in I_a} T_{i, y_{ia}}`, clipped to
    :math:`[10^{-10}, 1 - 10^{-10}]`),

    and the stopping quantity, per answer :math:`(i, a)` in the set :math:`Y` of all answers,

    .. math:: B = \frac{1}{|Y|}\Big(\sum_{(i,a) \in Y} \sum_k T_{ik}
              \big(\log \pi^{(a)}_{k, y_{ia}} + \log p_k\big)
              - \sum_i \sum_k T_{ik} \log T_{ik}\Big)

    (the prior term is counted once per answer, which weighs it like the answers). Labels:
    the most probable one, ties to the first in ``label_order``.

    Degenerate input: no label at all raises ValueError. One label in the whole set: every item
    gets it with probability 1, confusion 1, zero rounds (recipe note). One annotator: the
    inferred labels are that annotator's answers and the confusion is the identity (EM has
    nothing to weigh against). Items with a single answer are kept: their posterior follows
    that annotator's estimated confusion row and the priors.

    Dawid, A.P. & Skene, A.M. (1979). Applied Statistics 28(1):20-28.
    https://doi.org/10.2307/2346806

    Examples
    --------
    >>> r = dawid_skene([(1, "a", "x"), (1, "b", "x"), (2, "a", "y"), (2, "b", "y"),
    ...                  (3, "a", "x"), (3, "b", "y")])
    >>> r.labels[1], r.labels[2]
    ('x', 'y')
    """
    max_iter = _checks.positive_int("max_iter", max_iter, minimum=0)
    tol = _checks.finite_number("tol", tol, minimum=0.0)
    _checks.choice("model", model, MODELS)
    items, annotators, cats, it, an, lab = _encode_triples(triples, label_order)
    k = len(cats)

    def recipe(note=None):
        return Recipe.make("truth", "dawid-skene", model=model, init="majority",
                           max_iter=max_iter, tol=tol, n_raters=len(annotators),
                           n_items=len(items), annotators=annotators,
                           label_set_version=label_set_version, note=note)

    if k == 1:
        used = np.ones((len(annotators), 1, 1))
        return InferredLabels(items, annotators, cats, np.ones((len(items), 1)), used,
                              np.ones(1), 0, True, [], recipe(ONE_LABEL))
    m = _Model(it, an, lab, len(items), len(annotators), k, model == "one-coin")
    post = m.majority()
    priors = post.mean(axis=0)
    log_err = m.log_errors(m.m_step(post))
    previous, history, converged = -np.inf, [], False
    for _ in range(max_iter):
        post = m.e_step(priors, log_err)
        priors = post.mean(axis=0)
        err = m.m_step(post)
        log_err = m.log_errors(err)
        b = m.bound(post, priors, log_err)
        history.append(b)
        if b - previous < tol:
            converged = True
            break
        previous = b
    err = np.exp(log_err).reshape(len(annotators), k, k)      # [a, given, true]
    return InferredLabels(items, annotators, cats, post, np.transpose(err, (0, 2, 1)).copy(),
                          priors, len(history), converged, history, recipe())
