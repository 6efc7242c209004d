"""The replenishment plan: the plan page, forecast charts, purchase orders (create, download).
"""

from __future__ import annotations

from datetime import date
from pathlib import Path

from starlette.exceptions import HTTPException
from starlette.requests import Request
from starlette.responses import RedirectResponse, Response

from inventory.core.errors import InventoryError
from inventory.web import auth
from inventory.web.forms import (
    FormError,
    day_field,
    field_of,
    int_field,
    message_of,
    money_field,
    text_field,
)
from inventory.web.responses import page, workbook_download, written_bytes
from inventory.web.state import Web


def plan_dict(s, q) -> dict:
    from inventory.ordering.service import PlanSpec, make_plan, plan_to_dict

    as_of = day_field(q.get("date"), "date") or date.today()
    season = day_field(q.get("season_start"), "season_start")
    return plan_to_dict(make_plan(s, PlanSpec(as_of, season_start=season)))


async def plan_page(request: Request, errors: dict | None = None, status: int = 200) -> Response:
    who = auth.require(request, "plan")
    web: Web = request.app.state.web
    q = dict(request.query_params)

    def go(s):
        from inventory.ordering.service import open_orders

        orders = open_orders(s)
        if not q.get("date") and not q.get("season_start"):
            return None, orders, {}
        try:
            return plan_dict(s, q), orders, {}
        except FormError as exc:
            return None, orders, {exc.field: exc.message}
        except InventoryError as exc:
            return None, orders, {field_of(exc, "season_start", {"season start":
                                                                 "season_start"}):
                                  message_of(exc)}
    plan, orders, errs = await web.read(go, who)
    errs = (errors or {}) | errs
    return page(request, "plan.html", who, status=400 if errs else status, plan=plan,
                orders=orders, values=q, errors=errs, done=request.query_params.get("done"))


# A chart PNG is about 65 KB (measured on the demo's kits), about 87 KB as base64 inside the
# page: two per page keep a charts page under the 200 KB transferred; the rest are on
# the next pages.
CHARTS_PER_PAGE = 2


def _draw(report, shown: list) -> list[str]:
    """The PNG charts of ``shown`` as base64 text for ``data:`` images: drawn into a
    temporary folder that is removed before the page is sent, so nothing stays on disk."""
    import base64
    import tempfile

    from inventory.forecast.service import write_outputs

    with tempfile.TemporaryDirectory(prefix="inventory-charts-") as tmp:
        paths = write_outputs(report, shown, charts=Path(tmp), defaults=False)
        return [base64.b64encode(Path(p).read_bytes()).decode("ascii") for p in paths]


async def plan_charts(request: Request) -> Response:
    """Forecast charts (history, forecast, 10-90 % range) of the parts in the plan (or, with
    ``by=kit`` / ``by=family``, the busiest kits / fork families), drawn in one forecast run
    and sent inside the page (no image files are kept on the server)."""
    who = auth.require(request, "plan")
    web: Web = request.app.state.web
    q = dict(request.query_params)
    by = q.get("by") if q.get("by") in ("family", "kit") else "part"

    def go(s):
        from inventory.forecast.service import ForecastFiles, ForecastRequest, forecast_command

        as_of = day_field(q.get("date"), "date") or date.today()
        codes = []
        if by == "part":
            plan = plan_dict(s, q)
            codes = sorted({ln["part"] for o in plan["orders"] for ln in o["lines"]})
        try:
            report, chosen, _ = forecast_command(s, ForecastRequest(today=as_of, by=by),
                                                 ForecastFiles(top=0 if codes else 12,
                                                               defaults=False))
        except InventoryError as exc:
            return [], (message_of(exc), 1)
        known = {x.code: x for x in report.series}
        chosen = [known[c] for c in codes if c in known] or chosen
        pages = max(1, -(-len(chosen) // CHARTS_PER_PAGE))
        shown = chosen[(min(at, pages) - 1) * CHARTS_PER_PAGE:][:CHARTS_PER_PAGE]
        return list(zip([x.code for x in shown], _draw(report, shown), strict=True)), \
            (None, pages)
    try:
        at = max(1, int(q.get("page") or 1))
    except ValueError:
        at = 1
    try:
        charts, (err, pages) = await web.read(go, who)
    except FormError as exc:
        return await plan_page(request, {exc.field: exc.message}, 400)
    return page(request, "plan_charts.html", who, charts=charts, error=err,
                values=q, by=by, at=min(at, pages), pages=pages)


async def plan_order_xlsx(request: Request) -> Response:
    """One purchase order as a workbook (header and lines), for the manager."""
    who = auth.require(request, "orders")
    web: Web = request.app.state.web
    ref = request.path_params["ref"]

    def go(s):
        from inventory.ordering.service import write_order_file

        detail, data = written_bytes(lambda path: write_order_file(s, ref, path), "order.xlsx")
        return detail["ref"], data
    try:
        name, data = await web.read(go, who)
    except InventoryError as exc:
        raise HTTPException(404, message_of(exc)) from None
    return workbook_download(data, f"order-{name}.xlsx")


async def plan_orders(request: Request) -> Response:
    who = auth.require(request, "orders")
    web: Web = request.app.state.web
    form = await request.form()
    auth.check_csrf(request, form)

    def go(s):
        from inventory.ordering.service import record_orders

        n = int_field(form, "lines", minimum=0)
        lines, dates = [], {}
        for i in range(n):
            sup, part = text_field(form, f"supplier-{i}"), text_field(form, f"part-{i}")
            if not sup or not part:
                raise FormError(f"qty-{i}", "this line lost its supplier or part: reload")
            qty = int_field(form, f"qty-{i}", minimum=0)
            lines.append((sup, part, qty, money_field(form, f"cost-{i}"),
                          str(form.get(f"reason-{i}") or "")[:400]))
            dates[sup] = (day_field(text_field(form, f"order_by-{i}"), f"qty-{i}"),
                          day_field(text_field(form, f"expected-{i}"), f"qty-{i}"))
        made = record_orders(s, lines, created=date.today(), dates=dates)
        return ", ".join(o.ref for o in made)
    try:
        refs = await web.write(go, who)
    except FormError as exc:
        return await plan_page(request, {exc.field: exc.message}, 400)
    except InventoryError as exc:
        return await plan_page(request, {"orders": message_of(exc)}, 400)
    from urllib.parse import quote

    return RedirectResponse(f"/plan?done={quote('created ' + refs)}", 303)
