"""Helpers shared by the import and export tests (no tests here): tiny workbooks built
inline, a snapshot of everything an import may write, and the CLI run as a user types it."""

from __future__ import annotations

import contextlib
import io
import sys
from datetime import datetime
from pathlib import Path

from openpyxl import Workbook
from sqlalchemy import func
from sqlmodel import Session, select

from inventory.core.tables import (
    ForkAlias,
    ImportBatch,
    ImportedRow,
    JobLine,
    Lot,
    Movement,
    Part,
    ServiceJob,
    StockBalance,
)

HISTORY_HEADER = ["job", "date", "fork", "service", "hours", "fork_ref", "item", "qty"]


def book(path: Path, rows: list[list], *, sheet: str = "Jobs", epoch_1904: bool = False,
         text_cells: bool = True) -> Path:
    """A workbook with ``rows`` on one sheet (strings stay strings, even "=..." unless
    ``text_cells`` is False, which lets openpyxl write formulas)."""
    wb = Workbook()
    ws = wb.active
    ws.title = sheet
    if epoch_1904:
        wb.epoch = datetime(1904, 1, 1)
    for r, row in enumerate(rows, start=1):
        for c, v in enumerate(row, start=1):
            if v is None:
                continue
            cell = ws.cell(r, c, v)
            if isinstance(v, str) and text_cells:
                cell.data_type = "s"
    wb.save(path)
    return path


def csv_file(path: Path, text: str, encoding: str = "utf-8") -> Path:
    path.write_bytes(text.encode(encoding))
    return path


def snapshot(engine) -> dict:
    """Row counts and stock of every table an import writes."""
    with Session(engine) as s:
        out = {m.__tablename__: s.exec(select(func.count()).select_from(m)).one()
               for m in (Movement, ServiceJob, JobLine, ImportBatch, ImportedRow, ForkAlias,
                         Lot, Part)}
        out["stock"] = s.exec(select(func.coalesce(func.sum(StockBalance.qty), 0))).one()
        out["parts"] = sorted((p.code, p.description, p.id_mm) for p in s.exec(select(Part)))
    return out


def cli(*args: str) -> tuple[int, str, str]:
    """Run ``inventory ARGS`` through the console entry point; (exit code, stdout, stderr)."""
    from inventory.cli.main import run

    out, err = io.StringIO(), io.StringIO()
    argv = sys.argv
    sys.argv = ["inventory", *args]
    code = 0
    try:
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                run()
            except SystemExit as exc:
                code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 1)
    finally:
        sys.argv = argv
    return code, out.getvalue(), err.getvalue()
