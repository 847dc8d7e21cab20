"""Caption guideline checks (pure functions, no Qt)."""

import pytest

from clipscribe.schema.caption_rules import check_caption, count_words, starts_with

RULES = dict(min_words=3, max_words=8, banned_openings=["there is", "a video of"])


@pytest.mark.parametrize("text, words", [
    ("The arm lifts the red block.", 6),
    ("  spaced   out  ", 2),
    ("pick-up done", 2),              # a hyphenated word is one word (common practice)
    ("Le robot soulève le cube", 5),  # accents are letters
    ("Le robot soule\u0301ve le cube", 5),  # decomposed accent (NFD) counts the same
    ("机器人拿起方块", 7),              # one word per Han character (common practice)
    ("ロボットが動く", 7),               # kana counted per character
    ("robot 拿起 block", 4),
    ("الروبوت يرفع المكعب", 3),        # Arabic, right to left, spaced words
    ("— , .", 0),                      # punctuation alone is no word
    ("", 0),
])
def test_count_words(text, words):
    assert count_words(text) == words


def codes(text, others=()):
    return [f.code for f in check_caption(text, others=others, **RULES)]


def test_good_caption_passes():
    assert codes("The arm lifts the red block.") == []


def test_blank_caption_has_no_findings():
    assert codes("   ") == []


def test_too_short_and_too_long():
    assert codes("Arm moves.") == ["too_short"]
    assert codes("The arm lifts the red block and then puts it down.") == ["too_long"]


@pytest.mark.parametrize("text, banned", [
    ("There is an arm lifting a block", True),
    ("THERE IS an arm lifting a block", True),
    ("There issues a block from the arm", False),   # whole words only
    ("A video of an arm lifting", True),
    ("An arm says there is a block", False),
])
def test_banned_openings(text, banned):
    assert ("banned_opening" in codes(text)) is banned


def test_duplicate_of_own_caption_ignores_case_space_and_full_stop():
    assert "duplicate" in codes("The arm lifts the block", others=["the arm  lifts the block."])
    assert "duplicate" not in codes("The arm lifts the block", others=["The arm drops the block"])


@pytest.mark.parametrize("text", [" The arm lifts the block", "The arm lifts the block ",
                                  "The arm  lifts the block"])
def test_stray_whitespace(text):
    assert "whitespace" in codes(text)


def test_starts_with_rtl_and_cjk():
    assert starts_with("这是 机器人", "这是")
    assert not starts_with("الروبوت يرفع", "يرفع")
