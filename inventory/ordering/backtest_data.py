"""Demand histories outside the database, for the backtest: a wide monthly CSV (a ``month``
column and one column per part, like ../shared/data/carparts_dev.csv) or a long one (date,
part, qty), read through the project's one csv reader, every problem named with its row
and column. Pure (no database); :mod:`inventory.ordering.backtest` re-exports the readers.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np
from numpy.typing import NDArray

from inventory.core.errors import InventoryError
from inventory.forecast import demand as dm

FloatArray = NDArray[np.float64]


# -- reading demand histories ---------------------------------------------------------------


@dataclass(frozen=True)
class DemandTable:
    """Demand per series and period read from a file: ``values[i, t]`` for ``names[i]``,
    period starts in ``periods`` (datetime64[D])."""

    names: tuple[str, ...]
    periods: NDArray[np.datetime64]
    values: FloatArray
    freq: dm.Freq = "M"

    def season_pos(self) -> NDArray[np.int64] | None:
        """Calendar month - 1 of each column for monthly data; None otherwise."""
        if self.freq != "M":
            return None
        months = self.periods.astype("datetime64[M]").astype(np.int64)
        return (months % 12).astype(np.int64)


class DemandFileError(ValueError):
    """A demand file that cannot be read; the message names file, row and column."""


def _parse_month(text: str, where: str) -> np.datetime64:
    t = text.strip()
    try:
        if len(t) == 7:  # YYYY-MM
            return np.datetime64(t, "M").astype("datetime64[D]")
        return np.datetime64(t, "D").astype("datetime64[M]").astype("datetime64[D]")
    except ValueError as exc:
        raise DemandFileError(f"{where}: expected a month (YYYY-MM or a date), got {text!r}") from exc


def _parse_qty(text: str, where: str) -> float:
    t = text.strip()
    if t == "":
        return 0.0  # a gap is no demand
    try:
        q = float(t)
    except ValueError as exc:
        raise DemandFileError(f"{where}: expected a quantity, got {text!r}") from exc
    if not np.isfinite(q) or q < 0:
        raise DemandFileError(f"{where}: quantities must be zero or more, got {text!r}")
    return q


def _csv_rows(p: Path) -> list[list[str]]:
    """The lines of a demand file through the project's one csv reader
    (:func:`inventory.sheets.csvread.csv_grid`: UTF-8, UTF-16 or Windows-1252; comma, semicolon
    or tab), its problems as :class:`DemandFileError`."""
    from inventory.sheets.csvread import csv_grid

    try:
        rows, _ = csv_grid(p)
    except InventoryError as exc:
        raise DemandFileError(str(exc)) from None
    if not rows:
        raise DemandFileError(f"{p}: empty file")
    return rows


def read_wide_csv(path: str | Path, *, month_column: str = "month") -> DemandTable:
    """A wide monthly CSV: a ``month`` column (YYYY-MM) and one column per part.

    Blank cells are zero demand; every problem is reported with its row and column, all at
    once. Months must be consecutive and increasing.
    """
    p = Path(path)
    rows = _csv_rows(p)
    header = [h.strip() for h in rows[0]]
    if month_column not in header:
        raise DemandFileError(f"{p}:1: no {month_column!r} column (header: {header[:5]}...)")
    mcol = header.index(month_column)
    parts = [h for i, h in enumerate(header) if i != mcol]
    pcols = [i for i in range(len(header)) if i != mcol]
    if len(set(parts)) != len(parts):
        raise DemandFileError(f"{p}:1: duplicate part columns")
    errors: list[str] = []
    months: list[np.datetime64] = []
    values = np.zeros((len(parts), len(rows) - 1))
    for r, row in enumerate(rows[1:], start=2):
        if len(row) != len(header):
            errors.append(f"{p}:{r}: expected {len(header)} cells, got {len(row)}")
            continue
        try:
            months.append(_parse_month(row[mcol], f"{p}:{r}:{month_column}"))
        except DemandFileError as exc:
            errors.append(str(exc))
        for j, c in enumerate(pcols):
            try:
                values[j, r - 2] = _parse_qty(row[c], f"{p}:{r}:{header[c]}")
            except DemandFileError as exc:
                errors.append(str(exc))
    if not errors and months:
        m = np.array(months).astype("datetime64[M]").astype(np.int64)
        if np.any(np.diff(m) != 1):
            errors.append(f"{p}: months must be consecutive and increasing")
    if errors:
        more = f" (and {len(errors) - 20} more)" if len(errors) > 20 else ""
        raise DemandFileError("\n".join(errors[:20]) + more)
    return DemandTable(tuple(parts), np.array(months, dtype="datetime64[D]"), values, "M")


def read_long_csv(
    path: str | Path,
    *,
    date_column: str = "date",
    part_column: str = "part",
    qty_column: str = "qty",
    freq: dm.Freq = "M",
) -> DemandTable:
    """A long CSV, one line per demand (date, part, qty), bucketed by calendar month (or
    ISO week with ``freq="W"``) over the whole date range; missing periods are zeros."""
    p = Path(path)
    grid = _csv_rows(p)
    fields = [f.strip() for f in grid[0]]
    missing = [c for c in (date_column, part_column, qty_column) if c not in fields]
    if missing:
        raise DemandFileError(f"{p}:1: missing column(s) {missing} (header: {fields})")
    dates: list[np.datetime64] = []
    parts: list[str] = []
    qtys: list[float] = []
    errors: list[str] = []
    for r, cells in enumerate(grid[1:], start=2):
        if not cells:
            continue  # a blank line
        # a short line leaves its last fields None (as a dictionary reader does), so a missing
        # date is reported rather than read as no date
        row: dict[str, str | None] = dict(zip(fields, [*cells, *[None] * len(fields)],
                                              strict=False))
        try:
            dates.append(np.datetime64(row[date_column].strip(), "D"))
        except (ValueError, AttributeError):
            errors.append(f"{p}:{r}:{date_column}: expected a date, got {row[date_column]!r}")
            continue
        part = (row[part_column] or "").strip()
        if not part:
            errors.append(f"{p}:{r}:{part_column}: empty part")
            dates.pop()
            continue
        try:
            qtys.append(_parse_qty(row[qty_column] or "", f"{p}:{r}:{qty_column}"))
        except DemandFileError as exc:
            errors.append(str(exc))
            dates.pop()
            continue
        parts.append(part)
    if errors:
        more = f" (and {len(errors) - 20} more)" if len(errors) > 20 else ""
        raise DemandFileError("\n".join(errors[:20]) + more)
    if not dates:
        raise DemandFileError(f"{p}: no demand lines")
    names = tuple(sorted(set(parts)))
    index = {n: i for i, n in enumerate(names)}
    mat = dm.bucket_demand(
        np.array(dates), np.array([index[x] for x in parts]), np.array(qtys),
        n_series=len(names), freq=freq,
    )
    return DemandTable(names, mat.periods, mat.values, freq)


def read_demand_csv(path: str | Path, *, freq: dm.Freq = "M") -> DemandTable:
    """Wide if the header has a ``month`` column, long if it has date, part and qty."""
    p = Path(path)
    header = [h.strip() for h in _csv_rows(p)[0]]
    if "month" in header:
        return read_wide_csv(p)
    if {"date", "part", "qty"} <= set(header):
        return read_long_csv(p, freq=freq)
    raise DemandFileError(
        f"{p}:1: expected a wide file with a 'month' column or a long file with "
        f"'date', 'part' and 'qty' columns; header is {header[:6]}"
    )
