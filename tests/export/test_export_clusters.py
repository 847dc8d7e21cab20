"""Look-alike clusters: known by construction on clips from fixed cameras, equal to the
components of every near pair on mixed data, and found without asking every clip."""

from __future__ import annotations

import random

import numpy as np
import pytest

from clipscribe.export import CaptionInput, ClipInput, build_plan, check_leakage
from clipscribe.export.clusters import components_brute
from clipscribe.export.neardup import near_clusters, near_pairs_brute, popcount
from clipscribe.export.textdup import caption_clusters, normalise_caption, similar_pairs

from .synth import camera_fingerprints, chain_fingerprints, same_partition


def _links_are_near(cl, codes, radius):
    d = popcount(codes[cl.link_a] ^ codes[cl.link_b])
    return bool(np.all(d <= radius)) and np.array_equal(d, cl.link_d)


@pytest.mark.parametrize("spread,radius", [(0, 0), (2, 4), (4, 8), (3, 8)])
def test_clips_of_each_fixed_camera_form_one_cluster(spread, radius):
    # two clips of a camera differ in <= 2 * spread <= radius bits: each camera is a clique;
    # bases 24 bits apart keep clips of different cameras >= 16 bits apart
    codes, camera = camera_fingerprints(12, 300, spread, apart=24, seed=spread)
    cl = near_clusters(codes, radius)
    assert same_partition(cl.label, camera)
    assert len(cl.link_a) == len(codes) - 12 and _links_are_near(cl, codes, radius)
    assert np.array_equal(camera[cl.link_a], camera[cl.link_b])
    assert [len(g) for g in cl.groups()] == [300] * 12
    # the 12 * 300 * 299 / 2 = 538,200 near pairs are never listed: few clips ask the index and
    # the candidates examined stay far below the pairs
    assert cl.queries < len(codes) // 10 and cl.work < 538_200 // 5


def test_a_chain_of_near_pairs_is_one_cluster_although_its_ends_are_far():
    codes, chain = chain_fingerprints(40, 3, 8, seed=2)  # ends 24 bits apart, radius 8
    cl = near_clusters(codes, 8)
    assert same_partition(cl.label, chain)
    assert len(cl.link_a) == 40 * 3 and _links_are_near(cl, codes, 8)
    ends = [np.flatnonzero(chain == k) for k in range(40)]
    assert max(int(popcount(codes[e[:, None]] ^ codes[e[None, :]]).max()) for e in ends) == 24
    # one step shorter than the radius: no chain holds together
    assert len(near_clusters(codes, 7).groups()) == 0


def _mixed(seed: int, radius: int) -> np.ndarray:
    rng = np.random.default_rng(seed)
    cams, _ = camera_fingerprints(6, 60, radius // 2 + 2, apart=radius + 2, seed=seed)
    chains, _ = chain_fingerprints(20, 4, max(radius, 1), seed=seed)
    noise = rng.integers(0, 2**64, 300, dtype=np.uint64)
    return rng.permutation(np.concatenate([cams, chains, noise, cams[:40]]))  # and exact copies


@pytest.mark.parametrize("radius", [0, 2, 5, 8, 12])
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_clusters_equal_the_components_of_every_near_pair(radius, seed):
    # cameras whose clips spread beyond a clique, cameras close to each other, chains, noise
    codes = _mixed(seed, radius)
    i, j, _ = near_pairs_brute(codes, radius)
    want = components_brute(len(codes), i, j)
    for s in (0, 7):
        cl = near_clusters(codes, radius, seed=s)
        assert np.array_equal(cl.label, want)
        assert len(cl.link_a) == len(codes) - len(np.unique(want))
        assert _links_are_near(cl, codes, radius)


def _caption_families(n_families: int, per_family: int, seed: int) -> tuple[list[str], list[int]]:
    """Each family: one long sentence of its own words plus variants adding one word at the end
    (Jaccard >= 0.9 with the sentence); families share no word."""
    rng = random.Random(seed)
    texts, family = [], []
    for f in range(n_families):
        words = [f"w{f}x{k}" for k in range(40)]
        sentence = " ".join(rng.choice(words) for _ in range(22))
        for v in range(per_family):
            texts.append(sentence + (f" {rng.choice(words)}" if v else ""))
            family.append(f)
    distinct = sorted(set(zip(texts, family)))
    return [t for t, _ in distinct], [f for _, f in distinct]


def test_near_identical_caption_families_are_the_clusters():
    texts, family = _caption_families(15, 30, seed=4)
    cl = caption_clusters(texts, 0.9)
    assert same_partition(cl.label, np.array(family))
    sims = 1.0 - cl.link_d
    assert len(sims) == len(texts) - 15 and np.all(sims >= 0.9)
    assert cl.queries < len(texts) // 2


@pytest.mark.parametrize("threshold", [0.3, 0.6, 0.8, 0.9, 1.0])
@pytest.mark.parametrize("seed", [0, 1])
def test_caption_clusters_equal_the_components_of_every_similar_pair(threshold, seed):
    rng = random.Random(seed)
    vocab = "a the man woman dog ball runs walks jumps red blue park".split()
    base = [" ".join(rng.choice(vocab) for _ in range(rng.randint(2, 14))) for _ in range(200)]
    more = [t + " " + rng.choice(vocab) for t in base for _ in range(3)]
    texts = sorted({normalise_caption(t) for t in base + more + [t + " again" for t in more[:200]]})
    pairs = similar_pairs(texts, threshold)
    want = components_brute(len(texts), [p[0] for p in pairs], [p[1] for p in pairs])
    cl = caption_clusters(texts, threshold, seed=seed)
    assert np.array_equal(cl.label, want)
    assert len(pairs) >= len(cl.link_a) == len(texts) - len(np.unique(want))
    assert len(cl.link_a) > 10 or threshold == 1.0  # 1.0: distinct texts are never near


def _camera_clips(cameras: int, per_camera: int, *, grouped: bool = True) -> list[ClipInput]:
    codes, camera = camera_fingerprints(cameras, per_camera, 3, apart=24, seed=9)
    return [ClipInput(f"c{k:04d}", f"cam{cam}/clip{k:04d}.mp4",
                      group=f"cam{cam}" if grouped else None, sha256=f"{k:064x}",
                      fingerprint=int(code), captions=(CaptionInput(f"camera {cam} clip {k}"),))
            for k, (code, cam) in enumerate(zip(codes.tolist(), camera.tolist()))]


def test_a_camera_parted_by_the_split_is_one_blocking_finding_naming_its_files():
    clips = _camera_clips(6, 25)
    cam = {c.clip_id: int(c.group[3:]) for c in clips}
    # cameras 0-4 whole on one side; camera 5 parted between train and test
    a = {c: ("test" if k in (1, 3) else "train") for c, k in cam.items()}
    parted = sorted(c for c, k in cam.items() if k == 5)
    a.update({c: ("train" if i % 3 else "test") for i, c in enumerate(parted)})
    r = check_leakage(clips, a)
    assert [f.kind for f in r.blocking] == ["group-split", "near-duplicate-media"]
    f = r.blocking[1]
    assert f.clips == tuple(parted)
    assert set(f.files) == {c.media_path for c in clips if cam[c.clip_id] == 5}
    assert "25 clips" in f.message and "cam5/" in f.message
    assert len(f.details["links"]) == 24 and f.details["crossing"]
    assert all(a[x] != a[y] for x, y, _ in f.details["crossing"])
    assert r.warnings == [] and f.details["splits"] == {"test": 9, "train": 16}


def test_ungrouped_look_alikes_in_one_split_are_one_warning_per_camera():
    clips = _camera_clips(4, 20, grouped=False)
    r = check_leakage(clips, dict.fromkeys((c.clip_id for c in clips), "train"))
    assert [f.kind for f in r.findings] == ["near-duplicate-media-in-split"] * 4
    assert sorted(len(f.clips) for f in r.findings) == [20] * 4


def test_a_plan_grouped_by_camera_keeps_every_cluster_on_one_side():
    clips = [c if int(c.clip_id[1:]) % 2 else c for c in _camera_clips(10, 12)]
    clips = [ClipInput(c.clip_id, c.media_path, group=c.group, sha256=c.sha256,
                       fingerprint=c.fingerprint, labels=("walk", "walk"), captions=c.captions)
             for c in clips]
    plan = build_plan(clips, {"train": 0.7, "test": 0.3}, seed=3)
    assert len(set(plan.assignment.values())) == 2
    assert [f.kind for f in plan.leakage.findings] == []


def _shingle_table_by_hand(texts):
    """(text, shingle id) rows as _shingle_table defines them, one text and shingle at a time:
    word ids by first appearance, a shingle the triple of its word ids (padded with one id past
    the vocabulary), shingle ids the ranks of the distinct triples; rows sorted by text, then
    the shingle's frequency, then its id."""
    vocab = {}
    for t in texts:
        for word in t.split(" "):
            vocab.setdefault(word, len(vocab))
    pad = len(vocab)
    triples = []
    for t in texts:
        ids = [vocab[word] for word in t.split(" ")]
        if len(ids) < 3:
            triples.append([tuple(ids + [pad] * (3 - len(ids)))])
        else:
            triples.append([tuple(ids[i:i + 3]) for i in range(len(ids) - 2)])
    rank = {tri: k for k, tri in enumerate(sorted({x for row in triples for x in row}))}
    freq = {}
    for row in triples:
        for x in row:
            freq[rank[x]] = freq.get(rank[x], 0) + 1
    rows = sorted({(k, freq[rank[x]], rank[x]) for k, row in enumerate(triples) for x in row})
    return [k for k, _, _ in rows], [s for _, _, s in rows]


@pytest.mark.parametrize("seed", range(6))
def test_shingle_table_equals_the_table_built_by_hand(seed):
    from clipscribe.export.textdup import _shingle_table
    rng = random.Random(seed)
    vocab = ["a", "b", "c", "red", "cube", "take", "1", "22"]
    # short texts (one and two words, the empty text) among longer ones, repeats within a text
    texts = sorted({" ".join(rng.choice(vocab) for _ in range(rng.choice([0, 1, 1, 2, 2, 3, 5, 9])))
                    for _ in range(80)})
    assert {len(t.split(" ")) for t in texts if t} >= {1, 2, 3} and "" in texts
    text, sid = _shingle_table(texts)
    want_text, want_sid = _shingle_table_by_hand(texts)
    assert text.tolist() == want_text and sid.tolist() == want_sid


@pytest.mark.parametrize("code_bits,block", [(63, 1 << 20), (63, 7), (8, 5)])
def test_shingle_table_built_by_blocks_or_by_the_wide_paths_equals_the_one_by_hand(
        monkeypatch, code_bits, block):
    # blocks of a few words, and codes too narrow for three ids (or for the table's key), give
    # the same table: the blockwise loops and the wide fallbacks are exact
    from clipscribe.export import ranks, textdup
    monkeypatch.setattr(textdup, "_CODE_BITS", code_bits)
    monkeypatch.setattr(textdup, "BLOCK", block)
    monkeypatch.setattr(ranks, "BLOCK", block)
    rng = random.Random(code_bits + block)
    vocab = ["a", "b", "red", "cube", "é", "日本", "x" * 20, "take", "7"]
    texts = sorted({" ".join(rng.choice(vocab) for _ in range(rng.choice([1, 1, 2, 3, 4, 8])))
                    for _ in range(120)} | {""})
    text, sid = textdup._shingle_table(texts)
    want_text, want_sid = _shingle_table_by_hand(texts)
    assert text.tolist() == want_text and sid.tolist() == want_sid
