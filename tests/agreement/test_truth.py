"""Inferred true labels (Dawid-Skene EM): checked against crowd-kit's DawidSkene and
OneCoinDawidSkene (crowd-kit 1.4, same majority-vote start, same stopping rule), and on
simulated annotators whose confusion matrices the test sets."""

import numpy as np
import pandas as pd
import pytest
from crowdkit.aggregation import DawidSkene, OneCoinDawidSkene

from clipscribe.agreement import dawid_skene

LABELS = ["pick up", "put down", "stack", "wave"]


def simulate(n_items, confusions, *, seed, priors=None, coverage=0.8):
    """(item, annotator, label) triples from annotators with the given confusion matrices
    (rows: true label, columns: given label), and the true labels."""
    rng = np.random.default_rng(seed)
    k = len(LABELS)
    truth = rng.choice(k, size=n_items, p=priors)
    rows = []
    for a, conf in enumerate(confusions):
        conf = np.asarray(conf, dtype=float)
        conf = conf / conf.sum(axis=1, keepdims=True)
        answer = (rng.random(n_items)[:, None] > conf[truth].cumsum(axis=1)).sum(axis=1)
        took = rng.random(n_items) < coverage
        rows += [(f"clip-{i}", f"annotator-{a + 1}", LABELS[answer[i]])
                 for i in np.flatnonzero(took)]
    return rows, {f"clip-{i}": LABELS[t] for i, t in enumerate(truth)}


def noisy(acc, k=len(LABELS)):
    m = np.full((k, k), (1 - acc) / (k - 1))
    np.fill_diagonal(m, acc)
    return m


def crowdkit_fit(rows, model):
    df = pd.DataFrame(rows, columns=["task", "worker", "label"])
    ck = (DawidSkene if model == "full" else OneCoinDawidSkene)(n_iter=100, tol=1e-5)
    ck.fit(df)
    return ck


CASES = {
    "random": dict(confusions=[noisy(0.85), noisy(0.7), noisy(0.6), noisy(0.5), noisy(0.75)],
                   priors=None, seed=1),
    "skewed": dict(confusions=[noisy(0.9), [[8, 1, 1, 0], [1, 8, 1, 0], [0, 6, 4, 0],
                                            [0, 0, 1, 9]], noisy(0.55)],
                   priors=[0.6, 0.25, 0.1, 0.05], seed=2),
}


@pytest.mark.parametrize("model", ["full", "one-coin"])
@pytest.mark.parametrize("case", CASES)
def test_equals_crowdkit(case, model):
    """Source: crowd-kit DawidSkene / OneCoinDawidSkene (probas_, errors_, priors_)."""
    c = CASES[case]
    rows, _ = simulate(400, c["confusions"], seed=c["seed"], priors=c["priors"])
    ours = dawid_skene(rows, model=model)
    ck = crowdkit_fit(rows, model)
    assert ours.iterations == len(ck.loss_history_)
    np.testing.assert_allclose(ours.log_bound, ck.loss_history_, atol=1e-9)
    probas = ck.probas_.loc[ours.items, ours.label_order].to_numpy()
    np.testing.assert_allclose(ours.posterior_matrix, probas, atol=1e-6)
    np.testing.assert_allclose(ours.prior_vector, ck.priors_[ours.label_order].to_numpy(),
                               atol=1e-6)
    errors = ck.errors_
    for a in ours.annotators:
        for given in ours.label_order:
            if (a, given) in errors.index:
                expected = errors.loc[(a, given), ours.label_order].to_numpy(dtype=float)
                got = [ours.confusion[a][true][given] for true in ours.label_order]
                np.testing.assert_allclose(got, expected, atol=1e-6)
            else:      # a label this annotator never gave
                assert all(ours.confusion[a][t][given] == 0.0 for t in ours.label_order)
    assert ours.labels == ck.labels_.to_dict()


def test_beats_majority_vote_and_recovers_planted_confusion():
    """Simulation (this test's own confusion matrices): annotator-2 calls 'stack' 'put down'
    80% of the time; two careless annotators outvote the careful one under majority vote."""
    stack, put_down = LABELS.index("stack"), LABELS.index("put down")
    planted = noisy(0.9)
    planted[stack] = 0.0
    planted[stack, put_down], planted[stack, stack] = 0.8, 0.2
    confusions = [noisy(0.92), planted, noisy(0.5), noisy(0.5), noisy(0.85)]
    rows, truth = simulate(3000, confusions, seed=7, coverage=1.0)
    result = dawid_skene(rows)
    by_item: dict = {}
    for item, _, label in rows:
        by_item.setdefault(item, []).append(label)
    majority = {i: max(LABELS, key=v.count) for i, v in by_item.items()}
    acc_ds = np.mean([result.labels[i] == truth[i] for i in truth])
    acc_mv = np.mean([majority[i] == truth[i] for i in truth])
    assert acc_ds > acc_mv + 0.02
    est = result.confusion["annotator-2"]["stack"]
    assert est["put down"] == pytest.approx(0.8, abs=0.05)
    assert est["stack"] == pytest.approx(0.2, abs=0.05)
    # the careful annotator is estimated as such
    assert result.accuracy["annotator-1"] > result.accuracy["annotator-3"] + 0.3


def test_one_coin_estimates_each_annotators_accuracy():
    accs = [0.9, 0.7, 0.5, 0.8, 0.85]
    rows, truth = simulate(3000, [noisy(a) for a in accs], seed=3, coverage=1.0)
    r = dawid_skene(rows, model="one-coin")
    for k in range(len(accs)):
        name = f"annotator-{k + 1}"
        observed = np.mean([lab == truth[i] for i, a, lab in rows if a == name])
        assert r.accuracy[name] == pytest.approx(observed, abs=0.03)
        off = [r.confusion[name]["wave"][g] for g in LABELS if g != "wave"]
        assert max(off) - min(off) < 1e-12          # errors spread evenly


def test_posteriors_are_distributions_and_labels_their_argmax():
    rows, _ = simulate(300, [noisy(0.8)] * 3, seed=5)
    r = dawid_skene(rows)
    np.testing.assert_allclose(r.posterior_matrix.sum(axis=1), 1.0, atol=1e-12)
    for item, dist in r.posterior.items():
        assert r.labels[item] == max(dist, key=dist.get)
    assert sum(r.priors.values()) == pytest.approx(1.0)
    assert r.converged and 0 < r.iterations <= 100
    assert r.recipe.metric == "truth" and r.recipe.option("model") == "full"
    assert r.recipe.n_raters == 3 and r.recipe.n_items == len(r.items)


def test_one_label_only():
    r = dawid_skene([(1, "a", "x"), (2, "a", "x"), (2, "b", "x")])
    assert r.labels == {1: "x", 2: "x"}
    assert r.posterior == {1: {"x": 1.0}, 2: {"x": 1.0}}
    assert r.confusion == {"a": {"x": {"x": 1.0}}, "b": {"x": {"x": 1.0}}}
    assert r.iterations == 0 and r.converged and "one label" in r.recipe.note


def test_one_annotator_gets_their_own_answers_and_identity_confusion():
    rows = [(i, "solo", LABELS[i % 3]) for i in range(30)]
    r = dawid_skene(rows)
    assert r.labels == {i: LABELS[i % 3] for i in range(30)}
    for true in LABELS[:3]:
        assert r.confusion["solo"][true][true] == pytest.approx(1.0, abs=1e-8)


def test_items_with_a_single_answer_are_kept():
    rows, _ = simulate(200, [noisy(0.9), noisy(0.9)], seed=9, coverage=0.5)
    r = dawid_skene(rows)
    assert len(r.items) == len({i for i, _, _ in rows})


def test_repeated_pair_keeps_last_row_and_missing_labels_are_skipped():
    r = dawid_skene([(1, "a", "x"), (1, "a", "y"), (1, "b", "y"), (2, "a", None),
                     (2, "b", "x")])
    assert r.labels[1] == "y"
    assert r.recipe.n_items == 2


def test_label_order_keeps_unused_labels_and_rejects_unknown():
    r = dawid_skene([(1, "a", "x"), (1, "b", "x"), (2, "a", "y"), (2, "b", "y")],
                    label_order=["y", "x", "z"])
    assert r.label_order == ["y", "x", "z"]
    assert r.priors["z"] < 1e-6
    with pytest.raises(ValueError, match="not among the declared labels"):
        dawid_skene([(1, "a", "q")], label_order=["x", "y"])


@pytest.mark.parametrize("kwargs, message", [
    (dict(model="two-coin"), "model"), (dict(max_iter=-1), "max_iter"),
    (dict(tol=float("nan")), "tol")])
def test_bad_options(kwargs, message):
    with pytest.raises(ValueError, match=message):
        dawid_skene([(1, "a", "x"), (1, "b", "y")], **kwargs)


def test_empty_and_malformed_input():
    with pytest.raises(ValueError, match="nothing to infer"):
        dawid_skene([])
    with pytest.raises(ValueError, match=r"triples\[0\]"):
        dawid_skene([(1, "a")])


def test_max_iter_zero_is_the_majority_vote_start():
    r = dawid_skene([(1, "a", "x"), (1, "b", "x"), (1, "c", "y")], max_iter=0)
    assert r.iterations == 0 and not r.converged
    assert r.posterior[1] == pytest.approx({"x": 2 / 3, "y": 1 / 3})


def test_to_dict_is_json_safe():
    import json

    rows, _ = simulate(50, [noisy(0.8)] * 3, seed=4)
    d = dawid_skene(rows).to_dict()
    json.dumps(d)
    assert set(d["confusion"]) == {"annotator-1", "annotator-2", "annotator-3"}
    assert len(d["items"]) == len({i for i, _, _ in rows})
