"""`inventory job ...`: record a service job at the bench, list jobs, show one."""

from __future__ import annotations

from datetime import date

import typer

from inventory.cli import options
from inventory.cli.common import console, print_json, print_table, reading, unit_of_work
from inventory.core.errors import InventoryError

app = typer.Typer(help="Record service jobs (stock is taken through the ledger) and look "
                       "them up.", no_args_is_help=True)



def say(text: str) -> None:
    """A line for people, never wrapped (paths and commands stay copyable)."""
    console.print(text, highlight=False, soft_wrap=True)

def parse_day(text: str | None, what: str = "--date", *, today: date | None = None) -> date:
    """A date typed on the command line; today when not given. Day/month numeric forms
    must be unambiguous (use ISO 2026-03-14)."""
    if not text:
        return today or date.today()
    if today == date.max:  # a filter (--from/--to), not a booking
        out = options.day(text, what)
    else:
        out = options.booking_day(text, what, today=today)
    assert out is not None
    return out


def parse_part(spec: str) -> tuple[str, int]:
    """``P=QTY`` (or ``P`` for one) from ``--part``."""
    code, sep, qty = spec.rpartition("=") if "=" in spec else (spec, "", "1")
    code = code.strip()
    if not code:
        raise InventoryError(f"bad --part {spec!r}: expected PART=QTY, e.g. OR-214=2")
    code = options.code(code, "--part", "part") or code
    return code, options.quantity(qty.strip(), f"--part {code}")


@app.command()
def add(ctx: typer.Context,
        day: str = typer.Option(None, "--date", help="Job date, e.g. 2026-03-14 (default today)."),
        fork: str = typer.Option(..., "--fork", help="Fork family code (or its name)."),
        service: str = typer.Option(..., "--service",
                                    help="Service level: lower_leg, air_spring or damper."),
        kits: list[str] = typer.Option([], "--kit", help="A kit used (repeatable)."),
        parts: list[str] = typer.Option([], "--part", help="PART=QTY used (repeatable)."),
        hours: int = typer.Option(None, "--hours", min=0, help="Ride hours since last service."),
        ref: str = typer.Option(None, "--ref", help="Job reference (default J<date>-<n>)."),
        fork_ref: str = typer.Option(None, "--fork-ref", help="Anonymous reference of the fork."),
        as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
        ) -> None:
    """Record a job and take its kits and parts from stock (oldest cure first), all or
    nothing. A kit not on hand is built from loose parts through its bill of materials."""
    from inventory.history import service as history

    d = parse_day(day)
    ref = options.code(ref, "--ref", "job ref")
    fork_ref = options.code(fork_ref, "--fork-ref", "job ref")
    try:
        level = history.service_level(service)
    except ValueError as exc:
        raise InventoryError(f"bad --service: {exc}") from None
    items = [(k, 1) for k in kits] + [parse_part(p) for p in parts]
    if not items:
        raise InventoryError("a job needs at least one --kit or --part",
                             hint="e.g. --kit K-TR34-LL or --part OR-214=2")
    with unit_of_work(ctx) as s:
        row, moves = history.add_job(s, history.JobEntry(fork, d, level, tuple(items), ref=ref,
                                                         hours=hours, fork_ref=fork_ref))
    if as_json:
        print_json(row.to_dict() | {"movements": [m.to_dict() for m in moves]})
        return
    say(f"recorded job {row.ref}: {row.day} {row.fork} {row.service}")
    _show_moves(moves)


def _show_moves(moves) -> None:
    print_table("Taken from stock", ["part", "location", "lot", "cured", "qty"],
                [[m.part, m.location, m.lot, m.cured or "", -m.qty] for m in moves],
                right=("qty",))


@app.command("list")
def list_(ctx: typer.Context,
          since: str = typer.Option(None, "--from", help="First date, e.g. 2026-01-01."),
          until: str = typer.Option(None, "--to", help="Last date."),
          fork: str = typer.Option(None, "--fork", help="Only this fork family."),
          limit: int = typer.Option(50, "--limit", min=1, help="At most this many (newest)."),
          as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table."),
          ) -> None:
    """Jobs, newest first, with what each used."""
    from inventory.history import service as history

    start = parse_day(since, "--from", today=date.max) if since else None
    end = parse_day(until, "--to", today=date.max) if until else None
    with reading(ctx) as s:
        jobs = history.list_jobs(s, since=start, until=end, fork=fork, limit=limit)
    if as_json:
        print_json([j.to_dict() for j in jobs])
        return
    print_table("Service jobs", ["job", "date", "fork", "service", "hours", "used"],
                [[j.ref, j.day, j.fork, j.service, "" if j.hours is None else j.hours,
                  (f"voided {j.voided_at:%Y-%m-%d} " if j.voided_at else "")
                  + ", ".join(f"{q} x {p}" for p, q in j.lines)] for j in jobs],
                right=("hours",), caption=f"{len(jobs)} job(s)")


@app.command()
def show(ctx: typer.Context,
         ref: str = typer.Argument(..., help="Job reference."),
         as_json: bool = typer.Option(False, "--json", help="Print JSON instead of a table.")) -> None:
    """One job: what it used and the lots its parts came from."""
    from inventory.history import service as history

    with reading(ctx) as s:
        row, moves = history.job_detail(s, ref)
    if as_json:
        print_json(row.to_dict() | {"movements": [m.to_dict() for m in moves]})
        return
    say(f"job {row.ref}: {row.day} {row.fork} {row.service}"
        + (f", {row.hours} h" if row.hours is not None else "")
        + (f", fork {row.fork_ref}" if row.fork_ref else "")
        + (f"; voided {row.voided_at:%Y-%m-%d}: {row.void_reason}" if row.voided_at else ""))
    print_table("Job lines", ["part", "qty"], [[p, q] for p, q in row.lines], right=("qty",))
    _show_moves(moves)
