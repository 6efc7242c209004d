"""What every handler shares: the engine and the bench's in-memory catalog, and how a
handler runs a service in one transaction as the person signed in.
"""

from __future__ import annotations

import time
from collections.abc import Callable

from starlette.concurrency import run_in_threadpool

from inventory.core.actor import acting_as
from inventory.core.db import make_engine, read_transaction, resolve_url, transaction


class NotReady(Exception):
    """The database is not a finished shop: a build started in it and has not finished
    (``inventory demo`` running now, or killed half way)."""


class Web:
    """What the handlers share: the engine, the bench's in-memory catalog."""

    #: How long a "no unfinished build" answer is trusted before it is asked again.
    BUILT_CHECK_SECONDS = 5.0

    def __init__(self, url: str | None) -> None:
        from inventory.bench.service import ShopCache

        self.url = resolve_url(url)
        self.engine = make_engine(self.url)
        self.shop_cache = ShopCache()
        self._built_at = float("-inf")

    def _require_built(self) -> None:
        """The command line's build-mark check, for a server that outlives a rebuild: one
        small SELECT at most every :data:`BUILT_CHECK_SECONDS`, every time while a build
        is unfinished."""
        from inventory.core.build_mark import marks

        now = time.monotonic()
        if now - self._built_at < self.BUILT_CHECK_SECONDS:
            return
        unfinished = sorted(w for w, st in marks(self.engine, schema_known=True).items()
                            if st == "started")
        if unfinished:
            raise NotReady(f"this database holds an unfinished {unfinished[0]} build: wait "
                           f"for it to finish, or run `inventory {unfinished[0]} --replace` "
                           "to build it again")
        self._built_at = now

    async def _run(self, fn: Callable, who: dict | None, begin: Callable):
        def go():
            self._require_built()
            with acting_as(who["name"] if who else None), begin(self.engine) as s:
                return fn(s)
        return await run_in_threadpool(go)

    async def read(self, fn: Callable, who: dict | None = None):
        """``fn(session)`` in a worker thread, in one read-only transaction
        (:func:`inventory.core.db.read_transaction`: it never takes SQLite's write lock and
        is always rolled back), so a page or an API answer does not hold up a booking."""
        return await self._run(fn, who, read_transaction)

    async def write(self, fn: Callable, who: dict | None = None, *, attempts: int = 3):
        """``fn(session)`` in one write transaction as the person signed in (the ledger
        records their name on every movement). A transaction that lost a race on a unique
        key (two people taking the same new job number at once) or a lock (deadlock,
        serialization) is rolled back whole and run again, so the second person gets the
        real answer (for example "not enough stock") rather than a server error."""
        from sqlalchemy.exc import IntegrityError, OperationalError

        for attempt in range(attempts):
            try:
                return await self._run(fn, who, transaction)
            except (IntegrityError, OperationalError):
                if attempt == attempts - 1:
                    raise
