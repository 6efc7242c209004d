"""A voided job is no job: the forecast's job counts, job lines and installed-base visits, the
month end's jobs and the jobs export leave it out, while the job list still shows it and the
parts' stock and usage are exact; on SQLite and PostgreSQL.

Every expected figure is counted here, independently of the project's code, from the test's
own record of what it booked (``JOBS``, ``VOIDS``, ``RECEIVED``) with plain loops and
``collections.Counter``. The month-end rule it checks is the books' own (DEVELOPERS.md, the
closed-books rule of issue 11): a job counts in its month unless it was voided before the
month ended, or voided later while its month was still open (the void takes its lines off);
a void booked after the month was closed leaves the closed month's figures as they were.
"""

from __future__ import annotations

import csv
import json
import re
from collections import Counter
from dataclasses import dataclass
from datetime import date

import numpy as np
import pytest
from sqlalchemy import func, select
from sqlmodel import Session

from inventory.core.db import transaction
from inventory.core.errors import InventoryError
from inventory.core.tables import Movement, Part
from inventory.forecast.data import load_history
from inventory.forecast.queries import item_demand, job_counts
from inventory.forecast.series import build_series
from inventory.history.exports import export_table
from inventory.history.imports import ImportSettings, run_import
from inventory.history.jobs import JobItem, JobSpec, list_jobs, noon, record_job
from inventory.monthend.closing import close_month, verify_closed
from inventory.monthend.report import month_report
from inventory.stock import ledger, returns
from tests.conftest import write_catalog
from tests.test_import_support import HISTORY_HEADER, book, cli

TODAY = date(2026, 12, 4)
FORK = "XC-32"  # the tiny catalog's one fork family
RECEIVED = {"OR-214": 100, "WP-32": 50}  # booked on 2026-08-01


@dataclass(frozen=True)
class Job:
    ref: str
    day: date
    level: str
    items: tuple[tuple[str, int], ...]
    fork_ref: str


JOBS = [
    Job("J-01", date(2026, 9, 5), "damper", (("OR-214", 2),), "F1"),
    Job("J-02", date(2026, 9, 20), "lower_leg", (("WP-32", 2),), "F2"),
    Job("J-09", date(2026, 9, 25), "damper", (("WP-32", 1), ("OR-214", 1)), "F6"),
    Job("J-03", date(2026, 10, 3), "damper", (("OR-214", 1), ("WP-32", 1)), "F1"),
    Job("J-04", date(2026, 10, 15), "lower_leg", (("OR-214", 3),), "F3"),
    Job("J-08", date(2026, 10, 20), "air_spring", (("OR-214", 1),), "F5"),
    Job("J-05", date(2026, 11, 2), "damper", (("OR-214", 2),), "F2"),
    Job("J-06", date(2026, 11, 10), "air_spring", (("WP-32", 1),), "F1"),
    Job("J-07", date(2026, 11, 12), "lower_leg", (("OR-214", 1),), "F4"),
]
BY_REF = {j.ref: j for j in JOBS}
# (job, day the void is booked, the job's month closed at that moment?) in booking order
VOIDS = [
    ("J-09", date(2026, 10, 10), False),  # a September job voided in October, September open
    ("J-08", date(2026, 10, 25), False),  # voided in its own month
    # October is closed here (books closed through 2026-10)
    ("J-04", date(2026, 11, 5), True),  # an October job voided after October was closed
    ("J-05", date(2026, 11, 20), False),  # voided in its own month
]
VOIDED = {ref for ref, _, _ in VOIDS}
MONTHS = ["2026-09", "2026-10", "2026-11"]


def label(d: date) -> str:
    return f"{d.year:04d}-{d.month:02d}"


def book_everything(engine) -> None:
    """The shop's autumn, in time order: receipts, jobs, voids and the close of October."""
    with transaction(engine) as s:
        for part, qty in RECEIVED.items():
            ledger.receive(s, ledger.Receipt(part, qty, None, lot="A", cured="2026Q1",
                                             ts=noon(date(2026, 8, 1))))

    def job(ref: str) -> None:
        j = BY_REF[ref]
        with transaction(engine) as s:
            record_job(s, JobSpec(j.ref, j.day, FORK, j.level,
                                  tuple(JobItem(c, q) for c, q in j.items),
                                  fork_ref=j.fork_ref))

    def void(ref: str) -> None:
        day = next(d for r, d, _ in VOIDS if r == ref)
        with transaction(engine) as s:
            returns.void_job(s, ref, reason="booked on the wrong fork", ts=noon(day))

    for ref in ("J-01", "J-02", "J-09", "J-03", "J-04", "J-08"):
        job(ref)
    void("J-09")
    void("J-08")
    with transaction(engine) as s:
        close_month(s, "2026-10", today=TODAY)
    for ref in ("J-05", "J-06", "J-07"):
        job(ref)
    void("J-04")
    void("J-05")


# ------------------------------------------------------------------ independent expectations


def counted_jobs() -> list[Job]:
    """Jobs that count anywhere but in closed books: every job not voided."""
    return [j for j in JOBS if j.ref not in VOIDED]


def month_end_jobs(month: str) -> Counter:
    """(family, level) -> jobs of ``month`` as the month end counts them."""
    out: Counter = Counter()
    for j in JOBS:
        if label(j.day) != month:
            continue
        void = next(((d, closed) for r, d, closed in VOIDS if r == j.ref), None)
        if void is None or (label(void[0]) > month and void[1]):
            out[(FORK, j.level)] += 1
    return out


def net_usage(part: str) -> dict[str, int]:
    """Units of ``part`` used per month: issued in the job's month, given back in the
    void's month."""
    out = dict.fromkeys(MONTHS, 0)
    for j in JOBS:
        for code, q in j.items:
            if code == part:
                out[label(j.day)] += q
    for ref, day, _ in VOIDS:
        for code, q in BY_REF[ref].items:
            if code == part:
                out[label(day)] -= q
    return out


# ------------------------------------------------------------------ the checks


def test_voided_jobs_leave_every_job_count(store, tmp_path):
    book_everything(store)
    kept = counted_jobs()
    assert len(kept) == len(JOBS) - len(VOIDS) == 5  # J-01 J-02 J-03 J-06 J-07
    until = date(2026, 11, 30)
    with Session(store) as s:
        # forecast: jobs per (family, level) and month
        jc = job_counts(s, until=until, since=date(2026, 9, 1))
        want = Counter((FORK, j.level, label(j.day)) for j in kept)
        got = Counter()
        for g, (fam, level) in enumerate(jc.groups):
            for t, month in enumerate(jc.months):
                if jc.values[g, t]:
                    got[(fam, level, str(month))] = int(jc.values[g, t])
        assert got == want

        hist = load_history(s, until=until)
        assert [str(m) for m in hist.months] == MONTHS
        # the seasonal fit's job matrix: the same counts on the history's calendar
        assert Counter({(f, lv, str(hist.months[t])): int(hist.jobs[g, t])
                        for g, (f, lv) in enumerate(hist.groups)
                        for t in range(hist.months.size) if hist.jobs[g, t]}) == want
        # job lines per group, item and month: only the kept jobs' items
        want_lines = Counter()
        for j in kept:
            for code, q in j.items:
                want_lines[(j.level, code, label(j.day))] += q
        got_lines = Counter()
        for g, (_, level) in enumerate(hist.groups):
            for i, code in enumerate(hist.items):
                for t in range(hist.months.size):
                    if hist.lines[g, i, t]:
                        got_lines[(level, code, str(hist.months[t]))] = int(hist.lines[g, i, t])
        assert got_lines == want_lines
        # installed base: one visit per kept job, a voided visit is not a visit
        visits = sorted(zip(hist.visits.fork.tolist(), hist.visits.day.astype(str).tolist(),
                            hist.visits.level.tolist(), strict=True))
        assert visits == sorted((j.fork_ref, j.day.isoformat(), j.level) for j in kept)
        # the forecast by family counts visits per month
        fam = build_series(hist, "family")
        assert fam.codes == [FORK]
        per_month = Counter(label(j.day) for j in kept)
        assert np.nan_to_num(fam.y[0]).tolist() == [float(per_month[m]) for m in MONTHS]

        # usage is net of the voids: issued in the job's month, back in the void's month
        d = item_demand(s, until=until, since=date(2026, 9, 1))
        for part in RECEIVED:
            assert d.row(part).tolist() == [float(v) for v in net_usage(part).values()], part

        # stock is exact: received less what the kept jobs took, in the balances and in the
        # sum of the raw ledger rows
        for part, received in RECEIVED.items():
            used = sum(q for j in kept for c, q in j.items if c == part)
            assert sum(ln.on_hand for ln in ledger.on_hand(s, part=part)) == received - used
            raw = s.execute(select(func.sum(Movement.qty)).join(Part, Part.id == Movement.part_id)
                            .where(Part.code == part)).scalar()
            assert raw == received - used, part

        # month end: jobs per (family, level); the closed October keeps its snapshot
        for month in MONTHS:
            rep = month_report(s, month, today=TODAY)
            got_me = Counter({(u.fork_family, u.service_level): u.jobs for u in rep.fork_usage})
            assert +got_me == month_end_jobs(month), month
            assert rep.totals.jobs == sum(month_end_jobs(month).values()), month
        assert verify_closed(s, today=TODAY) == []

        # the job list still shows every job; the voided ones say when and why
        rows = {r.ref: r for r in list_jobs(s)}
        assert set(rows) == set(BY_REF)
        for ref, day, _ in VOIDS:
            assert rows[ref].voided and rows[ref].voided_at.date() == day
            assert rows[ref].to_dict()["void_reason"] == "booked on the wrong fork"
        assert not any(rows[j.ref].voided for j in kept)

        # the jobs export reads back as history: voided jobs are not in it
        path, _ = export_table(s, "jobs", tmp_path / "jobs.csv")
    with open(path, newline="") as f:
        exported = {row["job"] for row in csv.DictReader(f)}
    assert exported == {j.ref for j in kept}


def test_a_second_void_changes_nothing(store):
    book_everything(store)
    with Session(store) as s:
        before = {r.ref: (r.voided_at, r.void_reason) for r in list_jobs(s)}
    with pytest.raises(InventoryError, match="nothing left to reverse"), \
            transaction(store) as s:
        returns.void_job(s, "J-05", reason="again", ts=noon(date(2026, 11, 28)))
    with Session(store) as s:
        assert {r.ref: (r.voided_at, r.void_reason) for r in list_jobs(s)} == before


def test_a_job_recorded_without_stock_can_be_voided(store, tmp_path):
    # history from before the ledger (imported with stock=False) took no stock: voiding it
    # books no movement, marks the job and takes its lines off while its month is open
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("WP-32", 8, "6.50", lot="W", ts=noon(date(2026, 8, 1))))
    rows = [["H-1", "2026-10-02", FORK, "lower_leg", 40, "F-1", "WP-32", 1],
            ["H-2", "2026-10-09", FORK, "lower_leg", 30, "F-2", "WP-32", 2],
            ["H-3", "2026-10-16", FORK, "damper", 20, "F-1", "OR-214", 1]]
    path = book(tmp_path / "h.xlsx", [HISTORY_HEADER, *rows])
    with transaction(store) as s:
        run_import(s, path, ImportSettings(kind="history", today=TODAY, user="test",
                                           stock=False), apply=True)
    with transaction(store) as s:
        got = returns.void_job(s, "H-2", reason="typed twice", ts=noon(date(2026, 10, 20)))
    assert got.movements == []
    with pytest.raises(InventoryError, match="voided already"), transaction(store) as s:
        returns.void_job(s, "H-2", reason="again", ts=noon(date(2026, 10, 21)))
    kept = [r for r in rows if r[0] != "H-2"]
    with Session(store) as s:
        jc = job_counts(s, until=date(2026, 10, 31))
        assert Counter({(f, lv): int(jc.values[g].sum()) for g, (f, lv) in enumerate(jc.groups)
                        if jc.values[g].sum()}) == Counter((r[2], r[3]) for r in kept)
        hist = load_history(s, until=date(2026, 10, 31))
        assert sorted(zip(hist.visits.fork.tolist(), hist.visits.day.astype(str).tolist(),
                          strict=True)) == sorted((r[5], r[1]) for r in kept)
        rep = month_report(s, "2026-10", today=TODAY)
        assert +Counter({(u.fork_family, u.service_level): u.jobs for u in rep.fork_usage}) \
            == Counter((r[2], r[3]) for r in kept)
        assert s.execute(select(func.count()).select_from(Movement)).scalar() == 1  # receipt
        assert {r.ref: r.voided for r in list_jobs(s)} == {"H-1": False, "H-2": True,
                                                          "H-3": False}


def test_job_list_and_show_say_voided(tmp_path):
    db = str(tmp_path / "shop.db")
    assert cli("--db", db, "init")[0] == 0
    assert cli("--db", db, "catalog", "load", str(write_catalog(tmp_path / "cat")))[0] == 0
    for args in (["stock", "receive", "OR-214", "10", "--cost", "0.25", "--date", "2026-10-01"],
                 ["job", "add", "--date", "2026-11-02", "--fork", FORK, "--service", "damper",
                  "--part", "OR-214=4", "--ref", "J-1"],
                 ["stock", "void-job", "J-1", "--reason", "booked twice", "--date",
                  "2026-11-03"]):
        code, _, err = cli("--db", db, *args)
        assert code == 0, err
    code, out, _ = cli("--db", db, "job", "show", "J-1")
    assert code == 0 and "; voided 2026-11-03: booked twice" in out
    code, out, _ = cli("--db", db, "job", "list")
    assert code == 0 and "voided 2026-11-03" in out
    code, out, _ = cli("--db", db, "job", "list", "--json")
    (job,) = json.loads(out)
    assert job["voided"] is True and job["void_reason"] == "booked twice"
    assert job["lines"] == []  # the void took the 4 O-rings back off its line


def test_job_pages_say_voided(store):
    from starlette.testclient import TestClient

    from inventory.people.service import add_person
    from inventory.web.app import create_app

    password = "a-long-password"
    with transaction(store) as s:
        add_person(s, "ana", "manager", password)
        ledger.receive(s, ledger.Receipt("OR-214", 5, "0.25", lot="A",
                                         ts=noon(date(2026, 10, 1))))
        record_job(s, JobSpec("J-1", date(2026, 11, 2), FORK, "damper", (JobItem("OR-214", 2),)))
        record_job(s, JobSpec("J-2", date(2026, 11, 3), FORK, "damper", (JobItem("OR-214", 1),)))
    with transaction(store) as s:
        returns.void_job(s, "J-1", reason="wrong fork", ts=noon(date(2026, 11, 4)))
    app = create_app(store.url.render_as_string(hide_password=False),
                     secret="test-secret-" + "x" * 20)
    c = TestClient(app, follow_redirects=False)
    tok = re.search(r'name="csrf" value="([^"]+)"', c.get("/login").text).group(1)
    assert c.post("/login", data={"csrf": tok, "name": "ana",
                                  "password": password}).status_code == 303
    page = c.get("/jobs").text
    row = dict(re.findall(r'<a href="/jobs/(J-\d)">(.*?)</tr>', page, re.S))
    assert "voided 2026-11-04" in row["J-1"] and "voided" not in row["J-2"]
    detail = c.get("/jobs/J-1").text
    assert "<dt>Voided</dt><dd>2026-11-04: wrong fork</dd>" in detail
    # a voided job offers no forms that would only be refused; a live one offers all three
    assert 'action="/jobs/J-1/' not in detail and "takes no more parts" in detail
    live = c.get("/jobs/J-2").text
    assert all(f'action="/jobs/J-2/{what}"' in live for what in ("add", "return", "void"))
    assert [j["voided"] for j in c.get("/api/jobs").json()] == [False, True]  # newest first


def test_no_part_is_added_to_a_voided_job(store):
    from inventory.history.service import add_to_job

    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("OR-214", 5, "0.25", lot="A",
                                         ts=noon(date(2026, 10, 1))))
        record_job(s, JobSpec("J-1", date(2026, 11, 2), FORK, "damper", (JobItem("OR-214", 2),)))
    with transaction(store) as s:
        returns.void_job(s, "J-1", reason="wrong fork", ts=noon(date(2026, 11, 4)))
    with pytest.raises(InventoryError, match="job J-1 was voided"), transaction(store) as s:
        add_to_job(s, "J-1", "OR-214", 1)
    with Session(store) as s:  # 5 received, 2 issued, 2 back: all 5 on the shelf
        assert sum(ln.on_hand for ln in ledger.on_hand(s, part="OR-214")) == 5


def test_another_file_with_a_voided_job_does_not_bring_it_back(store, tmp_path):
    with transaction(store) as s:
        ledger.receive(s, ledger.Receipt("WP-32", 8, "6.50", lot="W", ts=noon(date(2026, 8, 1))))
    first = [["H-1", "2026-10-02", FORK, "lower_leg", 40, "F-1", "WP-32", 1],
             ["H-2", "2026-10-09", FORK, "lower_leg", 30, "F-2", "WP-32", 2]]
    settings = ImportSettings(kind="history", today=TODAY, user="test")
    with transaction(store) as s:
        run_import(s, book(tmp_path / "a.xlsx", [HISTORY_HEADER, *first]), settings, apply=True)
    with transaction(store) as s:
        returns.void_job(s, "H-2", reason="typed twice", ts=noon(date(2026, 10, 20)))
    # an overlapping file (H-2 with its hours filled in differently, and a new job H-3)
    second = [["H-2", "2026-10-09", FORK, "lower_leg", 31, "F-2", "WP-32", 2],
              ["H-3", "2026-10-12", FORK, "lower_leg", 20, "F-3", "WP-32", 1]]
    with transaction(store) as s:
        rep = run_import(s, book(tmp_path / "b.xlsx", [HISTORY_HEADER, *second]), settings,
                         apply=True)
    assert rep.problems == [] and rep.effects["jobs"] == 1
    with Session(store) as s:
        assert {r.ref: r.voided for r in list_jobs(s)} == {"H-1": False, "H-2": True,
                                                          "H-3": False}
        # 8 received, H-1 and H-3 took one each, H-2's two went back with the void
        assert sum(ln.on_hand for ln in ledger.on_hand(s, part="WP-32")) == 8 - 1 - 1
        jc = job_counts(s, until=date(2026, 10, 31))
        assert int(jc.values.sum()) == 2
