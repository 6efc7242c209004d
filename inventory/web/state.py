"""What every handler shares: the engine and the bench's in-memory catalog, and how a
handler runs a service in one transaction as the person signed in.
"""

from __future__ import annotations

from collections.abc import Callable

from starlette.concurrency import run_in_threadpool

from inventory.core.actor import acting_as
from inventory.core.db import make_engine, resolve_url, transaction


class Web:
    """What the handlers share: the engine, the bench's in-memory catalog."""

    def __init__(self, url: str | None) -> None:
        from inventory.bench.service import ShopCache

        self.url = resolve_url(url)
        self.engine = make_engine(self.url)
        self.shop_cache = ShopCache()

    async def read(self, fn: Callable, who: dict | None = None):
        """``fn(session)`` in a worker thread, in one transaction, as the person signed in
        (the ledger records their name on every movement)."""
        def go():
            with acting_as(who["name"] if who else None), transaction(self.engine) as s:
                return fn(s)
        return await run_in_threadpool(go)

    async def write(self, fn: Callable, who: dict | None = None, *, attempts: int = 3):
        """Like :meth:`read`; a transaction that lost a race on a unique key (two people
        taking the same new job number at once) or a lock (deadlock, serialization) is
        rolled back whole and run again, so the second person gets the real answer (for
        example "not enough stock") rather than a server error."""
        from sqlalchemy.exc import IntegrityError, OperationalError

        for attempt in range(attempts):
            try:
                return await self.read(fn, who)
            except (IntegrityError, OperationalError):
                if attempt == attempts - 1:
                    raise
