"""The first steps of every import: read the sheet, find its header row, map the headers
to the kind's fields (names and aliases, then fuzzy matches, then ``--map`` overrides), and
report what the sheet itself gets wrong (merged header cells, formulas without values)."""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Iterable
from pathlib import Path
from typing import Any

from inventory.core.errors import Problem, Source, column_letter
from inventory.history.imports.report import ImportReport, ImportSettings
from inventory.sheets.columns import Schema, normalise
from inventory.sheets.fuzzy import HeaderMap, match_headers
from inventory.sheets.kinds import SCHEMAS
from inventory.sheets.rows import TypedRows, is_totals_row
from inventory.sheets.source import SourceSheet, read_source


def header_scorer(schema: Schema, overrides: Iterable[str]) -> Callable[[list[Any]], float]:
    names: set[str] = set()
    for col in schema.columns:
        names |= col.headers()
    names |= {normalise(h) for h in overrides}
    names.discard("")

    def score(row: list[Any]) -> float:
        return float(sum(1 for v in row if isinstance(v, str) and normalise(v) in names))
    return score


def read_and_map(path: Path, settings: ImportSettings) -> tuple[SourceSheet, HeaderMap,
                                                                  ImportReport]:
    """Read the sheet and map its headers; the report starts with what was found, and with
    the problems that stop the rows from being read (kind ``schema`` or ``usage``)."""
    schema = SCHEMAS[settings.kind]
    mapping = dict(settings.mapping)
    sheet = read_source(path, header_scorer(schema, mapping), sheet=settings.sheet)
    table = sheet.table
    rep = ImportReport(settings.kind, path.name, table.sheet, table.header_row, sheet.encoding,
                       sheet.date1904)
    rep.fingerprint = hashlib.sha256(path.read_bytes()).hexdigest()
    rep.unit = "job" if settings.kind == "history" else "row"
    if sheet.encoding == "cp1252":
        rep.warnings.append(Problem("read as Windows-1252, not UTF-8: check accented text",
                                    kind="encoding", source=Source(path.name),
                                    severity="warning"))
    for r in sheet.above:
        rep.warnings.append(Problem("skipped a line above the header row", kind="skipped",
                                    source=Source(path.name, table.sheet, r),
                                    severity="warning"))
    hmap = match_headers(table.header, schema, overrides=mapping,
                         threshold=settings.header_threshold,
                         source=Source(path.name, table.sheet, table.header_row))
    rep.mapping = sorted(hmap.matches.values(), key=lambda m: m.column)
    rep.ignored = hmap.ignored
    rep.problems += hmap.problems
    rep.problems += sheet_problems(sheet, hmap, rep)
    if settings.kind == "history" and not ({"item", "kit"} & set(hmap.matches)):
        rep.problems.append(Problem(
            "missing a column for what the job used: 'item' (a part or kit code per row) or "
            f"'kit' (headers found: {', '.join(repr(h) for h in table.header if h) or 'none'})",
            kind="schema", source=Source(path.name, table.sheet, table.header_row),
            hint='name the column with --map "HEADER=item" or --map "HEADER=kit"'))
    return sheet, hmap, rep


def absorb(rep: ImportReport, typed: TypedRows) -> None:
    rep.rows = typed.read
    rep.problems += typed.problems
    rep.warnings += typed.warnings
    rep.dates = "; ".join(d.describe() for d in typed.dates.values())


def sheet_problems(sheet: SourceSheet, hmap: HeaderMap, rep: ImportReport) -> list[Problem]:
    out: list[Problem] = []
    t = sheet.table
    for r0, c0, r1, c1 in sheet.merged:
        if r0 <= t.header_row <= r1 and c1 > c0:
            out.append(Problem(
                f"merged cells {column_letter(c0)}{r0}:{column_letter(c1)}{r1} in the header row",
                kind="schema", source=Source(t.file, t.sheet, t.header_row, c0),
                hint="unmerge the header cells so each column has its own header"))
        elif r1 > t.header_row and c1 >= c0:
            rep.warnings.append(Problem(
                f"merged cells {column_letter(c0)}{r0}:{column_letter(c1)}{r1}: only the first "
                "cell holds the value", kind="merged", source=Source(t.file, t.sheet, r0, c0),
                severity="warning"))
    used = {m.column + 1: m.header for m in hmap.matches.values()}
    cached = [f for f in sheet.formulas if f.has_value and f.row > t.header_row]
    if cached:
        f = cached[0]
        rep.warnings.append(Problem(
            f"{len(cached)} formula cell(s) read as their saved values (e.g. "
            f"{column_letter(f.column)}{f.row} ={f.formula})", kind="formula",
            source=Source(t.file, t.sheet), severity="warning"))
    totals = {r for r, values in t.rows if is_totals_row(values)} if sheet.formulas else set()
    for f in sheet.formulas:
        if not f.has_value and f.row > t.header_row and f.column in used and f.row not in totals:
            out.append(Problem(
                f"formula ={f.formula} has no saved value", kind="formula",
                source=Source(t.file, t.sheet, f.row, f.column, used[f.column]),
                hint="open the file in a spreadsheet program and save it, or paste the "
                     "values over the formulas"))
    return out

