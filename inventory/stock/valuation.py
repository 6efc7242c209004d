"""Stock valuation and the month-end figures: cost layers (FIFO by cure date, as the ledger
picks), moving average, turns, days of supply, ABC and XYZ classes, slow and dead stock,
shelf-life status and a stand-in reorder rule.

Pure functions over plain values (``Decimal`` money, ``int`` quantities, numpy arrays for
the per-part series); no database, no files. Definitions and their sources:

- FIFO and moving average: the cost-flow assumptions of financial accounting (e.g. Kieso,
  Weygandt and Warfield, *Intermediate Accounting*, the inventory cost-flow chapter). Our
  "first in" is the oldest cure quarter, then lots without one by receipt date, exactly the
  order :func:`inventory.stock.ledger.fifo_order` issues stock in, so the ledger's lot costs
  *are* the FIFO valuation.
- Inventory turns = cost of goods issued over the average inventory value, annualised;
  days of supply = stock over average daily usage (e.g. Heizer and Render, *Operations
  Management*, supply-chain chapter; Chopra and Meindl, *Supply Chain Management*, where the
  same ratios follow from Little's law).
- ABC: Pareto classes by annual usage value, cut at 80 % and 95 % of the cumulative value
  (common practice; Silver, Pyke and Peterson 1998, ch. 3, describe the Pareto shape that
  motivates it, recalled from memory).
- XYZ: classes by the coefficient of variation of monthly demand (population standard
  deviation over the mean), X up to 0.5, Y up to 1.0, Z above (common practice; the cut-offs
  vary between authors).
"""

from __future__ import annotations

import calendar
import math
from collections.abc import Iterable, Sequence
from dataclasses import dataclass
from datetime import date
from decimal import ROUND_HALF_UP, Decimal

import numpy as np
from numpy.typing import ArrayLike, NDArray

ZERO = Decimal("0")
#: Money is carried to four places, as the database stores it (``Numeric(12, 4)``).
MONEY_PLACES = Decimal("0.0001")

# ---------------------------------------------------------------------------- cost layers


@dataclass(frozen=True, slots=True)
class Layer:
    """Units of one lot still on hand at one unit cost. ``key`` orders the layers the way the
    ledger issues them (see :func:`fifo_key`)."""

    qty: int
    unit_cost: Decimal
    key: tuple = ()


def fifo_key(cured: str | None, received: date, lot_id: int = 0) -> tuple:
    """Issue order of a lot: oldest cure quarter first (``"2024Q3"`` sorts as text), lots
    without a cure quarter after those by receipt date, then by lot id. The same order as
    :func:`inventory.stock.ledger.fifo_order`."""
    return (cured is None, cured or "", received, lot_id)


def fifo_take(layers: Sequence[Layer], qty: int) -> tuple[Decimal, tuple[Layer, ...]]:
    """Take ``qty`` units from the first layers in issue order.

    Returns the cost of what was taken and the layers left (still in issue order). Raises
    ``ValueError`` when the layers hold fewer than ``qty`` units.
    """
    if qty < 0:
        raise ValueError(f"quantity to take must be 0 or more, got {qty}")
    ordered = sorted(layers, key=lambda la: la.key)
    if sum(la.qty for la in ordered) < qty:
        raise ValueError(f"cannot take {qty}: the layers hold {sum(la.qty for la in ordered)}")
    cost, left, out = ZERO, qty, []
    for la in ordered:
        n = min(left, la.qty)
        cost += n * la.unit_cost
        left -= n
        if la.qty - n:
            out.append(Layer(la.qty - n, la.unit_cost, la.key))
    return cost, tuple(out)


def layers_value(layers: Iterable[Layer]) -> Decimal:
    return sum((la.qty * la.unit_cost for la in layers), ZERO)


# ---------------------------------------------------------------------------- moving average


@dataclass(frozen=True, slots=True)
class AverageState:
    """Quantity and total value under the moving (perpetual weighted) average."""

    qty: int = 0
    value: Decimal = ZERO

    @property
    def unit_cost(self) -> Decimal | None:
        return (self.value / self.qty) if self.qty else None


def average_step(state: AverageState, qty: int, unit_cost: Decimal | None = None, *,
                 places: Decimal = MONEY_PLACES) -> tuple[AverageState, Decimal]:
    """Apply one signed movement under the moving average; returns the new state and the
    signed value of the movement.

    An inflow (``qty > 0``) comes in at its own ``unit_cost`` and re-weights the average. An
    outflow leaves at the current average: ``value * taken / on_hand`` rounded half-up to
    ``places`` (the whole remaining value when the stock is emptied, so no residue stays
    behind). An outflow larger than the stock raises ``ValueError``.
    """
    if qty > 0:
        if unit_cost is None:
            raise ValueError("an inflow needs its unit cost")
        v = qty * unit_cost
        return AverageState(state.qty + qty, state.value + v), v
    if qty == 0:
        return state, ZERO
    take = -qty
    if take > state.qty:
        raise ValueError(f"cannot take {take}: on hand {state.qty}")
    if take == state.qty:
        v = state.value
    else:
        v = (state.value * take / state.qty).quantize(places, rounding=ROUND_HALF_UP)
    return AverageState(state.qty - take, state.value - v), -v


def moving_average(events: Iterable[tuple[int, Decimal | None]], *,
                   start: AverageState = AverageState(),
                   places: Decimal = MONEY_PLACES) -> tuple[AverageState, list[Decimal]]:
    """Run :func:`average_step` over ``(signed qty, unit cost)`` events in time order;
    returns the final state and the signed value of each event."""
    state, values = start, []
    for qty, cost in events:
        state, v = average_step(state, qty, cost, places=places)
        values.append(v)
    return state, values


def average_replay4(qtys: Sequence[int], costs4: Sequence[int]) -> tuple[list[int], int | None]:
    """:func:`moving_average` in whole ten-thousandths of money, for speed over long ledgers.

    ``qtys`` are the signed quantities of one part in time order and ``costs4`` the unit costs
    of the inflows in ten-thousandths (ignored for outflows). Returns the signed value of each
    movement in ten-thousandths and the index of the first outflow larger than the stock
    (``None`` when there is none; the values stop before it). Exactly :func:`average_step`
    with four places: an inflow adds ``qty * cost``; an outflow takes ``value * taken /
    on_hand`` rounded half away from zero (``ROUND_HALF_UP``), or the whole value when it
    empties the stock. Integer arithmetic is exact, so the results equal the Decimal ones.
    """
    on_hand = value = 0
    out: list[int] = []
    append = out.append
    for i, q in enumerate(qtys):
        if q > 0:
            v = q * costs4[i]
            on_hand += q
        elif q == 0:
            v = 0
        else:
            take = -q
            if take > on_hand:
                return out, i
            if take == on_hand:
                v = -value
            else:
                n, d = value * take, 2 * on_hand
                v = -((2 * n + on_hand) // d) if n >= 0 else (-2 * n + on_hand) // d
            on_hand -= take
        value += v
        append(v)
    return out, None


# ---------------------------------------------------------------------------- ratios


def average_stock(values: Sequence[Decimal]) -> Decimal:
    """Average inventory value from stock values at the ends of successive periods (with the
    opening value first): the plain mean of the points, which for two points is the
    textbook (opening + closing) / 2."""
    if not values:
        raise ValueError("no stock values to average")
    return sum(values, ZERO) / len(values)


def turns(cost_of_issues: Decimal, average_value: Decimal, *, period_days: float,
          year_days: float = 365.0) -> float | None:
    """Inventory turns per year: cost of goods issued over the average inventory value,
    scaled from a period of ``period_days`` to a year of ``year_days``. ``None`` when the
    average stock value is zero (turns are undefined)."""
    if period_days <= 0:
        raise ValueError(f"period_days must be positive, got {period_days}")
    if average_value <= 0:
        return None
    return float(cost_of_issues / average_value) * (year_days / period_days)


def days_of_supply(stock: Decimal | int, usage: Decimal | int, *,
                   period_days: float) -> float | None:
    """Days the stock lasts at the period's usage rate: ``stock / (usage / period_days)``.

    Stock and usage in the same measure (units, or value at cost). ``None`` when there was
    no usage (the stock would last for ever)."""
    if period_days <= 0:
        raise ValueError(f"period_days must be positive, got {period_days}")
    if usage <= 0:
        return None
    return float(Decimal(stock) / Decimal(usage)) * period_days


# ---------------------------------------------------------------------------- classes


def abc_classes(values: Sequence[Decimal | float], *, a_share: float = 0.80,
                b_share: float = 0.95) -> list[str]:
    """ABC class of each item by its annual usage value (same order as ``values``).

    Items sorted by value, highest first (ties keep their input order); an item is A while
    the cumulative share *before* it is below ``a_share``, B while below ``b_share``, else C.
    So the item that crosses 80 % is still A. Items with no usage are always C.
    Defaults 80 % / 95 % (A about 80 % of value, B the next 15 %, C the last 5 %): common
    practice.
    """
    if not 0 < a_share <= b_share <= 1:
        raise ValueError("need 0 < a_share <= b_share <= 1")
    vals = [float(v) for v in values]
    if any(v < 0 for v in vals):
        raise ValueError("usage values must be 0 or more")
    total = sum(vals)
    out = ["C"] * len(vals)
    if total <= 0:
        return out
    order = sorted(range(len(vals)), key=lambda i: -vals[i])
    before = 0.0
    for i in order:
        if vals[i] <= 0:
            break
        share = before / total
        out[i] = "A" if share < a_share else ("B" if share < b_share else "C")
        before += vals[i]
    return out


def pareto(values: Sequence[Decimal | float]) -> tuple[list[int], list[float]]:
    """Indices of the items by value, highest first, and the cumulative share of the total
    after each (the line of a Pareto chart)."""
    vals = [float(v) for v in values]
    order = sorted(range(len(vals)), key=lambda i: -vals[i])
    total = sum(vals)
    cum, run = [], 0.0
    for i in order:
        run += vals[i]
        cum.append(run / total if total > 0 else 0.0)
    return order, cum


def coefficient_of_variation(demand: ArrayLike, *, ddof: int = 0) -> NDArray[np.float64]:
    """Coefficient of variation of each row of a (parts x periods) demand array: standard
    deviation over the mean, population SD by default (``ddof=0``). NaN for rows with no
    demand."""
    d = np.atleast_2d(np.asarray(demand, dtype=float))
    mean = d.mean(axis=1)
    sd = d.std(axis=1, ddof=ddof) if d.shape[1] > ddof else np.full(d.shape[0], np.nan)
    with np.errstate(divide="ignore", invalid="ignore"):
        cv = np.where(mean > 0, sd / np.where(mean > 0, mean, 1.0), np.nan)
    return cv


def xyz_classes(demand: ArrayLike, *, x_max: float = 0.5, y_max: float = 1.0,
                ddof: int = 0) -> tuple[list[str], NDArray[np.float64]]:
    """XYZ class of each row of a (parts x months) demand array, and the CVs.

    X: CV <= ``x_max`` (steady), Y: CV <= ``y_max`` (varying), Z: above, or no demand at
    all in the window. Defaults 0.5 / 1.0 with the population SD: common practice.
    """
    if not 0 < x_max <= y_max:
        raise ValueError("need 0 < x_max <= y_max")
    cv = coefficient_of_variation(demand, ddof=ddof)
    out = ["Z" if math.isnan(c) or c > y_max else ("X" if c <= x_max else "Y") for c in cv]
    return out, cv


# ---------------------------------------------------------------------------- ageing


def add_months(day: date, months: int) -> date:
    """The same day ``months`` later (or earlier), clamped to the month's last day."""
    m = day.month - 1 + months
    y, m = day.year + m // 12, m % 12 + 1
    return date(y, m, min(day.day, calendar.monthrange(y, m)[1]))


def stock_status(on_hand: int, last_issue: date | None, first_in: date | None, as_of: date, *,
                 slow_months: int = 6, dead_months: int = 12) -> str | None:
    """``"dead"`` when stock is on hand and nothing was issued for ``dead_months``;
    ``"slow"`` for ``slow_months``; else ``None``.

    A part never issued is aged from its first arrival (``first_in``), so stock that came in
    last week is not called dead. Defaults 6 and 12 months as the month-end report asks
    (common practice).
    """
    if on_hand <= 0:
        return None
    since = last_issue or first_in
    if since is None:
        return None
    if since <= add_months(as_of, -dead_months):
        return "dead"
    if since <= add_months(as_of, -slow_months):
        return "slow"
    return None


def shelf_status(limit: date | None, as_of: date, *, warn_months: int = 6) -> str | None:
    """``"past"`` when the storage limit is before ``as_of``; ``"soon"`` when it falls within
    ``warn_months`` after it; else ``None`` (also for parts outside ISO 2230)."""
    if limit is None:
        return None
    if limit < as_of:
        return "past"
    if limit <= add_months(as_of, warn_months):
        return "soon"
    return None


# ---------------------------------------------------------------------------- reorder


def round_up_to_pack(qty: int, *, pack: int = 1, minimum: int = 0) -> int:
    """Order quantity: at least ``minimum``, in whole packs; 0 stays 0."""
    if qty <= 0:
        return 0
    pack = max(1, pack)
    qty = max(qty, minimum)
    return -(-qty // pack) * pack


def fallback_reorder(daily_usage: float, *, lead_days: float, review_days: float,
                     position: int, cover_days: float = 30.0, pack: int = 1,
                     minimum: int = 0) -> tuple[int, int]:
    """A stand-in (reorder point, suggested quantity) for when no order plan exists.

    Reorder point = usage over lead time plus one review period, rounded up
    (``ceil(d (L + R))``, a min/max rule without safety stock); when the inventory position
    (on hand plus on order) is at or below it, order up to the reorder point plus
    ``cover_days`` of usage, in whole packs and at least the minimum. Common practice; the
    planner's (s, S) levels replace this when a plan exists.
    """
    if daily_usage <= 0:
        return 0, 0
    rop = math.ceil(daily_usage * (lead_days + review_days) - 1e-9)
    if position > rop:
        return rop, 0
    target = math.ceil(rop + daily_usage * cover_days - 1e-9)
    return rop, round_up_to_pack(target - position, pack=pack, minimum=minimum)
