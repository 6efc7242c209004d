"""The month-end report on SQLite and PostgreSQL: valuation against a textbook example,
reconciliation under random ledgers, refusal of broken ledgers, and the lists it makes.
"""

from __future__ import annotations

from collections import defaultdict
from datetime import UTC, date, datetime, timedelta
from decimal import Decimal

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from sqlalchemy import delete, update
from sqlmodel import Session, select

from inventory.core.db import transaction
from inventory.core.errors import InventoryError
from inventory.core.tables import JobLine, Lot, Movement, ServiceJob, StockBalance
from inventory.history.jobs import JobItem, JobSpec, record_job
from inventory.monthend.aggregates import load_month
from inventory.monthend.records import Month, parse_month
from inventory.monthend.report import ReorderAdvice, assemble, month_report, report_dict
from inventory.stock import ledger
from inventory.stock import valuation as val

D = Decimal
TODAY = date(2026, 12, 2)


def ts(y: int, m: int, d: int, h: int = 12) -> datetime:
    return datetime(y, m, d, h, tzinfo=UTC)


def report(engine, month: str, **kw):
    with Session(engine) as s:
        return month_report(s, month, today=TODAY, **kw)


def by_part(r) -> dict:
    return {p.part: p for p in r.parts}


# Kieso, Weygandt and Warfield, *Intermediate Accounting*, inventory cost-flow chapter
# (figures recalled from memory): Mar 2 buy 2,000 @ 4.00, Mar 15 buy 6,000 @ 4.40, Mar 19
# sell 4,000, Mar 30 buy 2,000 @ 4.75. FIFO: cost of goods sold 16,800, ending 27,100.
# Moving average: cost of goods sold 17,200, ending 26,700. Cure quarters follow the
# arrival order, so the ledger's FIFO by cure date is the book's FIFO.
def _textbook(engine) -> None:
    with transaction(engine) as s:
        ledger.receive(s, ledger.Receipt("OR-214", 2000, "4.00", lot="L1", cured="2025Q4", ts=ts(2026, 3, 2)))
        ledger.receive(s, ledger.Receipt("OR-214", 6000, "4.40", lot="L2", cured="2026Q1", ts=ts(2026, 3, 15)))
        ledger.issue(s, ledger.Issue("OR-214", 4000, reference="J-1", ts=ts(2026, 3, 19)))
        ledger.receive(s, ledger.Receipt("OR-214", 2000, "4.75", lot="L3", cured="2026Q1", ts=ts(2026, 3, 30)))


def test_fifo_report_matches_textbook(store):
    _textbook(store)
    r = report(store, "2026-03")
    p = by_part(r)["OR-214"]
    assert p.job_issues_value == D("16800")  # Kieso et al., FIFO cost of goods sold
    assert p.closing_value == D("27100")  # Kieso et al., FIFO ending inventory
    assert (p.opening_qty, p.receipts_qty, p.job_issues_qty, p.closing_qty) == (0, 10000, 4000,
                                                                                 6000)
    assert r.totals.receipts_value == D("43900")  # goods available for sale
    assert report_dict(r)["valuation_method"].startswith("FIFO")


def test_moving_average_report_matches_textbook(store):
    _textbook(store)
    r = report(store, "2026-03", method="average")
    p = by_part(r)["OR-214"]
    assert p.job_issues_value == D("17200")  # Kieso et al., moving-average cost of goods sold
    assert p.closing_value == D("26700")  # Kieso et al., moving-average ending inventory
    assert r.method_label == "moving average"
    # the next month opens where this one closed, under both methods
    with transaction(store) as s:
        ledger.issue(s, ledger.Issue("OR-214", 1000, ts=ts(2026, 4, 2)))
    for method, closing in (("fifo", D("27100")), ("average", D("26700"))):
        april = by_part(report(store, "2026-04", method=method))["OR-214"]
        assert april.opening_value == closing
        assert april.other_issues_qty == 1000
    # April under the moving average: 1,000 at 4.45 (26,700 / 6,000) -> 4,450
    assert by_part(report(store, "2026-04", method="average"))["OR-214"].other_issues_value \
        == D("4450")


# ------------------------------------------------------------------ random ledgers

PARTS = ["OR-214", "WP-32"]
LOCS = ["MAIN", "BENCH"]
QUARTERS = ["2024Q1", "2025Q2", "2026Q1", None]
COSTS = ["0.25", "0.40", "1.10", "6.50"]

op = st.one_of(
    st.tuples(st.just("receive"), st.sampled_from(PARTS), st.integers(1, 20),
              st.sampled_from(LOCS), st.sampled_from(QUARTERS), st.sampled_from(COSTS)),
    st.tuples(st.just("issue"), st.sampled_from(PARTS), st.integers(1, 15),
              st.sampled_from([None, "JOB"])),
    st.tuples(st.just("adjust"), st.sampled_from(PARTS), st.integers(-8, 8).filter(bool),
              st.sampled_from(LOCS)),
    st.tuples(st.just("count"), st.sampled_from(PARTS), st.integers(0, 25), st.sampled_from(LOCS)),
    st.tuples(st.just("move"), st.sampled_from(PARTS), st.integers(1, 10), st.sampled_from(LOCS),
              st.sampled_from(LOCS)),
)
MONTHS = ["2026-01", "2026-02", "2026-03"]


def _clear(engine) -> None:
    with transaction(engine) as s:
        for model in (JobLine, ServiceJob, Movement, StockBalance, Lot):
            s.exec(delete(model))


def _apply(engine, ops) -> None:
    t0 = ts(2026, 1, 1, 0)
    step = timedelta(days=89) / max(1, len(ops))
    for i, o in enumerate(ops):
        when = t0 + step * i
        try:
            with transaction(engine) as s:
                if o[0] == "receive":
                    ledger.receive(s, ledger.Receipt(
                        o[1], o[2], o[5], location=o[3], cured=o[4], ts=when, lot=f"{o[1]}-{i}"))
                elif o[0] == "issue":
                    ledger.issue(s, ledger.Issue(o[1], o[2], ts=when, reference=f"J-{i}" if o[3] else None))
                elif o[0] == "adjust":
                    ledger.adjust(s, ledger.Adjustment(o[1], o[2], reason="test", location=o[3], ts=when))
                elif o[0] == "count":
                    ledger.count(s, ledger.Count(o[1], o[2], location=o[3], ts=when))
                elif o[3] != o[4]:
                    ledger.move(s, o[1], o[2], from_location=o[3], to_location=o[4], ts=when)
        except InventoryError as exc:
            assert exc.kind in {"shortage", "invalid"}, exc


@settings(max_examples=20, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(ops=st.lists(op, min_size=1, max_size=30))
def test_random_ledgers_reconcile_every_month(store, ops):
    """Opening + in - out = closing for every part in every month; closing equals the
    ledger's own on-hand as of the month end and the next month's opening; values equal the
    movements priced at their lots' cost."""
    _clear(store)
    _apply(store, ops)
    with Session(store) as s:
        moves = list(s.exec(select(Movement)))
    if not moves:
        return
    prev: dict = {}
    for label in MONTHS:
        month = parse_month(label, today=TODAY)
        with Session(store) as s:
            if all(mv.ts >= month.end for mv in moves):
                with pytest.raises(InventoryError, match="no stock movements up to the end"):
                    load_month(s, month)
                continue
            data = load_month(s, month)
            on_hand = defaultdict(int)
            for ln in ledger.on_hand(s, as_of=month.end - timedelta(microseconds=1)):
                on_hand[ln.part] += ln.on_hand
        r = assemble(data, today=TODAY)  # raises if any part does not reconcile
        pid = {p: i for i, p in enumerate(PARTS, start=1)}
        for p in r.parts:
            mine = [mv for mv in moves if mv.part_id == _part_id(store, p.part)]
            before = [mv for mv in mine if mv.ts < month.start]
            upto = [mv for mv in mine if mv.ts < month.end]
            assert p.opening_qty == sum(mv.qty for mv in before)
            assert p.closing_qty == sum(mv.qty for mv in upto) == on_hand[p.part]
            assert p.closing_value == sum((mv.qty * mv.unit_cost for mv in upto), D(0))
            # the month-end values walked back from the closing value, month by month
            for k in range(13):
                cut = month.shift(k - 12).end
                assert p.month_end_values[k] == sum(
                    (mv.qty * mv.unit_cost for mv in mine if mv.ts < cut), D(0))
            assert p.usage_qty[-1] == p.issues_qty
            assert (p.opening_qty + p.receipts_qty - p.issues_qty + p.adjust_qty + p.count_qty
                    == p.closing_qty)
            assert (p.opening_value + p.receipts_value - p.issues_value + p.adjustments_value
                    == p.closing_value)
            if p.part in prev:
                assert (p.opening_qty, p.opening_value) == prev[p.part]
            prev[p.part] = (p.closing_qty, p.closing_value)
        assert pid  # parts of the tiny catalog


_ids: dict = {}


def _part_id(engine, code: str) -> int:
    if code not in _ids:
        from inventory.core.tables import Part

        with Session(engine) as s:
            _ids[code] = s.exec(select(Part.id).where(Part.code == code)).one()
    return _ids[code]


one_place = st.one_of(
    st.tuples(st.just("receive"), st.integers(1, 20), st.sampled_from(QUARTERS),
              st.sampled_from(COSTS)),
    st.tuples(st.just("issue"), st.integers(1, 25)),
)


@settings(max_examples=15, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(ops=st.lists(one_place, min_size=1, max_size=25))
def test_report_values_match_pure_fifo_and_moving_average(store, ops):
    """The report's values against the pure cost-layer and moving-average functions run over
    the same receipts and issues (one part, one location)."""
    _clear(store)
    layers: tuple[val.Layer, ...] = ()
    avg = val.AverageState()
    issued_fifo = issued_avg = D(0)
    t0 = ts(2026, 2, 1, 0)
    for i, o in enumerate(ops):
        when = t0 + timedelta(hours=i)
        with transaction(store) as s:
            if o[0] == "receive":
                mv = ledger.receive(s, ledger.Receipt(
                    "OR-214", o[1], o[3], cured=o[2], ts=when, received=when.date(), lot=f"L{i}"))
                layers += (val.Layer(o[1], D(o[3]), val.fifo_key(o[2], when.date(), mv.lot_id)),)
                avg, _ = val.average_step(avg, o[1], D(o[3]))
            elif sum(la.qty for la in layers) >= o[1]:
                ledger.issue(s, ledger.Issue("OR-214", o[1], ts=when, reference="J"))
                cost, layers = val.fifo_take(layers, o[1])
                issued_fifo += cost
                avg, v = val.average_step(avg, -o[1])
                issued_avg -= v
    if not any(o[0] == "receive" for o in ops):
        return
    fifo = by_part(report(store, "2026-02"))["OR-214"]
    assert fifo.job_issues_value == issued_fifo
    assert fifo.closing_value == val.layers_value(layers)
    mavg = by_part(report(store, "2026-02", method="average"))["OR-214"]
    assert mavg.job_issues_value == issued_avg
    assert mavg.closing_value == avg.value


# ------------------------------------------------------------------ broken ledgers


def _stocked(engine) -> None:
    with transaction(engine) as s:
        ledger.receive(s, ledger.Receipt("OR-214", 10, "0.25", lot="A", cured="2025Q4", ts=ts(2026, 10, 2)))
        ledger.receive(s, ledger.Receipt("WP-32", 4, "6.50", lot="W", cured="2025Q4", ts=ts(2026, 10, 2)))
        ledger.issue(s, ledger.Issue("OR-214", 3, reference="J-1", ts=ts(2026, 11, 5)))


def _raw(engine, part: str, lot: str, qty: int, kind: str, cost: str) -> None:
    """A movement written behind the ledger's back, as a faulty import might."""
    from inventory.core.tables import Location, Part

    with transaction(engine) as s:
        p = s.exec(select(Part).where(Part.code == part)).one()
        lt = s.exec(select(Lot).where(Lot.part_id == p.id, Lot.code == lot)).one()
        loc = s.exec(select(Location).where(Location.code == "MAIN")).one()
        s.add(Movement(ts=ts(2026, 11, 20), part_id=p.id, location_id=loc.id, lot_id=lt.id,
                       qty=qty, kind=kind, unit_cost=D(cost)))


@pytest.mark.parametrize(("part", "lot", "qty", "kind", "cost", "why"), [
    ("OR-214", "A", 2, "transfer", "0.25", r"OR-214: opening 10 \+ in/out -3 = 7, but closing "
                                          r"is 9 \(\+2 in movements of unknown kind\)"),
    ("OR-214", "A", 1, "receipt", "0.30", r"OR-214: .*opening value 2\.50 \+ movements -0\.45 = "
                                          r"2\.05, but the lots are worth 2\.00 at their cost"),
    ("WP-32", "W", -6, "issue", "6.50", r"WP-32: .*1 lot\(s\) below zero"),
])
def test_broken_ledger_is_refused_naming_the_parts(store, part, lot, qty, kind, cost, why):
    _stocked(store)
    _raw(store, part, lot, qty, kind, cost)
    with pytest.raises(InventoryError) as exc:
        report(store, "2026-11")
    lines = exc.value.lines()
    assert lines[0] == ("the ledger does not reconcile for 2026-11 in 1 part(s); the report is "
                        "not written")
    assert len(lines) == 3 and lines[-1].startswith("hint: correct the ledger")
    import re

    assert re.fullmatch(why, lines[1]) or re.search(why, lines[1]), lines[1]
    # the cached balance was not touched by the stray row: that is named as well
    assert "cached balance" in lines[1]


def test_cached_balance_disagreeing_with_the_ledger_is_refused(store):
    _stocked(store)
    with transaction(store) as s:
        s.exec(update(StockBalance).values(qty=StockBalance.qty + 1))
    with pytest.raises(InventoryError) as exc:
        report(store, "2026-11")
    assert "OR-214: closing 7 but the cached balance is 8" in exc.value.lines()
    assert "WP-32: closing 4 but the cached balance is 5" in exc.value.lines()
    # an earlier month is checked against the ledger alone (the cache is only for now)
    assert report(store, "2026-10").totals.closing_value == D("28.50")


# ------------------------------------------------------------------ what the report lists


def test_usage_by_fork_family_and_service_level(store):
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("WP-32", 20, "6.50", lot="W", cured="2026Q1", ts=ts(2026, 10, 1)))
        ledger.receive(s, ledger.Receipt("OR-214", 20, "0.25", lot="O", cured="2026Q1", ts=ts(2026, 10, 1)))
        record_job(s, JobSpec("J-1", date(2026, 11, 3), "XC-32", "lower_leg",
                              (JobItem("K-TST", 2),)))  # kit not on hand: 4 wipers, 2 O-rings
        record_job(s, JobSpec("J-2", date(2026, 11, 4), "XC-32", "air_spring",
                              (JobItem("OR-214", 3),)))
        record_job(s, JobSpec("J-3", date(2026, 10, 4), "XC-32", "air_spring",
                              (JobItem("OR-214", 1),)))  # October: not in November's usage
    r = report(store, "2026-11")
    rows = {(u.fork_family, u.service_level): (u.jobs, u.units, u.value) for u in r.fork_usage}
    assert rows == {("XC-32", "lower_leg"): (1, 6, D("26.50")),
                    ("XC-32", "air_spring"): (1, 3, D("0.75"))}
    assert r.totals.jobs == 2
    assert r.totals.job_issues_value == D("27.25")
    avg = report(store, "2026-11", method="average")
    assert {(u.fork_family, u.service_level): u.value for u in avg.fork_usage} == {
        ("XC-32", "lower_leg"): D("26.50"), ("XC-32", "air_spring"): D("0.75")}


def test_dead_slow_expiring_counts_and_reorder(store):
    with transaction(store) as s:
        # AU wiper cured 2021Q3: ISO 2230 group A, 5 years -> limit 2026-09-30, past by Nov
        ledger.receive(s, ledger.Receipt("WP-32", 6, "6.50", lot="OLD", cured="2021Q3", ts=ts(2025, 6, 1)))
        ledger.issue(s, ledger.Issue("WP-32", 1, reference="J-0", ts=ts(2025, 11, 15)))  # 12.5 months ago
        # NBR O-rings cured 2019Q3: group B, 7 years -> 2026-09-30 past; 2020Q1 -> 2027-03-31
        ledger.receive(s, ledger.Receipt("OR-214", 5, "0.25", lot="B1", cured="2019Q3", ts=ts(2026, 1, 5)))
        ledger.receive(s, ledger.Receipt("OR-214", 40, "0.25", lot="B2", cured="2020Q1", ts=ts(2026, 1, 5)))
        for m in range(1, 12):
            ledger.issue(s, ledger.Issue("OR-214", 3, reference=f"J-{m}", ts=ts(2026, m, 20)))
        ledger.count(s, ledger.Count("OR-214", 5, ts=ts(2026, 11, 28)))  # ledger 12, shelf 5 -> -7
    r = report(store, "2026-11")
    parts = by_part(r)
    assert parts["WP-32"].status == "dead" and r.totals.dead_value == D("32.50")
    assert parts["OR-214"].status is None
    assert [(p.part, p.count_qty, p.count_value) for p in r.count_variances] == [
        ("OR-214", -7, D("-1.75"))]
    assert [(e.lot.part, e.lot.lot, e.limit, e.status) for e in r.expiring_lots] == [
        ("WP-32", "OLD", date(2026, 9, 30), "past"),  # B1 was issued first (oldest cure)
        ("OR-214", "B2", date(2027, 3, 31), "soon")]
    # fallback: 33 O-rings in the last 12 months (Dec 2025 - Nov 2026, 365 days), SUP-A lead
    # 2 + review 7 days -> ceil(33/365 * 9) = 1: 5 on hand is above it
    assert all(b.part != "OR-214" for b in r.below_reorder)

    def plan(session, as_of):
        assert as_of == date(2026, 11, 30)
        return {"OR-214": ReorderAdvice("OR-214", 8, 20, "plan")}

    planned = report(store, "2026-11", reorder=plan)
    assert [(b.part, b.on_hand, b.reorder_point, b.suggested_qty, b.basis)
            for b in planned.below_reorder] == [("OR-214", 5, 8, 20, "plan")]
    doc = report_dict(planned)
    assert doc["below_reorder"][0]["suggested_qty"] == 20
    assert doc["dead_stock"] == [{"part": "WP-32", "status": "dead", "on_hand": 5,
                                  "value": "32.50", "last_issue": "2025-11-15"}]
    assert [e["status"] for e in doc["expiring_lots"]] == ["past", "soon"]


def test_abc_xyz_turns_in_the_report(store):
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("OR-214", 500, "0.25", lot="O", ts=ts(2025, 11, 1)))
        ledger.receive(s, ledger.Receipt("WP-32", 100, "6.50", lot="W", ts=ts(2025, 11, 1)))
        for m in range(12):
            day = ts(2025, 12, 10) + timedelta(days=30 * m)
            ledger.issue(s, ledger.Issue("WP-32", 5, reference=f"W-{m}", ts=day))  # steady
            if m % 4 == 0:
                ledger.issue(s, ledger.Issue("OR-214", 12, reference=f"O-{m}", ts=day))  # lumpy
    r = report(store, "2026-11")
    p = by_part(r)
    assert (p["WP-32"].abc, p["WP-32"].xyz) == ("A", "X")  # 390.00 of 390.75
    assert (p["OR-214"].abc, p["OR-214"].xyz) == ("C", "Z")
    # demand k in a share q of the months: mean qk, population SD k sqrt(q(1-q)) -> CV
    # sqrt((1-q)/q) = sqrt(3) for 3 of 12 months
    assert p["OR-214"].cv == pytest.approx(3**0.5)
    # turns of the month: 5 x 6.50 issued on Nov 5 against 45 -> 40 wipers on the shelf,
    # annualised over November's 30 days; days of supply: 40 left at 60 a year
    w = p["WP-32"]
    assert (w.opening_qty, w.closing_qty) == (45, 40)
    assert w.turns == pytest.approx(32.5 / ((292.5 + 260) / 2) * 365 / 30)
    assert w.days_of_supply == pytest.approx(40 / (60 / 365))


# ------------------------------------------------------------------ months


@pytest.mark.parametrize(("text", "message"), [
    ("2026-13", "month: expected a month like 2026-03, 03/2026 or Mar 2026, got '2026-13'"),
    ("Novem 2026", "month: expected a month like 2026-03, 03/2026 or Mar 2026, got "
                   "'Novem 2026'"),
    ("2026-12", "month 2026-12 is not over yet (today is 2026-12-02)"),
    ("2027-01", "month 2027-01 is in the future (today is 2026-12-02)"),
])
def test_bad_months(text, message):
    with pytest.raises(InventoryError) as exc:
        parse_month(text, today=TODAY)
    assert str(exc.value) == message


def test_months_read_as_everywhere_else():
    # the one month parser (core/parse.month): ISO 8601 YYYY-MM, MM/YYYY, English names
    assert parse_month("Nov 2025", today=TODAY) == parse_month("11/2025", today=TODAY) \
        == parse_month("2025-11", today=TODAY) == Month(2025, 11)


def test_month_arithmetic():
    m = parse_month("2026-01", today=TODAY)
    assert m.shift(-1) == Month(2025, 12) and m.shift(11) == Month(2026, 12)
    assert (m.first_day, m.last_day, m.days) == (date(2026, 1, 1), date(2026, 1, 31), 31)
    assert Month(2024, 2).days == 29


def test_month_before_the_ledger_has_no_data(store):
    _stocked(store)
    with pytest.raises(InventoryError, match=r"^no stock movements up to the end of 2026-09: "
                                             r"nothing to report \(the ledger starts 2026-10\)$"):
        report(store, "2026-09")
