"""Books a shop can trust (issue 11 items 1-4, 10, 11; issue 12 item 9): stock in time order,
closed months, storage limits at issue, returns, voids and reversals, `inventory check` and
`inventory backup`, on SQLite and PostgreSQL.

The time-order checks are judged by an independent recomputation in this file: the daily
closing balance of every lot is summed from the raw movement rows with a plain loop (no
project code), and an issue dated D of q units is possible exactly when the lots can give up
q without any closing balance from D on going below zero, i.e. when
sum over lots of min over days d >= D of closing(lot, d) >= q (each lot on its own; the
definition of the rule in issue 11, item 1).
"""

from __future__ import annotations

import sqlite3
import threading
from collections import defaultdict
from datetime import UTC, date, datetime, timedelta
from decimal import Decimal

import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st
from sqlalchemy import select, text
from sqlmodel import Session

from inventory.core.db import make_engine, transaction
from inventory.core.errors import InventoryError
from inventory.core.tables import JobLine, Lot, Movement
from inventory.forecast.queries import item_demand
from inventory.history.imports import ImportSettings, run_import
from inventory.history.jobs import JobItem, JobSpec, noon, record_job
from inventory.monthend.closing import close_month, reopen_month, totals_of, verify_closed
from inventory.monthend.report import month_report
from inventory.stock import check, ledger, returns
from tests.conftest import write_catalog
from tests.test_import_support import HISTORY_HEADER, book, cli

TODAY = date(2026, 12, 4)


# ------------------------------------------------------------------ independent oracle


def daily_closing(rows) -> dict[tuple[int, int], dict[date, int]]:
    """(location, lot) -> {day: closing balance} from raw (loc, lot, ts, qty) rows."""
    per: dict[tuple[int, int], dict[date, int]] = defaultdict(lambda: defaultdict(int))
    for loc, lot, ts, qty in rows:
        if isinstance(ts, str):
            ts = datetime.fromisoformat(ts)
        if ts.tzinfo is not None:
            ts = ts.astimezone(UTC)
        per[(loc, lot)][ts.date()] += qty
    out = {}
    for key, days in per.items():
        run, closing = 0, {}
        for d in sorted(days):
            run += days[d]
            closing[d] = run
        out[key] = closing
    return out


def can_take(rows, day: date) -> int:
    """Units a booking dated ``day`` may take: per lot the lowest closing balance from that
    day on (the balance at ``day`` counts), summed over lots."""
    total = 0
    for closing in daily_closing(rows).values():
        at = [n for d, n in closing.items() if d <= day]
        start = closing[max(d for d in closing if d <= day)] if at else 0
        later = [n for d, n in closing.items() if d > day]
        total += max(0, min([start, *later]))
    return total


def raw_rows(s: Session, part_code: str) -> list:
    from inventory.core.tables import Part

    pid = s.execute(select(Part.id).where(Part.code == part_code)).scalar_one()
    return [tuple(r) for r in s.execute(
        select(Movement.location_id, Movement.lot_id, Movement.ts, Movement.qty)
        .where(Movement.part_id == pid))]


# ------------------------------------------------------------------ CLI shop


@pytest.fixture
def shop(tmp_path):
    db = str(tmp_path / "shop.db")
    assert cli("--db", db, "init")[0] == 0
    assert cli("--db", db, "catalog", "load", str(write_catalog(tmp_path / "cat")))[0] == 0
    return db


def ok(*args):
    code, out, err = cli(*args)
    assert code == 0, err
    return out


def refused(*args) -> str:
    code, out, err = cli(*args)
    assert code == 1, out
    lines = err.strip().splitlines()
    assert len(lines) == 1, err  # one line per refusal
    return lines[0]


def test_back_dated_issue_takes_only_what_was_there(shop):
    # issue 11 "Why": the only lot arrived in December; an October issue must be refused
    ok("--db", shop, "stock", "receive", "OR-214", "5", "--cost", "0.25", "--lot", "L1",
       "--cured", "2026Q3", "--date", "2026-12-01")
    assert refused("--db", shop, "stock", "issue", "OR-214", "1", "--job", "Z", "--date",
                   "2026-10-01") == (
        "error: not enough stock of OR-214 on 2026-10-01: asked 1, on hand then 0 (lot L1 "
        "held 0) (receive stock first, or record a count if the shelf holds more than the "
        "ledger)")
    ok("--db", shop, "stock", "issue", "OR-214", "4", "--job", "C", "--date", "2026-12-02")
    # 5 on hand on 12-01, but the 4 issued on 12-02 leave only 1 free for a booking on 12-01
    assert refused("--db", shop, "stock", "issue", "OR-214", "2", "--job", "D", "--date",
                   "2026-12-01") == (
        "error: not enough stock of OR-214 on 2026-12-01: asked 2, on hand then 5, free 1: "
        "later bookings take the rest (lot L1 held 5 then and falls to 1 on 2026-12-02) "
        "(book it on a later date, or reverse the later booking first)")
    ok("--db", shop, "stock", "issue", "OR-214", "1", "--job", "D", "--date", "2026-12-01")
    code, out, err = cli("--db", shop, "check")
    assert code == 0, err


def test_closed_month_refuses_and_names_the_first_open_month(shop):
    ok("--db", shop, "stock", "receive", "WP-32", "6", "--cost", "6.50", "--lot", "W",
       "--date", "2026-09-01")
    ok("--db", shop, "stock", "issue", "WP-32", "1", "--job", "A", "--date", "2026-10-05")
    before = ok("--db", shop, "report", "month", "2026-10", "--json", "--no-plan",
                "--today", TODAY.isoformat())
    assert refused("--db", shop, "month", "close", "2026-12", "--today", TODAY.isoformat()) == (
        "error: month 2026-12 is not over yet (today is 2026-12-04) (the last complete month "
        "is 2026-11)")
    out = ok("--db", shop, "month", "close", "2026-10", "--today", TODAY.isoformat())
    assert "closed 2026-10: closing value 32.50" in out  # 5 x 6.50 left (hand count)
    assert refused("--db", shop, "stock", "issue", "WP-32", "1", "--date", "2026-10-20") == (
        "error: 2026-10 is closed: nothing dated 2026-10-20 can be booked; book the "
        "correction in 2026-11, the first open month")
    assert refused("--db", shop, "stock", "adjust", "WP-32", "1", "--reason", "found",
                   "--date", "2026-09-20") == (
        "error: 2026-09 is closed (the books are closed through 2026-10): nothing dated "
        "2026-09-20 can be booked; book the correction in 2026-11, the first open month")
    assert refused("--db", shop, "month", "close", "2026-09", "--today", TODAY.isoformat()) == (
        "error: 2026-09 is already closed (the books are closed through 2026-10)")
    ok("--db", shop, "stock", "issue", "WP-32", "1", "--date", "2026-11-03")
    ok("--db", shop, "month", "close", "2026-11", "--today", TODAY.isoformat())
    assert refused("--db", shop, "month", "reopen", "2026-10", "--reason", "late note") == (
        "error: only the latest closed month, 2026-11, can be reopened (reopen 2026-11 first)")
    assert refused("--db", shop, "month", "reopen", "2026-11", "--reason", " ") == (
        "error: reopening a month needs a reason (add --reason TEXT)")
    after = ok("--db", shop, "report", "month", "2026-10", "--json", "--no-plan",
               "--today", TODAY.isoformat())
    assert after == before  # the closed month's report gives identical figures
    ok("--db", shop, "month", "reopen", "2026-11", "--reason", "late delivery note")
    ok("--db", shop, "stock", "issue", "WP-32", "1", "--date", "2026-11-20")
    acts = ok("--db", shop, "month", "list", "--json")
    assert '"reason": "late delivery note"' in acts and acts.count('"action": "close"') == 2


def test_storage_limit_skips_expired_lots_unless_inspected(shop):
    # ISO 2230:2002 clause 4, group A (AU, polyurethane): 5 years initial + 2 years after
    # inspection, counted from the end of the cure quarter (REFERENCE.md 5; counting from
    # the quarter's end is common practice). Cured 2020Q1 -> 2025-03-31, extended
    # 2027-03-31; cured 2015Q1 -> 2020-03-31, extended 2022-03-31.
    for lot, cured in (("VOLD", "2015Q1"), ("OLD", "2020Q1"), ("NEW", "2026Q1")):
        ok("--db", shop, "stock", "receive", "WP-32", "2", "--cost", "6.50", "--lot", lot,
           "--cured", cured, "--date", "2026-09-01")
    out = ok("--db", shop, "stock", "issue", "WP-32", "1", "--date", "2026-10-05")
    assert "lot id 3" in out  # NEW, not the older lots
    assert "skipped lot VOLD of WP-32 (cured 2015Q1): past its ISO 2230 storage limit " \
           "2020-03-31" in " ".join(out.split())
    assert "maker's service data" in " ".join(out.split())
    assert refused("--db", shop, "stock", "issue", "WP-32", "2", "--date", "2026-10-06") == (
        "error: not enough stock of WP-32 on 2026-10-06: asked 2, usable 1; lot VOLD (cured "
        "2015Q1) is past its ISO 2230 storage limit 2020-03-31 and beyond its extension "
        "(scrap it with an adjustment)")
    out = " ".join(ok("--db", shop, "stock", "issue", "WP-32", "2", "--date", "2026-10-06",
                      "--inspected").split())
    assert "lot OLD of WP-32 (cured 2020Q1) is past its ISO 2230 storage limit 2025-03-31: " \
           "used after inspection, extension to 2027-03-31 recorded" in out
    engine = make_engine(shop)
    with Session(engine) as s:
        lots = {lot.code: lot.extended_until for lot in s.execute(select(Lot)).scalars()}
    assert lots == {"VOLD": None, "OLD": date(2027, 3, 31), "NEW": None}
    # scrapping the expired lot is an adjustment, which may take it
    ok("--db", shop, "stock", "adjust", "WP-32", "-2", "--reason", "expired")


def test_cure_quarter_after_receipt_is_refused(store):
    with transaction(store) as s, pytest.raises(InventoryError) as info:
        ledger.receive(s, ledger.Receipt("OR-214", 1, "0.25", cured="2027Q1", ts=noon(date(2026, 12, 1))))
    assert str(info.value.problems[0]) == (
        "cure quarter 2027Q1 of OR-214 starts after the receipt date 2026-12-01: rubber "
        "cannot arrive before it is cured")


def test_return_void_and_reverse_give_net_usage(shop):
    ok("--db", shop, "stock", "receive", "OR-214", "10", "--cost", "0.25", "--lot", "A",
       "--cured", "2026Q1", "--date", "2026-10-01")
    ok("--db", shop, "job", "add", "--date", "2026-11-02", "--fork", "XC-32", "--service",
       "damper", "--part", "OR-214=4", "--ref", "J-1")
    ok("--db", shop, "job", "add", "--date", "2026-11-03", "--fork", "XC-32", "--service",
       "damper", "--part", "OR-214=2", "--ref", "J-2")
    assert refused("--db", shop, "stock", "return", "OR-214", "5", "--job", "J-1") == (
        "error: job J-1 took 4 of OR-214 and 0 came back already: cannot return 5")
    ok("--db", shop, "stock", "return", "OR-214", "1", "--job", "J-1", "--date", "2026-11-10")
    ok("--db", shop, "stock", "void-job", "J-2", "--reason", "booked twice", "--date",
       "2026-11-11")
    assert refused("--db", shop, "stock", "void-job", "J-2", "--reason", "again") == (
        "error: job J-2 has nothing left to reverse: it was voided or returned in full already")
    engine = make_engine(shop)
    with Session(engine) as s:
        # hand count: 4 + 2 issued, 1 returned, 2 voided -> 3 used in November
        d = item_demand(s, until=date(2026, 11, 30), since=date(2026, 10, 1))
        assert d.values[d.codes.index("OR-214")].tolist() == [0.0, 3.0]
        lines = {(j, q) for j, q in s.execute(select(JobLine.job_id, JobLine.qty))}
        assert sorted(q for _, q in lines) == [3]  # J-1 keeps 3, J-2 has none left
        rep = month_report(s, "2026-11", today=TODAY)
        assert rep.totals.job_issues_value == Decimal("0.75")  # 3 x 0.25
        receipt, issue = s.execute(select(Movement.id).order_by(Movement.id)).scalars().all()[:2]
    # the receipt of 10 cannot be reversed: 3 of it are still used by J-1
    assert refused("--db", shop, "stock", "reverse", str(receipt), "--reason", "wrong part",
                   "--date", "2026-11-30") == (
        "error: not enough stock of OR-214 in lot A at MAIN on 2026-11-30: asked 10, the lot "
        "held 7 then (book it on a later date, or correct the later booking first)")
    out = ok("--db", shop, "stock", "reverse", str(issue), "--reason", "wrong job",
             "--date", "2026-11-30")
    assert out.startswith(f"reversed movement {issue}: +3 booked as movement")
    assert refused("--db", shop, "stock", "reverse", str(issue), "--reason", "again") == (
        f"error: movement {issue} is already reversed")
    with Session(engine) as s:
        assert [ln.on_hand for ln in ledger.on_hand(s, part="OR-214")] == [10]


def test_reversal_obeys_the_time_order_rule(store):
    with transaction(store) as s:
        r = ledger.receive(s, ledger.Receipt("WP-32", 3, "6.50", lot="W", ts=noon(date(2026, 10, 1))))
        ledger.issue(s, ledger.Issue("WP-32", 2, reference="J", ts=noon(date(2026, 10, 5))))
    with transaction(store) as s, pytest.raises(InventoryError) as info:
        returns.reverse(s, r.id, reason="typo", ts=noon(date(2026, 10, 3)))
    assert str(info.value.problems[0]) == (
        "not enough stock of WP-32 in lot W at MAIN on 2026-10-03: asked 3, the lot held 3 "
        "then, and later bookings leave 1 free (it falls to that on 2026-10-05)")


# ------------------------------------------------------------------ history import


def test_history_before_the_ledger_records_usage_only(store, tmp_path):
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("WP-32", 8, "6.50", lot="W", ts=noon(date(2026, 1, 5))))
    path = book(tmp_path / "h.xlsx", [
        HISTORY_HEADER,
        ["OLD-1", "2019-05-02", "XC-32", "lower_leg", 40, "F-1", "WP-32", 1],
        ["NEW-1", "2026-02-03", "XC-32", "lower_leg", 55, "F-2", "WP-32", 2],
    ])
    settings = ImportSettings(kind="history", today=TODAY, user="test")
    with Session(store) as s:
        rep = run_import(s, path, settings)
    assert rep.effects["jobs taking stock"] == 1
    assert rep.effects["jobs recording usage only"] == 1
    assert [str(w.message) for w in rep.warnings] == [
        "1 of 2 job(s) are dated before the ledger starts (first movement 2026-01-05): they "
        "record their usage without taking stock; 1 take stock (--stock-before-ledger takes "
        "stock for all)"]
    with transaction(store) as s:
        run_import(s, path, settings, apply=True)
    with Session(store) as s:
        assert [ln.on_hand for ln in ledger.on_hand(s, part="WP-32")] == [6]  # 8 - 2 only
        assert sorted(q for (q,) in s.execute(select(JobLine.qty))) == [1, 2]


# ------------------------------------------------------------------ hypothesis


OPS = st.lists(st.tuples(st.sampled_from(["receive", "issue", "issue", "count", "close"]),
                         st.integers(0, 90), st.integers(1, 6)), min_size=1, max_size=14)


@pytest.mark.slow
@settings(max_examples=25, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow])
@given(ops=OPS)
@example(ops=[("receive", 0, 1), ("issue", 1, 1), ("issue", 0, 1)])  # a lot empty today
def test_random_back_dated_sequences_keep_every_day_non_negative(store, ops):
    """Receipts, issues and counts on random days (in any order), with month closes among
    them: every accepted issue was possible by the independent rule above, every refused one
    was not; no lot's closing balance is below zero on any day; the cached balances equal the
    ledger; each closed month's report totals never change."""
    start = date(2026, 8, 1)
    with engine_reset(store):
        snaps: dict[str, dict] = {}
        for kind, offset, qty in ops:
            day = start + timedelta(days=offset)
            with Session(store) as s:
                possible = can_take(raw_rows(s, "OR-214"), day)
            try:
                with transaction(store) as s:
                    if kind == "receive":
                        ledger.receive(s, ledger.Receipt("OR-214", qty, "0.25", ts=noon(day)))
                    elif kind == "issue":
                        ledger.issue(s, ledger.Issue("OR-214", qty, reference="J", ts=noon(day)))
                    elif kind == "count":
                        ledger.count(s, ledger.Count("OR-214", qty, ts=noon(day)))
                    else:
                        label = f"{day:%Y-%m}"
                        done = close_month(s, label, today=TODAY)
                        snaps[done.month] = done.totals
                accepted = True
            except InventoryError as exc:
                accepted = False
                reason = exc.problems[0].kind
            if kind == "issue" and not accepted and reason == "shortage":
                assert possible < qty
            if kind == "issue" and accepted:
                assert possible >= qty
            with Session(store) as s:
                for closing in daily_closing(raw_rows(s, "OR-214")).values():
                    assert min(closing.values()) >= 0
                assert check.run(s) == []
                for month, snap in snaps.items():
                    assert totals_of(month_report(s, month, today=TODAY)) == snap
                assert verify_closed(s, today=TODAY) == []


class engine_reset:
    """Empty the ledger between hypothesis examples (the catalog stays)."""

    def __init__(self, engine):
        self.engine = engine

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        with self.engine.begin() as conn:
            for table in ("stock_balance", "movement", "lot", "month_close"):
                conn.execute(text(f"DELETE FROM {table}"))
        return False


# ------------------------------------------------------------------ check and backup


def test_check_reports_each_problem_on_one_line(shop):
    ok("--db", shop, "stock", "receive", "OR-214", "3", "--cost", "0.25", "--lot", "L",
       "--date", "2026-11-01")
    con = sqlite3.connect(shop)
    con.execute("UPDATE stock_balance SET qty = 5")
    con.execute("INSERT INTO movement (ts, part_id, location_id, lot_id, qty, kind, unit_cost) "
                "VALUES ('2026-10-01 12:00:00.000000', 1, 1, 1, -1, 'issue', 0.25)")
    con.commit()
    con.close()
    code, out, err = cli("--db", shop, "check")
    assert code == 1
    assert err.splitlines() == [
        "problem: OR-214 lot L at MAIN: cached balance 5, ledger sum 2",
        "problem: OR-214 lot L at MAIN: balance -1 at the end of 2026-10-01"]


def test_backup_is_consistent_while_another_writes(shop, tmp_path):
    ok("--db", shop, "stock", "receive", "OIL-5", "1000", "--cost", "0.02", "--lot", "O")
    engine = make_engine(shop)
    stop = threading.Event()

    def writer():
        while not stop.is_set():
            with transaction(engine) as s:
                ledger.issue(s, ledger.Issue("OIL-5", 1))
                ledger.receive(s, ledger.Receipt("OIL-5", 1, "0.02", lot="O"))

    t = threading.Thread(target=writer)
    t.start()
    try:
        for n in range(3):
            ok("--db", shop, "backup", str(tmp_path / f"copy{n}.db"))
    finally:
        stop.set()
        t.join()
    for n in range(3):
        copy = str(tmp_path / f"copy{n}.db")
        code, out, err = cli("--db", copy, "check")
        assert code == 0, err
        with sqlite3.connect(copy) as con:  # a whole number of issue+receipt pairs
            assert con.execute("SELECT SUM(qty) FROM movement").fetchone()[0] == 1000
    assert refused("--db", shop, "backup", str(tmp_path / "copy0.db")) == (
        f"error: {tmp_path / 'copy0.db'} already exists (give a new file name, or --replace "
        "to overwrite it)")


def test_backup_of_postgresql_names_pg_dump(pg_url, tmp_path):
    line = refused("--db", pg_url, "backup", str(tmp_path / "x.dump"))
    assert line.startswith("error: backup copies SQLite databases;")
    assert "(use pg_dump: pg_dump -Fc -h 127.0.0.1 -U postgres -f" in line


def test_void_and_return_refuse_closed_books_dates(store):
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("WP-32", 3, "6.50", lot="W", ts=noon(date(2026, 9, 1))))
        record_job(s, JobSpec("J-9", date(2026, 10, 2), "XC-32", "damper",
                              (JobItem("WP-32", 2),)))
    with transaction(store) as s:
        close_month(s, "2026-10", today=TODAY)
    with transaction(store) as s, pytest.raises(InventoryError) as info:
        returns.return_from_job(s, "J-9", "WP-32", 1, ts=noon(date(2026, 10, 20)))
    assert info.value.problems[0].kind == "closed"
    with transaction(store) as s:
        got = returns.return_from_job(s, "J-9", "WP-32", 1, ts=noon(date(2026, 11, 2)))
    assert got.note == ("job J-9 (2026-10-02) is in closed books: its lines stay as closed; "
                        "the return counts in the month it is booked")
    with transaction(store) as s:
        reopen_month(s, "2026-10", reason="test")


# ------------------------------------------------------------------ first month, first run


def test_first_month_with_under_a_month_of_history(shop):
    # a shop that started on 2026-11-20: its first month end works and can be closed
    ok("--db", shop, "stock", "receive", "OR-214", "5", "--cost", "0.25", "--date", "2026-11-20")
    ok("--db", shop, "stock", "issue", "OR-214", "1", "--date", "2026-11-25")
    out = ok("--db", shop, "report", "month", "2026-11", "--json", "--today", TODAY.isoformat())
    assert '"closing_value": "1.00"' in out  # 4 x 0.25, hand count
    ok("--db", shop, "month", "close", "2026-11", "--today", TODAY.isoformat())


def test_catalog_without_locations_gets_the_default_location(tmp_path):
    db = str(tmp_path / "shop.db")
    files = {k: v for k, v in __import__("tests.conftest", fromlist=["TINY"]).TINY.items()
             if k != "locations.csv"}
    ok("--db", db, "init")
    out = ok("--db", db, "catalog", "load", str(write_catalog(tmp_path / "cat", files)))
    assert out.splitlines()[0] == "locations: 1 new, 0 updated"
    assert ok("--db", db, "stock", "receive", "OR-214", "1", "--cost", "0.25").startswith(
        "received 1 x OR-214")


def test_init_creates_a_missing_postgresql_database(pg_server):
    import uuid

    import psycopg

    from inventory.core.db import dispose_all

    name = f"inv_test_{uuid.uuid4().hex[:12]}"
    url = pg_server.rsplit("/", 1)[0] + f"/{name}"
    try:
        out = ok("--db", url, "init")
        assert out.splitlines()[0] == f"created PostgreSQL database {name}"
        assert "schema already at" in " ".join(ok("--db", url, "init").split())
    finally:
        dispose_all()
        with psycopg.connect(pg_server.replace("+psycopg", ""), autocommit=True) as conn:
            conn.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


def test_bulk_job_writer_skips_expired_lots_like_the_ledger(store):
    # ISO 2230 group B (NBR): 7 years from the end of the cure quarter (REFERENCE.md 5):
    # cured 2015Q1 -> limit 2022-03-31, so a 2025 job may not take it; 2024Q2 is fresh.
    from inventory.history.bulk_jobs import record_jobs
    from inventory.history.jobs import JobSpec

    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt(
            "OR-214", 2, "0.25", lot="OLD", cured="2015Q1", ts=noon(date(2024, 12, 1))))
        ledger.receive(s, ledger.Receipt(
            "OR-214", 2, "0.25", lot="NEW", cured="2024Q2", ts=noon(date(2024, 12, 1))))
    spec = JobSpec("B-1", date(2025, 1, 10), "XC-32", "damper", (JobItem("OR-214", 2),))
    with transaction(store) as s:
        record_jobs(s, [spec])
    with Session(store) as s:
        assert {ln.lot: ln.on_hand for ln in ledger.on_hand(s, part="OR-214", by_lot=True)} \
            == {"OLD": 2}
    spec = JobSpec("B-2", date(2025, 1, 11), "XC-32", "damper", (JobItem("OR-214", 1),))
    with transaction(store) as s, pytest.raises(InventoryError) as info:
        record_jobs(s, [spec])
    assert str(info.value.problems[0]) == (
        "job B-2: not enough stock of OR-214 on 2025-01-11: asked 1, usable 0; the rest is "
        "past its ISO 2230 storage limit")


def test_reverse_refusals_are_one_line(shop):
    ok("--db", shop, "stock", "receive", "OR-214", "4", "--cost", "0.25", "--lot", "A",
       "--date", "2026-11-01")
    ok("--db", shop, "stock", "move", "OR-214", "1", "--from", "MAIN", "--to", "BENCH",
       "--date", "2026-11-02")
    ok("--db", shop, "stock", "issue", "OR-214", "1", "--job", "J-5", "--date", "2026-11-03")
    ok("--db", shop, "stock", "return", "OR-214", "1", "--job", "J-5", "--date", "2026-11-04")
    # movements: 1 receipt, 2 and 3 the move's two legs, 4 the issue, 5 the return
    assert refused("--db", shop, "stock", "reverse", "99", "--reason", "x") == (
        "error: unknown movement 99 (`inventory export movements` lists their ids)")
    assert refused("--db", shop, "stock", "reverse", "2", "--reason", "x") == (
        "error: movement 2 is half of a move between locations: move the stock back with "
        "`inventory stock move`")
    assert refused("--db", shop, "stock", "reverse", "5", "--reason", "x") == (
        "error: movement 5 is itself a correction of movement 4: book the movement again "
        "instead")
    assert refused("--db", shop, "stock", "reverse", "4", "--reason", "x") == (
        "error: movement 4 is already reversed")
