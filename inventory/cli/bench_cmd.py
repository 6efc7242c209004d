"""Bench lookup commands: ``inventory match``, ``inventory fit``, ``inventory compat`` and
``inventory parts find``; :func:`inventory.demo.tour.bench_tour` shows them on the demo shop.

Thin commands: parse the options (:mod:`inventory.bench.service`), call one function,
render a rich table or ``--json``. Every match and fit output ends with the one-line
caution (:data:`inventory.bench.fit.CAUTION`).
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import TYPE_CHECKING

import typer

from inventory.cli.common import console, plain_reading, print_json, print_table, reading, say
from inventory.cli.match_view import (
    driver,
    flags,
    match_table,
    material_text,
    size_text,
    stock_text,
)
from inventory.core.errors import InventoryError
from inventory.core.units import format_length

if TYPE_CHECKING:  # the bench loads numpy: imported by the commands that need it
    from inventory.bench import service as svc
    from inventory.bench.service import FitResult

parts_app = typer.Typer(help="Look parts up in the shop's catalog.", no_args_is_help=True)

UNITS = ("mm", "in")


def _unit(text: str) -> str:
    unit = text.strip().lower()
    if unit not in UNITS:
        raise InventoryError(f"--unit must be mm or in, got {text!r}")
    return unit


def _len(mm: float | None, unit: str) -> str:
    return "" if mm is None else format_length(mm, unit, with_unit=False)


def _say_caution() -> None:
    """The caution as one line, never wrapped (the last line of every match and fit)."""
    from inventory.bench.service import CAUTION

    console.print(CAUTION, highlight=False, markup=False, soft_wrap=True)


# ----------------------------------------------------------------------------- match

def render_match(result: svc.MatchResult, unit: str) -> None:
    """The ranked candidates as a table, then the caution line."""
    req = result.request
    seat = req.seat
    if result.mode == "fitting":
        assert seat is not None
        title = f"Parts that fit {seat.fork} {seat.seat} ({seat.part_kind})"
    else:
        dims = ", ".join(f"{name} {format_length(v, unit)}"
                         for name, v in req.query.dims().items())
        where = f" in {seat.fork} {seat.seat}" if seat else ""
        tol = req.tolerance
        tol_text = (f"{format_length(tol.abs_mm, unit)}"
                    + (f" + {tol.rel * 100:g} %" if tol.rel else ""))
        title = f"Candidates for {dims}{where} (tolerance {tol_text})"
    columns: dict[str, list[str]] = {name: [] for name in (
        "#", "part", "kind", f"size {unit}", "material", "score", "driven by", "stock",
        "verdict", "notes")}
    for n, r in enumerate(result.rows, start=1):
        values = {"#": str(n), "part": r.get("part") or f"{r['designation']}\n(std)",
                  "kind": r["kind"], f"size {unit}": size_text(r, unit),
                  "material": material_text(r),
                  "score": f"{r['score']:.2f}" if r.get("score") is not None else "",
                  "driven by": driver(r), "stock": stock_text(r),
                  "verdict": r.get("verdict", ""), "notes": flags(r)}
        for name, value in values.items():
            columns[name].append(value)
    if result.mode != "match":
        del columns["score"], columns["driven by"]
    if not seat:
        del columns["verdict"]
    # each line of the caption explains a column; it goes when its column is left out
    caption = {"score": "score: sum over dimensions of deviation / tolerance, plus kind and "
                        "material penalties (lower is closer)",
               "stock": "std = standard size, orderable, not stocked"}
    if any(r.get("material_note") for r in result.rows):
        caption["material"] = ("! = polymer unsuited to the usual medium of the kind (ranked "
                               "after the others)")
    table, footnotes = match_table(title, columns, console.width, caption=caption)
    console.print(table)
    for line in footnotes:
        console.print(line, highlight=False, markup=False)
    if not result.rows:
        say("no candidates")
    _say_caution()


def match(ctx: typer.Context,
          kind: str = typer.Option(None, "--kind", help="Seal kind, e.g. o_ring, dust_wiper."),
          id_: str = typer.Option(None, "--id", help="Inside diameter, e.g. 24.99, 1.26in."),
          od: str = typer.Option(None, "--od", help="Outside diameter."),
          height: str = typer.Option(None, "--height", help="Height (axial width)."),
          cs: str = typer.Option(None, "--cs", help="Cross-section of a round or X ring."),
          tol: str = typer.Option(None, "--tol", help="Fixed tolerance per dimension "
                                                      "(default 0.15 mm + 1.5 %, for a "
                                                      "caliper on a used seal)."),
          material: str = typer.Option(None, "--material", help="Wanted polymer, e.g. NBR."),
          hardness: float = typer.Option(None, "--hardness",
                                         help="Reference hardness, Shore A (adds the "
                                              "hardness check)."),
          hardness_tol: float = typer.Option(None, "--hardness-tol",
                                             help="Hardness band, +/- Shore A (default 5)."),
          fork: str = typer.Option(None, "--fork", help="Fork family (with --seat)."),
          seat: str = typer.Option(None, "--seat", help="Seat in that fork family."),
          limit: int = typer.Option(None, "--limit", help="Candidates per source (stock, "
                                                          "standard); default 6."),
          no_standard: bool = typer.Option(False, "--no-standard",
                                           help="Leave out the standard O-ring series."),
          unit: str = typer.Option("mm", "--unit", help="mm or in: how lengths are shown, "
                                                        "and read when typed bare."),
          as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    """Rank the shop's parts and the standard sizes against caliper readings; with --fork
    and --seat, give each a fit verdict (no dimensions: every part that fits the seat)."""
    from inventory.bench import service as svc

    unit = _unit(unit)
    if limit is not None and limit < 1:
        raise InventoryError(f"--limit must be 1 or more, got {limit}")
    form = svc.MatchForm(id_=id_, od=od, height=height, cs=cs, kind=kind, material=material,
                         tol=tol, hardness=hardness, hardness_tol=hardness_tol, fork=fork,
                         seat=seat, limit=limit, standard=not no_standard, unit=unit)
    if form.has_seat:  # the seat's verdicts come from the fit rules, over the arrays
        with reading(ctx) as s:
            result = svc.match_parts(s, form)
    else:  # readings only: the database finds the candidates (no ORM, no numpy)
        with plain_reading(ctx) as reader:
            result = svc.match_readings(reader, form)
    if as_json:
        print_json(result.to_dict())
        return
    render_match(result, unit)


# ------------------------------------------------------------------------------- fit

def _value(v, unit: str = "") -> str:
    if v is None:
        return "-"
    if isinstance(v, float):
        if math.isinf(v):
            return "inf"
        if math.isnan(v):
            return "-"
        text = f"{v:.3f}" if unit == "mm" else f"{v:.2f}" if abs(v) < 1000 else f"{v:.0f}"
        return f"{text} {unit}".strip()
    return str(v)


def _value_and_range(c) -> str:
    """The nominal value, and under it the range over the tolerances when there is one."""
    value = _value(c.value, c.unit)
    rng = c.range_text()
    return f"{value}\n({rng})" if rng else value


def render_fit(result: FitResult) -> None:
    rows = [[c.name, _value_and_range(c), c.allowed, str(c.status),
             c.note, c.source] for c in result.checks]
    print_table(f"{result.part} in {result.fork} {result.seat}",
                ["check", "value", "allowed", "status", "note", "source"], rows)
    say(f"verdict: {str(result.verdict).upper()}")
    _say_caution()


def _numbers(result: FitResult) -> str:
    return "; ".join(f"{c.name} {_value(c.value, c.unit)}" for c in result.checks
                     if c.name not in ("kind", "material"))


def render_fit_everywhere(part: str, results: list[FitResult], seats_total: int) -> None:
    rows = [[r.fork, r.seat, str(r.verdict), _numbers(r)] for r in results]
    print_table(f"Seats where {part} fits ({len(results)} of {seats_total} seats of its kind)",
                ["fork", "seat", "verdict", "numbers"], rows)
    if not rows:
        say(f"{part} fits no seat of the fork families on file")
    _say_caution()


def fit_command(ctx: typer.Context,
                part: str = typer.Argument(..., help="Part code or standard designation "
                                                     "(AS568-214, 'ISO3601 31.5x3.55')."),
                fork: str = typer.Option(None, "--fork", help="Fork family."),
                seat: str = typer.Option(None, "--seat", help="Seat in that fork family."),
                hardness: float = typer.Option(None, "--hardness",
                                               help="Reference hardness, Shore A."),
                hardness_tol: float = typer.Option(None, "--hardness-tol",
                                                   help="Hardness band, +/- Shore A "
                                                        "(default 5)."),
                show_all: bool = typer.Option(False, "--all",
                                              help="Also list the seats where it fails."),
                as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    """Will PART work in a seat? With --fork and --seat: every check with its numbers and
    source. Alone (or with --fork only): every seat where it fits."""
    from inventory.bench import service as svc
    from inventory.bench.service import CAUTION, FitResult, FitRules

    rules = svc.hardness_rules(FitRules(), hardness_tol)
    ref = svc.check_hardness(hardness)
    with reading(ctx) as s:
        result = svc.fit_part(s, part, fork=fork, seat=seat, rules=rules,
                              reference_shore_a=ref, include_fail=show_all)
    if isinstance(result, FitResult):
        if as_json:
            print_json(result.to_dict())
            return
        render_fit(result)
        return
    if as_json:
        print_json({"part": result.part, "seats": [_without_caution(r) for r in result.results],
                    "caution": CAUTION})
        return
    render_fit_everywhere(result.part, result.results, result.seats_checked)


def _without_caution(r: FitResult) -> dict:
    d = r.to_dict()
    d.pop("caution")
    return d


# ---------------------------------------------------------------------------- compat

def compat(ctx: typer.Context,
           kind: str = typer.Option(None, "--kind", help="Only seats of this seal kind."),
           xlsx: Path = typer.Option(None, "--xlsx", help="Write the workbook here."),
           standard: bool = typer.Option(False, "--standard",
                                         help="Add the standard O-ring series as columns."),
           as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    """Every seat of every fork family against every part of a kind that goes there,
    computed by the fit rules: a table, --json, or a workbook (--xlsx)."""
    from inventory.bench import service as svc
    from inventory.bench.service import sheet_title

    with reading(ctx) as s:
        report, path = svc.compat_matrix(s, kind=kind, standard=standard, xlsx=xlsx)
    if path is not None:
        if not as_json:
            say(f"wrote {path}: " + ", ".join(f"{sheet_title(b.kind)} {len(b.seats)} x "
                                              f"{len(b.parts)}" for b in report.blocks))
    if as_json:
        print_json(report.to_dict())
        return
    if xlsx is None:
        for b in report.blocks:
            rows = []
            for i, seat in enumerate(b.seats):
                hits = b.fitting(i)
                rows.append([seat.fork, seat.seat, ", ".join(hits["pass"]) or "-",
                             ", ".join(hits["marginal"]) or "-"])
            print_table(f"{sheet_title(b.kind)} seats ({len(b.parts)} parts checked)",
                        ["fork", "seat", "fits", "marginal"], rows)
    _say_caution()


# ------------------------------------------------------------------------ parts find

@parts_app.command("find")
def parts_find(ctx: typer.Context,
               text: list[str] = typer.Argument(..., help='Words and sizes, e.g. "34 wiper", '
                                                          '"od 41", "x-ring 25".'),
               limit: int = typer.Option(10, "--limit", help="Most hits shown."),
               unit: str = typer.Option("mm", "--unit", help="mm or in."),
               as_json: bool = typer.Option(False, "--json", help="Print JSON.")) -> None:
    """Fuzzy search over part codes, descriptions and dimensions."""
    from inventory.bench import service as svc

    unit = _unit(unit)
    query = " ".join(text)
    with reading(ctx) as s:  # stock is read per hit shown, inside the read
        out = svc.find_parts(s, query, limit=limit, unit=unit)
    if as_json:
        print_json({"query": query, "hits": out})
        return
    rows = [[h["part"], h["kind"], h["description"], _len(h["id_mm"], unit),
             _len(h["od_mm"], unit), _len(h["height_mm"], unit), _len(h["cs_mm"], unit),
             h["on_hand"], f"{h['score']:.0f}", "; ".join(h["matched"])] for h in out]
    print_table(f"Parts matching {query!r}", ["part", "kind", "description", f"id {unit}",
                                               f"od {unit}", f"height {unit}", f"cs {unit}",
                                               "on hand", "score", "matched"], rows,
                right=("on hand", "score"))
    if not rows:
        say(f"no part matches {query!r}")


def register(app: typer.Typer) -> None:
    """Add ``match``, ``fit``, ``compat`` and the ``parts`` group to the root app."""
    app.command("match")(match)
    app.command("fit")(fit_command)
    app.command("compat")(compat)
    app.add_typer(parts_app, name="parts")


__all__ = ["compat", "fit_command", "match", "parts_app", "register"]
