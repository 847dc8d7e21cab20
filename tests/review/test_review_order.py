"""The review queue in two steps: ``review_order`` (clip ids and ranks, no rows) and
``review_rows`` (one page); ``review_queue`` is the two together, page by page."""

import pytest

from clipscribe import Project, RecordError
from clipscribe.errors import NotALeadError

FILTERS = [{}, {"label": "stack"}, {"annotator": "annotator-2"}, {"group": "cell-east"},
           {"flagged": True}, {"rank_by": "least-certain"},
           {"rank_by": "least-certain", "label": "push"}]


@pytest.fixture
def lead(sample):
    folder, lead = sample
    with Project.open(folder, user=lead) as p:
        clips = [c.id for c in p.clips()]
        p.set_clip_state(clips[1], "annotator-1", "skipped", reason="too dark")
        p.set_clip_state(clips[2], "annotator-2", "unsure", reason="stack or sort?")
        p.set_gold_label(clips[3], "push")
        yield p


@pytest.mark.parametrize("flt", FILTERS, ids=str)
def test_order_and_pages_give_the_queue(lead, flt):
    rep = lead.agreement_report(n_boot=1)
    whole = lead.review_queue(report=rep, **flt)
    order = lead.review_order(report=rep, **flt)
    assert not order.provisional and list(order.clips) == [r.clip for r in whole]
    assert list(order.ranks) == [r.rank for r in whole]
    pages = [lead.review_rows(order, k, k + 5, report=rep) for k in range(0, len(order), 5)]
    assert [r for page in pages for r in page] == whole
    assert lead.review_queue(report=rep, order=order, offset=5, limit=3, **flt) == whole[5:8]


def test_provisional_order_is_by_label_disagreement_alone(lead):
    order = lead.review_order()
    assert order.provisional and len(order) == len(lead.clips())
    leads = {a.name for a in lead.annotators() if a.role == "lead"}
    skipped = {(c, a) for c, a, _ in lead.skips()}
    votes: dict[int, list[str]] = {}
    for c, a, lab in lead.clip_labels():
        if a not in leads and (c, a) not in skipped:  # a skip is no vote
            votes.setdefault(c, []).append(lab)
    dis = {c: 1 - max(v.count(x) for x in v) / len(v) for c, v in votes.items()}
    want = sorted(dis, key=lambda c: (-dis[c], c))
    assert list(order.clips) == want + sorted({c.id for c in lead.clips()} - set(dis))
    rows = lead.review_rows(order, 0, 4)
    assert [r.label_disagreement for r in rows] == pytest.approx([dis[c] for c in want[:4]])
    assert all(r.segment_f1 != r.segment_f1 and r.inferred_label is None for r in rows)  # NaN
    assert lead.review_queue(provisional=True, limit=4) == rows  # no report computed


def test_order_checks_like_the_queue(lead):
    with pytest.raises(RecordError, match="rank by"):
        lead.review_order(rank_by="nope")
    lead.user = "annotator-1"
    with pytest.raises(NotALeadError):
        lead.review_order()
