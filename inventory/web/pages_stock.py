"""The stock page: on hand by lot, the booking forms (issue, count, receive, adjust, move)
and count mode.
"""

from __future__ import annotations

from starlette.exceptions import HTTPException
from starlette.requests import Request
from starlette.responses import RedirectResponse, Response

from inventory.core.errors import InventoryError
from inventory.web import auth
from inventory.web.forms import (
    STALE_FORM,
    FormError,
    field_of,
    int_field,
    message_of,
    money_field,
    rows_field,
    text_field,
)
from inventory.web.responses import page
from inventory.web.state import Web

STOCK_PAGE_LINES = 400
COUNT_SHEET_LINES = 5000  # lines a count sheet may carry before it is booked


def stock_default_location(locations: list[str]) -> str:
    """The ledger's default location (MAIN) when the shop has it, so a count or receipt is
    not booked to whichever location sorts first."""
    from inventory.stock.service import DEFAULT_LOCATION

    return DEFAULT_LOCATION if DEFAULT_LOCATION in locations else (locations or [""])[0]
STOCK_ACTIONS = {"issue": "issue", "count": "count", "receive": "receive", "adjust": "adjust",
                 "move": "move"}


async def stock_page(request: Request, errors: dict | None = None, values: dict | None = None,
                     status: int = 200, done: str | None = None,
                     sheet: list | None = None) -> Response:
    who = auth.require(request, "stock_view")
    web: Web = request.app.state.web
    part = request.query_params.get("part") or None

    def go(s):
        from inventory.stock import service as stock

        try:
            lines = stock.on_hand(s, part=part, by_lot=True)
        except InventoryError as exc:
            return [], stock.locations(s), message_of(exc)
        return lines, stock.locations(s), None
    lines, locations, err = await web.read(go, who)
    total_lines = len(lines)
    lines = lines[:STOCK_PAGE_LINES]  # a page stays small on a tablet; filter by part for more

    def limits(s):
        from inventory.stock import service as stock

        return stock.storage_limits(s, lines)
    limits_ = await web.read(limits, who) if lines else []
    from inventory.bench.service import CAUTION

    errs = dict(errors or {})
    if err:
        errs["filter"] = err
    return page(request, "stock.html", who, status=status if not err else 404, lines=lines,
                total_lines=total_lines, limits=limits_,
                locations=locations, errors=errs, part=part,
                values={f"{a}-location": stock_default_location(locations)
                        for a in ("count", "receive", "adjust", "new")} | (values or {}),
                done=done or request.query_params.get("done"),
                count_mode=sheet is not None or request.query_params.get("mode") == "count",
                sheet=sheet or [], caution=CAUTION,
                may=lambda r: auth.may(request, r))


async def count_sheet(request: Request) -> Response:
    """Count mode: walk the shelves adding counts to a sheet kept in the page itself (hidden
    fields, nothing written), then book every variance at the end in one transaction."""
    who = auth.require(request, "count")
    web: Web = request.app.state.web
    form = await request.form()
    auth.check_csrf(request, form)
    rows = []
    try:
        for i in range(rows_field(form, "n", COUNT_SHEET_LINES)):
            part, loc = text_field(form, f"c{i}-part"), text_field(form, f"c{i}-location")
            if not part or not loc:
                raise FormError("sheet", STALE_FORM)
            rows.append({"part": part, "location": loc,
                         "qty": int_field(form, f"c{i}-qty", minimum=0)})
    except FormError:  # the sheet lives in hidden fields: a bad one means an altered page
        return await stock_page(request, {"sheet": STALE_FORM}, None, 400, sheet=[])
    errors: dict[str, str] = {}
    values = {k: v for k, v in form.items() if k.startswith("new-")}
    if form.get("action") == "add":
        part = text_field(form, "new-part")
        loc = text_field(form, "new-location") or "MAIN"
        try:
            if not part:
                raise FormError("new-part", "give a part code")
            qty = int_field(form, "new-qty", minimum=0)

            def check(s):
                from inventory.stock import service as stock

                return sum(ln.on_hand for ln in stock.on_hand(s, part=part, location=loc))
            ledger_qty = await web.read(check, who)
        except FormError as exc:
            errors[exc.field if exc.field.startswith("new-") else f"new-{exc.field}"] = \
                exc.message
        except InventoryError as exc:
            errors["new-part"] = message_of(exc)
        else:
            rows = [r for r in rows if (r["part"], r["location"]) != (part, loc)]
            rows.append({"part": part, "location": loc, "qty": qty, "ledger": ledger_qty})
            values = {"new-location": loc}
    elif form.get("action") == "book":
        def book(s):
            from inventory.stock import service as stock

            return [(r["part"], r["location"], stock.count(s, r["part"], r["qty"],
                                                           location=r["location"]))
                    for r in rows]
        try:
            booked = await web.write(book, who)
        except InventoryError as exc:
            errors["sheet"] = f"nothing booked: {message_of(exc)}"
        else:
            from urllib.parse import quote

            moved = sum(1 for _, _, v in booked if v)
            return RedirectResponse("/stock?mode=count&done=" + quote(
                f"{len(booked)} count(s) booked, {moved} with a variance"), 303)

    def ledger_of(s):
        from inventory.stock import service as stock

        return [sum(ln.on_hand for ln in stock.on_hand(s, part=r["part"],
                                                       location=r["location"]))
                for r in rows]
    for r, n in zip(rows, await web.read(ledger_of, who), strict=True):
        r["ledger"] = n
    return await stock_page(request, errors, values, 400 if errors else 200, sheet=rows)


async def stock_action(request: Request) -> Response:
    action = request.path_params["action"]
    if action not in STOCK_ACTIONS:
        raise HTTPException(404)
    who = auth.require(request, action)
    web: Web = request.app.state.web
    form = await request.form()
    auth.check_csrf(request, form)
    fields = {"part": "part", "qty": "qty", "location": "location", "reason": "reason",
              "cost": "cost", "order": "order", "--from": "from", "--to": "to"}

    def go(s):
        from inventory.stock import service as stock

        part = text_field(form, "part")
        if not part:
            raise FormError("part", "give a part code")
        loc = text_field(form, "location") or stock.DEFAULT_LOCATION
        if action == "issue":
            n = stock.issue(s, part, int_field(form, "qty", minimum=1),
                            location=text_field(form, "location"), reference=text_field(form, "job"))
            return f"issued {n} x {part}"
        if action == "count":
            v = stock.count(s, part, int_field(form, "qty", minimum=0), location=loc)
            return f"{part} at {loc}: count agrees" if v == 0 else \
                f"{part} at {loc}: variance {v:+d} booked"
        if action == "receive":
            qty = int_field(form, "qty", minimum=1)
            cost, cured, order = money_field(form, "cost"), text_field(form, "cured"), text_field(form, "order")
            if order:
                from inventory.ordering.service import receive_order

                return receive_order(s, order, part, qty, unit_cost=cost, cured=cured,
                                     location=loc)
            return stock.receive(s, part, qty, unit_cost=cost, cured=cured, location=loc)
        if action == "adjust":
            reason = text_field(form, "reason")
            if not reason:
                raise FormError("reason", "an adjustment needs a reason")
            n = stock.adjust(s, part, int_field(form, "qty", signed=True), reason=reason,
                             location=loc)
            return f"adjusted {part} by {n:+d}"
        src, dst = text_field(form, "from"), text_field(form, "to")
        if not src:
            raise FormError("from", "pick the location to take from")
        if not dst:
            raise FormError("to", "pick the location to put into")
        n = stock.move(s, part, int_field(form, "qty", minimum=1), from_location=src,
                       to_location=dst)
        return f"moved {n} x {part} from {src} to {dst}"
    values = {f"{action}-{k}": v for k, v in form.items() if k != "csrf"}
    try:
        done = await web.write(go, who)
    except FormError as exc:
        return await stock_page(request, {f"{action}-{exc.field}": exc.message}, values, 400)
    except InventoryError as exc:
        return await stock_page(request, {f"{action}-{field_of(exc, 'part', fields)}":
                                          message_of(exc)}, values, 400)
    mode = "&mode=count" if action == "count" else ""
    from urllib.parse import quote

    return RedirectResponse(f"/stock?done={quote(done)}{mode}", 303)
