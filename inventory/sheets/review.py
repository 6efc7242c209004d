"""The review workbook: free texts an import could not resolve on its own, each with its best
candidates in a drop-down list, for a person to decide; and reading their decisions back.

Sheet ``review`` has one row per text: the text, how many rows use it, the first cell, an
empty answer column with a drop-down (the candidates first, best first, then every other
code), and the candidates with their scores. Sheet ``choices`` lists every code with its
description for reference. The workbook is read back with ``--resolutions FILE``.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path

from openpyxl import Workbook
from openpyxl.utils import get_column_letter, quote_sheetname

from inventory.core.errors import InventoryError, Problem, Source
from inventory.sheets.columns import Column, Schema, parse_table
from inventory.sheets.fuzzy import Candidate
from inventory.sheets.read import read_tables
from inventory.sheets.write import (
    LISTS_SHEET,
    SheetSpec,
    add_list_validation,
    fill_sheet,
    lists_sheet,
    save_workbook,
)

REVIEW_SHEET = "review"
TEXT, ROWS, FIRST, ANSWER = "fork text", "rows", "first cell", "fork family"
SHOWN_CANDIDATES = 3


@dataclass(frozen=True, slots=True)
class ReviewItem:
    text: str
    rows: int
    first_cell: str
    candidates: tuple[Candidate, ...]
    answer: str | None = None  # an answer given before, shown again


def write_review(path: str | Path, items: Sequence[ReviewItem],
                 choices: Sequence[tuple[str, str]], *, answer: str = ANSWER) -> Path:
    """Write the review workbook; ``choices`` are every (code, description) allowed."""
    header = [TEXT, ROWS, FIRST, answer]
    for i in range(1, SHOWN_CANDIDATES + 1):
        header += [f"candidate {i}", f"score {i}"]
    rows = []
    for it in items:
        row: list = [it.text, it.rows, it.first_cell, it.answer]
        for c in list(it.candidates[:SHOWN_CANDIDATES]):
            row += [c.code, round(c.score, 1)]
        rows.append(row)
    wb = Workbook()
    ws = wb.active
    ws.title = REVIEW_SHEET
    fill_sheet(ws, SheetSpec(REVIEW_SHEET, header, rows, widths={TEXT: 40, answer: 16}))
    codes = [c for c, _ in choices]
    lists = lists_sheet(wb)
    for r, it in enumerate(items, start=2):
        first = [c.code for c in it.candidates if c.code in codes]
        offered = first + [c for c in codes if c not in first]
        for col, code in enumerate(offered, start=1):
            lists.cell(r, col, code).data_type = "s"
        last = get_column_letter(max(1, len(offered)))
        add_list_validation(ws, 4, r, r, f"{quote_sheetname(LISTS_SHEET)}!$A${r}:${last}${r}",
                            strict=True, title=answer)
    ref = wb.create_sheet("choices")
    fill_sheet(ref, SheetSpec("choices", ["code", "description"], [list(c) for c in choices],
                              widths={"description": 80}))
    wb.move_sheet(LISTS_SHEET, offset=len(wb.sheetnames) - 1 - wb.sheetnames.index(LISTS_SHEET))
    return save_workbook(wb, path)


def read_resolutions(path: str | Path, valid: Mapping[str, str], *, answer: str = ANSWER
                     ) -> tuple[dict[str, tuple[str, Source]], list[Problem]]:
    """Decisions from a filled-in review workbook (or any csv/xlsx with the same two
    columns): text -> (code, where it was answered). Blank answers are left out; answers not
    in ``valid`` (upper-case code -> code) are problems naming their cell."""
    p = Path(path)
    tables = read_tables(p, [REVIEW_SHEET] if p.suffix.lower() != ".csv" else None)
    schema = Schema("resolutions", (
        Column("text", required=True, aliases=(TEXT, "text", "free text", "fork model")),
        Column("answer", aliases=(answer, "answer", "resolution", "fork", "code")),
    ))
    parsed = parse_table(tables[0], schema)
    if not parsed.problems and "answer" not in parsed.mapping:
        raise InventoryError(f"{p.name}: no {answer!r} column in the review sheet",
                             kind="schema", hint="pass the review workbook the preview wrote")
    problems = list(parsed.problems)
    out: dict[str, tuple[str, Source]] = {}
    for src, rec in parsed.rows:
        if not rec.get("answer"):
            continue
        code = valid.get(str(rec["answer"]).strip().upper())
        where = parsed.source(src, "answer")
        if code is None:
            problems.append(Problem(
                f"unknown {answer} {rec['answer']!r} for {rec['text']!r}", kind="unknown",
                source=where, hint="pick a value from the drop-down list"))
            continue
        out[str(rec["text"])] = (code, where)
    if not parsed.rows and not problems:
        raise InventoryError(f"{p.name}: no decisions found in the review sheet",
                             hint=f"fill in the {answer!r} column and save")
    return out, problems


def answer_review(path: str | Path, answers: Mapping[str, str] | None = None) -> Path:
    """Fill in a review workbook as a person would: ``answers`` maps a text to its code;
    texts not in ``answers`` (all of them when ``answers`` is None) take their best
    candidate. For scripted runs (the demo tour, tests)."""
    from openpyxl import load_workbook

    wb = load_workbook(path)
    ws = wb[REVIEW_SHEET]
    header = [c.value for c in ws[1]]
    t_col, a_col, c_col = header.index(TEXT) + 1, header.index(ANSWER) + 1, header.index(
        "candidate 1") + 1
    for r in range(2, ws.max_row + 1):
        text = ws.cell(r, t_col).value
        if text is None:
            continue
        if answers is not None and str(text) in answers:
            pick = answers[str(text)]
        else:
            pick = ws.cell(r, c_col).value
        if pick:
            ws.cell(r, a_col, pick)
    return save_workbook(wb, path)
