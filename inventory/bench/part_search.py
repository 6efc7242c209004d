"""Free-text part search: "34 wiper", "od 41", "x-ring 25", "24.99x3.53", "DW-34".

The query is split into tokens of three sorts:

- **dimension tokens** with a keyword: ``od 41``, ``id=24.99``, ``cs3.53``, ``h 10``;
  ``AxB`` (ring: inside x cross-section, or inside x outside) and ``AxBxC`` (inside x
  outside x height). Scored by closeness to that dimension of the part.
- **numbers** alone (``34``, ``1.26in``): scored against every dimension of the part and
  every number written in its code or description ("34 mm stanchion").
- **words**: scored with rapidfuzz's ``partial_ratio`` against one text per part (code,
  description, kind, material, standard designation), all parts at once with
  ``process.cdist``.

A number scores ``100 * (1 - |difference| / window)`` (never below 0), the window being
``abs_mm + rel * value`` (defaults 0.5 mm + 2 %, common practice for a search, wider than a
match tolerance). A part's score is the mean over the query's tokens; each hit says what
each token matched, so a result can be explained.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from rapidfuzz import fuzz, process

from inventory.bench.seals import kind_label, material
from inventory.core.model import PartKind, PartSpec
from inventory.core.units import read_length

DIM_KEYWORDS = {"id": "id", "od": "od", "cs": "cs", "h": "height", "ht": "height",
                "height": "height", "w": "height", "width": "height", "d1": "id", "d2": "cs"}
_DIMS = ("id", "od", "height", "cs")
_NUMBER = r"(?:\d+(?:[.,]\d+)?|[.,]\d+)"
_KEYED = re.compile(rf"^(?P<key>[a-z]+\d?)\s*[=:]?\s*(?P<num>{_NUMBER}\s*(?:mm|in|\"|cm)?)$")
_PLAIN = re.compile(rf"^{_NUMBER}\s*(?:mm|in|\"|cm)?$")
_TIMES = re.compile(rf"^{_NUMBER}(?:\s*[x×*]\s*{_NUMBER}){{1,2}}$")
_NUMBERS_IN_TEXT = re.compile(r"(?<![\w.])\d+(?:\.\d+)?")


@dataclass(frozen=True, slots=True)
class Token:
    """One piece of the query: a word, or a length (mm) bound to some dimensions."""

    text: str
    mm: float | None = None
    dims: tuple[str, ...] = ()  # empty: any dimension and numbers in the text


@dataclass(frozen=True, slots=True)
class Hit:
    index: int
    code: str
    score: float
    matched: tuple[str, ...]  # per token: what it matched and how well

    def to_dict(self) -> dict:
        return {"part": self.code, "score": round(self.score, 1),
                "matched": list(self.matched)}


def tokenize(query: str, *, default_unit: str = "mm") -> list[Token]:
    """Split a query into words and dimension tokens (see the module docstring).

    Raises ``ValueError`` for an empty query or an unreadable number.
    """
    raw = [t for t in re.split(r"[\s,;]+", query.strip().lower()) if t]
    if not raw:
        raise ValueError("empty search: give words or sizes, e.g. \"34 wiper\" or \"od 41\"")
    out: list[Token] = []
    i = 0
    while i < len(raw):
        tok = raw[i]
        key = DIM_KEYWORDS.get(tok)
        if key and i + 1 < len(raw) and _PLAIN.match(raw[i + 1]):
            out.append(Token(f"{tok} {raw[i + 1]}", _mm(raw[i + 1], default_unit), (key,)))
            i += 2
            continue
        m = _KEYED.match(tok)
        if m and m.group("key") in DIM_KEYWORDS:
            out.append(Token(tok, _mm(m.group("num"), default_unit),
                             (DIM_KEYWORDS[m.group("key")],)))
        elif _TIMES.match(tok):
            parts = re.split(r"\s*[x×*]\s*", tok)
            shapes = (("id",), ("cs", "od"), ("height",)) if len(parts) == 2 else \
                (("id",), ("od",), ("height",))
            for value, dims in zip(parts, shapes, strict=False):
                out.append(Token(f"{tok}:{'/'.join(dims)}", _mm(value, default_unit), dims))
        elif _PLAIN.match(tok):
            out.append(Token(tok, _mm(tok, default_unit)))
        else:
            out.append(Token(tok))
        i += 1
    return out


def _mm(text: str, default_unit: str) -> float:
    return read_length(text, default_unit).mm


def part_text(p: PartSpec) -> str:
    """The text a word is fuzzy-matched against: code, description, kind, material,
    standard designation (lower case)."""
    mat = material(p.material) if p.material else None
    bits = [p.code, p.description, kind_label(PartKind(p.kind)), str(p.kind).replace("_", " "),
            p.material or "", mat.name if mat else "", p.standard or ""]
    return " ".join(b for b in bits if b).lower()


def _text_numbers(p: PartSpec) -> list[float]:
    return [float(x) for x in _NUMBERS_IN_TEXT.findall(f"{p.code} {p.description}"
                                                        .replace("-", " "))]


def _dims(p: PartSpec) -> dict[str, float]:
    out = {d: getattr(p, f"{d}_mm") for d in _DIMS if getattr(p, f"{d}_mm") is not None}
    if PartKind(p.kind) in (PartKind.O_RING, PartKind.X_RING) and p.cs_mm is not None:
        if "od" not in out and p.id_mm is not None:
            out["od"] = p.id_mm + 2.0 * p.cs_mm
        out.setdefault("height", p.cs_mm)
    return out


def _number_score(value: float, candidates: list[tuple[str, float]], abs_mm: float,
                  rel: float) -> tuple[float, str]:
    window = abs_mm + rel * value
    best, label = 0.0, "no size near"
    for name, v in candidates:
        s = max(0.0, 1.0 - abs(v - value) / window) * 100.0
        if s > best:
            best, label = s, f"{name} {v:g}"
    return best, label


def find_parts(query: str, parts: Sequence[PartSpec], *, limit: int = 10,
               cutoff: float = 60.0, abs_mm: float = 0.5, rel: float = 0.02,
               default_unit: str = "mm") -> list[Hit]:
    """Parts best matching a free-text query, best first; those scoring under ``cutoff``
    (0-100) are left out."""
    tokens = tokenize(query, default_unit=default_unit)
    if not parts:
        return []
    texts = [part_text(p) for p in parts]
    words = [t for t in tokens if t.mm is None]
    word_scores = (process.cdist([w.text for w in words], texts, scorer=fuzz.partial_ratio,
                                 processor=None, dtype=np.float32)
                   if words else np.zeros((0, len(parts)), dtype=np.float32))
    hits = []
    for i, p in enumerate(parts):
        dims = _dims(p)
        scores, matched = [], []
        w = 0
        for t in tokens:
            if t.mm is None:
                s = float(word_scores[w, i])
                w += 1
                scores.append(s)
                matched.append(f"{t.text}: {s:.0f}")
                continue
            if t.dims:
                cands = [(d, dims[d]) for d in t.dims if d in dims]
            else:
                cands = list(dims.items()) + [("text", v) for v in _text_numbers(p)]
            s, label = _number_score(t.mm, cands, abs_mm, rel)
            scores.append(s)
            matched.append(f"{t.text}: {label} ({s:.0f})")
        score = float(np.mean(scores))
        if score >= cutoff:
            hits.append(Hit(i, p.code, score, tuple(matched)))
    hits.sort(key=lambda h: (-h.score, h.code))
    return hits[:limit]
