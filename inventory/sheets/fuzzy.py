"""Fuzzy matching at the spreadsheet edge: a file's headers to our fields, and free text
(a fork model typed by a person) to the codes we know.

Both are rapidfuzz scores from 0 to 100, with thresholds passed in by the caller. A match
keeps the named parts of its score so the preview can say why it was made.
"""

from __future__ import annotations

import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field

from rapidfuzz import fuzz, utils

from inventory.core.errors import Problem, Source
from inventory.sheets.columns import Schema, normalise

IGNORE = "-"  # ``--map "Notes=-"`` ignores a column


def words(text: object) -> str:
    """Lower-case words, punctuation to spaces: the form fuzzy scores compare."""
    return utils.default_process(str(text or ""))


@dataclass(frozen=True, slots=True)
class HeaderMatch:
    field: str
    column: int  # 0-based
    header: str
    how: str  # "name", "alias", "fuzzy", "map"
    score: float = 100.0

    def to_dict(self) -> dict:
        return {"field": self.field, "header": self.header, "column": self.column + 1,
                "how": self.how, "score": round(self.score, 1)}


@dataclass
class HeaderMap:
    matches: dict[str, HeaderMatch] = field(default_factory=dict)
    ignored: list[str] = field(default_factory=list)
    problems: list[Problem] = field(default_factory=list)

    @property
    def index(self) -> dict[str, int]:
        return {f: m.column for f, m in self.matches.items()}


def header_score(header: str, names: Iterable[str]) -> float:
    """Best similarity of a header to a field's name or aliases: the larger of the plain
    ratio of the letters-and-digits forms (catches typos) and the word-order-free ratio of
    the word forms (catches "date of job" for "job date")."""
    h_norm, h_words = normalise(header), words(header)
    best = 0.0
    for name in names:
        best = max(best, fuzz.ratio(h_norm, normalise(name)),
                   fuzz.token_sort_ratio(h_words, words(name)))
    return best


def match_headers(header: Sequence[str], schema: Schema, *,
                  overrides: Mapping[str, str] | None = None, threshold: float = 85.0,
                  source: Source | None = None) -> HeaderMap:
    """Our field -> the file's column, in this order: ``overrides`` (``--map HEADER=FIELD``),
    then exact name or alias (case, spaces and punctuation ignored), then the best fuzzy
    score of the remaining headers at or above ``threshold``. Each column serves one field.

    Problems: an override naming no field or no header, a field found in two columns, a
    required field not found (with the headers that were there and a ``--map`` hint).
    """
    out = HeaderMap()
    src = source or Source()
    fields = {c.name: c for c in schema.columns}
    norm = [normalise(h) for h in header]
    taken: set[int] = set()
    ignored_cols: set[int] = set()
    for head, target in (overrides or {}).items():
        target = target.strip()
        if target != IGNORE and target not in fields:
            out.problems.append(Problem(
                f"--map {head}={target}: no field {target!r} in a {schema.name} file",
                kind="usage", source=src,
                hint=f"fields are {', '.join(fields)} (or - to ignore a column)"))
            continue
        cols = [i for i, h in enumerate(norm) if h == normalise(head) and h]
        if not cols:
            out.problems.append(Problem(
                f"--map {head}={target}: no header {head!r} in the file "
                f"(headers: {', '.join(repr(h) for h in header if h) or 'none'})",
                kind="usage", source=src))
            continue
        if target == IGNORE:
            ignored_cols.update(cols)
            continue
        out.matches[target] = HeaderMatch(target, cols[0], header[cols[0]], "map")
        taken.add(cols[0])
    for col in schema.columns:
        if col.name in out.matches:
            continue
        exact = [i for i, h in enumerate(norm)
                 if h and i not in taken and i not in ignored_cols and h in col.headers()]
        if not exact:
            continue
        i = exact[0]
        how = "name" if norm[i] == normalise(col.name) else "alias"
        out.matches[col.name] = HeaderMatch(col.name, i, header[i], how)
        taken.add(i)
        if len(exact) > 1:
            out.problems.append(Problem(
                f"two columns could be {col.name!r}: {header[exact[0]]!r} and "
                f"{header[exact[1]]!r}", kind="schema", source=src,
                hint=f"choose one with --map \"{header[exact[1]]}=-\" to ignore the other"))
    pairs = []
    for col in schema.columns:
        if col.name in out.matches:
            continue
        for i, h in enumerate(header):
            if not norm[i] or i in taken or i in ignored_cols:
                continue
            score = header_score(h, (col.name, *col.aliases))
            if score >= threshold:
                pairs.append((score, col.name, i))
    for score, name, i in sorted(pairs, key=lambda p: (-p[0], p[2])):
        if name in out.matches or i in taken:
            continue
        out.matches[name] = HeaderMatch(name, i, header[i], "fuzzy", score)
        taken.add(i)
    for col in schema.columns:
        if col.required and col.name not in out.matches:
            near = max(((header_score(h, (col.name, *col.aliases)), h) for h in header if h),
                       default=(0.0, ""))
            hint = (f"if {near[1]!r} is the {col.name}, add --map \"{near[1]}={col.name}\""
                    if near[0] >= 50 else f"add a {col.name!r} column, or name the column that "
                    f"holds it with --map \"HEADER={col.name}\"")
            out.problems.append(Problem(
                f"missing required column {col.name!r} (headers found: "
                f"{', '.join(repr(h) for h in header if h) or 'none'})",
                kind="schema", source=src, hint=hint))
    out.ignored = [h for i, h in enumerate(header) if h and i not in taken]
    return out


@dataclass(frozen=True, slots=True)
class Candidate:
    """A possible meaning of a free text, with its score and the named parts of it."""

    code: str
    score: float
    label: str = ""
    parts: tuple[tuple[str, float], ...] = ()

    def to_dict(self) -> dict:
        return {"code": self.code, "score": round(self.score, 1), "label": self.label,
                "parts": {k: round(v, 1) for k, v in self.parts}}


@dataclass(frozen=True, slots=True)
class Choice:
    """One thing free text may name: its code, the texts that name it (description,
    remembered aliases), numbers that should agree with numbers in the text (a stanchion
    diameter, a travel range) and the years it was made."""

    code: str
    texts: tuple[str, ...]
    label: str = ""
    numbers: tuple[tuple[float, float], ...] = ()  # (low, high) ranges a number may fall in
    years: tuple[int, int] | None = None


STOP_WORDS = frozenset({"fork", "forks", "mm", "the", "and", "with", "a", "an", "of", "for",
                        "in", "on", "gen", "generation", "model", "suspension", "new", "old",
                        "front", "service", "version", "v", "mk", "type"})
_SPLIT = re.compile(r"(?<=\d)(?=[a-z])|(?<=[a-z])(?=\d)")
_YEAR = re.compile(r"^(19[89]\d|20\d\d)$")
_SMALL = re.compile(r"^\d{2,3}(?:\.\d+)?$")


def _tokens(text: str) -> list[str]:
    """Words of a text with numbers split from letters ("34mm" -> "34", "mm")."""
    return _SPLIT.sub(" ", words(text).replace(".", " . ").replace(" . ", ".")).split()


def _split(tokens: list[str]) -> tuple[list[str], list[float], list[int]]:
    ws, nums, years = [], [], []
    for t in tokens:
        if _YEAR.match(t):
            years.append(int(t))
        elif _SMALL.match(t):
            nums.append(float(t))
        elif not t.isdigit() and t not in STOP_WORDS:
            ws.append(t)
    return ws, nums, years


def _word_found(word: str, vocab: set[str], typo_ratio: float) -> bool:
    if word in vocab:
        return True
    if len(word) >= 3 and any(v.startswith(word) for v in vocab):  # "neg" for "negative"
        return True
    if len(word) < 5:
        return False
    return any(len(v) >= 4 and fuzz.ratio(word, v) >= typo_ratio for v in vocab)


@dataclass(frozen=True, slots=True)
class RankWeights:
    """The weights of :func:`rank`'s score parts and the typo threshold."""

    words: float = 80.0
    numbers: float = 10.0
    years: float = 5.0
    typo_ratio: float = 80.0


def rank(text: str, choices: Sequence[Choice], *, limit: int = 5,
         weights: RankWeights = RankWeights(), floor: float = 0.0) -> list[Candidate]:
    """Choices ordered by how well ``text`` names them, each score a sum of named parts
    (``word_weight`` and the others are the fields of ``weights``):

    - ``code``: the choice's code written inside the text ("tr34 gen2") scores 100 outright;
    - ``words``: ``word_weight`` times the share of the text's words (numbers and filler
      like "fork" or "mm" left out) found among the choice's words; an abbreviation (the
      start of a word, 3 letters or more) and a typo (rapidfuzz ratio of at least
      ``typo_ratio``, words of 5 letters or more) count;
    - ``numbers``: from ``+number_weight`` when every number in the text (2 or 3 digits)
      falls in one of the choice's ranges to ``-number_weight`` when none does;
    - ``years``: ``+year_weight`` when a year in the text falls in the choice's years,
      ``-year_weight`` when it does not.

    Clamped to 0..100.
    """
    word_weight, number_weight, year_weight = weights.words, weights.numbers, weights.years
    typo_ratio = weights.typo_ratio
    tokens = _tokens(text)
    ws, nums, years = _split(tokens)
    out = []
    for ch in choices:
        code = _tokens(ch.code)
        parts: list[tuple[str, float]] = []
        if code and any(tokens[i:i + len(code)] == code for i in range(len(tokens))):
            parts.append(("code", 100.0))
        vocab: set[str] = set(_split(_tokens(ch.code))[0])
        for t in ch.texts:
            tw = _split(_tokens(t))[0]
            vocab.update(tw)
            vocab.update(a + b for a, b in zip(tw, tw[1:], strict=False))  # "all mountain"
        if ws:
            found = sum(_word_found(w, vocab, typo_ratio) for w in ws)
            parts.append(("words", word_weight * found / len(ws)))
        if nums and ch.numbers:
            fits = sum(any(lo - 0.5 <= n <= hi + 0.5 for lo, hi in ch.numbers) for n in nums)
            parts.append(("numbers", number_weight * (2 * fits - len(nums)) / len(nums)))
        if years and ch.years:
            lo, hi = ch.years
            fits = any(lo <= y <= hi for y in years)
            parts.append(("years", year_weight if fits else -year_weight))
        score = max(0.0, min(100.0, sum(v for _, v in parts)))
        if score >= floor:
            out.append(Candidate(ch.code, score, ch.label, tuple(parts)))
    out.sort(key=lambda c: (-c.score, c.code))
    return out[:limit]
