"""Find rows by their codes, with the closest valid codes suggested for a typo."""

from __future__ import annotations

from rapidfuzz import fuzz, process
from sqlmodel import Session, select

from inventory.core.errors import InventoryError
from inventory.core.tables import ForkFamily, Location, Part, Seat, Supplier


def suggest(text: str, choices: list[str], *, limit: int = 3, cutoff: float = 50.0) -> list[str]:
    """The closest codes to ``text``: rapidfuzz's plain ratio, case-insensitive, keeping only
    those within 10 points of the best so a near-miss is not buried in noise."""
    found = process.extract(text.upper(), {c: c.upper() for c in choices}, scorer=fuzz.ratio,
                            limit=limit, score_cutoff=cutoff)
    if not found:
        return []
    best = found[0][1]
    return [key for _, score, key in found if score >= best - 10]


def did_you_mean(text: str, choices: list[str], otherwise: str | None = None) -> str | None:
    """The hint for an unknown code: the closest valid codes, else ``otherwise``."""
    close = suggest(text, choices)
    return f"did you mean {', '.join(close)}?" if close else otherwise


def _unknown(what: str, code: str, choices: list[str]) -> InventoryError:
    return InventoryError(f"unknown {what} {code!r}", kind="unknown",
                          hint=did_you_mean(code, choices))


def _cache(session: Session, name: str) -> dict:
    """Rows found once in this session are found again without a query (codes do not change
    inside a unit of work; a new session starts with an empty cache)."""
    return session.info.setdefault(f"lookup:{name}", {})


def part(session: Session, code: str) -> Part:
    cache = _cache(session, "part")
    if code in cache:
        return cache[code]
    row = session.exec(select(Part).where(Part.code == code)).first()
    if row is None:
        row = session.exec(select(Part).where(Part.code == code.upper())).first()
    if row is None:
        raise _unknown("part", code, list(session.exec(select(Part.code))))
    cache[code] = row
    return row


def location(session: Session, code: str) -> Location:
    cache = _cache(session, "location")
    if code in cache:
        return cache[code]
    row = session.exec(select(Location).where(Location.code == code.upper())).first()
    if row is None:
        raise _unknown("location", code, list(session.exec(select(Location.code))))
    cache[code] = row
    return row


def supplier(session: Session, code: str) -> Supplier:
    row = session.exec(select(Supplier).where(Supplier.code == code)).first()
    if row is None:
        raise _unknown("supplier", code, list(session.exec(select(Supplier.code))))
    return row


def fork(session: Session, code: str) -> ForkFamily:
    row = session.exec(select(ForkFamily).where(ForkFamily.code == code)).first()
    if row is None:
        row = session.exec(select(ForkFamily).where(ForkFamily.code == code.upper())).first()
    if row is None:
        raise _unknown("fork family", code, list(session.exec(select(ForkFamily.code))))
    return row


def seat(session: Session, fork_code: str, seat_code: str) -> tuple[ForkFamily, Seat]:
    fam = fork(session, fork_code)
    row = session.exec(
        select(Seat).where(Seat.fork_family_id == fam.id, Seat.code == seat_code)
    ).first()
    if row is None:
        codes = list(session.exec(select(Seat.code).where(Seat.fork_family_id == fam.id)))
        raise _unknown(f"seat in {fam.code}", seat_code, codes)
    return fam, row
