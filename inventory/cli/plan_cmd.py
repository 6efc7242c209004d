"""`inventory plan` and `inventory order ...`: the replenishment plan and its purchase orders.

Thin: parse, call :func:`inventory.ordering.service.make_plan` or :mod:`inventory.ordering.orders`,
render (rich tables for people, ``--json`` for programs, a workbook with ``--xlsx``).
"""

from __future__ import annotations

from datetime import date
from decimal import Decimal
from pathlib import Path

import typer

from inventory.cli import options
from inventory.cli.common import print_json, print_table, reading, say, unit_of_work
from inventory.core.choices import DEFAULT_KIT_MODE, KitMode
from inventory.core.errors import InventoryError

order_app = typer.Typer(help="Purchase orders: record them from a plan, list them.",
                        no_args_is_help=True)


def _day(text: str | None, what: str) -> date | None:
    """A plan or order date (:func:`inventory.core.parse.day`)."""
    return options.day(text, what)


def _budget(text: str | None, what: str = "--budget") -> Decimal | None:
    """An amount (:func:`inventory.core.parse.money`: ``1,5`` is 1.5 here as everywhere)."""
    return options.amount(text, what)


def parse_rate(text: str, what: str = "--fill-rate") -> float:
    """A fill rate as 0.95, 95 or 95% (:func:`inventory.core.parse.fill_rate`)."""
    rate = options.fill_rate(text, what)
    assert rate is not None
    return rate


def _targets(items: list[str]) -> dict[str, float]:
    out = {}
    for item in items:
        part, sep, rate = item.partition("=")
        if not sep or not part.strip():
            raise InventoryError(f"bad --target {item!r}: expected PART=RATE, e.g. OR-214=0.99")
        out[part.strip()] = parse_rate(rate, f"--target {part.strip()}")
    return out


def plan(ctx: typer.Context,
         day: str = typer.Option(None, "--date", help="Plan as of this date (default today)."),
         season_start: str = typer.Option(None, "--season-start",
                                          help="Pre-season plan: the season starts on this date."),
         budget: str = typer.Option(None, "--budget", help="Spend at most this much."),
         fill_rate: str = typer.Option(None, "--fill-rate",
                                       help="One fill-rate target for every part (0.95 or 95%); "
                                            "default per ABC class: A 98%, B 95%, C 90%."),
         target: list[str] = typer.Option([], "--target",  # noqa: B008
                                          help="Fill rate of one part, PART=RATE (repeat)."),
         supplier: list[str] = typer.Option([], "--supplier",  # noqa: B008
                                            help="Only this supplier (repeat)."),
         part: list[str] = typer.Option([], "--part", help="Only this part (repeat)."),  # noqa: B008
         kits: KitMode = typer.Option(DEFAULT_KIT_MODE, "--kits", case_sensitive=False,
                                  help="Kits: 'stock' assembles from spare loose stock, "
                                       "'cheaper' also buys loose seals when cheaper, "
                                       "'whole' always buys kits."),
         line_cost: str = typer.Option(None, "--line-cost",
                                       help="Cost of one order line; switches cheap parts to "
                                            "a reorder point with an EOQ."),
         xlsx: Path = typer.Option(None, "--xlsx", help="Write the plan workbook here."),
         as_json: bool = typer.Option(False, "--json", help="Print the plan as JSON."),
         ) -> None:
    """Purchase orders per supplier, every line with its reason."""
    from inventory.ordering import service  # the planner loads scipy: only when it runs

    cost = _budget(line_cost, "--line-cost") if line_cost is not None else None
    as_of = _day(day, "--date") or date.today()
    rate = parse_rate(fill_rate) if fill_rate is not None else None
    with reading(ctx) as s:
        spec = service.PlanSpec(as_of, season_start=_day(season_start, "--season-start"),
                                budget=_budget(budget), fill_rate=rate,
                                part_targets=_targets(target), parts=part or (),
                                suppliers=supplier or ())
        result = service.plan_command(s, spec, kit_mode=kits.value, line_cost=cost, xlsx=xlsx)
    if as_json:
        print_json(service.plan_to_dict(result))
        return
    _render(result)
    if xlsx is not None:
        say(f"workbook: {xlsx}")


def _render(result) -> None:
    from inventory.ordering.service import short_reason, unit_suffix

    for o in result.orders:
        rows = [[ln.part, f"{ln.qty}{unit_suffix(ln.unit)}",
                 f"{ln.packs} x {ln.pack_size}{unit_suffix(ln.unit)}", f"{ln.unit_cost}",
                 f"{ln.value:,.2f}", short_reason(ln)] for ln in o.lines]
        print_table(f"{o.supplier}: order by {o.order_by}, delivery about {o.arrival}",
                    ["part", "qty", "packs", "unit cost", "value", "why"], rows,
                    right=("qty", "unit cost", "value"),
                    caption=f"total {o.total:,.2f} {o.currency}"
                            + (f"; {o.note}" if o.note else ""))
    if result.uncovered:
        print_table("Not covered", ["part", "supplier", "units", "why"],
                    [[u.part, u.supplier or "", u.need, u.reason] for u in result.uncovered],
                    right=("units",))
    budget = "" if result.budget_limit is None else \
        (f"; budget {result.budget_limit:,.2f}, spent {result.budget_spent:,.2f} "
         f"({result.fill_before_budget:.1%} fill without the budget)")
    say(f"{len(result.orders)} order(s), total {result.total:,.2f}; expected fill "
        f"{result.expected_fill:.1%} (target {result.service_target:.1%}){budget}. "
        "Reasons per line: --json or --xlsx.")


@order_app.command("create")
def create(ctx: typer.Context,
           from_plan: Path = typer.Option(..., "--from-plan",
                                          help="The plan workbook (.xlsx) or its JSON."),
           day: str = typer.Option(None, "--date", help="Order date (default today)."),
           as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
           ) -> None:
    """Record a plan's purchase orders as open orders (quantities now on order)."""
    from inventory.ordering import service

    created = _day(day, "--date") or date.today()
    with unit_of_work(ctx) as s:
        made = service.orders_from_plan_file(s, from_plan, created=created)
    if as_json:
        print_json([m.to_dict() for m in made])
        return
    for m in made:
        say(f"{m.ref}: {m.supplier}, {m.lines} line(s), {m.total:,.2f}, expected {m.expected}")


@order_app.command("list")
def list_cmd(ctx: typer.Context,
             status: str = typer.Option("open", "--status", help="open, closed, cancelled or all."),
             as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
             ) -> None:
    """Purchase orders with what is received so far."""
    from inventory.ordering import service

    with reading(ctx) as s:
        rows = service.list_orders(s, status=None if status == "all" else status)
    if as_json:
        print_json([r.to_dict() for r in rows])
        return
    print_table("Purchase orders", ["ref", "supplier", "created", "expected", "status", "lines",
                                    "received", "total"],
                [[r.ref, r.supplier, r.created, r.expected or "", r.status, r.lines,
                  f"{r.received}/{r.ordered}", f"{r.total:,.2f}"] for r in rows],
                right=("lines", "received", "total"), caption=f"{len(rows)} order(s)")


def register(app: typer.Typer) -> None:
    """Add ``plan`` and ``order`` to the main command."""
    app.command("plan")(plan)
    app.add_typer(order_app, name="order")
