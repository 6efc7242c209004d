"""What an import is told (:class:`ImportSettings`) and what it says back
(:class:`ImportReport`), with the units it works on and the events a history replay runs
between its jobs."""

from __future__ import annotations

from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path
from typing import Any

from sqlmodel import Session

from inventory.core.errors import InventoryError, Problem, Source, column_letter
from inventory.sheets.dates import Order
from inventory.sheets.fuzzy import Candidate, HeaderMatch
from inventory.sheets.rows import TypedRow


@dataclass(frozen=True)
class ImportSettings:
    """Everything that shapes one import, with documented defaults.

    ``header_threshold``: rapidfuzz score (0-100) a header needs to be taken for a field it
    does not name exactly. ``accept_score`` and ``accept_margin``: a fork text resolves on its
    own when its best family scores at least this and leads the next by the margin; other
    texts go to review with up to ``candidates`` suggestions scoring ``candidate_floor`` or
    more. ``earliest``/``today``: the plausible range of dates (a later date is "in the
    future"). ``stock``: history takes its parts from stock (False records the jobs only, for
    history from before the ledger started).
    """

    kind: str
    sheet: str | None = None
    mapping: tuple[tuple[str, str], ...] = ()
    resolutions: Path | None = None
    review: Path | None = None
    date_order: Order | None = None
    stock: bool = True
    stock_before_ledger: bool = False  # history dated before the first movement takes stock too
    today: date | None = None
    earliest: date = date(1980, 1, 1)
    header_threshold: float = 85.0
    accept_score: float = 90.0
    accept_margin: float = 8.0
    candidate_floor: float = 0.0
    candidates: int = 5
    user: str | None = None


@dataclass
class ForkDecision:
    text: str
    code: str | None
    how: str  # code, alias, resolution, fuzzy, review
    score: float
    rows: int
    first: Source
    candidates: list[Candidate] = field(default_factory=list)

    def to_dict(self) -> dict:
        return {"text": self.text, "fork": self.code, "how": self.how,
                "score": round(self.score, 1), "rows": self.rows,
                "first_cell": cell_ref(self.first),
                "candidates": [c.to_dict() for c in self.candidates]}


@dataclass
class ImportReport:
    kind: str
    file: str
    sheet: str | None = None
    header_row: int = 1
    encoding: str | None = None
    date1904: bool = False
    mapping: list[HeaderMatch] = field(default_factory=list)
    ignored: list[str] = field(default_factory=list)
    dates: str = ""
    rows: int = 0
    unit: str = "row"
    units: int = 0
    new: int = 0
    already: int = 0
    invalid: int = 0
    review: int = 0
    problems: list[Problem] = field(default_factory=list)
    warnings: list[Problem] = field(default_factory=list)
    forks: list[ForkDecision] = field(default_factory=list)
    review_path: str | None = None
    fingerprint: str = ""
    previous: list[dict] = field(default_factory=list)
    applied: bool = False
    batch_id: int | None = None
    effects: dict[str, int] = field(default_factory=dict)

    @property
    def ok(self) -> bool:
        return not self.problems and not self.review

    def hint(self) -> str:
        hints = list(dict.fromkeys(p.hint for p in self.problems if p.hint))
        if self.review:
            where = self.review_path or "the review workbook"
            hints.append(f"fill in the 'fork family' column of {where} and run again with "
                         f"--resolutions {self.review_path or 'FILE'}")
        hints.append("nothing was written")
        return "; ".join(hints)

    def error(self) -> InventoryError:
        problems = list(self.problems)
        for f in self.forks:
            if f.how == "review":
                best = ", ".join(f"{c.code} {c.score:.0f}" for c in f.candidates[:3]) or "none"
                problems.append(Problem(
                    f"fork model {f.text!r} ({f.rows} row(s)) needs a decision (best: {best})",
                    kind="review", source=f.first))
        return InventoryError(problems, hint=self.hint())

    def to_dict(self) -> dict:
        return {
            "kind": self.kind, "file": self.file, "sheet": self.sheet,
            "header_row": self.header_row, "encoding": self.encoding,
            "date_system": 1904 if self.date1904 else 1900,
            "mapping": [m.to_dict() for m in self.mapping], "ignored": self.ignored,
            "dates": self.dates, "rows": self.rows, "unit": self.unit, "units": self.units,
            "new": self.new, "already_applied": self.already, "invalid": self.invalid,
            "needs_review": self.review,
            "problems": [p.to_dict() | {"text": str(p)} for p in self.problems],
            "warnings": [p.to_dict() | {"text": str(p)} for p in self.warnings],
            "forks": [f.to_dict() for f in self.forks], "review_workbook": self.review_path,
            "fingerprint": self.fingerprint, "previous_batches": self.previous,
            "applied": self.applied, "batch": self.batch_id, "effects": self.effects,
        }


def cell_ref(src: Source | None) -> str:
    if src is None or src.row is None:
        return ""
    return f"{column_letter(src.column) if src.column else ''}{src.row}"


@dataclass(frozen=True)
class Event:
    """Something else that happens on a day while history is replayed (a delivery, a count):
    ``run`` changes stock through the ledger and returns the part codes it touched. Events
    run before the jobs of their day when ``order`` < 1, after them otherwise."""

    day: date
    order: int
    run: Callable[[Session], Iterable[str]]


@dataclass
class Unit:
    """What one key stands for: a job (history) or a row (the other kinds)."""

    key: str
    rows: list[TypedRow]
    day: date | None
    source: Source | None
    payload: Any = None
    status: str = "new"  # new, applied, invalid, review

