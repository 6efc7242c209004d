"""`inventory plan` and `inventory order` as a user types them, on a small shop built inline
(the tiny catalog of conftest plus two years of issues): the JSON contract, the workbook and
reading it back, exact one-line errors, what the plan could not cover, and stock in lots
past their ISO 2230 storage period (REFERENCE.md 5: AU, group A, 5 years) not counted."""

from __future__ import annotations

import json
import shutil
from datetime import UTC, date, datetime, time
from decimal import Decimal

import pytest
from openpyxl import load_workbook

from inventory.catalog.load import load_catalog
from inventory.core import migrate
from inventory.core.db import dispose_all, make_engine, transaction
from inventory.stock import ledger
from tests.conftest import inv, write_catalog

TODAY = "2026-12-02"


def _ts(y: int, m: int, d: int) -> datetime:
    return datetime.combine(date(y, m, d), time(12), tzinfo=UTC)


def book_history(url: str) -> None:
    """Two years of monthly use: OR-214 about 6 a month with a spring bump, WP-32 2 a
    month, OIL-5 (no supplier item) 100 ml; each month's delivery is used up in the month;
    an old AU lot of WP-32 cured 2019Q1 sits in the bench drawer past its storage period."""
    engine = make_engine(url)
    with transaction(engine) as s:
        ledger.receive(s, ledger.Receipt(
            "WP-32", 4, "6.50", lot="OLD-AU", cured="2019Q1", location="BENCH",
            ts=_ts(2024, 11, 20)))
        for i in range(24):
            y, m = 2024 + (11 + i) // 12, (11 + i) % 12 + 1
            spring = 2 if m in (3, 4, 5) else 0
            ledger.receive(s, ledger.Receipt("OR-214", 6 + spring, "0.25", cured="2024Q3", ts=_ts(y, m, 1)))
            ledger.receive(s, ledger.Receipt("WP-32", 2, "6.50", cured="2024Q4", ts=_ts(y, m, 1)))
            ledger.receive(s, ledger.Receipt("OIL-5", 100, "0.02", ts=_ts(y, m, 1)))
            ledger.issue(s, ledger.Issue("OR-214", 3 + spring, ts=_ts(y, m, 10), reference=f"J{i}a"))
            ledger.issue(s, ledger.Issue("OR-214", 3, ts=_ts(y, m, 20), reference=f"J{i}b"))
            ledger.issue(s, ledger.Issue("WP-32", 2, ts=_ts(y, m, 15), reference=f"J{i}c", location="MAIN"))
            ledger.issue(s, ledger.Issue("OIL-5", 100, ts=_ts(y, m, 15), reference=f"J{i}d"))
    engine.dispose()


@pytest.fixture(scope="module")
def template(tmp_path_factory):
    """The shop built once per module (migrated, catalog loaded, history booked)."""
    folder = tmp_path_factory.mktemp("shop")
    url = f"sqlite:///{folder / 'shop.db'}"
    engine = make_engine(url, fresh=True)
    migrate.upgrade(engine)
    with transaction(engine) as s:
        load_catalog(s, write_catalog(folder / "cat"))
    engine.dispose()
    book_history(url)
    dispose_all()
    return folder / "shop.db"


@pytest.fixture
def shop(template, tmp_path):
    """A fresh copy of the shop for each test."""
    db = tmp_path / "shop.db"
    shutil.copyfile(template, db)
    yield str(db)
    dispose_all()


def plan_json(monkeypatch, capsys, db, *extra):
    code, out, err = inv(monkeypatch, capsys, "--db", db, "plan", "--date", TODAY, "--json",
                         *extra)
    assert code == 0, err
    return json.loads(out)


def test_plan_json_contract(shop, monkeypatch, capsys):
    data = plan_json(monkeypatch, capsys, shop)
    assert set(data) >= {"orders", "service", "budget"}
    assert set(data["service"]) >= {"target", "expected_fill"}
    assert set(data["budget"]) >= {"limit", "spent"} and data["budget"]["limit"] is None
    assert data["orders"], "the shop needs something"
    for order in data["orders"]:
        assert set(order) >= {"supplier", "order_by", "total", "lines"}
        assert order["supplier"] == "SUP-A" and order["order_by"] == TODAY
        total = Decimal(0)
        for ln in order["lines"]:
            assert set(ln) >= {"part", "qty", "unit", "packs", "unit_cost", "reason"}
            assert ln["unit"] == "each"  # the tiny catalog's parts are counted in pieces
            assert ln["qty"] == ln["packs"] * ln["pack_size"] > 0
            assert ln["part"] in ln["reason"] and "raw need" in ln["reason"]
            total += Decimal(ln["unit_cost"]) * ln["qty"]
        assert Decimal(order["total"]) == total.quantize(Decimal("0.01"))
        assert Decimal(order["total"]) >= Decimal("50.00")  # SUP-A's minimum order value
    assert Decimal(data["budget"]["spent"]) == sum(Decimal(o["total"]) for o in data["orders"])
    assert 0 < data["service"]["target"] < 1 and 0 < data["service"]["expected_fill"] <= 1


def test_plan_lists_what_it_cannot_cover(shop, monkeypatch, capsys):
    data = plan_json(monkeypatch, capsys, shop)
    [oil] = [u for u in data["not_covered"] if u["part"] == "OIL-5"]
    assert oil["reason"].startswith("no supplier item") and oil["units"] > 0


def test_stock_past_its_storage_period_is_not_counted(shop, monkeypatch, capsys):
    data = plan_json(monkeypatch, capsys, shop)
    [wp] = [ln for ln in data["lines"] if ln["part"] == "WP-32"]
    # the 4 units of lot OLD-AU (AU cured 2019Q1: 5 years from 2019-03-31) are not usable
    assert wp["expired"] == 4
    assert wp["on_hand"] == 0  # each month's 2 were used; only the old lot is left
    assert "past their storage period, not counted" in wp["reason"]


@pytest.mark.parametrize(
    ("args", "line"),
    [
        (["--season-start", "2026-11-01"],
         "error: season start 2026-11-01 is not after the plan date 2026-12-02 (give a season "
         "start in the future)"),
        (["--supplier", "SUP-B"], "error: unknown supplier 'SUP-B' (did you mean SUP-A?)"),
        (["--part", "OR-215"], "error: unknown part 'OR-215' (did you mean OR-214?)"),
        (["--budget", "10"],
         "error: budget 10.00 is below the smallest supplier minimum order (50.00 at SUP-A): "
         "nothing could be ordered"),
        (["--budget", "lots"], "error: --budget: expected an amount of money like 12.50, "
                               "got 'lots'"),
        (["--fill-rate", "150%"], "error: --fill-rate: expected a fill rate of 0.5 to 0.999, "
                                  "or 50 to 99.9 (%), got '150%'"),
        (["--season-start", "March"],
         "error: --season-start: expected a date like 2026-03-25, 25/03/2026 or 25 Mar 2026, "
         "got 'March'"),
    ],
)
def test_bad_input_gets_one_line(shop, monkeypatch, capsys, args, line):
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "plan", "--date", TODAY, *args)
    assert code == 1
    assert err.strip() == line


def test_fill_rate_and_budget(shop, monkeypatch, capsys):
    high = plan_json(monkeypatch, capsys, shop, "--fill-rate", "99%")
    low = plan_json(monkeypatch, capsys, shop, "--fill-rate", "0.8")
    assert high["service"]["target"] == pytest.approx(0.99)
    assert low["service"]["target"] == pytest.approx(0.80)
    assert Decimal(high["budget"]["spent"]) >= Decimal(low["budget"]["spent"])
    capped = plan_json(monkeypatch, capsys, shop, "--budget", "60")
    assert Decimal(capped["budget"]["spent"]) <= Decimal("60")
    assert capped["budget"]["limit"] == "60"


def test_workbook_then_orders_then_receipt(shop, tmp_path, monkeypatch, capsys):
    xlsx = tmp_path / "plan.xlsx"
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "plan", "--date", TODAY, "--xlsx",
                         str(xlsx))
    assert code == 0, err
    assert "SUP-A: order by 2026-12-02" in out
    wb = load_workbook(xlsx)
    assert wb.sheetnames == ["Summary", "PO SUP-A", "Reasons", "Not covered", "Kits"]
    po = wb["PO SUP-A"]
    assert po["A1"].value == "Purchase order" and po["B3"].value == "SUP-A"
    header = [c.value for c in po[12]]
    assert header[:10] == ["Line", "Part", "Supplier code", "Description", "Qty", "Pack size",
                           "Packs", "Unit cost", "Line total", "Note"]
    parts = {po.cell(r, 2).value: r for r in range(13, po.max_row + 1) if po.cell(r, 2).value}
    assert "OR-214" in parts
    assert po.cell(parts["OR-214"], 9).value == f"=E{parts['OR-214']}*H{parts['OR-214']}"
    reasons = wb["Reasons"]
    assert [c.value for c in reasons[1]][:2] == ["Supplier", "Part"]
    # a manager edits a quantity before sending: 30 O-rings (3 packs of 10)
    po.cell(parts["OR-214"], 5).value = 30
    wb.save(xlsx)

    code, out, err = inv(monkeypatch, capsys, "--db", shop, "order", "create", "--from-plan",
                         str(xlsx), "--date", TODAY)
    assert code == 0, err
    assert out.startswith("PO-2026-0001: SUP-A")
    code, out, _ = inv(monkeypatch, capsys, "--db", shop, "order", "list", "--json")
    [order] = json.loads(out)
    assert order["ref"] == "PO-2026-0001" and order["status"] == "open"
    assert order["ordered"] >= 30 and order["received"] == 0

    # recorded once only
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "order", "create", "--from-plan",
                         str(xlsx))
    assert code == 1 and "plan.xlsx was already recorded as purchase orders" in err

    # the next plan counts the order as on order
    data = plan_json(monkeypatch, capsys, shop)
    [ring] = [ln for ln in data["lines"] if ln["part"] == "OR-214"]
    assert ring["on_order"] == 30

    # receive it against the order
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "stock", "receive", "OR-214", "30",
                         "--order", "PO-2026-0001", "--date", TODAY)
    assert code == 0, err
    assert "PO-2026-0001: OR-214 30 of 30 received" in out


def test_orders_from_the_plan_json(shop, tmp_path, monkeypatch, capsys):
    data = plan_json(monkeypatch, capsys, shop)
    path = tmp_path / "plan.json"
    path.write_text(json.dumps(data), encoding="utf-8")
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "order", "create", "--from-plan",
                         str(path), "--date", TODAY, "--json")
    assert code == 0, err
    [made] = json.loads(out)
    assert made["supplier"] == "SUP-A"
    assert made["lines"] == len(data["orders"][0]["lines"])
    assert made["total"] == data["orders"][0]["total"]


def test_order_create_reports_every_bad_line(shop, tmp_path, monkeypatch, capsys):
    plan = {"orders": [{"supplier": "SUP-A", "order_by": TODAY, "total": "1", "lines": [
        {"part": "OR-215", "qty": 10, "packs": 1, "unit_cost": "0.25", "reason": ""},
        {"part": "OIL-5", "qty": 1000, "packs": 1, "unit_cost": "0.02", "reason": ""}]},
        {"supplier": "SUP-Z", "order_by": TODAY, "total": "1", "lines": [
            {"part": "OR-214", "qty": 10, "packs": 1, "unit_cost": "0.25", "reason": ""}]}]}
    path = tmp_path / "bad.json"
    path.write_text(json.dumps(plan), encoding="utf-8")
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "order", "create", "--from-plan",
                         str(path))
    assert code == 1
    assert err.strip().splitlines() == [
        "error: bad.json: orders[0]: unknown part 'OR-215' (did you mean OR-214?)",
        "error: bad.json: orders[0]: SUP-A has no supplier item for OIL-5",
        "error: bad.json: orders[1]: unknown supplier 'SUP-Z' (did you mean SUP-A?)",
    ]
    code, out, _ = inv(monkeypatch, capsys, "--db", shop, "order", "list", "--json")
    assert json.loads(out) == []  # nothing written


def test_pre_season_plan(shop, monkeypatch, capsys):
    data = plan_json(monkeypatch, capsys, shop, "--season-start", "2027-03-01")
    assert data["season_start"] == "2027-03-01"
    [ring] = [ln for ln in data["lines"] if ln["part"] == "OR-214"]
    assert ring["policy"] == "pre-season"
    # SUP-A: lead 2 d, spread 1 d: the season lead 2 + 2 x 1 = 4 d; review 7 d
    assert ring["cover_days"] == (date(2027, 3, 1) - date(2026, 12, 2)).days + 7 + 2
    if ring["qty"]:
        assert date.fromisoformat(ring["order_by"]) <= date(2027, 2, 27)


def test_receive_against_an_order_from_the_command_line(shop, tmp_path, monkeypatch, capsys):
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "stock", "receive", "OR-214", "5",
                         "--order", "PO-2026-0099")
    assert code == 1
    assert err.strip() == ("error: unknown purchase order 'PO-2026-0099' (see `inventory "
                           "order list`, or omit --order for a delivery without an order)")
    plan = {"orders": [{"supplier": "SUP-A", "order_by": TODAY, "total": "5.00", "lines": [
        {"part": "OR-214", "qty": 20, "packs": 2, "unit_cost": "0.25", "reason": "test"}]}]}
    path = tmp_path / "p.json"
    path.write_text(json.dumps(plan), encoding="utf-8")
    assert inv(monkeypatch, capsys, "--db", shop, "order", "create", "--from-plan",
               str(path), "--date", TODAY)[0] == 0
    # 5 % of 20 is 1: 22 is refused, 21 is accepted; 0.2 allows 24
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "stock", "receive", "OR-214", "22",
                         "--order", "PO-2026-0001")
    assert code == 1
    assert err.strip() == (
        "error: PO-2026-0001 OR-214: ordered 20, received 0; 22 more would make 22, beyond "
        "the 5% over-delivery tolerance (21) (book the surplus without --order, or raise "
        "--tolerance)")
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "stock", "receive", "OR-214", "22",
                         "--order", "PO-2026-0001", "--tolerance", "0.2")
    assert code == 0, err
    assert out.strip().splitlines()[-1] == ("PO-2026-0001: OR-214 22 of 20 received; order "
                                            "complete, closed")
