"""Month end: the month's page, its HTML report and workbook, closing a month.
"""

from __future__ import annotations

from datetime import date

from starlette.exceptions import HTTPException
from starlette.requests import Request
from starlette.responses import HTMLResponse, RedirectResponse, Response

from inventory.core import parse
from inventory.core.errors import InventoryError
from inventory.web import auth
from inventory.web.forms import FormError, message_of, text_field
from inventory.web.responses import page, workbook_download, written_bytes
from inventory.web.state import Web


def month_of(s, text: str | None):
    """The month asked for, read by the one month parser (``2026-11``, ``11/2026``,
    ``Nov 2026``, as on the command line); none: the latest complete month."""
    from inventory.monthend.service import Month, latest_complete_month

    if not text:
        return latest_complete_month(s, date.today())
    try:
        return Month(*parse.month(text, what="month"))
    except ValueError as exc:
        raise FormError("month", str(exc)) from None


async def month_page(request: Request, errors: dict | None = None,
                     status: int = 200) -> Response:
    who = auth.require(request, "month_end")
    web: Web = request.app.state.web
    q = request.query_params

    def go(s):
        from inventory.monthend import service as monthend

        try:
            month = month_of(s, q.get("month"))
        except FormError as exc:
            return None, None, {exc.field: exc.message}
        closed = None
        if hasattr(monthend, "is_closed"):
            closed = monthend.is_closed(s, month.label)
        return month, closed, {}
    month, closed, errs = await web.read(go, who)
    errs = (errors or {}) | errs
    from inventory.monthend import service as monthend

    return page(request, "month_end.html", who, status=400 if errs else status, month=month,
                closed=closed, errors=errs, values=dict(q),
                can_close=hasattr(monthend, "close_month") and auth.may(request,
                                                                         "month_close"),
                done=q.get("done"))


async def month_report(request: Request) -> Response:
    who = auth.require(request, "month_end")
    web: Web = request.app.state.web
    label = request.path_params["month"]

    def go(s):
        from inventory.monthend.service import month_html

        return month_html(s, month_of(s, label), today=date.today())
    try:
        html = await web.read(go, who)
    except FormError as exc:
        raise HTTPException(404, exc.message) from None
    return HTMLResponse(html)


async def month_xlsx(request: Request) -> Response:
    who = auth.require(request, "month_end")
    web: Web = request.app.state.web
    label = request.path_params["month"]

    def go(s):
        from inventory.monthend.service import write_month_end

        month = month_of(s, label)
        _, data = written_bytes(
            lambda path: write_month_end(s, month, today=date.today(), xlsx=path),
            f"stock-{month.label}.xlsx")
        return month.label, data
    try:
        name, data = await web.read(go, who)
    except FormError as exc:
        raise HTTPException(404, exc.message) from None
    return workbook_download(data, f"stock-{name}.xlsx")


async def month_close(request: Request) -> Response:
    who = auth.require(request, "month_close")
    web: Web = request.app.state.web
    form = await request.form()
    auth.check_csrf(request, form)
    from inventory.monthend import service as monthend

    def go(s):
        month = month_of(s, text_field(form, "month"))
        monthend.close_month(s, month.label, today=date.today(), user=who["name"])
        return month.label
    try:
        label = await web.write(go, who)
    except FormError as exc:
        return await month_page(request, {exc.field: exc.message}, 400)
    except InventoryError as exc:
        return await month_page(request, {"close": message_of(exc)}, 400)
    return RedirectResponse(f"/month-end?month={label}&done=closed%20{label}", 303)
