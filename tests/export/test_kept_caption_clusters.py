"""The clusters of near-identical captions are kept in the project's result cache under a key
made of the texts themselves: a second plan of the same captions reuses them, any changed
caption computes them again, and the plan is the same either way."""

import shutil

import pytest

from clipscribe import Project, export


def count_calls(monkeypatch, name: str, record) -> list:
    """``record(*args)`` of each call of the engine ``clipscribe.export.<name>``."""
    calls: list = []
    real = getattr(export, name)
    monkeypatch.setattr(export, name, lambda *a: calls.append(record(*a)) or real(*a))
    return calls


@pytest.fixture
def counted(monkeypatch):
    """The texts each call of the clustering engine was given."""
    return count_calls(monkeypatch, "caption_clusters", lambda texts, _threshold: list(texts))


def _caption_findings(plan):
    return [(f.kind, f.clips, f.details.get("texts")) for f in plan.leakage.findings
            if "caption" in f.kind]


def test_a_second_plan_of_the_same_captions_reuses_the_clusters(sample_copy, counted):
    with Project.open(sample_copy) as p:
        p.plan_export(seed=0)
        again = p.plan_export(seed=1)                 # other splits, the same captions
        assert len(counted) == 1
        shutil.rmtree(sample_copy / ".clipscribe-cache" / "results")
        fresh = p.plan_export(seed=1)                 # nothing kept: computed again
        assert len(counted) == 2 and counted[0] == counted[1]
    assert _caption_findings(again) == _caption_findings(fresh)
    assert again.assignment == fresh.assignment


def test_a_changed_caption_computes_them_again_and_is_seen(sample_copy, counted):
    with Project.open(sample_copy) as p:
        p.plan_export()
        clip = p.clips()[0].id
        p.add_caption(clip, "annotator-1", "a caption nobody wrote before, about a blue block")
        p.plan_export()
    assert len(counted) == 2
    assert "a caption nobody wrote before about a blue block" in counted[1]
    assert "a caption nobody wrote before about a blue block" not in counted[0]


def test_the_caption_policy_is_part_of_the_key(sample_copy, counted):
    with Project.open(sample_copy) as p:
        p.plan_export(captions="gold")
        p.plan_export(captions="gold+agreeing")       # other texts: computed for them
        p.plan_export(captions="gold+agreeing")       # the same again: kept
    assert len(counted) == 2 and counted[0] != counted[1]


@pytest.mark.parametrize("chunk", [1, 2, 1 << 15])
def test_content_key_hashed_by_chunks_is_the_digest_of_the_texts_joined_at_once(monkeypatch, chunk):
    # reference: hashlib.sha256 over the texts joined by NUL in one piece, as the key is defined
    import hashlib
    import json

    from clipscribe.project import results
    monkeypatch.setattr(results, "_HASH_CHUNK", chunk)
    texts = ["red cube", "", "arm \u00e9", "lone \ud800 half", "x" * 300, "take 7"]
    head = json.dumps({"kind": "k", "settings": {"threshold": 0.9},
                       "code": results._code_digest("export")}, sort_keys=True).encode()
    for parts in ([], texts[:1], texts, texts * 3):
        want = hashlib.sha256(head)
        want.update("\0".join(parts).encode("utf-8", "surrogatepass"))
        want.update(str(len(parts)).encode())
        assert results.content_key("k", parts, {"threshold": 0.9}, "export") == want.hexdigest()
