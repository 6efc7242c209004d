"""Storage limits at issue (ISO 2230): a lot past its limit is not issued unless it was
inspected, and using it after inspection records the extension on the lot.

The limits come from :func:`inventory.bench.seals.storage_limit` (initial period from the end
of the cure quarter, plus one extension period after a passed inspection; ISO 2230:2002
clause 4, counting from the quarter's end is common practice). A lot already extended is
usable up to ``Lot.extended_until``; past that, or past the extension period, it is not.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date

from sqlmodel import Session

from inventory.bench.seals import storage_limit
from inventory.core.tables import Lot, Part


@dataclass(frozen=True, slots=True)
class State:
    past: bool
    limit: date | None = None
    extended_limit: date | None = None
    extendable: bool = False


FRESH = State(False)


def state(lot: Lot, material: str | None, day: date) -> State:
    """Where ``lot`` stands on ``day`` against its storage limit."""
    if not lot.cured or not material:
        return FRESH
    try:
        limit = storage_limit(lot.cured, material)
        longest = storage_limit(lot.cured, material, extended=True)
    except ValueError:  # a material outside the ISO 2230 tables: no limit to apply
        return FRESH
    if limit is None or day <= limit:
        return FRESH
    if lot.extended_until is not None:
        if day <= lot.extended_until:
            return FRESH
        return State(True, lot.extended_until, lot.extended_until, False)
    return State(True, limit, longest, longest is not None and day <= longest)


def extend(session: Session, lot: Lot, part: Part, st: State) -> None:
    """Record that ``lot`` passed its inspection: usable up to the extended limit."""
    lot.extended_until = st.extended_limit
    session.add(lot)
    session.flush()
