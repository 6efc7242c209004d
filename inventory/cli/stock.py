"""`inventory stock ...`: the ledger at the counter."""

from __future__ import annotations

from datetime import datetime
from decimal import Decimal

import typer

from inventory.cli import options
from inventory.cli.common import print_json, print_table, reading, say, unit_of_work
from inventory.core.names import DEFAULT_LOCATION

SIGNED = {"ignore_unknown_options": True}  # lets "-2" through as a quantity

app = typer.Typer(help="Receive, issue, adjust, count and move stock; show what is on hand.",
                  no_args_is_help=True)


def when(day: str | None) -> datetime | None:
    """Midday UTC of a booking date (so a booking lands in that day's month): any form
    :func:`inventory.core.parse.booking_day` reads, from 2000-01-01 to today + a day."""
    return options.booking_ts(day, "--date")


def _money(text: str | None, confirmed: bool = False) -> Decimal | None:
    """A unit cost (:func:`inventory.core.parse.unit_cost`): above the ceiling only with
    ``--cost-ok``."""
    return options.cost(text, "--cost", confirmed=confirmed)


COST_OK_HELP = ("Accept a unit cost above the sanity ceiling (10,000, or "
                "$INVENTORY_MAX_UNIT_COST).")


def _report(movements, verb: str, part: str) -> None:
    for mv in movements:
        say(f"{verb} {abs(mv.qty)} x {part} (lot id {mv.lot_id}, movement {mv.id})")


@app.command(context_settings=SIGNED)
def receive(ctx: typer.Context,
            part: str = typer.Argument(..., help="Part code."),
            qty: int = typer.Argument(..., help="Units received (ml for oil)."),
            cost: str = typer.Option(None, "--cost", help="Unit cost; defaults to the last lot's."),
            lot: str = typer.Option(None, "--lot", help="Lot code; an existing lot is topped up."),
            cured: str = typer.Option(None, "--cured", help="Cure quarter, e.g. 2026Q3 or 3/26."),
            location: str = typer.Option(DEFAULT_LOCATION, "--location", help="Location code."),
            order: str = typer.Option(None, "--order", help="Purchase order reference: receives "
                                      "against its line and closes it when complete."),
            tolerance: float = typer.Option(0.05, "--tolerance",
                                            help="Over-delivery accepted against --order, as a "
                                                 "fraction of the line (0.05 = 5%)."),
            day: str = typer.Option(None, "--date", help="Booking date (default today)."),
            cost_ok: bool = typer.Option(False, "--cost-ok", help=COST_OK_HELP),
            ) -> None:
    """Book a delivery into stock."""
    from inventory.stock import service

    qty = options.quantity(qty, "QTY")
    unit_cost, ts = _money(cost, cost_ok), when(day)
    lot = options.code(lot, "--lot", "lot")
    cured = options.cure(cured, "--cured", received=ts.date() if ts else None)
    order = options.code(order, "--order", "order")
    tolerance = options.percent(tolerance, "--tolerance", high=1.0)
    with unit_of_work(ctx) as s:
        if order:
            from inventory.ordering.service import receive_against

            got = receive_against(s, order, service.Receipt(
                part, qty, unit_cost, lot=lot, cured=cured, location=location, ts=ts), tolerance)
            _report([got.movement], "received", part)
            say(got.summary)
            return
        mv = service.book_receipt(s, service.Receipt(part, qty, unit_cost, lot=lot, cured=cured,
                                                     location=location, ts=ts))
        _report([mv], "received", part)


@app.command(context_settings=SIGNED)
def issue(ctx: typer.Context,
          part: str = typer.Argument(..., help="Part code."),
          qty: int = typer.Argument(..., help="Units to take out."),
          job: str = typer.Option(None, "--job", help="Job reference the parts went to."),
          location: str = typer.Option(None, "--location", help="Only from this location."),
          day: str = typer.Option(None, "--date", help="Booking date (default today)."),
          inspected: bool = typer.Option(
              False, "--inspected",
              help="Lots past their ISO 2230 storage limit were inspected and passed: use them "
                   "(the extension is recorded on the lot)."),
          ) -> None:
    """Take stock out, oldest cure quarter first, from what was on hand on the booking date;
    lots past their storage limit are skipped unless --inspected."""
    from inventory.stock import service

    qty, job = options.quantity(qty, "QTY"), options.code(job, "--job", "job")
    with unit_of_work(ctx) as s:
        moves, notes = service.book_issue(s, service.Issue(part, qty, location=location,
                                                           reference=job, ts=when(day),
                                                           inspected=inspected))
    _report(moves, "issued", part)
    _notes(notes)


def _notes(notes: list[str]) -> None:
    for line in notes:
        say(f"note: {line}")
    if any("storage limit" in n for n in notes):
        say("caution: rubber past its storage limit must pass inspection before it is fitted; "
            "for seals in pressurised air springs follow the maker's service data")


@app.command(context_settings=SIGNED)
def reverse(ctx: typer.Context,
            movement: int = typer.Argument(..., help="Id of the movement booked by mistake."),
            reason: str = typer.Option(..., "--reason", help="Why it is reversed (recorded)."),
            day: str = typer.Option(None, "--date", help="Booking date (default today)."),
            ) -> None:
    """Reverse a movement booked by mistake with a new movement that points at it."""
    from inventory.stock import service

    with unit_of_work(ctx) as s:
        mv = service.reverse(s, movement, reason=reason, ts=when(day))
    say(f"reversed movement {movement}: {mv.qty:+d} booked as movement {mv.id}")


@app.command("return", context_settings=SIGNED)
def return_(ctx: typer.Context,
            part: str = typer.Argument(..., help="Part code."),
            qty: int = typer.Argument(..., help="Unused units coming back."),
            job: str = typer.Option(..., "--job", help="Job reference the parts went to."),
            day: str = typer.Option(None, "--date", help="Booking date (default today)."),
            ) -> None:
    """Put unused parts from a job back into the lots they came from (net usage drops)."""
    from inventory.stock import service

    qty, job = options.quantity(qty, "QTY"), options.code(job, "--job", "job")
    with unit_of_work(ctx) as s:
        got = service.return_from_job(s, job, part, qty, ts=when(day))
    _report(got.movements, "returned", part)
    if got.note:
        say(f"note: {got.note}")


@app.command("void-job")
def void_job(ctx: typer.Context,
             job: str = typer.Argument(..., help="Job reference."),
             reason: str = typer.Option(..., "--reason", help="Why the job is voided (recorded)."),
             day: str = typer.Option(None, "--date", help="Booking date (default today)."),
             ) -> None:
    """Void a job: everything it took (less returns) goes back with new movements."""
    from inventory.stock import service

    job = options.code(job, "JOB", "job")
    with unit_of_work(ctx) as s:
        got = service.void_job(s, job, reason=reason, ts=when(day))
    say(f"voided job {job}: {sum(m.qty for m in got.movements)} unit(s) back in "
        f"{len(got.movements)} movement(s)")
    if got.note:
        say(f"note: {got.note}")


@app.command(context_settings=SIGNED)
def adjust(ctx: typer.Context,
           part: str = typer.Argument(...),
           qty: int = typer.Argument(..., help="Signed correction, e.g. -2 or 3."),
           reason: str = typer.Option(..., "--reason", help="Why (damaged, found, ...)."),
           location: str = typer.Option(DEFAULT_LOCATION, "--location", help="Location code."),
           cost: str = typer.Option(None, "--cost", help="Unit cost of units added."),
           day: str = typer.Option(None, "--date", help="Booking date (default today)."),
           cost_ok: bool = typer.Option(False, "--cost-ok", help=COST_OK_HELP),
           ) -> None:
    """Correct stock with a reason (a new movement; nothing is edited)."""
    from inventory.stock import service

    qty = options.quantity(qty, "QTY", signed=True)
    reason = options.code(reason, "--reason", "reason")
    unit_cost, ts = _money(cost, cost_ok), when(day)
    with unit_of_work(ctx) as s:
        _report(service.book_adjustment(s, service.Adjustment(part, qty, reason, location=location,
                                                              ts=ts, unit_cost=unit_cost)),
                "adjusted", part)


@app.command(context_settings=SIGNED)
def count(ctx: typer.Context,
          part: str = typer.Argument(...),
          counted: int = typer.Argument(..., help="Units on the shelf."),
          location: str = typer.Option(DEFAULT_LOCATION, "--location", help="Location code."),
          day: str = typer.Option(None, "--date", help="Booking date (default today)."),
          ) -> None:
    """Record a shelf count; the variance is booked as a movement."""
    from inventory.stock import service

    counted = options.quantity(counted, "COUNTED", zero=True)
    with unit_of_work(ctx) as s:
        moves = service.book_count(s, service.Count(part, counted, location=location,
                                                    ts=when(day)))
        if not moves:
            say(f"{part}: count agrees with the ledger ({counted})")
        for mv in moves:
            say(f"{part}: variance {mv.qty:+d} booked (movement {mv.id})")


@app.command(context_settings=SIGNED)
def move(ctx: typer.Context,
         part: str = typer.Argument(...),
         qty: int = typer.Argument(...),
         from_: str = typer.Option(..., "--from", help="Location to take from."),
         to: str = typer.Option(..., "--to", help="Location to put into."),
         day: str = typer.Option(None, "--date", help="Booking date (default today)."),
         ) -> None:
    """Move stock between locations; lots keep their identity."""
    from inventory.stock import service

    qty = options.quantity(qty, "QTY")
    with unit_of_work(ctx) as s:
        moves = service.book_move(s, part, qty, from_location=from_, to_location=to, ts=when(day))
        say(f"moved {qty} x {part} from {from_.upper()} to {to.upper()} "
            f"({len(moves) // 2} lot(s))")


@app.command("on-hand")
def on_hand(ctx: typer.Context,
            part: str = typer.Option(None, "--part", help="Only this part."),
            location: str = typer.Option(None, "--location", help="Only this location."),
            by_lot: bool = typer.Option(False, "--by-lot", help="One line per lot."),
            as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
            ) -> None:
    """Stock on hand, summed from the ledger."""
    from inventory.stock import service

    with reading(ctx) as s:
        lines = service.on_hand(s, part=part, location=location, by_lot=by_lot)
    if as_json:
        print_json([ln.to_dict() for ln in lines])
        return
    header = ["part", "location"] + (["lot", "cured"] if by_lot else []) + ["on hand", "value"]
    rows = [[ln.part, ln.location] + ([ln.lot, ln.cured or ""] if by_lot else [])
            + [ln.on_hand, f"{ln.value:,.2f}"] for ln in lines]
    total = sum((ln.value for ln in lines), Decimal(0))
    print_table("Stock on hand", header, rows, right=("on hand", "value"),
                caption=f"{len(lines)} line(s), value {total:,.2f}")
