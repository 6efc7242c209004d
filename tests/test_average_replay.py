"""The integer moving-average replay (issue 14 item 5) gives exactly the Decimal results.

Two oracles: (1) exact rational arithmetic from the standard library (``fractions``) with
half-away-from-zero rounding to four places, the rule of ``decimal.ROUND_HALF_UP`` (Python
``decimal`` documentation), and the project's own Decimal step, on random event sequences;
(2) the Decimal month-end replay as it stood before (tests/support/average_decimal.py) on
seeded random ledgers written by benchmarks/report_speed.py's generator, compared field by
field over the whole month-end data.
"""

from __future__ import annotations

import importlib.util
import math
from datetime import date
from decimal import Decimal
from fractions import Fraction
from pathlib import Path

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from sqlalchemy import inspect, text
from sqlmodel import Session

from inventory.core import migrate
from inventory.core.db import make_engine
from inventory.monthend import aggregates, average
from inventory.monthend.records import parse_month
from inventory.stock import valuation as val
from tests.support import average_decimal

ROOT = Path(__file__).resolve().parent.parent


def _half_up(x: Fraction) -> int:
    """Round half away from zero (the ROUND_HALF_UP of Python's decimal module)."""
    n = math.floor(abs(x) + Fraction(1, 2))
    return n if x >= 0 else -n


def _fraction_replay(qtys, costs4):
    on_hand, value, out = 0, 0, []
    for q, c in zip(qtys, costs4, strict=True):
        if q > 0:
            v = q * c
        elif q == 0:
            v = 0
        elif -q > on_hand:
            return out, len(out)
        elif -q == on_hand:
            v = -value
        else:
            v = -_half_up(Fraction(value * -q, on_hand))
        on_hand += q
        value += v
        out.append(v)
    return out, None


events = st.lists(st.tuples(st.integers(-40, 60), st.integers(-5, 2_000_000)), max_size=60)


@settings(max_examples=300, deadline=None)
@given(events)
def test_integer_replay_equals_exact_rounding_and_decimal_step(evs):
    qtys = [q for q, _ in evs]
    costs = [c for _, c in evs]
    got, bad = val.average_replay4(qtys, costs)
    assert (got, bad) == _fraction_replay(qtys, costs)
    state = val.AverageState()
    for i, (q, c) in enumerate(evs):
        if bad is not None and i == bad:
            with pytest.raises(ValueError):
                val.average_step(state, q, Decimal(c).scaleb(-4))
            break
        state, v = val.average_step(state, q, Decimal(c).scaleb(-4) if q > 0 else None)
        assert v == Decimal(got[i]).scaleb(-4)


def test_rounding_ties_go_away_from_zero():
    # 3 units worth 0.0005 (5 ten-thousandths): taking 1 is 5/3 = 1.67 -> 2; 2 units worth
    # 0.0003, taking 1 is 1.5 -> 2 (half up); a negative value -0.0003 over 2 -> -2
    assert val.average_replay4([3, -1], [0, 0]) == ([0, 0], None)
    assert val.average_replay4([1, 1, 1, -1], [1, 2, 2, 0]) == ([1, 2, 2, -2], None)
    assert val.average_replay4([1, 1, -1], [1, 2, 0]) == ([1, 2, -2], None)
    assert val.average_replay4([1, 1, -1], [-1, -2, 0]) == ([-1, -2, 2], None)
    assert val.average_replay4([2, -3], [5, 0]) == ([10], 1)


def _generator():
    spec = importlib.util.spec_from_file_location("report_speed", ROOT / "benchmarks" /
                                                  "report_speed.py")
    mod = importlib.util.module_from_spec(spec)
    assert spec.loader is not None
    spec.loader.exec_module(mod)
    return mod


@pytest.mark.parametrize("seed", [3, 11])
def test_month_end_average_equals_decimal_replay(db_url, monkeypatch, seed):
    bench = _generator()
    eng = make_engine(db_url, fresh=True)
    migrate.upgrade(eng)
    eng.dispose()
    bench.generate(db_url, parts=40, movements=6_000, seed=seed)
    engine = make_engine(db_url)
    with engine.begin() as con:  # one part overdrawn mid-year
        cols = [c["name"] for c in inspect(con).get_columns("movement") if c["name"] != "id"]
        picked = ", ".join("-1000000" if c == "qty" else
                           "'2026-06-15 10:00:00.000000'" if c == "ts" else f'"{c}"' for c in cols)
        names = ", ".join(f'"{c}"' for c in cols)
        con.execute(text(f"INSERT INTO movement ({names}) SELECT {picked} FROM movement "
                         "WHERE kind = 'issue' ORDER BY id LIMIT 1"))
    month = parse_month(bench.MONTH, today=date.fromisoformat(bench.TODAY))
    with Session(engine) as s:
        new = aggregates.load_month(s, month, method="average")
    monkeypatch.setattr(average, "revalue_average", average_decimal.revalue_average)
    with Session(engine) as s:
        old = aggregates.load_month(s, month, method="average")
        fifo = aggregates.load_month(s, month, method="fifo")
    assert old.parts and any(p.closing_value for p in old.parts)
    assert old != fifo  # the option changes the values, so the comparison has teeth
    assert len(old.broken) == 1 and new.broken == old.broken
    assert new == old
    for a, b in zip(new.parts, old.parts, strict=True):
        assert (a.closing_value, a.month_end_values, a.usage_value) == \
            (b.closing_value, b.month_end_values, b.usage_value)
