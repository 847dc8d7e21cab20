"""Live checks of one caption against the project's caption guideline. No Qt, no database:
the workbench, the review desk and scripts can all call :func:`check_caption`.

Word counting is written here by hand because no well-kept library counts words across
scripts the way a caption guideline needs: a word is a whitespace-separated run holding at
least one letter or digit, except that every CJK ideograph, kana or similar character counts as
one word on its own (those scripts do not separate words by spaces; counting characters is
common practice for length limits in Chinese and Japanese text).
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Iterable, Sequence
from dataclasses import dataclass

from .records import MAX_CAPTION_CHARS

# Han ideographs (with extensions and compatibility forms), kana, bopomofo, and CJK symbols
# that are themselves words. Hangul is spaced like English and is counted by spaces.
_CJK = re.compile(
    "[\u3040-\u30ff\u31f0-\u31ff\u3100-\u312f\u3400-\u4dbf\u4e00-\u9fff\uf900-\ufaff"
    "\U00020000-\U0003134f]")
_SPACE_RUN = re.compile(r"\s{2,}")


@dataclass(frozen=True, slots=True)
class Finding:
    """One thing a caption breaks: a short machine code and a plain-English message."""
    code: str      # too_short / too_long / too_many_characters / banned_opening / duplicate / whitespace
    message: str


def count_words(text: str) -> int:
    """Number of words in ``text``, Unicode-aware (see the module docstring).

    ``count_words("A robot lifts it.") == 4``; ``count_words("机器人拿起方块") == 7``;
    ``count_words("Le robot soulève le cube") == 5``.
    """
    n = 0
    for token in unicodedata.normalize("NFC", text).split():
        cjk = len(_CJK.findall(token))
        rest = _CJK.sub(" ", token).split()
        n += cjk + sum(1 for part in rest if any(ch.isalnum() for ch in part))
    return n


def normalise(text: str) -> str:
    """Case-folded, NFC, single-spaced text without trailing punctuation, for comparisons."""
    t = " ".join(unicodedata.normalize("NFC", text).casefold().split())
    return t.rstrip(" .!?。！？…")


def starts_with(text: str, opening: str) -> bool:
    """True when ``text`` opens with the words of ``opening`` (case-insensitive, whole words)."""
    t, o = normalise(text), normalise(opening)
    if not o or not t.startswith(o):
        return False
    rest = t[len(o):]
    return not rest or not rest[0].isalnum()


def check_caption(text: str, *, min_words: int, max_words: int,
                  banned_openings: Iterable[str] = (),
                  others: Sequence[str] = ()) -> list[Finding]:
    """Everything ``text`` breaks in the guideline; an empty list means it passes.

    ``others`` are the same annotator's other captions of the clip (for the duplicate check).
    Blank text yields no findings: an empty slot is not a broken caption.
    """
    if not text.strip():
        return []
    out: list[Finding] = []
    words = count_words(text)
    if words < min_words:
        out.append(Finding("too_short", f"{words} words; the guideline asks for at least {min_words}"))
    if words > max_words:
        out.append(Finding("too_long", f"{words} words; the guideline allows at most {max_words}"))
    if len(text) > MAX_CAPTION_CHARS:
        out.append(Finding("too_many_characters", f"{len(text):,} characters; a caption holds at "
                           f"most {MAX_CAPTION_CHARS:,}, so this one cannot be saved"))
    for opening in banned_openings:
        if starts_with(text, opening):
            out.append(Finding("banned_opening", f"starts with “{opening}”; describe the action instead"))
            break
    mine = normalise(text)
    if any(normalise(o) == mine for o in others if o.strip()):
        out.append(Finding("duplicate", "same as another of your captions for this clip"))
    problems = []
    if text != text.lstrip():
        problems.append("leading")
    if text != text.rstrip():
        problems.append("trailing")
    if _SPACE_RUN.search(text.strip()):
        problems.append("double")
    if problems:
        out.append(Finding("whitespace", f"stray whitespace ({', '.join(problems)} spaces)"))
    return out


#: findings that make a clip's captions miss the guideline at submit (stray spaces do not)
SUBMIT_FINDINGS = ("too_short", "too_long", "too_many_characters", "banned_opening", "duplicate")


def missing_at_submit(texts: Sequence[str], *, captions_per_clip: int, min_words: int,
                      max_words: int, banned_openings: Iterable[str] = ()) -> list[str]:
    """What one annotator's captions of a clip (``texts``, in order) miss in the guideline,
    one plain-English line each; an empty list means the clip may be submitted.

    ``missing_at_submit(["There is a thing"], captions_per_clip=5, min_words=4, max_words=40,
    banned_openings=["there is"])`` names the four missing captions and the banned opening.
    """
    written = [t for t in texts if t.strip()]
    out = []
    if len(written) < captions_per_clip:
        out.append(f"{len(written)} of the {captions_per_clip} captions the guideline asks for")
    banned = list(banned_openings)
    for i, text in enumerate(written):
        others = written[:i]
        for f in check_caption(text, min_words=min_words, max_words=max_words,
                               banned_openings=banned, others=others):
            if f.code in SUBMIT_FINDINGS:
                out.append(f"caption {i + 1}: {f.message}")
    return out
