"""Plain records of the order planner: what goes in (supplier terms, supply options, stock,
the forecast, options) and what comes out (lines with their reasons, orders per supplier,
what could not be covered). See :mod:`inventory.ordering.plan` for the method."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import asdict, dataclass, field
from datetime import date
from decimal import Decimal
from types import MappingProxyType
from typing import Any, Literal

import numpy as np
from numpy.typing import NDArray

from inventory.core.model import KitSpec
from inventory.forecast.distributions import DemandDistribution
from inventory.ordering.calendar import DAYS_PER_MONTH
from inventory.ordering.kits import KitDecision, KitMode

#: Fill-rate targets per ABC class (A 98 %, B 95 %, C 90 %; common practice).
DEFAULT_CLASS_TARGETS: Mapping[str, float] = MappingProxyType({"A": 0.98, "B": 0.95, "C": 0.90})


@dataclass(frozen=True, slots=True)
class SupplierTerms:
    """A supplier as the planner sees it. ``order_cost`` per order line overrides the plan's
    ``line_order_cost``; ``peak_lead_time_days`` is the lead time in the season (default:
    lead time + ``peak_lead_sd`` spreads); ``landed_surcharge`` is a fraction added to unit
    costs for freight or duty."""

    code: str
    name: str = ""
    lead_time_days: float = 7.0
    lead_time_sd_days: float = 0.0
    min_order_value: Decimal = Decimal("0")
    order_cycle_days: float = 7.0
    currency: str = "EUR"
    order_cost: Decimal | None = None
    peak_lead_time_days: float | None = None
    landed_surcharge: Decimal = Decimal("0")


@dataclass(frozen=True, slots=True)
class SupplyOption:
    """One supplier item: price, pack, minimum, an optional lead time of its own, and how old
    (days since the end of its cure quarter) this supplier's rubber usually is on arrival."""

    part: str
    supplier: str
    unit_cost: Decimal
    pack_size: int = 1
    min_order_qty: int = 1
    lead_time_days: float | None = None
    supplier_code: str = ""
    cure_age_days: float | None = None


@dataclass(frozen=True, slots=True)
class PartStock:
    """Stock of one part: ``on_hand`` counts only usable units; ``expired`` units sit in lots
    past their ISO 2230 storage period and are not counted; ``on_order`` is still due on
    open purchase orders."""

    part: str
    kind: str = ""
    description: str = ""
    material: str | None = None
    on_hand: int = 0
    expired: int = 0
    on_order: int = 0
    unit: str = "each"  # the part's unit of measure (grease and oil: ml)


@dataclass(frozen=True)
class DemandForecast:
    """The forecast the planner needs, per part (rows in the order of ``codes``).

    ``monthly_mean[i, t]``: expected demand in calendar month ``month0 + t``;
    ``dist``: the per-month demand distribution from the forecaster (its dispersion is used;
    the mean over each cover comes from ``monthly_mean``); ``seen``: the part had demand in
    its history (parts that never moved are not stocked by the plan).
    """

    codes: tuple[str, ...]
    month0: date
    monthly_mean: NDArray[np.float64]
    dist: DemandDistribution
    seen: NDArray[np.bool_] | None = None


@dataclass(frozen=True)
class PlanRequest:
    as_of: date
    forecast: DemandForecast
    stock: Mapping[str, PartStock]
    options: Sequence[SupplyOption]
    suppliers: Mapping[str, SupplierTerms]
    kits: Sequence[KitSpec] = ()


@dataclass(frozen=True)
class PlanOptions:
    """Knobs of the planner, with their defaults.

    - Service: ``class_targets`` fill rate per ABC class; ``part_targets`` per part (wins);
      ``fill_rate`` one target for everything (wins over classes). ``service``: "fill"
      (units filled from the shelf over units demanded, P2) or "cycle" (probability of no
      stockout per cycle, P1). ``pooling``: "class" sets levels so each class's POOLED
      expected fill meets its target (:func:`inventory.ordering.policy.pooled_order_up_to_levels`,
      uniform), "part" makes every part meet it alone. ``abc_shares``: cumulative shares of
      annual usage value that end classes A and B (80 % / 95 %, common practice).
    - Pre-season: ``season_start`` (the need date); the season lead time is the supplier's
      ``peak_lead_time_days`` or lead time + ``peak_lead_sd`` spreads (kits go on backorder
      before the season, REFERENCE.md 9, common practice).
    - Money: ``budget`` (None = no limit), spent in at most ``budget_steps`` increments per
      line after its minimum (packs are grouped beyond that).
    - Policy: periodic review with an order-up-to level by default. Where ordering costs
      matter, i.e. a ``line_order_cost`` is given (the cost of writing, receiving and booking
      one order line; 0 = not counted, the default) and the EOQ at ``carrying_rate`` (25 % a
      year, as the textbook example) exceeds ``eoq_ratio`` times the demand per review
      period, a reorder point with the EOQ as order quantity; the reorder point is at least
      ``min_reorder_point`` (0: no planned backorders, common practice).
    - Shelf life: a new lot is assumed cured ``cure_age_days`` before arrival when the
      history does not say (half a year, common practice) and must be used up
      ``shelf_margin_days`` before its ISO 2230 limit (half a year, common practice).
    - Kits: ``kit_mode`` and ``assembly_cost`` (see :mod:`inventory.ordering.kits`).
    - ``late_units``: a line is late when the expected demand between the need date and the
      earliest delivery reaches this many units (half a unit).
    - ``topup_months``: a top-up to a supplier's minimum never raises a part above this many
      months of expected demand. ``horizon_months``: forecast months used for shelf-life caps.
    """

    class_targets: Mapping[str, float] = field(default_factory=lambda: dict(DEFAULT_CLASS_TARGETS))
    part_targets: Mapping[str, float] = field(default_factory=dict)
    fill_rate: float | None = None
    service: Literal["fill", "cycle"] = "fill"
    pooling: Literal["class", "part"] = "class"
    abc_shares: tuple[float, float] = (0.80, 0.95)
    season_start: date | None = None
    peak_lead_sd: float = 2.0
    budget: Decimal | None = None
    budget_steps: int = 12
    line_order_cost: Decimal = Decimal("0")
    carrying_rate: float = 0.25
    eoq_ratio: float = 1.0
    min_reorder_point: int = 0
    cure_age_days: float = 182.0
    shelf_margin_days: float = 182.0
    kit_mode: KitMode = "stock"
    assembly_cost: Decimal = Decimal("0")
    topup_months: float = 12.0
    late_units: float = 0.5
    horizon_months: int = 132
    days_per_month: float = DAYS_PER_MONTH


@dataclass(frozen=True, slots=True)
class PlanLine:
    """One part on the plan (ordered or not) with every figure its reason names.

    Quantities in the part's unit; money ``Decimal``; dates ``date``. The need that is
    rounded is ``raw_need - assembled + for_kits``: a kit's ``assembled`` kits come from loose
    seals instead; ``for_kits`` loose units go into kits assembled from this plan; ``to_kits``
    spare units already held go into kits. ``caps`` names what changed the rounded need:
    "shelf_life", "min_forced", "top_up", "budget", "late".
    """

    part: str
    description: str
    supplier: str
    supplier_code: str
    policy: str  # "order-up-to", "reorder-point", "pre-season"
    abc: str
    fill_target: float
    unit_cost: Decimal
    landed_cost: Decimal
    pack_size: int
    min_order_qty: int
    qty: int
    packs: int
    value: Decimal
    # the reasoning, as numbers
    forecast_cover: float
    cover_days: float
    lead_days: float
    lead_sd_days: float
    review_days: float
    lead_quantile: float
    level: float
    order_quantity: int
    eoq: float
    on_hand: int
    expired: int
    on_order: int
    position: int
    raw_need: int
    for_kits: int
    assembled: int
    to_kits: int
    rounded: int
    minimum: int
    shelf_cap: int | None
    shelf_limit: date | None
    cure_assumed: str | None
    caps: tuple[str, ...]
    topped_up: int
    budget_cut: int
    expected_fill: float
    fill_before_caps: float
    need_date: date | None
    arrival: date
    order_by: date
    build_ahead: float
    supplier_choice: str
    reason: str = ""
    # what the sentence also names: the policy in words, the season's lead time, the
    # supplier's minimum order value and currency
    policy_text: str = ""
    peak_days: float | None = None
    min_order_value: Decimal = Decimal("0")
    currency: str = "EUR"
    unit: str = "each"  # the part's unit: every quantity of the line is in it

    def to_dict(self) -> dict[str, Any]:
        d = asdict(self)
        for k, v in d.items():
            if isinstance(v, Decimal):
                d[k] = str(v)
            elif isinstance(v, date):
                d[k] = v.isoformat()
            elif isinstance(v, float):
                d[k] = round(v, 4)
            elif isinstance(v, tuple):
                d[k] = list(v)
        return d


@dataclass(frozen=True)
class SupplierOrder:
    supplier: str
    name: str
    currency: str
    order_by: date
    arrival: date
    lines: tuple[PlanLine, ...]
    total: Decimal
    min_order_value: Decimal
    note: str = ""


@dataclass(frozen=True, slots=True)
class Uncovered:
    """Demand the plan could not cover, and why."""

    part: str
    need: int
    reason: str
    supplier: str | None = None


@dataclass(frozen=True)
class Plan:
    as_of: date
    season_start: date | None
    orders: tuple[SupplierOrder, ...]
    lines: tuple[PlanLine, ...]
    uncovered: tuple[Uncovered, ...]
    kits: tuple[KitDecision, ...]
    service_target: float
    expected_fill: float
    fill_before_budget: float
    budget_limit: Decimal | None
    budget_spent: Decimal
    options: PlanOptions

    @property
    def total(self) -> Decimal:
        return sum((o.total for o in self.orders), Decimal("0"))

    @property
    def identity(self) -> str:
        """See :func:`plan_identity`; written into the plan's JSON and workbook."""
        return plan_identity(self.as_of, [(o.supplier, ln.part, ln.qty, ln.unit_cost)
                                          for o in self.orders for ln in o.lines])


@dataclass(frozen=True, slots=True)
class DraftLine:
    part: str
    qty: int
    unit_cost: Decimal | None
    reason: str = ""


@dataclass(frozen=True, slots=True)
class DraftOrder:
    """A purchase order to record, read back from a plan workbook's PO sheet or the plan
    JSON; ``source`` says where (file and sheet) for error messages."""

    supplier: str
    order_by: date | None
    expected: date | None
    lines: tuple[DraftLine, ...]
    source: str = ""
    plan_date: date | None = None  # the plan's date, part of its identity


def plan_identity(plan_date: date | None,
                  lines: Sequence[tuple[str, str, int, Decimal | str | float | None]]) -> str:
    """A plan's identity: SHA-256 of its date and its order lines (supplier, part, quantity,
    unit cost to 4 places), order-independent. The same plan read back from its JSON or its
    workbook has the same identity; a workbook whose quantities or costs were edited has
    another. Lines of quantity 0 are not orders and do not count."""
    import hashlib

    canon = []
    for supplier, part, qty, cost in lines:
        if int(qty) <= 0:
            continue
        c = "" if cost in (None, "") else str(Decimal(str(cost)).quantize(Decimal("0.0001")))
        canon.append(f"{str(supplier).strip()}\t{str(part).strip()}\t{int(qty)}\t{c}")
    text = (plan_date.isoformat() if plan_date else "") + "\n" + "\n".join(sorted(canon))
    return hashlib.sha256(text.encode("utf-8")).hexdigest()


def drafts_identity(drafts: Sequence[DraftOrder]) -> str:
    """:func:`plan_identity` of the orders read back from a plan file."""
    day = next((d.plan_date for d in drafts if d.plan_date is not None), None)
    return plan_identity(day, [(d.supplier, ln.part, ln.qty, ln.unit_cost)
                               for d in drafts for ln in d.lines])


@dataclass(frozen=True, slots=True)
class ReorderAdvice:
    """A part's reorder point and the suggested order quantity, with where they came from
    (``"plan"`` or a description of the fallback rule): what the planner hands the month-end
    report's reorder list (:func:`inventory.ordering.service.reorder_source`)."""

    part: str
    reorder_point: int
    suggested_qty: int
    basis: str
