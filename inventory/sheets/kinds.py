"""The spreadsheets the shop imports, one schema per kind: ``history`` (service jobs with
the parts or kits they used), ``counts`` (shelf counts), ``receipts`` (deliveries) and
``catalog`` (part updates). Each column is defined once, with the headers other systems use
for it (aliases), its cell parser and a hint for fixing a bad value; the same definitions serve
imports, templates and error messages.

Dates are typed by the importer (their day/month order is settled per file), so the date
columns here only carry text.
"""

from __future__ import annotations

from decimal import Decimal
from typing import Any

from inventory.core.model import PartKind, ServiceLevel
from inventory.core.units import parse_length
from inventory.sheets import cells
from inventory.sheets.columns import Column, Schema

DEFAULT_LOCATION = "MAIN"
MAX_QTY = 1_000_000  # more in one row is a typing slip, and beyond what a database int holds


def short(parse, limit: int):
    """``parse`` and no more than ``limit`` characters (the column's size in the database)."""
    def check(value: Any) -> str:
        out = parse(value)
        if len(out) > limit:
            raise ValueError(f"expected at most {limit} characters, got {len(out)} "
                             f"({out[:24]!r}...)")
        return out
    check.__name__ = getattr(parse, "__name__", "short")
    return check


def at_most(parse, limit: int):
    """``parse`` and a number no larger than ``limit``."""
    def check(value: Any):
        out = parse(value)
        if out > limit:
            raise ValueError(f"expected {limit:,} or less, got {out:,}")
        return out
    check.__name__ = getattr(parse, "__name__", "at_most")
    return check


def service_level(text: str) -> str:
    """A service level code from what people type: ``lower leg``, ``air can``, ``damper``."""
    s = " ".join(str(text or "").lower().replace("_", " ").replace("-", " ").split())
    for level, words in SERVICE_WORDS.items():
        if s in words:
            return level
    for level, stems in SERVICE_STEMS.items():
        if any(stem in s for stem in stems):
            return level
    raise ValueError(f"expected a service level ({', '.join(ServiceLevel)}), got {text!r}")


SERVICE_WORDS: dict[str, set[str]] = {
    ServiceLevel.LOWER_LEG: {"lower leg", "lower legs", "lowers", "lower", "ll", "lls",
                             "lower leg service", "50h", "50 h", "50 hour", "50 hours", "basic"},
    ServiceLevel.AIR_SPRING: {"air spring", "air", "air can", "air shaft", "as", "air service",
                              "air spring service", "spring"},
    ServiceLevel.DAMPER: {"damper", "damper service", "cartridge", "dmp", "full", "full service",
                          "200h", "200 h", "200 hour", "200 hours"},
}
SERVICE_STEMS: dict[str, tuple[str, ...]] = {
    ServiceLevel.LOWER_LEG: ("lower",),
    ServiceLevel.AIR_SPRING: ("air",),
    ServiceLevel.DAMPER: ("damp", "cartridge"),
}


KINDS = ("history", "counts", "receipts", "catalog")

# --- the columns of each kind ----------------------------------------------------------------


def _qty(value: Any) -> int:
    n = cells.integer(value)
    if n <= 0:
        raise ValueError(f"expected a whole number above 0, got {n}"
                         + (" (a return or correction is a stock adjustment)" if n < 0 else ""))
    return n


def _hours(value: Any) -> int:
    s = str(value).strip().lower()
    for unit in ("hours", "hour", "hrs", "hr", "h"):
        if s.endswith(unit):
            s = s[: -len(unit)].strip()
            break
    try:
        f = cells.nonneg_number(s if not isinstance(value, int | float) else value)
    except ValueError:
        raise ValueError(f"expected ride hours, a number 0 or more, got {str(value)!r}") from None
    return int(f + 0.5)


def _service(value: Any) -> str:
    return service_level(cells.text(value))


def _length(value: Any) -> float:
    if isinstance(value, bool):
        raise ValueError(f"expected a length like 32, 32 mm or 1.26 in, got {value!r}")
    try:
        mm = parse_length(value if isinstance(value, int | float) else str(value).strip())
    except ValueError as exc:
        raise ValueError(f"expected a length like 32, 32 mm or 1.26 in, got {str(value)!r} "
                         f"({exc})") from None
    return round(mm, 4)


def _kind(value: Any) -> str:
    return str(cells.choice(*PartKind)(value))


C = Column
DATE = ("date",)
DATE_HINT = "write dates like 2026-03-14, 14/03/2026 or 14 Mar 2026, or use date cells"
QTY_HINT = "quantities are whole numbers above 0 (a return is a stock adjustment)"
LEN_HINT = "lengths are in mm unless a unit is given: 32, 32 mm, 31,5 or 1.26 in"
CODE_HINT = "add unknown parts to the catalog first (inventory import catalog)"
HISTORY = Schema("history", (
    C("job", short(cells.code, 32), aliases=(
        "job ref", "job no", "job number", "job id", "job #", "ref", "reference", "ticket",
        "ticket no", "work order", "wo", "wo number", "invoice", "invoice no", "job card",
        "jobcard", "order")),
    C("date", cells.text, required=True, aliases=(
        "job date", "service date", "day", "completed", "date in", "date out", "booked",
        "when", "done"), hint=DATE_HINT),
    C("fork", cells.text, required=True, aliases=(
        "fork model", "model", "fork family", "fork type", "suspension", "product", "unit",
        "bike fork", "fork name")),
    C("service", _service, required=True, aliases=(
        "service level", "level", "service type", "job type", "work done", "type", "work"),
      hint="service levels are lower_leg, air_spring and damper (lower leg, air can, damper)"),
    C("hours", at_most(_hours, 100_000), aliases=(
        "ride hours", "hrs", "hours ridden", "hours since service", "riding hours", "hours run"),
      hint="ride hours are a number like 55 or 55 h"),
    C("fork_ref", short(cells.code, 32), aliases=(
        "fork ref", "fork serial", "serial", "serial no", "serial number", "customer fork",
        "fork id")),
    C("item", short(cells.code, 64), aliases=(
        "part", "part code", "part no", "part number", "sku", "component", "item code",
        "article", "parts used")),
    C("kit", short(cells.code, 64), aliases=("kit code", "service kit", "kit used", "kit no")),
    C("qty", at_most(_qty, MAX_QTY), aliases=(
        "quantity", "units", "pcs", "pieces", "count", "number", "no used", "used", "amount"),
      hint=QTY_HINT),
))
COUNTS = Schema("counts", (
    C("date", cells.text, required=True, aliases=(
        "count date", "counted on", "stocktake date", "stock take date", "day"), hint=DATE_HINT),
    C("part", short(cells.code, 64), required=True, aliases=(
        "part code", "part no", "sku", "item", "item code", "code")),
    C("location", short(cells.code, 32), default=DEFAULT_LOCATION, aliases=(
        "loc", "bin", "store", "shelf", "place")),
    C("counted", at_most(cells.nonneg_int, 1_000_000_000), required=True, aliases=(
        "count", "qty", "quantity", "on shelf", "shelf qty", "stock", "physical", "counted qty"),
      hint="a count is a whole number, 0 or more"),
))
RECEIPTS = Schema("receipts", (
    C("date", cells.text, required=True, aliases=(
        "received", "receipt date", "delivered", "delivery date", "date received", "day"),
      hint=DATE_HINT),
    C("supplier", short(cells.code, 32), aliases=("vendor", "from", "supplier code")),
    C("part", short(cells.code, 64), required=True, aliases=(
        "part code", "part no", "sku", "item", "item code", "code")),
    C("qty", at_most(_qty, MAX_QTY), required=True, aliases=("quantity", "units", "received qty", "pcs"),
      hint=QTY_HINT),
    C("unit_cost", at_most(cells.money, Decimal("99999999")), aliases=(
        "unit cost", "cost", "price", "unit price", "cost each", "each"),
      hint="a unit cost is an amount like 0.35 or 0,35"),
    C("lot", short(cells.code, 48), aliases=("lot no", "lot number", "batch", "batch no")),
    C("cured", cells.quarter, aliases=(
        "cure date", "cure", "cure quarter", "vulcanised", "vulcanized"),
      hint="cure dates are quarters like 2026Q3 (or 3/26 as printed on the bag)"),
    C("location", short(cells.code, 32), default=DEFAULT_LOCATION, aliases=(
        "loc", "bin", "store", "shelf")),
    C("order_ref", short(cells.code, 64), aliases=(
        "order ref", "order", "po", "po number", "purchase order", "order no")),
))
CATALOG = Schema("catalog", (
    C("code", short(cells.code, 64), required=True, aliases=("part", "part code", "sku", "part no")),
    C("kind", _kind, aliases=("type", "part kind"),
      hint=f"part kinds are {', '.join(PartKind)}"),
    C("description", short(cells.text, 200), aliases=("desc", "name")),
    C("id_mm", _length, aliases=("id", "inner diameter", "inside diameter", "bore"),
      hint=LEN_HINT),
    C("od_mm", _length, aliases=("od", "outer diameter", "outside diameter"), hint=LEN_HINT),
    C("height_mm", _length, aliases=("height", "width", "axial width", "h"), hint=LEN_HINT),
    C("cs_mm", _length, aliases=("cs", "cross section", "cross-section", "section", "w"),
      hint=LEN_HINT),
    C("material", short(cells.text, 16), aliases=("polymer", "compound")),
    C("hardness", at_most(cells.positive_int, 100), aliases=("shore a", "shore", "duro", "durometer")),
    C("volume_cm3", cells.positive_number, aliases=("volume", "cc")),
    C("unit", cells.choice("each", "ml"), aliases=("uom",)),
    C("standard", short(cells.text, 48), aliases=("designation",)),
    C("notes", short(cells.text, 400)),
))
SCHEMAS = {"history": HISTORY, "counts": COUNTS, "receipts": RECEIPTS, "catalog": CATALOG}
EXAMPLES: dict[str, dict[str, Any]] = {
    "history": {"job": "J-1001", "date": "2026-03-14", "fork": "TR-34", "service": "lower_leg",
                "hours": 55, "fork_ref": "F-0001", "item": "", "kit": "K-TR34-LL", "qty": 1},
    "counts": {"date": "2026-03-31", "part": "OR-214", "location": "MAIN", "counted": 12},
    "receipts": {"date": "2026-03-14", "supplier": "SUP-A", "part": "OR-214", "qty": 20,
                 "unit_cost": "0.25", "lot": "L-2026-001", "cured": "2026Q1",
                 "location": "MAIN", "order_ref": "PO-1001"},
    "catalog": {"code": "OR-214", "kind": "o_ring", "description": "O-ring 24.99 x 3.53",
                "id_mm": "24.99 mm", "cs_mm": "3.53", "material": "NBR", "hardness": 70,
                "unit": "each"},
}
