"""The month-end workbook and HTML page: what a real spreadsheet program shows (LibreOffice
Calc, headless), the charts read back with openpyxl, the styling, and the page's images."""

from __future__ import annotations

import base64
import csv
import os
import re
import shutil
import subprocess
from datetime import UTC, date, datetime
from decimal import Decimal

import pytest
from openpyxl import load_workbook
from openpyxl.chart import BarChart, LineChart
from sqlmodel import Session

from inventory.catalog.load import load_catalog
from inventory.core import migrate
from inventory.core.db import make_engine, transaction
from inventory.history.jobs import JobItem, JobSpec, record_job
from inventory.monthend.html import render_html, write_month_html
from inventory.monthend.report import month_report
from inventory.monthend.workbook import RED, SHEETS, key_figures, write_month_workbook
from inventory.stock import ledger
from tests.conftest import TINY, write_catalog

TODAY = date(2026, 12, 2)


def ts(y: int, m: int, d: int) -> datetime:
    return datetime(y, m, d, 12, tzinfo=UTC)


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    """A year of a small shop on SQLite; the part descriptions include text a spreadsheet
    or a browser could take for code."""
    tmp = tmp_path_factory.mktemp("wb")
    cat = dict(TINY)
    cat["parts.csv"] = cat["parts.csv"].replace("Wiper 32x42", "=HYPERLINK(\"x\") <b>wiper</b>")
    engine = make_engine(f"sqlite:///{tmp / 'shop.db'}", fresh=True)
    migrate.upgrade(engine)
    with transaction(engine) as s:
        load_catalog(s, write_catalog(tmp / "cat", cat))
        ledger.receive(s, ledger.Receipt("OR-214", 300, "0.25", lot="O1", cured="2019Q2", ts=ts(2025, 11, 3)))
        ledger.receive(s, ledger.Receipt("WP-32", 60, "6.50", lot="W1", cured="2024Q1", ts=ts(2025, 11, 3)))
        # issues skip lots past their storage limit (O1's ends 2026-06-30): a younger lot
        # serves the jobs after it, O1 stays on the shelf as the expired lot
        ledger.receive(s, ledger.Receipt("OR-214", 100, "0.26", lot="O2", cured="2025Q3", ts=ts(2025, 11, 3)))
        ledger.receive(s, ledger.Receipt("OIL-5", 5000, "0.02", lot="OIL1", ts=ts(2025, 11, 3)))
        for m in range(12):
            y, mo = (2025, 12) if m == 0 else (2026, m)
            record_job(s, JobSpec(f"J-{m}", date(y, mo, 8), "XC-32", "lower_leg",
                                  (JobItem("K-TST", 1 + m % 3),)))
        ledger.receive(s, ledger.Receipt("WP-32", 10, "7.00", lot="W2", cured="2026Q3", ts=ts(2026, 11, 9)))
        ledger.count(s, ledger.Count("WP-32", 20, ts=ts(2026, 11, 27)))
    with Session(engine) as s:
        r = month_report(s, "2026-11", today=TODAY)
    engine.dispose()
    path = write_month_workbook(tmp / "stock-2026-11.xlsx", r)
    return r, path


def test_sheets_styles_and_highlights(report):
    r, path = report
    wb = load_workbook(path)
    assert wb.sheetnames == list(SHEETS)
    parts = wb["Parts"]
    assert parts.freeze_panes == "A2"
    assert parts.auto_filter.ref == f"A1:X{len(r.parts) + 1}"
    header = [c.value for c in parts[1]]
    rows = {row[0]: dict(zip(header, row, strict=True))
            for row in parts.iter_rows(min_row=2, values_only=True)}
    for p in r.parts:
        assert rows[p.part]["closing value"] == pytest.approx(float(p.closing_value))
        assert rows[p.part]["closing qty"] == p.closing_qty
    # number formats: money with two decimals, quantities whole
    col = header.index("closing value") + 1
    assert parts.cell(row=2, column=col).number_format == "#,##0.00"
    # the oil never issued for a year is dead stock: its row is red
    oil = next(i for i, row in enumerate(parts.iter_rows(min_row=2, values_only=True), start=2)
               if row[0] == "OIL-5")
    assert rows["OIL-5"]["status"] == "dead"
    assert parts.cell(row=oil, column=1).fill.fgColor.rgb[-6:] == RED
    # the description that looks like a formula stays text
    assert rows["WP-32"]["description"] == "=HYPERLINK(\"x\") <b>wiper</b>"
    assert parts.cell(row=[r_[0] for r_ in parts.iter_rows(min_row=1, values_only=True)]
                      .index("WP-32") + 1, column=2).data_type == "s"
    # expired O-ring lot (NBR cured 2019Q2: 7 years -> 2026-06-30) highlighted red
    lots = wb["Expiring lots"]
    assert [c.value for c in lots[2]][:3] == ["OR-214", "O1", "2019Q2"]
    assert lots["H2"].value == "past limit" and lots["A2"].fill.fgColor.rgb[-6:] == RED


def _resolve(wb, ref: str) -> list:
    m = re.fullmatch(r"'?(.+?)'?!\$([A-Z]+)\$(\d+):\$([A-Z]+)\$(\d+)", ref)
    ws = wb[m.group(1)]
    return [c.value for row in ws[f"{m.group(2)}{m.group(3)}:{m.group(4)}{m.group(5)}"]
            for c in row]


def test_charts_read_back(report):
    """openpyxl reads the three native charts back, and their ranges hold the report's
    figures."""
    r, path = report
    wb = load_workbook(path)
    charts = wb["Summary"]._charts
    assert [type(c) for c in charts] == [BarChart, LineChart, BarChart]
    titles = ["".join(run.t for p in c.title.tx.rich.p for run in (p.r or [])) for c in charts]
    assert titles[0].startswith("Usage by month") and titles[1].startswith("Stock value")
    assert titles[2].startswith("ABC Pareto")
    usage, stock, pareto = charts
    jobs = _resolve(wb, usage.series[0].val.numRef.f)
    assert jobs == pytest.approx([float(v) for v in r.job_usage_value])
    assert _resolve(wb, stock.series[0].val.numRef.f) == pytest.approx(
        [float(v) for v in r.stock_value])
    bars, line = pareto._charts
    # the cumulative share on a secondary value axis: its own axis, crossing at the maximum
    assert isinstance(line, LineChart) and line.y_axis.axId != bars.y_axis.axId
    assert line.y_axis.crosses == "max" and line.y_axis.scaling.max == 1
    shown = _resolve(wb, bars.series[0].val.numRef.f)
    assert shown == pytest.approx([float(p.annual_usage_value) for p in r.abc_order][:len(shown)])
    cum = _resolve(wb, line.series[0].val.numRef.f)
    assert cum == sorted(cum) and cum[-1] == pytest.approx(1.0)


def _soffice() -> str | None:
    exe = shutil.which("soffice") or shutil.which("libreoffice")
    if exe is None and os.environ.get("CI", "").lower() == "true":
        pytest.fail("CI=true and LibreOffice (soffice) is not installed")
    return exe


def test_libreoffice_shows_the_same_values(report, tmp_path):
    """LibreOffice Calc, headless, converts every sheet to CSV (filter option -1 = all sheets,
    LibreOffice 7.2 and later); the summary and the parts sheet show the report's figures."""
    exe = _soffice()
    if exe is None:
        pytest.skip("LibreOffice (soffice) is not installed")
    r, path = report
    out = tmp_path / "csv"
    env = dict(os.environ, HOME=str(tmp_path))  # a private profile, no clash with other runs
    subprocess.run([exe, "--headless", "--norestore", "--convert-to",
                    "csv:Text - txt - csv (StarCalc):44,34,76,1,,0,false,true,false,false,false,-1",
                    "--outdir", str(out), str(path)], check=True, capture_output=True,
                   timeout=180, env=env)
    stem = path.stem

    def sheet(name: str) -> list[list[str]]:
        with open(out / f"{stem}-{name}.csv", encoding="utf-8", newline="") as fh:
            return list(csv.reader(fh))

    summary = {row[0]: row[1] for row in sheet("Summary") if len(row) > 1 and row[0]}
    for label, value, _ in key_figures(r):
        if value is None:
            continue
        assert float(summary[label]) == pytest.approx(float(value)), label
    rows = sheet("Parts")
    header = rows[0]
    shown = {row[0]: dict(zip(header, row, strict=True)) for row in rows[1:]}
    for p in r.parts:
        assert Decimal(shown[p.part]["closing value"]) == p.closing_value
        assert int(shown[p.part]["closing qty"]) == p.closing_qty
        assert Decimal(shown[p.part]["job issues value"]) == p.job_issues_value
    assert shown["WP-32"]["description"] == "=HYPERLINK(\"x\") <b>wiper</b>"  # text, not run
    monthly = sheet("Monthly")
    assert [Decimal(x[3]) for x in monthly[1:]] == list(r.stock_value)


def test_html_page(report, tmp_path):
    r, _ = report
    page = render_html(r)
    images = re.findall(r'src="data:image/png;base64,([A-Za-z0-9+/=]+)"', page)
    assert len(images) == 4
    for b64 in images:
        assert base64.b64decode(b64)[:8] == b"\x89PNG\r\n\x1a\n"
    assert "<b>wiper</b>" not in page  # database text is escaped
    assert f"{r.totals.closing_value:,.2f}" in page
    path = write_month_html(tmp_path / "s.html", r)
    assert path.read_text(encoding="utf-8") == page
