"""The shareable report: every number equals what the agreement engine computes for the same
rows; the HTML stands alone; the CLI writes it; non-leads are refused."""

import csv
import math
import re

import pytest

from clipscribe import Project, __version__
from clipscribe.agreement import agreement_report
from clipscribe.cli import main
from clipscribe.errors import NotALeadError
from clipscribe.review_report import read_numbers, write_report

TOL = 1e-9


def direct_report(p, seed=0, n_boot=1000):
    """The engine called directly on the project's rows (not through the façade's report)."""
    rows = p.agreement_inputs()
    clips = p.clips()
    return agreement_report(rows["labels"], rows["segments"], rows["captions"],
                            label_order=[l.name for l in p.labels()], ordinal=p.labels_ordinal(),
                            fps={c.id: c.fps for c in clips},
                            frame_count={c.id: c.frame_count for c in clips}, seed=seed,
                            n_boot=n_boot, label_set_version=f"v{p.label_set_version()}")


def same(a, b, path="agreement"):
    """Recursive equality with floats to TOL (recipes and texts exactly)."""
    if isinstance(a, dict):
        assert set(a) == set(b), path
        for k in a:
            same(a[k], b[k], f"{path}.{k}")
    elif isinstance(a, list):
        assert len(a) == len(b), path
        for i, (x, y) in enumerate(zip(a, b)):
            same(x, y, f"{path}[{i}]")
    elif isinstance(a, float) or isinstance(b, float):
        assert a is not None and b is not None and math.isclose(a, b, abs_tol=TOL), path
    else:
        assert a == b, path


def read_csv(path):
    with open(path, newline="", encoding="utf-8") as f:
        return list(csv.DictReader(f))


def num(s):
    return None if s == "" else float(s)


@pytest.fixture
def written(sample, tmp_path):
    folder, lead = sample
    with Project.open(folder, user=lead) as p:
        files = write_report(p, tmp_path / "out")
        yield p, files, direct_report(p)


def test_embedded_numbers_equal_the_engine(written):
    p, files, rep = written
    html = files.html.read_text(encoding="utf-8")
    data = read_numbers(html)
    want = rep.to_dict()
    # the parts with a row per clip or caption are in the CSV tables, named in rows_in_csv
    assert data["rows_in_csv"] == {
        "agreement.clips": {"csv": "clips.csv", "rows": len(want["clips"])},
        "agreement.captions.flagged": {"csv": "flagged_captions.csv",
                                       "rows": len(want["captions"]["flagged"])},
        "agreement.reliability.inferred.items": {
            "csv": "inferred_labels.csv", "rows": len(want["reliability"]["inferred"]["items"])}}
    assert all((files.folder / v["csv"]).exists() for v in data["rows_in_csv"].values())
    del want["clips"], want["captions"]["flagged"], want["reliability"]["inferred"]["items"]
    want["recipe"].pop("text"), data["agreement"]["recipe"].pop("text")
    same(data["agreement"], want)
    assert data["meta"]["version"] == rep.recipe.version


def test_long_tables_show_their_first_rows_and_name_the_csv():
    from clipscribe.review_report.html import _table
    rows = [[str(i), float(i)] for i in range(7)]
    page = _table((["clip", "bleu"], rows), 3, csv_name="flagged_captions.csv")
    assert page.count("<tr>") == 1 + 3 + 1  # header, three rows, the line naming the CSV
    assert ">2<" in page and ">3<" not in page
    assert "the first 3 rows of 7 are shown here; all 7 are in flagged_captions.csv" in page
    assert "shown here" not in _table((["clip", "bleu"], rows), 7, csv_name="x.csv")
    # only the rows shown were built, the count of all comes beside them: the same page
    assert _table((["clip", "bleu"], rows[:3]), 3, csv_name="flagged_captions.csv",
                  total=7) == page


def test_csv_tables_equal_the_engine(written):
    p, files, rep = written
    lab = rep.labels
    summary = {(r["scope"], r["metric"]): r for r in read_csv(files.csv["summary"])}
    a = summary[("all", "krippendorff alpha")]
    assert abs(num(a["value"]) - lab.alpha) <= TOL
    assert abs(num(a["ci_low"]) - lab.alpha_ci.low) <= TOL
    assert abs(num(a["ci_high"]) - lab.alpha_ci.high) <= TOL
    assert a["recipe"] == lab.alpha.recipe.text() and a["band"] == lab.alpha.interpretation
    for name, (score, ci) in lab.per_label.items():
        r = summary[(name, "krippendorff alpha one-vs-rest")]
        assert abs(num(r["value"]) - score) <= TOL and abs(num(r["ci_low"]) - ci.low) <= TOL
    assert abs(num(summary[("all", "leave-one-out corpus BLEU")]["value"])
               - rep.captions.bleu.overall.score) <= TOL
    assert abs(num(summary[("all", "CIDEr-D mean")]["value"]) - rep.captions.cider.overall) <= TOL
    pairs = read_csv(files.csv["pairwise_kappa"])
    assert len(pairs) == len(lab.pairs)
    for row, pair in zip(pairs, lab.pairs):
        assert (row["annotator_a"], row["annotator_b"]) == (pair.annotator_a, pair.annotator_b)
        assert abs(num(row["cohen_kappa"]) - pair.kappa) <= TOL
        assert abs(num(row["observed_agreement"]) - pair.observed) <= TOL
    conf = read_csv(files.csv["confusion"])
    k = len(lab.labels)
    for n, pair in enumerate(lab.pairs):
        cells = [int(r["clips"]) for r in conf[n * k * k:(n + 1) * k * k]]
        assert cells == pair.confusion.ravel().tolist()
    for row, clip in zip(read_csv(files.csv["clips"]), rep.clips):
        assert row["clip"] == str(clip.clip)
        for key in ("label_disagreement", "segment_f1", "caption_bleu", "caption_cider"):
            v = getattr(clip, key)
            assert (num(row[key]) is None) == math.isnan(v)
            assert math.isnan(v) or abs(num(row[key]) - v) <= TOL
    for row in read_csv(files.csv["caption_annotators"]):
        assert abs(num(row["loo_bleu"]) - rep.captions.bleu.per_annotator[row["annotator"]].score) <= TOL
        assert abs(num(row["cider_d"]) - rep.captions.cider.per_annotator[row["annotator"]]) <= TOL
    segs = read_csv(files.csv["segment_pairs"])
    assert [num(r["f1"]) for r in segs] == pytest.approx([s.f1 for s in rep.segments.pairs],
                                                         abs=TOL)
    flagged = read_csv(files.csv["flagged_captions"])
    assert [(r["clip"], r["annotator"], r["text"]) for r in flagged] == [
        (str(c.clip), c.annotator, c.text) for c in rep.captions.bleu.flagged]


def test_html_is_self_contained_and_says_how_to_read_it(written):
    _, files, _ = written
    html = files.html.read_text(encoding="utf-8")
    assert html.count("<svg") >= 6 and "<title>" in html  # figures inline, hover titles
    for banned in ("<script", "<link", "<img", "@import", "url(", "<iframe"):
        assert banned not in html.lower()
    # the only URL is the SVG namespace name, which is never fetched
    assert set(re.findall(r"https?://[^\s\"'<]+", html)) == {"http://www.w3.org/2000/svg"}
    assert "Landis" in html and "1977" in html and "10.2307/2529310" in html
    assert "Agreement is not correctness" in html and "bias" in html
    assert f"clipscribe {__version__}" in html and "Made 20" in html  # tool version and date


def test_cli_report_writes_the_files(sample, tmp_path, capsys):
    folder, lead = sample
    out = tmp_path / "cli-out"
    assert main(["report", str(folder), str(out), "--boot", "50", "--user", lead]) == 0
    assert (out / "report.html").exists() and (out / "summary.csv").exists()
    assert main(["report", str(folder), str(out), "--user", "annotator-1"]) == 1
    assert "for leads" in capsys.readouterr().err


def test_report_refused_for_non_lead(sample, tmp_path):
    folder, _ = sample
    with Project.open(folder, user="annotator-3") as p, pytest.raises(NotALeadError):
        write_report(p, tmp_path / "x")
    assert not (tmp_path / "x").exists()


def test_every_table_scrolls_in_its_own_box_instead_of_overflowing_the_page(written):
    from html.parser import HTMLParser
    _, files, _ = written
    html = files.html.read_text(encoding="utf-8")

    class Tables(HTMLParser):
        def __init__(self):
            super().__init__()
            self.stack, self.parents = [], []

        def handle_starttag(self, tag, attrs):
            if tag == "table":
                self.parents.append(self.stack[-1] if self.stack else None)
            self.stack.append((tag, dict(attrs).get("class")))

        def handle_endtag(self, tag):
            while self.stack and self.stack.pop()[0] != tag:
                pass
    t = Tables()
    t.feed(html)
    assert len(t.parents) >= 6
    assert set(t.parents) == {("div", "wide")}
    css = re.search(r"<style>(.*?)</style>", html, re.S).group(1)
    assert re.search(r"\.wide\s*\{[^}]*overflow-x:\s*auto", css)
    assert re.search(r"\.fig\s*\{[^}]*max-width:\s*100%", css)


def test_the_report_command_runs_with_the_collector_paused(sample, tmp_path, monkeypatch):
    import gc

    from clipscribe.review_report import html
    seen = []
    real = html.board_data
    monkeypatch.setattr(html, "board_data", lambda *a, **k: seen.append(gc.isenabled()) or real(*a, **k))
    from clipscribe.cli import main
    folder, lead = sample
    before = gc.isenabled()  # a Qt test before this one leaves it off (ui/gc_guard.py)
    gc.enable()
    try:
        assert main(["report", str(folder), str(tmp_path / "r"), "--boot", "50", "--user", lead]) == 0
        assert seen == [False] and gc.isenabled()
    finally:
        (gc.enable if before else gc.disable)()
