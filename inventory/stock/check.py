"""`inventory check`: is the database one a shop can trust?

One line per problem: cached balances that differ from the ledger's sums, a lot and location
whose balance goes below zero on some day, rows whose foreign keys point nowhere (SQLite
``foreign_key_check``; PostgreSQL enforces them itself) and SQLite's own
``integrity_check``. An empty list means all is well.
"""

from __future__ import annotations

from sqlalchemy import func, select, text
from sqlmodel import Session

from inventory.core.tables import Location, Lot, Movement, Part, StockBalance
from inventory.stock import timeline


def _names(session: Session) -> tuple[dict, dict, dict]:
    parts = dict(session.execute(select(Part.id, Part.code)).all())
    locs = dict(session.execute(select(Location.id, Location.code)).all())
    lots = dict(session.execute(select(Lot.id, Lot.code)).all())
    return parts, locs, lots


def balances(session: Session) -> list[str]:
    parts, locs, lots = _names(session)
    led = {(p, loc, lot): int(n) for p, loc, lot, n in session.execute(
        select(Movement.part_id, Movement.location_id, Movement.lot_id, func.sum(Movement.qty))
        .group_by(Movement.part_id, Movement.location_id, Movement.lot_id))}
    bal = {(p, loc, lot): int(n) for p, loc, lot, n in session.execute(
        select(StockBalance.part_id, StockBalance.location_id, StockBalance.lot_id,
               StockBalance.qty))}
    out = []
    for key in sorted(set(led) | set(bal)):
        a, b = led.get(key, 0), bal.get(key, 0)
        if a != b:
            p, loc, lot = key
            out.append(f"{parts.get(p, p)} lot {lots.get(lot, lot)} at {locs.get(loc, loc)}: "
                       f"cached balance {b}, ledger sum {a}")
    return out


def below_zero(session: Session) -> list[str]:
    parts, locs, lots = _names(session)
    rows: dict[int, list] = {}
    for p, loc, lot, ts, qty in session.execute(
            select(Movement.part_id, Movement.location_id, Movement.lot_id, Movement.ts,
                   Movement.qty)):
        rows.setdefault(p, []).append((loc, lot, ts, int(qty)))
    out = []
    for p in sorted(rows, key=lambda i: parts.get(i, "")):
        for loc, lot, day, n in sorted(timeline.lowest_balances(rows[p]), key=lambda r: r[2]):
            out.append(f"{parts.get(p, p)} lot {lots.get(lot, lot)} at {locs.get(loc, loc)}: "
                       f"balance {n} at the end of {day.isoformat()}")
    return out


def sqlite_checks(session: Session) -> list[str]:
    if session.get_bind().dialect.name != "sqlite":
        return []
    conn = session.connection()
    out = []
    for table, rowid, parent, _fk in conn.execute(text("PRAGMA foreign_key_check")):
        out.append(f"table {table} row {rowid}: points at a missing {parent} row")
    ok = [r[0] for r in conn.execute(text("PRAGMA integrity_check"))]
    if ok != ["ok"]:
        out += [f"SQLite integrity: {line}" for line in ok]
    return out


def run(session: Session) -> list[str]:
    """Every problem found, one line each (empty when the books are sound)."""
    return sqlite_checks(session) + balances(session) + below_zero(session)
