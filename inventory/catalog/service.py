"""Catalog use cases for the faces (command line, web): load a catalog (csv folder or
workbook) in the caller's transaction, export it in the same layout.

The readers and writers (and openpyxl behind them) are imported when a call runs, so a face
can import this module at start-up for free.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING

from sqlmodel import Session

if TYPE_CHECKING:
    from inventory.catalog.load import LoadReport

#: The catalog's tables in load order (csv file names without .csv; workbook sheet names).
TABLES = ("locations", "parts", "suppliers", "supplier_items", "fork_families", "seats", "kits",
          "kit_lines")


def load(session: Session, path: str | Path) -> LoadReport:
    """Validate the whole catalog at ``path``, then write it (all of it or none of it)."""
    from inventory.catalog.load import load_catalog

    return load_catalog(session, path)


def export(session: Session, target: str | Path) -> list[Path]:
    """Write the catalog to a folder of csv files or to one ``.xlsx`` workbook."""
    from inventory.catalog.export import export_catalog

    return export_catalog(session, target)
