"""Spreadsheet formula injection: every CSV clipscribe writes escapes text cells that a
spreadsheet would run as a formula (a leading ``'``, common practice per OWASP's "CSV Injection"
guidance), keeps numbers as numbers, and leaves JSON Lines exact."""

from __future__ import annotations

import csv
import json
import re

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from clipscribe import Project
from clipscribe.export import csvsafe
from clipscribe.review_report import write_report

from ._fixtures import small_project

HOSTILE = ["=HYPERLINK(\"http://example.invalid\",\"open\")", "+1+2", "-3+4", "@SUM(A1:A9)",
           "\t=1+1", "\r=1+1"]
FORMULA_START = tuple("=+-@\t\r")
NUMBER = re.compile(r"-?(\d+(\.\d*)?|\.\d+)([eE][-+]?\d+)?|-?inf|nan")


@pytest.fixture
def hostile(tmp_path, make_video):
    """A project whose captions, label names and group keys all start like formulas."""
    with small_project(tmp_path / "proj", make_video, clips=4) as p:
        p.define_labels(["-stack", "=cmd", "pick up"])
        for c in p.clips():
            p.add_caption(c.id, "ann-a", HOSTILE[c.id - 1] + " the arm lifts it")
            p.add_caption(c.id, "ann-b", HOSTILE[c.id + 1])
            p.set_clip_label(c.id, "ann-a", "-stack" if c.id % 2 else "=cmd")
            p.set_clip_label(c.id, "ann-b", "-stack" if c.id % 2 else "=cmd")
        yield p


def _cells(path):
    with open(path, newline="", encoding="utf-8") as f:
        return [cell for row in csv.reader(f) for cell in row]


def _assert_no_live_formula(path):
    cells = _cells(path)
    assert cells, path
    live = [c for c in cells if c.startswith(FORMULA_START) and not NUMBER.fullmatch(c)]
    assert not live, f"{path.name}: cells a spreadsheet would run: {live[:3]}"
    return cells


def test_export_csvs_escape_text_and_jsonl_keeps_it(hostile, tmp_path):
    plan = hostile.plan_export({"train": 0.5, "test": 0.5}, min_agreement=0.0)
    hostile.write_export(tmp_path / "out", plan, override_reason="test data", webvtt=True)
    out = tmp_path / "out"
    csvs = sorted(out.glob("*.csv"))
    assert len(csvs) == 6
    escaped = []
    for f in csvs:
        escaped += [c for c in _assert_no_live_formula(f) if c.startswith("'")]
    assert any(c.startswith("'=HYPERLINK") for c in escaped)
    assert "'-stack" in escaped and "'=cmd" in escaped
    assert {"'@SUM(A1:A9)", "'\t=1+1", "'\r=1+1"} <= set(escaped)
    # the JSON Lines files are the lossless format: the text is there exactly as typed
    texts = {c["text"] for f in out.glob("*.jsonl") for line in f.read_text("utf-8").splitlines()
             for c in json.loads(line)["captions"]}
    assert set(HOSTILE) <= texts | {t.split(" the arm")[0] for t in texts}


def test_numbers_stay_numbers(hostile, tmp_path):
    plan = hostile.plan_export({"train": 0.5, "test": 0.5}, min_agreement=0.0)
    hostile.write_export(tmp_path / "out", plan, override_reason="test data")
    rows = list(csv.DictReader(open(next((tmp_path / "out").glob("train.csv")), encoding="utf-8")))
    assert rows and all(float(r["agreement"]) >= 0 for r in rows)  # written as plain numbers
    # a negative number is a number, not text: written without a quote
    assert csvsafe.safe_row([-0.12, -3, "-0.12"]) == [-0.12, -3, "'-0.12"]


def test_report_tables_escape_text_but_not_negative_numbers(hostile, tmp_path):
    files = write_report(hostile, tmp_path / "report", n_boot=20)
    assert files.csv
    numbers = []
    for f in files.csv.values():
        for cell in _assert_no_live_formula(f):
            try:
                numbers.append(float(cell))
            except ValueError:
                pass
    assert numbers  # the tables still hold numbers a spreadsheet reads as numbers


def test_dump_labels_csv_escapes_and_imports_back_exactly(hostile, tmp_path):
    out = tmp_path / "labels.csv"
    assert hostile.export_labels_csv(out) == 8
    cells = _assert_no_live_formula(out)
    assert "'-stack" in cells and "'=cmd" in cells
    before = sorted(hostile.clip_labels())
    with Project.open(hostile.folder, user="lead") as q:
        for c in q.clips():
            q.set_clip_label(c.id, "ann-a", None)
            q.set_clip_label(c.id, "ann-b", None)
        q.import_records(out)
        assert sorted(q.clip_labels()) == before  # the quote written is the quote removed


@pytest.mark.parametrize("value", ["=1+1", "'=1+1", "''@x", "-", "plain", "'plain", "", "\t", "a=b"])
def test_escape_round_trips(value):
    written = csvsafe.safe_cell(value)
    assert not written.startswith(FORMULA_START)
    assert csvsafe.read_cell(written) == value


@pytest.mark.parametrize("column", [
    ("plain", "text"), ("=1+1", "ok"), ("ok", "-3"), ("'=x", "y"), ("\tz",), ("\r=1",),
    ("a\0=b", "c"), ("@x", "y"), ("'quoted", "z"), ("", "+"), tuple(HOSTILE),
])
def test_a_report_column_is_escaped_as_each_cell_alone(column):
    """The report's CSV tables escape a whole column at a time (one scan of the joined column
    decides whether any cell needs a look); each cell must come out as ``safe_cell`` makes it."""
    from clipscribe.review_report import tables
    assert list(tables._column(column)) == [csvsafe.safe_cell(v) for v in column]
    rows = [[v, 1.5] for v in column]
    text = tables.to_csv((["text", "number"], rows))
    cells = [r[0] for r in csv.reader(text.splitlines()[1:])] if "\r" not in "".join(column) else None
    if cells is not None:
        assert cells == [csvsafe.safe_cell(v) for v in column]


@pytest.mark.parametrize("rows", [
    [["a", 1, 2.5, None, True], ["b", -3, float("nan"), 0.1, False]],          # nothing to escape
    [["=a", 1, 2.5, None, True], ["b", -3, 1e300, 0.1, False]],                # one to escape
    [["a", 1], ["b", 2, "extra"]],                                             # ragged
    [],
])
def test_report_tables_are_each_cell_as_cell_makes_it(rows):
    """Whichever way a table is written (rows as they are when no cell needs escaping, column
    by column, or row by row), the text is the csv module's rows of ``_cell`` values."""
    import io

    from clipscribe.review_report import tables
    want = io.StringIO()
    w = csv.writer(want, lineterminator="\n")
    w.writerow(["h"])
    w.writerows([[tables._cell(v) for v in r] for r in rows])
    assert tables.to_csv((["h"], rows)) == want.getvalue()


_cell_values = st.one_of(
    st.none(), st.booleans(), st.integers(-10**20, 10**20),
    st.floats(allow_nan=True, allow_infinity=True),
    st.text(alphabet=st.sampled_from(list('ab =+-@\'",;\n\r\t\0é☃ ')), max_size=8),
    st.text(max_size=6))


@settings(max_examples=300, deadline=None)
@given(st.integers(1, 5).flatmap(lambda width: st.lists(
    st.lists(_cell_values, min_size=width, max_size=width), max_size=12)))
def test_report_tables_written_by_column_are_what_the_csv_module_writes(rows):
    """Tables of one width are joined column by column by the report's own code; the text
    must be exactly the csv module's (minimal quoting, "\\n" line ends) rows of ``_cell``
    values: quotes doubled, commas, quotes and line breaks quoted, numbers as repr."""
    import io

    from clipscribe.review_report import tables
    want = io.StringIO()
    w = csv.writer(want, lineterminator="\n")
    w.writerow(["h", "i"])
    w.writerows([[tables._cell(v) for v in r] for r in rows])
    assert tables.to_csv((["h", "i"], rows)) == want.getvalue()
