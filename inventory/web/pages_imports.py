"""Imports: upload a file, preview it (rolled back), decide fork names, apply.
"""

from __future__ import annotations

from pathlib import Path

from starlette.concurrency import run_in_threadpool
from starlette.requests import Request
from starlette.responses import RedirectResponse, Response

from inventory.core.actor import acting_as
from inventory.core.errors import InventoryError
from inventory.web import auth
from inventory.web.forms import STALE_FORM, FormError, message_of, rows_field, text_field
from inventory.web.responses import page
from inventory.web.state import Web

IMPORT_KINDS = ("history", "receipts", "counts", "catalog")
MAX_UPLOAD = 20 * 1024 * 1024
DATE_ORDERS = {"": None, "dmy": "dmy", "mdy": "mdy"}
MAX_FORK_DECISIONS = 5000  # fork texts one import page can decide


def _upload_dir() -> Path:
    import tempfile

    d = Path(tempfile.gettempdir()) / "inventory-uploads"
    d.mkdir(mode=0o700, exist_ok=True)
    return d


#: An upload that was previewed but never applied is removed after this many hours.
UPLOAD_HOURS = 24


def _forget_upload(up: dict | None) -> None:
    """Remove one upload's folder (the file and its review workbook)."""
    import re
    import shutil

    token = str((up or {}).get("token", ""))
    if re.fullmatch(r"[0-9a-f]{16}", token):
        shutil.rmtree(_upload_dir() / token, ignore_errors=True)


def _sweep_uploads() -> None:
    """Remove upload folders older than :data:`UPLOAD_HOURS` (previews nobody applied)."""
    import shutil
    import time

    limit = time.time() - UPLOAD_HOURS * 3600
    for folder in _upload_dir().iterdir():
        try:
            if folder.is_dir() and folder.stat().st_mtime < limit:
                shutil.rmtree(folder, ignore_errors=True)
        except OSError:  # another worker removed it first
            continue


def _kinds() -> tuple[str, ...]:
    from inventory.history.service import KINDS

    return tuple(KINDS)


async def imports_page(request: Request, report: dict | None = None, errors: dict | None = None,
                       values: dict | None = None, status: int = 200,
                       forks: list[str] | None = None) -> Response:
    who = auth.require(request, "imports")
    if forks is None:
        web: Web = request.app.state.web

        def go(s):
            from inventory.history.service import fork_codes

            return fork_codes(s)
        forks = await web.read(go, who)
    return page(request, "imports.html", who, status=status, kinds=_kinds(), report=report,
                errors=errors or {}, values=values or {}, families=forks,
                upload=request.session.get("upload"), done=request.query_params.get("done"))


def _decisions(form, report_forks) -> dict[str, str]:
    out = {}
    for i in range(rows_field(form, "nforks", MAX_FORK_DECISIONS)):
        text, code = str(form.get(f"forktext-{i}") or ""), text_field(form, f"fork-{i}")
        if text and code:
            out[text] = code
    return out


async def _run_import(request: Request, who: dict, up: dict, form, *, apply: bool):
    """Preview (rolled back) or apply the uploaded file with the page's fork decisions."""
    web: Web = request.app.state.web
    decisions = _decisions(form, None) if form is not None else {}

    def go(s):
        from inventory.history.service import ImportSettings, fork_codes, import_deciding

        settings = ImportSettings(kind=up["kind"], date_order=up.get("order"),
                                  review=Path(up["path"]).with_suffix(".review.xlsx"))
        try:
            rep = import_deciding(s, up["path"], settings, apply=apply, forks=decisions)
            return rep.to_dict() | {"ok": rep.ok}, None, fork_codes(s)
        except InventoryError as exc:
            failed = getattr(exc, "report", None)
            d = failed.to_dict() | {"ok": False} if failed is not None else None
            return d, message_of(exc), fork_codes(s)

    if apply:
        return await web.write(go, who), decisions

    def dry():
        from sqlmodel import Session

        with acting_as(who["name"]), Session(web.engine) as s:
            try:
                return go(s)
            finally:
                s.rollback()
    return await run_in_threadpool(dry), decisions


async def imports_preview(request: Request) -> Response:
    import secrets

    who = auth.require(request, "imports")
    form = await request.form(max_part_size=MAX_UPLOAD)
    auth.check_csrf(request, form)
    values = {"kind": form.get("kind"), "order": form.get("order")}
    kind = text_field(form, "kind") or ""
    if kind not in _kinds():
        return await imports_page(request, errors={"kind": f"pick what the file holds "
                                                   f"({', '.join(_kinds())})"},
                                  values=values, status=400)
    order = str(form.get("order") or "")
    if order not in DATE_ORDERS:
        return await imports_page(request, errors={"order": "pick dmy, mdy or from the file"},
                                  values=values, status=400)
    upload = form.get("file")
    name = Path(getattr(upload, "filename", "") or "").name
    if not name:
        return await imports_page(request, errors={"file": "choose a .xlsx or .csv file"},
                                  values=values, status=400)
    if Path(name).suffix.lower() not in (".xlsx", ".csv"):
        return await imports_page(request, errors={"file": f"{name}: expected a .xlsx or "
                                                   ".csv file"}, values=values, status=400)
    data = await upload.read()
    if len(data) > MAX_UPLOAD:
        return await imports_page(request, errors={"file": f"{name} is larger than 20 MB"},
                                  values=values, status=400)
    _forget_upload(request.session.get("upload"))  # a new upload replaces this session's last
    _sweep_uploads()
    token = secrets.token_hex(8)
    folder = _upload_dir() / token
    folder.mkdir(mode=0o700)
    path = folder / name
    path.write_bytes(data)
    up = {"token": token, "path": str(path), "kind": kind, "order": DATE_ORDERS[order],
          "name": name}
    request.session["upload"] = up
    (rep, err, forks), _ = await _run_import(request, who, up, None, apply=False)
    return await imports_page(request, report=rep, errors={"file": err} if err and not rep
                              else {}, values=values, forks=forks,
                              status=200 if rep and rep["ok"] else 400)


async def imports_apply(request: Request) -> Response:
    who = auth.require(request, "imports")
    form = await request.form()
    auth.check_csrf(request, form)
    up = request.session.get("upload")
    if not up or up.get("token") != form.get("token") or not Path(up["path"]).exists():
        return await imports_page(request, errors={"file": "the uploaded file is gone: "
                                                   "upload it again"}, status=400)
    apply = form.get("action") == "apply"
    try:
        (rep, err, forks), decisions = await _run_import(request, who, up, form, apply=apply)
    except FormError:  # the fork decisions are hidden fields: a bad one is an altered page
        return await imports_page(request, errors={"file": STALE_FORM}, status=400)
    if apply and rep and not err:
        _forget_upload(request.session.pop("upload", None))
        from urllib.parse import quote

        return RedirectResponse("/imports?done=" + quote(
            f"applied {up['name']}: {rep.get('new', 0)} new, batch {rep.get('batch')}"
            if rep.get("applied") else f"{up['name']}: nothing new"), 303)
    return await imports_page(request, report=rep, forks=forks,
                              errors={"apply": err} if err else {},
                              values={"decisions": decisions},
                              status=200 if rep and rep.get("ok") and not err else 400)
