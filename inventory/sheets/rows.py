"""Typing the rows of an import: every cell of every mapped column through its column's
parser, every failure kept with its cell, nothing skipped silently.

Built for 100,000-row files: a parser runs once per distinct raw value of its column (a
history file repeats the same dates, forks and part codes thousands of times), and the date
column's day/month order is settled once for the file before any date is read.

Rows that are totals (``Total``, ``Grand total``, ``Sum`` in one of the first cells) are
skipped with a warning, as are rows with nothing in the mapped columns.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Collection
from dataclasses import dataclass, field
from datetime import date
from operator import itemgetter
from typing import Any

from inventory.core.errors import Problem, Source
from inventory.sheets import dates
from inventory.sheets.columns import Schema
from inventory.sheets.fuzzy import HeaderMap
from inventory.sheets.read import Table

TOTALS = re.compile(r"^\s*(grand\s*|sub\s*|running\s*)?(totals?|sum|summe|gesamt)\b", re.I)
_TOTAL_START = frozenset(" \tgGsStTrR")
_BLANK, _OK, _ERR = 0, 1, 2


@dataclass(slots=True)
class TypedRow:
    row: int  # as the spreadsheet shows it
    values: dict[str, Any]
    ok: bool = True


@dataclass
class TypedRows:
    rows: list[TypedRow] = field(default_factory=list)
    problems: list[Problem] = field(default_factory=list)
    warnings: list[Problem] = field(default_factory=list)
    dates: dict[str, dates.OrderDecision] = field(default_factory=dict)
    read: int = 0  # data rows seen (blank rows are dropped by the reader)


def date_parser(order: dates.Order | None, *, date1904: bool, earliest: date | None,
                latest: date | None) -> Callable[[Any], date]:
    """A cell parser for dates in one file: its order, date system and plausible range."""
    def parse(value: Any) -> date:
        d = dates.parse_date(value, order=order, date1904=date1904)
        if latest is not None and d > latest:
            raise ValueError(f"date {d.isoformat()} is in the future (today is "
                             f"{latest.isoformat()})")
        if earliest is not None and d < earliest:
            raise ValueError(f"date {d.isoformat()} is before {earliest.isoformat()}: "
                             "expected a date in the shop's history")
        return d
    return parse


def _run(parse: Callable[[Any], Any], raw: Any) -> tuple[int, Any]:
    if raw is None or (type(raw) is str and not raw.strip()) or (
            type(raw) is float and raw != raw):
        return _BLANK, None
    try:
        return _OK, parse(raw)
    except ValueError as exc:
        return _ERR, str(exc)
    except (TypeError, ArithmeticError, OverflowError) as exc:
        return _ERR, f"cannot read {raw!r} ({exc})"


def is_totals_row(values: list[Any], first: int = 3) -> bool:
    """A row whose first non-blank cells (up to ``first``) include "Total", "Sum", ..."""
    seen = 0
    for v in values:
        if v is None or v == "":
            continue
        if type(v) is str and v[:1] in _TOTAL_START and TOTALS.match(v):
            return True
        seen += 1
        if seen >= first:
            break
    return False


def _without_totals(table: Table, out: TypedRows) -> list[tuple[int, list[Any]]]:
    """The table's rows less its totals rows (reported as skipped). Only rows whose first
    cell is blank, not text, or text starting like "Total"/"Sum" get the full check."""
    rows = table.rows
    firsts = [v[0] if v else None for _, v in rows]
    suspects = {k for k, x in enumerate(firsts)
                if not x or x.__class__ is not str or x.lstrip()[:1] in _TOTAL_START}
    if not suspects:
        return rows
    kept = []
    for k, (rownum, values) in enumerate(rows):
        if k in suspects and is_totals_row(values):
            out.warnings.append(Problem("skipped a totals row", kind="skipped",
                                        source=Source(table.file, table.sheet, rownum),
                                        severity="warning"))
            continue
        kept.append((rownum, values))
    return kept


def _parse_column(raws: list[Any], parse: Callable[[Any], Any]) -> list[tuple[int, Any]]:
    """(status, value or message) per cell, parsing each distinct raw value once."""
    if bool in set(map(type, raws)):  # True == 1: keep them apart
        typed_cache = {(type(r), r): None for r in raws}
        for key in typed_cache:
            typed_cache[key] = _run(parse, key[1])
        return [typed_cache[(type(r), r)] for r in raws]
    cache = {r: _run(parse, r) for r in set(raws)}
    return [cache[r] for r in raws]


@dataclass(frozen=True, slots=True)
class DateRules:
    """How a sheet's date columns are read: which columns hold dates, the day/month order
    (None: decided from the column), the workbook's 1904 date system, and the bounds."""

    fields: Collection[str] = ("date",)
    order: dates.Order | None = None
    date1904: bool = False
    earliest: date | None = None
    latest: date | None = None


def type_rows(table: Table, schema: Schema, hmap: HeaderMap, *,
              date_rules: DateRules = DateRules(),
              skip_cells: Collection[tuple[int, int]] = ()) -> TypedRows:
    """Typed values of every row. ``skip_cells`` (row, 1-based column) are cells already
    reported (a formula without a saved value): they count as invalid without a second
    message."""
    dr = date_rules
    out = TypedRows()
    cols = {c.name: c for c in schema.columns}
    plan = [(name, m.column, m.header, cols[name]) for name, m in hmap.matches.items()]
    src_file, src_sheet = table.file, table.sheet
    data = _without_totals(table, out)
    width = max((m.column for m in hmap.matches.values()), default=-1) + 1
    rows_only = [v if len(v) >= width else [*v, *([None] * (width - len(v)))] for _, v in data]
    raw_columns = {name: list(map(itemgetter(i), rows_only)) for name, i, _, _ in plan}
    # rows with nothing in the imported columns are skipped (their other cells: notes)
    blanks = [0] * len(data)
    for values in raw_columns.values():
        for k in [k for k, v in enumerate(values)
                  if v is None or v == "" or (v.__class__ is str and v.isspace())]:
            blanks[k] += 1
    empty = {k for k, b in enumerate(blanks) if plan and b == len(plan)}
    if empty:
        for k in sorted(empty):
            out.warnings.append(Problem("skipped a row with nothing in the imported columns",
                                        kind="skipped", source=Source(src_file, src_sheet,
                                                                      data[k][0]),
                                        severity="warning"))
        keep = [k for k in range(len(data)) if k not in empty]
        data = [data[k] for k in keep]
        raw_columns = {n: [c[k] for k in keep] for n, c in raw_columns.items()}
    out.read = len(data)
    parsers: dict[str, Callable[[Any], Any]] = {}
    for name, i, header, col in plan:
        if name in dr.fields:
            decision = dates.decide_order(raw_columns[name], given=dr.order)
            out.dates[name] = decision
            if not decision.decided:
                out.problems.extend(_order_problems(decision, data, i, header, table))
            parsers[name] = date_parser(decision.order, date1904=dr.date1904,
                                        earliest=dr.earliest, latest=dr.latest)
        else:
            parsers[name] = col.parse
    undecided = {n for n, d in out.dates.items() if not d.decided}
    skip = set(skip_cells)
    rownums = [r for r, _ in data]
    ok = [True] * len(data)
    columns: list[tuple[str, list[Any]]] = []
    for name, i, header, col in plan:
        results = _parse_column(raw_columns[name], parsers[name])
        typed = [value if status == _OK else col.default for status, value in results]
        for k in [k for k, (status, _) in enumerate(results) if status != _OK]:
            status, value = results[k]
            rownum = rownums[k]
            if (rownum, i + 1) in skip:
                ok[k] = False
            elif status == _BLANK:
                if col.required:
                    ok[k] = False
                    out.problems.append(Problem(
                        f"{col.name} is required but empty", kind="invalid",
                        source=Source(src_file, src_sheet, rownum, i + 1, header),
                        hint=f"fill in the {col.name} of every row"))
            else:
                ok[k] = False
                if name in undecided and value.startswith("cannot tell day from month"):
                    continue  # reported once for the file
                out.problems.append(Problem(value, kind="invalid", hint=col.hint,
                                            source=Source(src_file, src_sheet, rownum, i + 1,
                                                          header)))
        columns.append((name, typed))
    for n in cols:
        if n not in hmap.matches:
            columns.append((n, [cols[n].default] * len(data)))
    names = [n for n, _ in columns]
    table_rows = zip(*(t for _, t in columns), strict=True)
    out.rows = [TypedRow(r, dict(zip(names, values, strict=True)), o)
                for r, values, o in zip(rownums, table_rows, ok, strict=True)] if data else []
    out.problems.sort(key=lambda p: (p.source.row or 0, p.source.column or 0)
                      if p.source else (0, 0))
    out.warnings.sort(key=lambda p: p.source.row or 0 if p.source else 0)
    return out


def _order_problems(decision: dates.OrderDecision, data: list, i: int, header: str,
                    table: Table) -> list[Problem]:
    def cell(k: int) -> str:
        rownum, values = data_with_dates[k]
        return f"{Source(None, None, rownum, i + 1)} {values[i]!r}"

    data_with_dates = [(r, v) for r, v in data if i < len(v)]
    hint = "say which with --date-order dmy (day first) or --date-order mdy (month first)"
    where = Source(table.file, table.sheet, table.header_row, i + 1, header)
    if decision.how == "mixed":
        return [Problem(
            f"dates mix day-first ({len(decision.day_first)} row(s), e.g. "
            f"{cell(decision.day_first[0])}) and month-first ({len(decision.month_first)} row(s), "
            f"e.g. {cell(decision.month_first[0])}) order", kind="dates", source=where,
            hint=hint)]
    return [Problem(
        f"cannot tell whether dates are day-first or month-first: all "
        f"{len(decision.ambiguous)} numeric date(s) read either way (e.g. "
        f"{cell(decision.ambiguous[0])})", kind="dates", source=where, hint=hint)]
