"""History use cases for the faces (command line, web): spreadsheet imports (preview or
apply), table exports and blank templates; service jobs are in :mod:`inventory.history.jobs`
and reached through :func:`record_job` and friends below.

The importers and writers (and openpyxl behind them) are imported when a call runs, so a
face can import this module at start-up for free.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

from sqlmodel import Session

from inventory.sheets.kinds import KINDS

if TYPE_CHECKING:
    from inventory.history.imports import ImportReport

#: What ``export`` can write (inventory.history.exports uses this list).
TABLES = ("parts", "stock", "lots", "movements", "jobs")

__all__ = ["KINDS", "TABLES", "export_table", "import_file", "resolve_fork", "write_template"]


def import_file(session: Session, file: str | Path, *, kind: str, apply: bool,
                **settings: Any) -> ImportReport:
    """Preview (``apply=False``) or apply an import of ``file`` as ``kind``; ``settings`` are
    the fields of :class:`inventory.history.imports.ImportSettings` (sheet, mapping,
    resolutions, review, date_order, stock, stock_before_ledger, ...)."""
    from inventory.history.imports import ImportSettings, run_import

    return run_import(session, Path(file), ImportSettings(kind=kind, **settings), apply=apply)


def export_table(session: Session, table: str, target: str | Path, *,
                 fmt: str = "csv") -> tuple[Path, int]:
    """Write one table (see :data:`TABLES`) to csv or xlsx; returns the path and row count."""
    from inventory.history.exports import export_table as export

    return export(session, table, target, fmt=fmt)


def write_template(session: Session, kind: str, target: str | Path) -> Path:
    """A blank import workbook for ``kind`` with headers, examples and drop-down lists."""
    from inventory.history.exports import write_template as write

    return write(session, kind, target)


def resolve_fork(session: Session, text: str) -> str:
    """A fork family code from its code or from a free text the history import would accept
    on its own; otherwise one line naming the closest families."""
    from inventory.core import lookup
    from inventory.core.errors import InventoryError
    from inventory.history.jobs import fork_choices, resolve_fork_text

    try:
        return lookup.fork(session, text).code
    except InventoryError:
        pass
    choices, remembered, codes = fork_choices(session)
    code, _, _, cands = resolve_fork_text(text, choices, remembered, codes)
    if code:
        return code
    best = ", ".join(f"{c.code} ({c.score:.0f})" for c in cands[:3])
    raise InventoryError(f"unknown fork family {text!r}", kind="unknown",
                         hint=f"closest: {best}" if best else "list them with "
                         "`inventory catalog export`")
