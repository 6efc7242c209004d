"""A one-page HTML summary of the month-end report for people who would rather look than
read: key figures as tiles, four matplotlib charts embedded as PNG (base64, so the file
stands alone), and the short lists that need action.

matplotlib runs on the Agg backend (no display needed); every text from the database is
HTML-escaped.
"""

from __future__ import annotations

import base64
import io
from collections import defaultdict
from decimal import Decimal
from html import escape
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
from matplotlib.patches import Patch  # noqa: E402
from matplotlib.ticker import FuncFormatter, PercentFormatter  # noqa: E402

from inventory.monthend.report import MonthReport  # noqa: E402
from inventory.sheets.write import replacing  # noqa: E402
from inventory.stock import valuation as val  # noqa: E402

BLUE, ORANGE, GREY = "#3b6ea5", "#e08a2c", "#8c8c8c"
LIST_ROWS = 8
_thousands = FuncFormatter(lambda x, _: f"{x:,.0f}" if abs(x) >= 100 or x == int(x) else f"{x:g}")


def _png(fig) -> str:
    buf = io.BytesIO()
    fig.savefig(buf, format="png", dpi=110, bbox_inches="tight")
    plt.close(fig)
    return base64.b64encode(buf.getvalue()).decode("ascii")


def chart_usage(r: MonthReport):
    fig, ax = plt.subplots(figsize=(6, 3))
    labels = [m.label for m in r.history]
    jobs = [float(v) for v in r.job_usage_value]
    other = [float(v) for v in r.other_usage_value]
    ax.bar(labels, jobs, color=BLUE, label="issues to jobs")
    ax.bar(labels, other, bottom=jobs, color=ORANGE, label="other issues")
    ax.set_title("Usage by month (at cost)")
    ax.yaxis.set_major_formatter(_thousands)
    ax.tick_params(axis="x", labelrotation=60, labelsize=8)
    ax.legend(fontsize=8, frameon=False)
    ax.spines[["top", "right"]].set_visible(False)
    return fig


def chart_stock(r: MonthReport):
    fig, ax = plt.subplots(figsize=(6, 3))
    labels = [m.label for m in r.history]
    ax.plot(labels, [float(v) for v in r.stock_value], marker="o", color=BLUE)
    ax.set_title("Stock value at month end, last 12 months")
    ax.yaxis.set_major_formatter(_thousands)
    ax.set_ylim(bottom=0)
    ax.tick_params(axis="x", labelrotation=60, labelsize=8)
    ax.spines[["top", "right"]].set_visible(False)
    return fig


def chart_pareto(r: MonthReport, *, top: int = 30):
    fig, ax = plt.subplots(figsize=(6, 3))
    values = [float(p.annual_usage_value) for p in r.parts]
    order, cum = val.pareto(values)
    k = max(1, min(top, sum(1 for v in values if v > 0)))
    colors = {"A": BLUE, "B": ORANGE, "C": GREY}
    ax.bar(range(k), [values[i] for i in order[:k]],
           color=[colors[r.parts[i].abc] for i in order[:k]])
    ax.set_xticks(range(k), [r.parts[i].part for i in order[:k]], rotation=90, fontsize=6)
    ax.yaxis.set_major_formatter(_thousands)
    ax.set_title(f"ABC Pareto: annual usage value, top {k} of {len(values)} parts")
    ax2 = ax.twinx()
    ax2.plot(range(k), cum[:k], color="black", marker=".", linewidth=1)
    ax2.set_ylim(0, 1.02)
    ax2.yaxis.set_major_formatter(PercentFormatter(1.0))
    for cut in r.settings.get("abc_cuts", (0.8, 0.95)):
        ax2.axhline(cut, color=GREY, linestyle=":", linewidth=0.8)
    ax.legend(handles=[Patch(color=c, label=f"class {k}") for k, c in colors.items()],
              fontsize=8, frameon=False, loc="center right")
    ax.spines[["top"]].set_visible(False)
    return fig


def chart_forks(r: MonthReport):
    fig, ax = plt.subplots(figsize=(6, 3))
    fams = sorted({u.fork_family for u in r.fork_usage})
    levels = sorted({u.service_level for u in r.fork_usage})
    value = defaultdict(float)
    for u in r.fork_usage:
        value[(u.fork_family, u.service_level)] += float(u.value)
    left = [0.0] * len(fams)
    palette = [BLUE, ORANGE, "#6aa84f", "#a64d79", GREY]
    for i, lvl in enumerate(levels):
        widths = [value[(f, lvl)] for f in fams]
        ax.barh(fams, widths, left=left, color=palette[i % len(palette)],
                label=lvl.replace("_", " "))
        left = [a + b for a, b in zip(left, widths, strict=True)]
    ax.set_title(f"Usage by fork family and service level, {r.month.label}")
    ax.xaxis.set_major_formatter(_thousands)
    ax.invert_yaxis()
    ax.tick_params(axis="y", labelsize=8)
    if levels:
        ax.legend(fontsize=8, frameon=False)
    else:
        ax.text(0.5, 0.5, "no jobs this month", ha="center", va="center",
                transform=ax.transAxes)
    ax.spines[["top", "right"]].set_visible(False)
    return fig


def _money(x: Decimal | float) -> str:
    return f"{x:,.2f}"


def _tile(label: str, value: str, bad: bool = False) -> str:
    cls = "tile bad" if bad else "tile"
    return f'<div class="{cls}"><div class="v">{escape(value)}</div>' \
           f'<div class="l">{escape(label)}</div></div>'


def _table(title: str, header: list[str], rows: list[list], total: int) -> str:
    if not rows:
        return f"<section><h3>{escape(title)}</h3><p class='none'>none</p></section>"
    head = "".join(f"<th>{escape(h)}</th>" for h in header)
    body = "".join("<tr>" + "".join(f"<td>{escape(str(c))}</td>" for c in row) + "</tr>"
                   for row in rows)
    more = f"<p class='more'>{total - len(rows)} more in the workbook</p>" \
        if total > len(rows) else ""
    return f"<section><h3>{escape(title)} ({total})</h3><table><tr>{head}</tr>{body}</table>" \
           f"{more}</section>"


CSS = """
body{font-family:system-ui,-apple-system,'Segoe UI',sans-serif;margin:18px;color:#222;
max-width:1280px}
h1{margin:0 0 4px;font-size:22px}.sub{color:#666;margin-bottom:12px;font-size:13px}
.tiles{display:grid;grid-template-columns:repeat(6,1fr);gap:8px;margin-bottom:12px}
.tile{background:#eef2f7;border-radius:6px;padding:8px}.tile.bad{background:#fbe0d4}
.v{font-size:18px;font-weight:600}.l{font-size:11px;color:#555}
.charts{display:grid;grid-template-columns:1fr 1fr;gap:6px}.charts img{width:100%}
.lists{display:grid;grid-template-columns:1fr 1fr;gap:10px}
h3{font-size:14px;margin:8px 0 4px}table{border-collapse:collapse;font-size:12px;width:100%}
th,td{border-bottom:1px solid #ddd;padding:2px 6px;text-align:left}
th{background:#dde4ee}.none,.more{font-size:12px;color:#666;margin:2px 0}
"""


def render_html(r: MonthReport) -> str:
    """The page as a string."""
    t = r.totals
    change = t.closing_value - t.opening_value
    tiles = [
        _tile("stock value at month end", _money(t.closing_value)),
        _tile("change in the month", f"{change:+,.2f}"),
        _tile("issued to jobs", _money(t.job_issues_value)),
        _tile("jobs", f"{t.jobs:,}"),
        _tile("turns (month, annualised)", "n/a" if t.turns is None else f"{t.turns:.1f}"),
        _tile("days of supply", "n/a" if t.days_of_supply is None else f"{t.days_of_supply:,.0f}"),
        _tile("dead stock (12 months)", _money(t.dead_value), t.dead_value > 0),
        _tile("slow stock (6 months)", _money(t.slow_value)),
        _tile("lots past storage limit", _money(t.expired_value), t.expired_value > 0),
        _tile("lots expiring within 6 months", _money(t.expiring_soon_value)),
        _tile("count variances", f"{t.count_value:+,.2f}", t.count_loss_value < 0),
        _tile("parts to reorder", f"{len(r.below_reorder):,}", bool(r.below_reorder)),
    ]
    charts = "".join(f'<img alt="{escape(alt)}" src="data:image/png;base64,{_png(fn(r))}">'
                     for alt, fn in (("usage by month", chart_usage),
                                     ("stock value", chart_stock),
                                     ("ABC Pareto", chart_pareto),
                                     ("usage by fork family", chart_forks)))
    dead = r.stock_problems
    lists = [
        _table("Slow and dead stock", ["part", "status", "on hand", "value", "last issue"],
               [[p.part, p.status, p.closing_qty, _money(p.closing_value),
                 p.last_issue or "never"] for p in dead[:LIST_ROWS]], len(dead)),
        _table("Lots past or near their ISO 2230 storage limit",
               ["part", "lot", "cured", "qty", "limit", "status"],
               [[e.lot.part, e.lot.lot, e.lot.cured, e.lot.qty, e.limit.isoformat(),
                 "past" if e.status == "past" else "soon"]
                for e in r.expiring_lots[:LIST_ROWS]], len(r.expiring_lots)),
        _table("At or below reorder point", ["part", "on hand", "on order", "reorder point",
                                             "suggested"],
               [[b.part, b.on_hand, b.on_order, b.reorder_point, b.suggested_qty]
                for b in r.below_reorder[:LIST_ROWS]], len(r.below_reorder)),
        _table("Count variances", ["part", "qty", "value"],
               [[p.part, f"{p.count_qty:+d}", f"{p.count_value:+,.2f}"]
                for p in r.count_variances[:LIST_ROWS]], len(r.count_variances)),
    ]
    return (
        "<!doctype html><html><head><meta charset='utf-8'>"
        f"<title>Stock report {escape(r.month.label)}</title><style>{CSS}</style></head><body>"
        f"<h1>Stock report {escape(r.month.label)}</h1>"
        f"<div class='sub'>Valuation: {escape(r.method_label)}. Month end "
        f"{r.month.last_day.isoformat()}, written {r.today.isoformat()}. Opening "
        f"{_money(t.opening_value)} + receipts {_money(t.receipts_value)} − issues "
        f"{_money(t.issues_value)} + adjustments and counts {t.adjustments_value:,.2f} = "
        f"closing {_money(t.closing_value)}.</div>"
        f"<div class='tiles'>{''.join(tiles)}</div>"
        f"<div class='charts'>{charts}</div>"
        f"<div class='lists'>{''.join(lists)}</div></body></html>"
    )


def write_month_html(path: str | Path, r: MonthReport) -> Path:
    """Write the page atomically; returns the path."""
    with replacing(path) as tmp:
        tmp.write_text(render_html(r), encoding="utf-8")
    return Path(path)
