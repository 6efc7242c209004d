"""One parser per kind of value (inventory.core.parse): the same text gives the same value
or the same one-line error through the parser, the command-line option and the spreadsheet
cell, and bad values are refused before anything is written, on SQLite and PostgreSQL alike.

Sources for the checks:
- Unicode categories and names come from the Unicode Character Database through
  ``unicodedata`` (U+202E RIGHT-TO-LEFT OVERRIDE is a format character, category Cf, per
  Unicode Standard Annex #9; U+0007 BELL is a control, Cc; U+FF11 FULLWIDTH DIGIT ONE and
  U+0661 ARABIC-INDIC DIGIT ONE are decimal digits, Nd, that Python's ``int`` accepts).
- NUMERIC(12, 4) holds 12 significant digits with 4 after the point (SQL standard exact
  numeric: precision 12, scale 4), so the largest amount is 99,999,999.9999; the limits are
  read from the SQLAlchemy column types, not copied.
- Dates: ISO 8601 calendar dates; 25/03/2026 can only be day-first (no month 25).
- Cure quarters: ISO 2230 labels packages with quarter and year (REFERENCE.md section 5);
  the month reading of ``2/26`` (February -> Q1) is this project's documented rule.
- Fill-rate bounds (0.5-0.999 or 50-99.9 %) and the shop ranges (1,000,000 units a booking,
  unit cost ceiling 10,000) are this project's rules (issue 12), not outside facts.
"""

from __future__ import annotations

import inspect
import json
import unicodedata
from datetime import date, timedelta
from decimal import Decimal

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sqlalchemy import text
from sqlmodel import Session

from inventory.cli import options
from inventory.core import choices, parse, tables
from inventory.core.errors import InventoryError
from inventory.sheets import cells
from tests.conftest import inv, write_catalog

TODAY = date.today()
ERR = object()  # marks an expected error; the text after it is part of the message


def _cure(text):
    return parse.cure_quarter(text)


# kind -> (parser, option adapter, its option name, cell parser or None)
ENTRY = {
    "money": (parse.money, lambda t: options.amount(t, "--budget"), "--budget", cells.money),
    "cost": (parse.unit_cost, lambda t: options.cost(t, "--cost"), "--cost", None),
    "quantity": (parse.quantity, lambda t: options.quantity(t, "QTY"), "QTY",
                 cells.positive_int),
    "date": (parse.day, lambda t: options.day(t, "--date"), "--date", cells.iso_date),
    "cure": (_cure, lambda t: options.cure(t, "--cured"), "--cured", cells.quarter),
    "fill": (parse.fill_rate, lambda t: options.fill_rate(t, "--fill-rate"), "--fill-rate",
             None),
    "code": (lambda t: parse.code(t, what="code"),
             lambda t: options.code(t, "--lot", "code"), "--lot", cells.code),
}

CASES = [
    # decimal comma and point mean the same on every entry point ("1,5" was 15 in `plan`)
    ("money", "1,5", Decimal("1.5")),
    ("money", "1.5", Decimal("1.5")),
    ("money", "0,35", Decimal("0.35")),
    ("money", "1 234,50", Decimal("1234.50")),
    ("money", "1.234,50", Decimal("1234.50")),
    ("money", "1,234.50", Decimal("1234.50")),
    ("money", "€12.50", Decimal("12.50")),
    ("money", "5,000", (ERR, "comma before three digits")),
    ("money", "1e30", (ERR, "expected an amount of money like 12.50, got '1e30'")),
    ("money", "1e400", (ERR, "got '1e400'")),
    ("money", "nan", (ERR, "got 'nan'")),
    ("money", "inf", (ERR, "got 'inf'")),
    ("money", "-1", (ERR, "0 or more")),
    ("money", "4006381333931", (ERR, "at most 99,999,999.9999")),  # a scanned EAN-13
    ("money", "12.34567", (ERR, "at most 4 decimals")),
    ("money", "\uff11\uff12", (ERR, "digits 0-9 (found FULLWIDTH DIGIT ONE)")),
    ("money", "\u0661\u0662", (ERR, "digits 0-9 (found ARABIC-INDIC DIGIT ONE)")),
    ("cost", "0,25", Decimal("0.25")),
    ("cost", "9999.99", Decimal("9999.99")),
    ("cost", "20000", (ERR, "confirm it with --cost-ok")),
    ("quantity", "3", 3),
    ("quantity", "1000000", 1_000_000),
    ("quantity", "1000001", (ERR, "expected 1,000,000 or less")),
    ("quantity", "9223372036854775807", (ERR, "expected 1,000,000 or less")),
    ("quantity", "1.5", (ERR, "expected a whole number, got '1.5'")),
    ("quantity", "-3", (ERR, "above 0, got -3")),
    ("quantity", "\u0663", (ERR, "digits 0-9")),
    ("date", "2026-03-25", date(2026, 3, 25)),
    ("date", "25/03/2026", date(2026, 3, 25)),
    ("date", "25.03.2026", date(2026, 3, 25)),
    ("date", "25 Mar 2026", date(2026, 3, 25)),
    ("date", "03/04/2026", (ERR, "day and month can be told apart")),
    ("date", "45000", (ERR, "a date like 2026-03-25")),  # a serial number only from a cell
    ("date", "\uff12\uff10\uff12\uff16-03-25", (ERR, "digits 0-9")),
    ("cure", "2026Q1", "2026Q1"),
    ("cure", "3Q25", "2025Q3"),
    ("cure", "Q3/25", "2025Q3"),
    ("cure", "2/26", "2026Q1"),  # a month reading: February 2026
    ("cure", "11/25", "2025Q4"),
    ("cure", "13/25", (ERR, "there is no month 13")),
    ("cure", "2099Q1", (ERR, "not after the receipt")),
    ("cure", "1899Q1", (ERR, "from 1990Q1")),
    ("cure", "1989Q4", (ERR, "from 1990Q1")),
    ("cure", "2025Q5", (ERR, "expected a cure quarter like 2026Q3")),
    ("fill", "0.95", 0.95),
    ("fill", "95", 0.95),
    ("fill", "95%", 0.95),
    ("fill", "99.9", 0.999),
    ("fill", "0.5", 0.5),
    ("fill", "50%", 0.5),
    ("fill", "1.5", (ERR, "expected a fill rate of 0.5 to 0.999")),
    ("fill", "1", (ERR, "expected a fill rate")),
    ("fill", "100", (ERR, "expected a fill rate")),
    ("fill", "0.4", (ERR, "expected a fill rate")),
    ("fill", "nan", (ERR, "expected a fill rate")),
    ("code", "OR-214", "OR-214"),
    ("code", "  L-9 ", "L-9"),
    ("code", "OR\x07214", (ERR, "found U+0007")),
    ("code", "OR\u202e412", (ERR, "found U+202E RIGHT-TO-LEFT OVERRIDE")),
    ("code", "X" * 65, (ERR, "at most 64 characters (65 given)")),
]


def _outcome(fn, text):
    try:
        return fn(text)
    except (ValueError, InventoryError) as exc:
        return ("error", str(exc))


@pytest.mark.parametrize(("kind", "text", "expected"), CASES,
                         ids=[f"{k}-{t[:12]!r}" for k, t, _ in CASES])
def test_same_text_same_answer_through_every_entry_point(kind, text, expected):
    parser, option, name, cell = ENTRY[kind]
    got = _outcome(parser, text)
    via_option = _outcome(option, text)
    via_cell = _outcome(cell, text) if cell is not None else got
    if isinstance(expected, tuple) and expected[0] is ERR:
        assert got[0] == "error", got
        assert expected[1] in got[1]
        assert "\n" not in got[1]
        assert via_option == ("error", f"{name}: {got[1]}")
        assert via_cell == got
    else:
        assert got == expected and type(got) is type(expected)
        assert via_option == got and via_cell == got


def test_parsed_values_are_what_they_say():
    # Decimal, not float, for money (the ledger keeps NUMERIC); int for quantities
    assert parse.money("0,1") + parse.money("0,2") == Decimal("0.3")
    assert isinstance(parse.quantity("7"), int)
    # a spreadsheet float cell is rounded to the 4 decimals NUMERIC(12,4) keeps
    assert cells.money(0.1 + 0.2) == Decimal("0.3000")


def test_booking_dates_are_bounded():
    today = date(2026, 12, 4)
    assert parse.booking_day("2026-12-05", today=today) == date(2026, 12, 5)  # one day margin
    for typed in ("0001-01-01", "1999-12-31", "2026-12-06", "9999-12-31"):
        with pytest.raises(ValueError, match="expected a date from 2000-01-01"):
            parse.booking_day(typed, today=today)
    # a ledger's opening is the lower bound when the caller knows it
    with pytest.raises(ValueError, match="the ledger's opening"):
        parse.booking_day("2024-12-31", today=today, opening=date(2025, 1, 1))


def test_cure_quarter_not_after_its_receipt():
    assert parse.cure_quarter("2026Q2", received=date(2026, 4, 1)) == "2026Q2"
    with pytest.raises(ValueError, match="not after the receipt on 2026-03-31"):
        parse.cure_quarter("2026Q2", received=date(2026, 3, 31))


def test_column_limits_are_the_tables_own():
    # the lengths the parser caps codes at are the VARCHAR lengths of the columns they go to
    columns = {"part": tables.Part.__table__.c.code, "lot": tables.Lot.__table__.c.code,
               "job": tables.Movement.__table__.c.reference,
               "reason": tables.Movement.__table__.c.reason,
               "job ref": tables.ServiceJob.__table__.c.ref,
               "location": tables.Location.__table__.c.code,
               "supplier": tables.Supplier.__table__.c.code,
               "fork": tables.ForkFamily.__table__.c.code}
    for what, col in columns.items():
        assert parse.MAX_LEN[what] == col.type.length, what
    money = tables.Lot.__table__.c.unit_cost.type
    integer_digits = money.precision - money.scale
    assert parse.MONEY_MAX == Decimal(10) ** integer_digits - Decimal(1).scaleb(-money.scale)
    assert parse.MONEY_PLACES == money.scale
    # the booking maximum, summed over a million bookings, still fits a 64-bit integer
    assert parse.MAX_QTY * 1_000_000 < 2**63 - 1


_BAD = [chr(c) for c in (*range(0, 32), 127, 0x85, 0x200B, 0x200E, 0x200F, 0x202A, 0x202B,
                         0x202C, 0x202D, 0x202E, 0x2066, 0x2067, 0x2068, 0x2069, 0xFEFF,
                         0x2028, 0x2029)]
_PRINTABLE = st.text(st.characters(codec="utf-8", categories=("L", "N", "P", "S", "Zs")),
                     min_size=1, max_size=30).filter(lambda s: s.strip())


@settings(max_examples=300, deadline=None)
@given(_PRINTABLE, st.sampled_from(_BAD), st.integers(min_value=0, max_value=30))
def test_codes_with_control_or_bidi_characters_are_refused(text, bad, at):
    code = text[:at] + bad + text[at:]
    inner = code.strip()  # a leading or trailing tab or newline is trimmed like a space
    if bad in inner:
        with pytest.raises(ValueError, match=r"found U\+"):
            parse.code(code, what="part")
    else:
        assert parse.code(code, what="part") == inner
    # the category the refusal rests on (Unicode Character Database)
    assert unicodedata.category(bad) in ("Cc", "Cf", "Zl", "Zp")


@settings(max_examples=300, deadline=None)
@given(_PRINTABLE)
def test_printable_codes_pass_unchanged(text):
    out = parse.code(text, what="reason")
    assert out == text.strip()


def test_allocation_default_is_one_value_in_cli_and_library():
    from inventory.cli import forecast_cmd
    from inventory.ordering import backtest

    cli_default = inspect.signature(forecast_cmd.backtest).parameters["allocation"].default
    assert cli_default.default == choices.DEFAULT_ALLOCATION
    assert backtest.BacktestSetup().allocation == choices.DEFAULT_ALLOCATION
    for fn in (backtest.run_backtest, backtest.run_backtests, backtest.run_rolling_backtest,
               backtest.run_rolling_backtests):
        assert inspect.signature(fn).parameters["setup"].default == backtest.BacktestSetup(), \
            fn.__name__


def test_a_choice_outside_its_enum_is_a_usage_error(tmp_path, monkeypatch, capsys):
    code, out, err = inv(monkeypatch, capsys, "--db", str(tmp_path / "x.db"), "forecast",
                         "--by", "bogus")
    assert code == 2
    assert "Traceback" not in err and "'bogus' is not one of" in err


@pytest.fixture
def shop(db_url, tmp_path, monkeypatch, capsys):
    assert inv(monkeypatch, capsys, "--db", db_url, "init")[0] == 0
    cat = write_catalog(tmp_path / "cat")
    assert inv(monkeypatch, capsys, "--db", db_url, "catalog", "load", str(cat))[0] == 0
    assert inv(monkeypatch, capsys, "--db", db_url, "stock", "receive", "OR-214", "10",
               "--cost", "0.25")[0] == 0
    return db_url


BAD_COMMANDS = [
    (["stock", "receive", "OR-214", "1", "--cost", "1e30"],
     "error: --cost: expected an amount of money like 12.50, got '1e30'"),
    (["stock", "receive", "OR-214", "1", "--cost", "1e400"],
     "error: --cost: expected an amount of money like 12.50, got '1e400'"),
    (["stock", "receive", "OR-214", "1", "--cost", "4006381333931"],
     "error: --cost: expected an amount of at most 99,999,999.9999 (the most the database "
     "holds), got '4006381333931'"),
    (["stock", "receive", "OR-214", "1", "--cost", "20000"],
     "error: --cost: expected an amount of at most 10,000 (if it is right, confirm it with "
     "--cost-ok), got '20000'"),
    (["stock", "receive", "OR-214", "1", "--cost", "0.25", "--date", "0001-01-01"],
     f"error: --date: expected a date from 2000-01-01 (the earliest booking date) to "
     f"{TODAY + timedelta(days=1)} (today + 1 day), got '0001-01-01'"),
    (["stock", "receive", "OR-214", "1", "--cost", "0.25", "--cured", "2099Q1"],
     "error: --cured: expected a cure quarter from 1990Q1 to "
     f"{TODAY.year}Q{(TODAY.month - 1) // 3 + 1} (not after the receipt on "
     f"{TODAY.isoformat()}), got '2099Q1'"),
    (["stock", "receive", "OR-214", "1", "--cost", "0.25", "--lot", "L\x07"],
     "error: --lot: expected a lot of printable characters (found U+0007 control character), "
     "got 'L\\x07'"),
    (["stock", "count", "OR-214", "9223372036854775807"],
     "error: COUNTED: expected 1,000,000 or less, got 9,223,372,036,854,775,807"),
    (["stock", "issue", "OR-214", "1", "--job", "J" * 100_000],
     "error: --job: expected a job of at most 64 characters (100,000 given), got "
     "'JJJJJJJJJJJJJJJJJJJJJJJJJJJJJJJJJJJJJ...'"),
    (["stock", "adjust", "OR-214", "-1", "--reason", "r" * 100_000],
     "error: --reason: expected a reason of at most 200 characters (100,000 given), got "
     "'rrrrrrrrrrrrrrrrrrrrrrrrrrrrrrrrrrrrr...'"),
    (["stock", "receive", "OR-214", "1", "--cost", "0.25", "--lot", "L" * 100_000],
     "error: --lot: expected a lot of at most 48 characters (100,000 given), got "
     "'LLLLLLLLLLLLLLLLLLLLLLLLLLLLLLLLLLLLL...'"),
    (["stock", "receive", "OR-214", "1", "--order", "PO-1", "--tolerance", "nan"],
     "error: --tolerance: expected a fraction of 0 to 1 (or 0% to 100%), got nan"),
    (["forecast", "--lead-time", "inf"], "error: --lead-time: expected a finite number, got inf"),
    (["plan", "--fill-rate", "1"],
     "error: --fill-rate: expected a fill rate of 0.5 to 0.999, or 50 to 99.9 (%), got '1'"),
]


@pytest.mark.parametrize(("args", "line"), BAD_COMMANDS,
                         ids=[" ".join(a)[:40] for a, _ in BAD_COMMANDS])
def test_bad_values_are_one_clean_line_on_both_databases(shop, monkeypatch, capsys, args,
                                                         line):
    code, out, err = inv(monkeypatch, capsys, "--db", shop, *args)
    assert (code, err.strip()) == (1, line)
    code, out, _ = inv(monkeypatch, capsys, "--db", shop, "stock", "on-hand", "--by-lot",
                       "--json")
    assert [(r["part"], r["on_hand"]) for r in json.loads(out)] == [("OR-214", 10)]


def test_a_high_cost_is_booked_when_confirmed(shop, monkeypatch, capsys):
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "stock", "receive", "WP-32", "1",
                         "--cost", "20000", "--cost-ok")
    assert code == 0, err
    monkeypatch.setenv(parse.COST_CEILING_ENV, "50000")
    code, out, err = inv(monkeypatch, capsys, "--db", shop, "stock", "receive", "WP-32", "1",
                         "--cost", "20000,50")
    assert code == 0, err
    code, out, _ = inv(monkeypatch, capsys, "--db", shop, "stock", "on-hand", "--part",
                       "WP-32", "--json")
    assert json.loads(out)[0]["value"] == "40000.50"


IMPORT_CASES = [
    # (column, bad cell text, kind of value): every bad value of a receipts file is reported
    # at its cell with the parser's own message, and nothing is written
    ("Qty", "9223372036854775807", "quantity"),
    ("Qty", "\u0661\u0662", "quantity"),
    ("Unit price", "1e30", "money"),
    ("Unit price", "5,000", "money"),
    ("Cure date", "2099Q1", "cure"),
    ("Cure date", "13/25", "cure"),
    ("Batch", "L\u202e9", "code"),
]


def test_an_import_reports_the_parsers_message_at_each_cell(store, tmp_path):
    from dataclasses import replace

    from inventory.history.imports import ImportSettings, run_import

    header = ["Delivery date", "Supplier", "Part", "Qty", "Unit price", "Batch", "Cure date"]
    good = ["2026-04-01", "SUP-A", "OR-214", "100", "0.27", "L-9", "2026Q1"]
    lines = [",".join(header)]
    for column, bad, _ in IMPORT_CASES:
        row = list(good)
        row[header.index(column)] = bad
        lines.append(",".join(f'"{v}"' for v in row))
    path = tmp_path / "receipts.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    settings = replace(ImportSettings(kind="receipts", user="test"), today=date(2026, 6, 30))
    with Session(store) as s:
        report = run_import(s, path, settings)
    problems = [str(p) for p in report.problems]
    for row, (column, bad, kind) in enumerate(IMPORT_CASES, start=2):
        col = "ABCDEFG"[header.index(column)]
        expected = _outcome(ENTRY[kind][3] or ENTRY[kind][0], bad)
        assert expected[0] == "error"
        assert any(p.startswith(f"receipts.csv:{col}{row} ") and expected[1] in p
                   for p in problems), (column, bad, problems)
    with Session(store) as s:
        assert s.execute(text("SELECT count(*) FROM movement")).scalar() == 0
