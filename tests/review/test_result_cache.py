"""The result cache of the agreement report: the caption part is reused while nothing it
depends on changed, the recipe says so, and a changed label or caption never gets a stale
number (every report equals the same report computed from scratch)."""

import pytest

from clipscribe import Project
from clipscribe.cli import main
from clipscribe.project.results import FOLDER

from .test_report import same

BOOT = 20
CACHED = "caption part from the result cache"


def numbers(rep) -> dict:
    """The report as a dict, without the recipe's note (which says where a part came from)."""
    d = rep.to_dict()
    for key in ("note", "text"):
        d["recipe"].pop(key)
    return d


def fresh(p):
    return p.agreement_report(n_boot=BOOT, cache=False)


@pytest.fixture
def project(sample_copy, sample_lead):
    with Project.open(sample_copy, user=sample_lead) as p:
        yield p


def test_second_report_reuses_the_caption_part_and_says_what_it_covers(project):
    first = project.agreement_report(n_boot=BOOT)
    assert first.recipe.note is None  # computed now
    second = project.agreement_report(n_boot=BOOT)
    note = second.recipe.note
    assert note.startswith(CACHED)
    n_rows = len(project.caption_rows())
    assert f"{n_rows} caption rows" in note and "up to edit" in note
    assert CACHED in second.to_dict()["recipe"]["text"]
    same(numbers(second), numbers(first))
    same(numbers(second), numbers(fresh(project)))
    assert list((project.folder / FOLDER).glob("captions-*.pickle"))
    assert (project.folder / FOLDER).parent.joinpath(".gitignore").read_text().splitlines()[-1] == "*"


def test_a_new_label_keeps_the_caption_part_and_changes_the_label_numbers(project):
    before = project.agreement_report(n_boot=BOOT)
    clip, who, label = project.clip_labels()[0]
    other = next(l.name for l in project.labels() if l.name != label)
    project.set_clip_label(clip, who, other)
    after = project.agreement_report(n_boot=BOOT)
    assert after.recipe.note.startswith(CACHED)  # the captions did not change
    assert after.labels.alpha != before.labels.alpha
    same(numbers(after), numbers(fresh(project)))


def test_a_changed_caption_is_computed_again(project):
    before = project.agreement_report(n_boot=BOOT)
    cap = project.caption_rows()[0]
    project.update_caption(cap.id, "a completely different sentence about nothing at all")
    after = project.agreement_report(n_boot=BOOT)
    assert after.recipe.note is None
    assert after.captions.bleu.overall.score != before.captions.bleu.overall.score
    same(numbers(after), numbers(fresh(project)))


def test_undone_delete_that_restores_the_row_counts_is_not_served_stale(project):
    """An undone delete puts the row back with its old id and first version, so the table's
    count, largest id and version sum equal an earlier state's; the edit log still tells."""
    cap = project.caption_rows()[1]
    project.agreement_report(n_boot=BOOT)                       # kept: the caption as it was
    project.update_caption(cap.id, "the arm lifts nothing and waits")  # version 2
    with project.recording() as ids:
        project.delete_caption(cap.id)
    project.revert(ids)                                          # back, as version 1
    rep = project.agreement_report(n_boot=BOOT)
    assert rep.recipe.note is None
    same(numbers(rep), numbers(fresh(project)))
    texts = {c.text for c in rep.captions.bleu.captions}
    assert "the arm lifts nothing and waits" in texts


def test_a_new_person_or_role_change_is_computed_again(project):
    project.agreement_report(n_boot=BOOT)
    project.add_annotator("annotator-new")
    rep = project.agreement_report(n_boot=BOOT)
    assert rep.recipe.note is None


def test_an_entry_this_user_did_not_write_is_never_read(project):
    project.agreement_report(n_boot=BOOT)
    (entry,) = (project.folder / FOLDER).glob("captions-*.pickle")
    data = bytearray(entry.read_bytes())
    data[0] ^= 0xFF  # the signature no longer matches
    entry.write_bytes(bytes(data))
    rep = project.agreement_report(n_boot=BOOT)
    assert rep.recipe.note is None
    same(numbers(rep), numbers(fresh(project)))


def test_other_settings_do_not_share_an_entry(project):
    project.agreement_report(n_boot=BOOT, seed=0)
    other = project.agreement_report(n_boot=BOOT, seed=1)
    assert other.recipe.note is None
    same(numbers(other), numbers(project.agreement_report(n_boot=BOOT, seed=1, cache=False)))


def test_cli_no_cache_computes_now(sample_copy, sample_lead, capsys):
    args = ["agreement", str(sample_copy), "--user", sample_lead, "--boot", str(BOOT), "--json"]
    assert main(args) == 0
    assert main(args) == 0
    assert CACHED in capsys.readouterr().out
    assert main(args + ["--no-cache"]) == 0
    assert CACHED not in capsys.readouterr().out


def test_cli_json_is_the_report_dict_and_summary_leaves_out_only_the_rows(sample_copy, sample_lead, capsys):
    import json

    args = ["agreement", str(sample_copy), "--user", sample_lead, "--boot", str(BOOT), "--json"]
    assert main(args + ["--all-rows"]) == 0
    full = json.loads(capsys.readouterr().out)
    with Project.open(sample_copy, user=sample_lead) as p:
        rep = p.agreement_report(n_boot=BOOT)
        want, worst = rep.to_dict(), [c.to_dict() for c in rep.review_queue(3)]
    for d in (full, want):
        d["recipe"].pop("note"), d["recipe"].pop("text")
    same(full, want)
    # the default: every number and the most disputed clips, not the rows per clip or caption
    assert main(args + ["--top", "3"]) == 0
    default = json.loads(capsys.readouterr().out)
    assert default.pop("most_disputed") == worst and len(worst) == 3
    assert main(args + ["--summary"]) == 0
    short = json.loads(capsys.readouterr().out)
    assert short == default
    assert short["items_left_out"] == ["clips", "captions.flagged", "reliability.inferred.items"]
    assert "clips" not in short and "flagged" not in short["captions"]
    assert "items" not in short["reliability"]["inferred"]
    assert short["captions"]["n_flagged"] == len(full["captions"]["flagged"]) > 0
    for d in (short, full):
        d["recipe"].pop("note", None), d["recipe"].pop("text", None)
        d.pop("clips", None), d.pop("items_left_out", None), d["captions"].pop("flagged", None)
        d["captions"].pop("n_flagged", None), d["reliability"]["inferred"].pop("items", None)
    same(short, full)


def test_json_text_equals_plain_json():
    import json

    from clipscribe.review_report.jsontext import json_text
    value = {"a": [1, {"b": [2.5, None, "é"]}], "c": {}, "d": [], "e": {"f": {"g": {"h": [1]}}}}
    assert json.loads(json_text(value)) == value
    assert json.loads(json_text([])) == [] and json_text({"x": 1}) == '{\n  "x": 1\n}'
    assert json_text({"a": [{"b": 1.5, "c": "é\n"}]}) == '{\n  "a": [\n    {"b": 1.5, "c": "é\\n"}\n  ]\n}'
    with pytest.raises(ValueError):
        json_text({"a": [float("nan")]}, allow_nan=False)


def test_all_clip_labels_come_in_clip_then_name_order_whatever_the_ids(tmp_path, make_video):
    """The whole-project read of clip labels (three id columns, ordered with numpy) gives the
    rows, order and names of the per person reads."""
    with Project.create(tmp_path / "p") as p:
        p.define_labels(["stack", "push"])
        clips = [p.add_clip(make_video(p.media_root / f"{i}.mp4", seed=i)) for i in range(3)]
        for name in ("zoe", "amy", "max"):  # ids in another order than names
            p.add_annotator(name)
        for clip in reversed(clips):
            for name, label in (("max", "push"), ("zoe", "stack"), ("amy", "push")):
                if (clip, name) != (clips[1], "amy"):
                    p.set_clip_label(clip, name, label)
        p.set_clip_label(clips[0], "zoe", "push")  # an update keeps its row
        p.set_clip_label(clips[2], "max", None)    # a cleared label is no row
        per_person = sorted((r for n in ("zoe", "amy", "max") for r in p.clip_labels(annotator=n)),
                            key=lambda r: (r[0], r[1]))
        rows = p.clip_labels()
        assert rows == per_person
        assert rows[:3] == [(clips[0], "amy", "push"), (clips[0], "max", "push"), (clips[0], "zoe", "push")]
        assert (clips[1], "amy", "push") not in rows and len(rows) == 7


def test_kept_caption_part_reads_back_equal(project):
    import pickle

    rep = project.agreement_report(n_boot=BOOT, cache=False)
    again = pickle.loads(pickle.dumps(rep.captions))
    assert list(again.bleu.captions) == list(rep.captions.bleu.captions)
    assert again.bleu.captions == rep.captions.bleu.captions
    assert list(again.cider.captions) == list(rep.captions.cider.captions)
    assert again.bleu.flagged == rep.captions.bleu.flagged and again.bleu.n_flagged > 0
    assert again.bleu.captions[-1] == list(rep.captions.bleu.captions)[-1]
    assert again.bleu.captions[1:3] == list(rep.captions.bleu.captions)[1:3]
    assert again.bleu.flagged_dicts() == [c.to_dict() for c in rep.captions.bleu.flagged]


def test_clips_read_as_columns_equal_each_clip_read_alone(project):
    rows = project.clips()
    assert rows and rows == [project.clip(c.id) for c in rows]
    label = project.clip_labels()[0][2]
    some = project.clips(label=label, offset=1, limit=3)
    labelled = sorted({c for c, _, l in project.clip_labels() if l == label})
    assert [c.id for c in some] == labelled[1:4]


def test_throughput_read_twice_follows_a_new_edit(project):
    before = project.throughput()
    assert project.throughput() == before
    clip, who, label = project.clip_labels()[0]
    other = next(l.name for l in project.labels() if l.name != label)
    project.set_clip_label(clip, who, other)
    after = project.throughput()
    assert after[who].edits > before[who].edits  # the label, and the clip reopened for them
    assert all(after[n].edits == before[n].edits for n in before if n != who)


def test_two_reports_at_once_compute_the_caption_part_once(project, monkeypatch):
    """The review desk and the board ask for the report at the same moment: the second waits
    for the first's caption part instead of computing its own beside it."""
    import threading

    from clipscribe.project import analysis
    calls = []
    real = analysis.caption_part
    started = threading.Event()

    def counted(*args, **kw):
        calls.append(1)
        started.set()
        return real(*args, **kw)
    monkeypatch.setattr(analysis, "caption_part", counted)
    results = []
    threads = [threading.Thread(target=lambda: results.append(project.agreement_report(n_boot=BOOT)))
               for _ in range(2)]
    threads[0].start()
    assert started.wait(60)
    threads[1].start()
    for t in threads:
        t.join(120)
    assert len(calls) == 1 and len(results) == 2
    same(numbers(results[0]), numbers(results[1]))


def test_the_board_shows_labels_first_only_while_the_caption_part_is_not_kept(project):
    from clipscribe.review_report.board import board_parts
    assert not project.caption_part_kept()
    parts = {k: dict(d) for k, d in board_parts(project, n_boot=BOOT)}  # (one dict, filled in)
    assert list(parts) == ["meta", "throughput", "trend", "labels", "agreement"]
    early, whole = parts["labels"]["agreement"], parts["agreement"]["agreement"]
    assert early["captions"] is None and "captions" in early["not_measured"]
    same(early["labels"], whole["labels"])          # the label numbers shown first are final
    assert project.caption_part_kept()
    assert [k for k, _ in board_parts(project, n_boot=BOOT)] == ["meta", "throughput", "trend",
                                                                 "agreement"]
    clip, who, _text = project.captions()[0]
    project.add_caption(clip, who, "one more caption of this clip by the same person")
    assert not project.caption_part_kept()
