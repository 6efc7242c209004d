"""How the web face answers: the page templates (with their filters and the navigation a
role sees), JSON and workbook downloads.
"""

from __future__ import annotations

import json
from collections.abc import Callable
from datetime import date, datetime
from decimal import Decimal
from pathlib import Path
from typing import Any, TypeVar

from starlette.requests import Request
from starlette.responses import HTMLResponse, Response
from starlette.templating import Jinja2Templates

from inventory.ordering.service import unit_suffix
from inventory.web import auth

T = TypeVar("T")

HERE = Path(__file__).parent
templates = Jinja2Templates(directory=str(HERE / "templates"))


def _size(row: dict, unit: str = "mm") -> str:
    """``24.99 x 3.53`` for a ring (inside x section), ``31.20/42.10/10.50`` otherwise."""
    from inventory.core.units import format_length

    def f(v):
        return "-" if v is None else format_length(v, unit, with_unit=False)
    if row.get("cs_mm") is not None and row.get("kind") in ("o_ring", "x_ring"):
        return f"{f(row.get('id_mm'))} x {f(row['cs_mm'])}"
    return "/".join(f(row.get(k)) for k in ("id_mm", "od_mm", "height_mm"))


def _num(v, unit: str = "") -> str:
    import math

    if v is None or (isinstance(v, float) and math.isnan(v)):
        return "-"
    if isinstance(v, float):
        text = "inf" if math.isinf(v) else (f"{v:.3f}" if unit == "mm" else f"{v:.2f}")
        return f"{text} {unit}".strip()
    return f"{v} {unit}".strip()


templates.env.filters["size"] = _size
templates.env.filters["num"] = _num
templates.env.filters["unit_suffix"] = unit_suffix  # " ml" after quantities in ml


NAV = [("bench", "/bench", "Bench", "bench"), ("stock", "/stock", "Stock", "stock_view"),
       ("jobs", "/jobs", "Jobs", "jobs"), ("imports", "/imports", "Imports", "imports"),
       ("plan", "/plan", "Plan", "plan"), ("month-end", "/month-end", "Month end", "month_end")]


def _json_default(o: Any) -> Any:
    if isinstance(o, Decimal):
        return str(o)
    if isinstance(o, (date, datetime)):
        return o.isoformat()
    if hasattr(o, "to_dict"):
        return o.to_dict()
    raise TypeError(f"not JSON: {type(o).__name__}")


def json_response(data: Any, status: int = 200) -> Response:
    return Response(json.dumps(data, default=_json_default, ensure_ascii=False), status,
                    media_type="application/json")


def written_bytes(write: Callable[[Path], T], name: str) -> tuple[T, bytes]:
    """What ``write(path)`` returns and the bytes it put in a file called ``name``, inside a
    temporary folder removed afterwards (the writers take a path; a download needs bytes)."""
    import tempfile

    with tempfile.TemporaryDirectory(prefix="inventory-download-") as tmp:
        path = Path(tmp) / name
        result = write(path)
        return result, path.read_bytes()


def workbook_download(data: bytes, filename: str) -> Response:
    """A workbook sent as a download, its file name reduced to safe characters."""
    safe = "".join(ch if ch.isalnum() or ch in "-_." else "_" for ch in filename)
    return Response(data, media_type="application/vnd.openxmlformats-officedocument."
                    "spreadsheetml.sheet",
                    headers={"content-disposition": f'attachment; filename="{safe}"'})


def page(request: Request, name: str, who: dict | None, status: int = 200,
         **ctx) -> HTMLResponse:
    nav = [(key, href, label) for key, href, label, right in NAV
           if who and right in auth.RIGHTS.get(who["role"], frozenset())]
    return templates.TemplateResponse(request, name, {
        "who": who, "nav": nav, "csrf": auth.csrf_token(request) if who else "",
        "errors": ctx.pop("errors", {}), "values": ctx.pop("values", {}), **ctx},
        status_code=status)
