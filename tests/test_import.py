"""The import engine on SQLite and PostgreSQL: preview writes nothing, apply writes all or
nothing, re-runs are no-ops, fork texts resolve or go to review, every problem is reported at
its cell. Stock figures are checked against the ledger's own sums (verify_balances)."""

from __future__ import annotations

from dataclasses import replace
from datetime import date

import pytest
from openpyxl import load_workbook
from sqlmodel import Session, select

from inventory.core.db import transaction
from inventory.core.errors import InventoryError
from inventory.core.tables import ForkAlias, ImportBatch, Lot, Part
from inventory.history.imports import ImportSettings, run_import
from inventory.history.jobs import list_jobs, noon
from inventory.sheets.review import answer_review
from inventory.stock import ledger
from tests.test_import_support import HISTORY_HEADER, book, csv_file, snapshot

TODAY = date(2026, 6, 30)
H = ImportSettings(kind="history", today=TODAY, user="test")


def stock_up(engine) -> None:
    # booked on their receipt days: jobs dated before the ledger's first movement would
    # record usage only
    with transaction(engine) as s:
        for part, qty, cost, lot, cured, day in (
                ("OR-214", 50, "0.25", "A", "2025Q1", date(2025, 5, 1)),
                ("OR-214", 10, "0.30", "B", "2024Q3", date(2025, 6, 1)),
                ("WP-32", 40, "6.50", "W", "2025Q2", date(2025, 6, 1)),
                ("K-TST", 1, "10.00", "K", None, date(2025, 6, 1))):
            ledger.receive(s, ledger.Receipt(part, qty, cost, lot=lot, cured=cured, received=day, ts=noon(day)))


def preview(engine, path, settings=H):
    with Session(engine) as s:
        return run_import(s, path, settings)


def apply(engine, path, settings=H):
    with transaction(engine) as s:
        return run_import(s, path, settings, apply=True)


def on_hand(engine) -> dict[tuple[str, str], int]:
    with Session(engine) as s:
        assert ledger.verify_balances(s) == []
        return {(ln.part, ln.lot): ln.on_hand for ln in ledger.on_hand(s, by_lot=True)}


def test_preview_apply_and_rerun(store, tmp_path):
    stock_up(store)
    path = book(tmp_path / "h.xlsx", [
        HISTORY_HEADER,
        ["J-1", "2026-03-02", "XC-32", "lower_leg", 40, "F-1", "K-TST", 1],
        ["J-2", "2026-03-03", "XC-32", "lower_leg", 55, "F-2", "K-TST", 1],
        ["J-3", "2026-03-04", "XC-32", "air_spring", None, None, "OR-214", 12],
        ["J-3", "2026-03-04", "XC-32", "air_spring", None, None, "WP-32", 1],
    ])
    before = snapshot(store)
    rep = preview(store, path)
    assert (rep.rows, rep.units, rep.new, rep.already, rep.invalid) == (4, 3, 3, 0, 0)
    assert rep.ok and snapshot(store) == before  # a preview writes nothing
    rep = apply(store, path)
    assert rep.applied and rep.new == 3 and rep.effects["jobs"] == 3
    with Session(store) as s:
        jobs = {j.ref: j.lines for j in list_jobs(s)}
    # J-1 takes the one kit on hand whole; J-2 finds none and is built from the kit's bill
    # of materials (2 wipers, 1 O-ring); J-3 uses loose parts.
    assert jobs == {"J-1": (("K-TST", 1),), "J-2": (("OR-214", 1), ("WP-32", 2)),
                    "J-3": (("OR-214", 12), ("WP-32", 1))}
    # O-rings leave oldest cure quarter first: lot B (2024Q3) before lot A (2025Q1)
    assert on_hand(store) == {("OR-214", "A"): 50 - 3, ("WP-32", "W"): 40 - 3}
    after = snapshot(store)
    rep = apply(store, path)  # the same file again
    assert (rep.new, rep.already, rep.applied) == (0, 3, False)
    assert len(rep.previous) == 1 and rep.previous[0]["rows"] == 3
    assert snapshot(store) == after


def test_one_row_per_job_with_the_kit_in_a_column(store, tmp_path):
    stock_up(store)
    path = csv_file(tmp_path / "jobs.csv",
                    "Job,Date,Fork,Service,Kit\nJ-10,2026-01-05,XC-32,Lower leg,K-TST\n"
                    "J-11,2026-01-06,XC-32,lowers,k-tst\n")
    rep = apply(store, path)
    assert rep.new == 2
    with Session(store) as s:
        assert [(j.ref, j.service) for j in list_jobs(s, newest_first=False)] == [
            ("J-10", "lower_leg"), ("J-11", "lower_leg")]


def test_fork_texts_resolve_or_go_to_review_and_answers_are_remembered(store, tmp_path):
    stock_up(store)
    rows = [HISTORY_HEADER,
            ["J-1", "2026-03-02", "xc32", "lower_leg", None, None, "OR-214", 1],
            ["J-2", "2026-03-03", "test fork 32mm", "lower_leg", None, None, "OR-214", 1],
            ["J-3", "2026-03-04", "the blue one", "lower_leg", None, None, "OR-214", 1],
            ["J-4", "2026-03-05", "The  Blue one!", "lower_leg", None, None, "OR-214", 1]]
    path = book(tmp_path / "h.xlsx", rows)
    review = tmp_path / "h.review.xlsx"
    settings = replace(H, review=review)
    before = snapshot(store)
    rep = preview(store, path, settings)
    how = {f.text: (f.code, f.how, f.rows) for f in rep.forks}
    assert how == {"xc32": ("XC-32", "code", 1), "test fork 32mm": ("XC-32", "fuzzy", 1),
                   "the blue one": (None, "review", 2)}
    assert rep.review == 2 and rep.review_path == str(review) and not rep.ok
    with pytest.raises(InventoryError) as info:
        apply(store, path, settings)
    assert info.value.lines()[0] == (
        "h.xlsx:Jobs!C4 (fork): fork model 'the blue one' (2 row(s)) needs a decision "
        "(best: XC-32 0)")
    assert "--resolutions" in info.value.hint
    assert snapshot(store) == before
    ws = load_workbook(review)["review"]
    assert [ws.cell(2, c).value for c in (1, 2, 3)] == ["the blue one", 2, "C4"]
    answer_review(review, {"the blue one": "XC-32"})
    rep = apply(store, path, replace(settings, resolutions=review))
    assert rep.applied and rep.new == 4
    with Session(store) as s:
        assert [a.text for a in s.exec(select(ForkAlias))] == ["the blue one"]
    # the answer is remembered: a new file with the same text needs no review
    again = book(tmp_path / "h2.xlsx", [HISTORY_HEADER, [
        "J-5", "2026-03-06", "THE BLUE ONE", "damper", None, None, "OR-214", 1]])
    rep = apply(store, again)
    assert [(f.code, f.how) for f in rep.forks] == [("XC-32", "alias")] and rep.new == 1


def test_day_month_order_decided_per_file(store, tmp_path):
    stock_up(store)

    def f(name, dates):
        return csv_file(tmp_path / name, "job,date,fork,service,item\n" + "".join(
            f"J-{name}-{i},{d},XC-32,lower_leg,OR-214\n" for i, d in enumerate(dates)))

    rep = preview(store, f("a.csv", ["01/02/2026", "13/02/2026"]))
    assert rep.ok and rep.dates == "day-first (1 row(s) can only be read that way)"
    rep = preview(store, f("b.csv", ["01/02/2026", "03/04/2026"]))
    assert [str(p) for p in rep.problems] == [
        "b.csv:B1 (date): cannot tell whether dates are day-first or month-first: all 2 "
        "numeric date(s) read either way (e.g. B2 '01/02/2026')"]
    assert "--date-order" in rep.problems[0].hint
    rep = apply(store, f("b.csv", ["01/02/2026", "03/04/2026"]),
                replace(H, date_order="mdy"))
    with Session(store) as s:
        assert sorted(j.day for j in list_jobs(s)) == [date(2026, 1, 2), date(2026, 3, 4)]
    rep = preview(store, f("c.csv", ["13/02/2026", "02/14/2026"]))
    assert rep.problems[0].message.startswith("dates mix day-first (1 row(s), e.g. B2 "
                                              "'13/02/2026') and month-first")


def test_serials_dates_and_the_1904_system(store, tmp_path):
    stock_up(store)
    # 46082 is 2026-03-01 in the 1900 system (ECMA-376 Part 1, 18.17.4.1); the same number in
    # a 1904 workbook is 1462 days later.
    for epoch, expected in ((False, date(2026, 3, 1)), (True, date(2030, 3, 2))):
        path = book(tmp_path / f"s{epoch}.xlsx", [
            HISTORY_HEADER, [f"S-{epoch}", 46082, "XC-32", "damper", None, None, "OR-214", 1]],
            epoch_1904=epoch)
        rep = preview(store, path, replace(H, today=date(2031, 1, 1)))
        assert rep.ok and rep.date1904 is epoch
        rep = apply(store, path, replace(H, today=date(2031, 1, 1)))
        with Session(store) as s:
            assert [j.day for j in list_jobs(s) if j.ref == f"S-{epoch}"] == [expected]


def test_every_problem_at_its_cell_and_nothing_written(store, tmp_path):
    stock_up(store)
    path = book(tmp_path / "bad.xlsx", [
        ["Export"], [],
        ["Job No.", "Date in", "Fork model", "Servce type", "Hrs", "Part no", "Quantitiy"],
        ["B-1", "next tue", "XC-32", "lower leg", "12", "OR-214", 1],
        ["B-2", "2026-03-02", "XC-32", "lower leg", "12 h", "OR-214", "two"],
        ["B-3", "2026-03-02", "XC-32", "lower leg", "x", "OR-214", -2],
        ["B-4", "2027-01-01", "XC-32", "paint", "3", "OR-241", 1],
        ["B-5", "2026-03-02", "XC-32", "lower leg", "3", "OIL-5", 5],
        ["B-5", "2026-03-03", "XC-32", "lower leg", "3", "OR-214", 1],
        [None, None, None, None, None, None, None],
        ["Total", None, None, None, None, None, 7],
    ])
    before = snapshot(store)
    with pytest.raises(InventoryError) as info:
        apply(store, path)
    assert info.value.lines()[:-1] == [
        "bad.xlsx:Jobs!B4 (Date in): expected a date like 2024-03-25, 25/03/2024, 25 Mar 2024 "
        "or a spreadsheet date, got 'next tue'",
        "bad.xlsx:Jobs!G5 (Quantitiy): expected a whole number, got 'two'",
        "bad.xlsx:Jobs!E6 (Hrs): expected ride hours, a number 0 or more, got 'x'",
        "bad.xlsx:Jobs!G6 (Quantitiy): expected a whole number above 0, got -2 (a return or "
        "correction is a stock adjustment)",
        "bad.xlsx:Jobs!B7 (Date in): date 2027-01-01 is in the future (today is 2026-06-30)",
        "bad.xlsx:Jobs!D7 (Servce type): expected a service level (lower_leg, air_spring, "
        "damper), got 'paint'",
        "bad.xlsx:Jobs!F7 (Part no): unknown part or kit 'OR-241' (did you mean OR-214?)",
        "bad.xlsx:Jobs!B9 (Date in): job B-5: date 2026-03-03 differs from 2026-03-02 on row 8",
    ]
    assert "nothing was written" in info.value.hint
    assert snapshot(store) == before
    rep = preview(store, path)
    assert [str(w) for w in rep.warnings] == [
        "bad.xlsx:Jobs!row 1: skipped a line above the header row",
        "bad.xlsx:Jobs!row 11: skipped a totals row"]


def test_shortage_is_a_problem_at_the_job(store, tmp_path):
    stock_up(store)
    path = book(tmp_path / "short.xlsx", [
        HISTORY_HEADER,
        ["S-1", "2026-03-02", "XC-32", "lower_leg", None, None, "OIL-5", 50],
        ["S-2", "2026-03-03", "XC-32", "lower_leg", None, None, "WP-32", 41],
        ["S-3", "2026-03-04", "XC-32", "lower_leg", None, None, "WP-32", 40]])
    before = snapshot(store)
    rep = preview(store, path)
    assert [str(p) for p in rep.problems] == [
        "short.xlsx:Jobs!G2 (item): job S-1: not enough stock of OIL-5: asked 50, on hand 0",
        "short.xlsx:Jobs!G3 (item): job S-2: not enough stock of WP-32: asked 41, on hand 40"]
    with pytest.raises(InventoryError):
        apply(store, path)
    assert snapshot(store) == before
    rep = apply(store, path, replace(H, stock=False))  # history from before the ledger
    assert rep.new == 3 and snapshot(store)["movement"] == before["movement"]


def test_a_job_recorded_before_counts_as_applied_or_conflicts(store, tmp_path):
    stock_up(store)
    apply(store, book(tmp_path / "a.xlsx", [
        HISTORY_HEADER, ["R-1", "2026-03-02", "XC-32", "lower_leg", None, None, "OR-214", 1]]))
    # the same job exported again by another system (other columns, other spelling)
    rep = apply(store, csv_file(tmp_path / "b.csv", "job,date,fork,service,item,qty,tech\n"
                                "R-1,02/03/2026,xc-32,Lower leg,OR-214,1,AB\n"
                                "R-2,14/03/2026,xc-32,Lower leg,OR-214,1,AB\n"))
    assert (rep.new, rep.already) == (1, 1)
    with pytest.raises(InventoryError) as info:
        apply(store, csv_file(tmp_path / "c.csv", "job,date,fork,service,item\n"
                              "R-1,2026-03-09,XC-32,damper,OR-214\n"))
    assert info.value.lines()[0] == ("c.csv:A2 (job): job R-1 is already recorded as "
                                     "2026-03-02 XC-32 lower_leg")


def test_formulas_without_saved_values_are_reported(store, tmp_path):
    stock_up(store)
    path = book(tmp_path / "f.xlsx", [
        HISTORY_HEADER, ["F-1", "2026-03-02", "XC-32", "lower_leg", None, None, "OR-214", "=1+1"]],
        text_cells=False)
    rep = preview(store, path)
    assert [str(p) for p in rep.problems] == [
        "f.xlsx:Jobs!H2 (qty): formula =1+1 has no saved value"]
    assert "save it" in rep.problems[0].hint


def test_counts_receipts_and_catalog_kinds(store, tmp_path):
    stock_up(store)
    counts = csv_file(tmp_path / "counts.csv", "Date;Part;Location;Counted\n"
                      "31.03.2026;OR-214;MAIN;55\n31.03.2026;WP-32;MAIN;40\n")
    c = replace(H, kind="counts")
    rep = apply(store, counts, c)
    assert rep.effects == {"variances": 1, "agreed": 1} and rep.dates.startswith("day-first")
    assert on_hand(store)[("OR-214", "A")] + on_hand(store).get(("OR-214", "B"), 0) == 55
    assert apply(store, counts, c).new == 0  # re-run: nothing
    r = replace(H, kind="receipts")
    receipts = book(tmp_path / "r.xlsx", [
        ["Delivery date", "Supplier", "Part", "Qty", "Unit price", "Batch", "Cure date"],
        ["2026-04-01", "sup-a", "OR-214", 100, "0,27", "L-9", "2/26"],
        ["2026-04-01", "SUP-A", "WP-33", 2, "6.5", "L-10", None]])
    with pytest.raises(InventoryError) as info:
        apply(store, receipts, r)
    assert info.value.lines()[:1] == [
        "r.xlsx:Jobs!C3 (Part): unknown part 'WP-33' (did you mean WP-32?)"]
    receipts = book(tmp_path / "r.xlsx", [
        ["Delivery date", "Supplier", "Part", "Qty", "Unit price", "Batch", "Cure date"],
        ["2026-04-01", "sup-a", "OR-214", 100, "0,27", "L-9", "2/26"]])
    apply(store, receipts, r)
    with Session(store) as s:
        lot = s.exec(select(Lot).where(Lot.code == "L-9")).one()
        # "2/26" is read as the month February 2026 -> 2026Q1 (core/parse.cure_quarter: a
        # month reading; ISO 2230's "3/94" quarter label then reads older, the safe side)
        assert (lot.cured, str(lot.unit_cost), lot.received) == ("2026Q1", "0.2700",
                                                                  date(2026, 4, 1))
    cat = replace(H, kind="catalog")
    parts = book(tmp_path / "p.xlsx", [
        ["Part code", "Type", "Description", "ID", "CS", "Shore A"],
        ["OR-214", None, "O-ring 24.99 x 3.53, NBR 70", "0.984 in", "3,53 mm", None],
        ["OR-NEW", "o_ring", "New ring", "31,5", "2.62", 80],
        ["OR-BAD", None, "no kind", "10", "1", None]])
    with pytest.raises(InventoryError) as info:
        apply(store, parts, cat)
    assert info.value.lines()[0] == "p.xlsx:Jobs!B4 (Type): new part OR-BAD needs a kind"
    parts = book(tmp_path / "p.xlsx", [
        ["Part code", "Type", "Description", "ID", "CS", "Shore A"],
        ["OR-214", None, "O-ring 24.99 x 3.53, NBR 70", "0.984 in", "3,53 mm", None],
        ["OR-NEW", "o_ring", "New ring", "31,5", "2.62", 80]])
    rep = apply(store, parts, cat)
    assert rep.effects == {"updated": 1, "created": 1}
    with Session(store) as s:
        p = s.exec(select(Part).where(Part.code == "OR-214")).one()
        # 0.984 in = 24.9936 mm (1 in = 25.4 mm exactly, by the 1959 definition)
        assert (p.id_mm, p.cs_mm, p.hardness, p.material) == (24.9936, 3.53, 70, "NBR")
        n = s.exec(select(Part).where(Part.code == "OR-NEW")).one()
        assert (n.kind, n.id_mm, n.cs_mm, n.hardness) == ("o_ring", 31.5, 2.62, 80)
        assert len(list(s.exec(select(ImportBatch)))) == 3  # counts, receipts, catalog


def test_values_too_long_or_too_large_for_the_database_are_cell_problems(store, tmp_path):
    # PostgreSQL enforces the column sizes (VARCHAR(32), INTEGER, NUMERIC(12,4)) that SQLite
    # ignores: the import checks them itself, so both databases give the same answer.
    stock_up(store)
    path = book(tmp_path / "big.xlsx", [
        HISTORY_HEADER,
        ["J" * 40, "2026-03-02", "XC-32", "lower_leg", 10**12, "F" * 33, "OR-214", 10**12]])
    before = snapshot(store)
    with pytest.raises(InventoryError) as info:
        apply(store, path)
    assert info.value.lines()[:-1] == [
        "big.xlsx:Jobs!A2 (job): expected at most 32 characters, got 40 ('JJJJJJJJJJJJJJJJJJJJJJJJ'"
        "...)",
        "big.xlsx:Jobs!E2 (hours): expected 100,000 or less, got 1,000,000,000,000",
        "big.xlsx:Jobs!F2 (fork_ref): expected at most 32 characters, got 33 "
        "('FFFFFFFFFFFFFFFFFFFFFFFF'...)",
        "big.xlsx:Jobs!H2 (qty): expected 1,000,000 or less, got 1,000,000,000,000"]
    assert snapshot(store) == before
