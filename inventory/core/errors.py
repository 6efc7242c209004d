"""One error type for everything the user can get wrong.

A :class:`Problem` says what is wrong and, where known, where: file, sheet, row, column.
Layers add the context they have (a cell parser says "not a number"; the sheet reader adds
the sheet, row and column). :class:`InventoryError` carries one or more problems and a hint;
the CLI prints each as one line and exits non-zero.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Literal

Severity = Literal["error", "warning"]


def column_letter(index: int) -> str:
    """Spreadsheet column letter for a 1-based column index (1 -> A, 27 -> AA)."""
    if index < 1:
        raise ValueError(f"column index must be 1 or more, got {index}")
    letters = ""
    while index:
        index, rem = divmod(index - 1, 26)
        letters = chr(65 + rem) + letters
    return letters


@dataclass(frozen=True, slots=True)
class Source:
    """Where a value came from. Rows are 1-based as a spreadsheet shows them."""

    file: str | None = None
    sheet: str | None = None
    row: int | None = None
    column: int | None = None  # 1-based
    header: str | None = None

    def __str__(self) -> str:
        place = self.file or ""
        if self.sheet:
            place += (":" if place else "") + self.sheet
        if self.row is not None:
            cell = (column_letter(self.column) if self.column else "") + str(self.row)
            place += ("!" if self.sheet else (":" if place else "")) + (
                cell if self.column else f"row {self.row}"
            )
        if self.header:
            place += f" ({self.header})"
        return place


@dataclass(frozen=True, slots=True)
class Problem:
    message: str
    kind: str = "invalid"  # invalid, unknown, conflict, shortage, schema, ...
    source: Source | None = None
    severity: Severity = "error"
    hint: str | None = None

    def at(self, source: Source) -> Problem:
        return replace(self, source=source)

    def __str__(self) -> str:
        text = f"{self.source}: {self.message}" if self.source else self.message
        return text

    def to_dict(self) -> dict:
        d: dict = {"message": self.message, "kind": self.kind, "severity": self.severity}
        if self.source:
            d.update(
                file=self.source.file,
                sheet=self.source.sheet,
                row=self.source.row,
                column=column_letter(self.source.column) if self.source.column else None,
                header=self.source.header,
            )
        if self.hint:
            d["hint"] = self.hint
        return d


@dataclass
class InventoryError(Exception):
    """A failure the user can act on. Nothing was written when this is raised."""

    problems: list[Problem] = field(default_factory=list)
    hint: str | None = None

    def __init__(self, message: str | list[Problem], *, kind: str = "invalid",
                 hint: str | None = None, source: Source | None = None) -> None:
        if isinstance(message, str):
            self.problems = [Problem(message, kind=kind, source=source)]
        else:
            self.problems = list(message)
        self.hint = hint
        super().__init__(str(self))

    @property
    def kind(self) -> str:
        return self.problems[0].kind if self.problems else "invalid"

    def __str__(self) -> str:
        return "\n".join(str(p) for p in self.problems)

    def lines(self) -> list[str]:
        out = [str(p) for p in self.problems if p.severity == "error"]
        if self.hint:
            out.append(f"hint: {self.hint}")
        return out
