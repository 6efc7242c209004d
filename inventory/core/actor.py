"""Who is acting: the person signed in to the web app for the current request.

The web app sets it around each request (:func:`acting_as`); the stock ledger reads it
(:func:`inventory.stock.ledger.current_user`) so every movement records the person logged in.
On the command line it is unset and the ledger falls back to ``$INVENTORY_USER`` or the
operating-system login.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from contextvars import ContextVar

_acting: ContextVar[str | None] = ContextVar("inventory_acting_person", default=None)


def acting_person() -> str | None:
    return _acting.get()


@contextmanager
def acting_as(name: str | None) -> Iterator[None]:
    token = _acting.set(name)
    try:
        yield
    finally:
        _acting.reset(token)
