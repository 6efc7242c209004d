"""Spreadsheet columns, defined once: header aliases, parser, required or not, and how to
write the value back. The same definitions serve import, export, templates and errors."""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from typing import Any

from inventory.core.errors import Problem, Source
from inventory.sheets import cells
from inventory.sheets.read import Table


def _plain(value: Any) -> Any:
    return value


@dataclass(frozen=True, slots=True)
class Column:
    name: str
    parse: Callable[[Any], Any] = cells.text
    required: bool = False
    aliases: tuple[str, ...] = ()
    write: Callable[[Any], Any] = _plain
    default: Any = None
    example: Any = None
    hint: str | None = None  # how to fix a bad value, shown with the problems

    def headers(self) -> set[str]:
        return {normalise(h) for h in (self.name, *self.aliases)}


def normalise(header: Any) -> str:
    return "".join(ch for ch in str(header or "").lower() if ch.isalnum())


@dataclass(frozen=True)
class Schema:
    """The columns of one table of ours."""

    name: str
    columns: tuple[Column, ...]
    key: tuple[str, ...] = field(default_factory=tuple)

    def column(self, name: str) -> Column:
        for col in self.columns:
            if col.name == name:
                return col
        raise KeyError(name)

    @property
    def header(self) -> list[str]:
        return [c.name for c in self.columns]


@dataclass
class Parsed:
    rows: list[tuple[Source, dict[str, Any]]]
    problems: list[Problem]
    mapping: dict[str, str]  # our field -> header found in the file
    index: dict[str, int] = field(default_factory=dict)  # our field -> 0-based column

    def source(self, row: Source, name: str) -> Source:
        """The cell of field ``name`` in the row that ``row`` names."""
        i = self.index.get(name)
        return Source(row.file, row.sheet, row.row, None if i is None else i + 1, name)


def map_headers(table: Table, schema: Schema, overrides: dict[str, str] | None = None
                ) -> tuple[dict[str, int], list[Problem]]:
    """Our field name -> 0-based column index, by exact name or alias (case and punctuation
    ignored). Missing required columns are problems."""
    found: dict[str, int] = {}
    problems: list[Problem] = []
    norm = [normalise(h) for h in table.header]
    overrides = {normalise(k): v for k, v in (overrides or {}).items()}
    for col in schema.columns:
        idx = None
        for header, target in overrides.items():
            if target == col.name and header in norm:
                idx = norm.index(header)
        if idx is None:
            for i, h in enumerate(norm):
                if h in col.headers():
                    idx = i
                    break
        if idx is not None:
            found[col.name] = idx
        elif col.required:
            problems.append(Problem(
                f"missing required column {col.name!r} (headers found: "
                f"{', '.join(repr(h) for h in table.header if h) or 'none'})",
                kind="schema", source=Source(table.file, table.sheet, table.header_row),
            ))
    return found, problems


def parse_table(table: Table, schema: Schema, overrides: dict[str, str] | None = None) -> Parsed:
    """Every row typed by the schema; every bad cell reported with its place, none skipped."""
    index, problems = map_headers(table, schema, overrides)
    rows: list[tuple[Source, dict[str, Any]]] = []
    if any(p.kind == "schema" for p in problems):
        return Parsed(rows, problems, {})
    for rownum, values in table.rows:
        record: dict[str, Any] = {}
        ok = True
        for col in schema.columns:
            i = index.get(col.name)
            raw = values[i] if i is not None and i < len(values) else None
            src = Source(table.file, table.sheet, rownum, (i + 1) if i is not None else None,
                         col.name)
            if cells.is_blank(raw):
                if col.required:
                    problems.append(Problem(f"{col.name} is required but empty", source=src))
                    ok = False
                record[col.name] = col.default
                continue
            try:
                record[col.name] = col.parse(raw)
            except ValueError as exc:
                problems.append(Problem(str(exc), source=src))
                ok = False
        if ok:
            rows.append((Source(table.file, table.sheet, rownum), record))
    return Parsed(rows, problems, {c: table.header[i] for c, i in index.items()}, index)


def to_cells(schema: Schema, records: Sequence[dict[str, Any]]) -> list[list[Any]]:
    return [[col.write(r.get(col.name)) for col in schema.columns] for r in records]
