"""One PNG per chosen forecast series: the history, the forecast and its 10-90 % range.

Drawn with matplotlib's Agg backend (no display needed). File names are
``forecast-<by>-<code>.png`` with characters outside letters, digits, ``.``, ``-`` and
``_`` replaced, so a part code cannot climb out of the folder.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from pathlib import Path

from inventory.forecast.report import ForecastReport, SeriesForecast

HISTORY = 24  # periods of history shown


def chart_name(report: ForecastReport, s: SeriesForecast) -> str:
    safe = re.sub(r"[^A-Za-z0-9._-]", "_", s.code).lstrip(".") or "series"
    return f"forecast-{report.by}-{safe}.png"


def write_charts(folder: str | Path, report: ForecastReport,
                 chosen: Sequence[SeriesForecast], *, dpi: int = 110) -> list[Path]:
    """Write one PNG per series of ``chosen`` into ``folder`` (created); returns the paths."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    out_dir = Path(folder)
    out_dir.mkdir(parents=True, exist_ok=True)
    hist_x = [str(d)[:10] for d in report.history_periods][-HISTORY:]
    fut_x = [str(d)[:10] for d in report.forecast_periods]
    step = "month" if report.freq == "M" else "week"
    q_lo, q_hi = (round(100 * q) for q in report.quantiles)
    paths = []
    for s in chosen:
        hist_y = [float("nan") if v is None else v for v in s.history][-HISTORY:]
        n_h = len(hist_x)
        xs_h = list(range(n_h))
        xs_f = list(range(n_h, n_h + len(fut_x)))
        fig, ax = plt.subplots(figsize=(8.0, 3.6))
        ax.plot(xs_h, hist_y, color="#33557a", marker="o", ms=3, lw=1.4, label="history")
        if hist_y:
            ax.plot([xs_h[-1], *xs_f], [hist_y[-1], *s.forecast], color="#c0504d", lw=1.8,
                    ls="--", marker="o", ms=3, label="forecast")
        else:
            ax.plot(xs_f, s.forecast, color="#c0504d", lw=1.8, ls="--", label="forecast")
        ax.fill_between(xs_f, s.low, s.high, color="#c0504d", alpha=0.18, step=None,
                        label=f"{q_lo}-{q_hi} % range")
        labels = [x[:7] if report.freq == "M" else x[5:] for x in hist_x + fut_x]
        every = max(1, len(labels) // 12)
        ticks = list(range(0, len(labels), every))
        ax.set_xticks(ticks)
        ax.set_xticklabels([labels[i] for i in ticks], rotation=45, ha="right", fontsize=8)
        ax.set_ylabel(f"{s.unit} per {step}")
        ax.set_ylim(bottom=0)
        ax.set_title(f"{s.code}: {s.kind}, {s.phrase} ({s.label})", fontsize=10)
        ax.grid(alpha=0.3)
        ax.legend(fontsize=8, loc="upper left")
        fig.tight_layout()
        path = out_dir / chart_name(report, s)
        fig.savefig(path, dpi=dpi)
        plt.close(fig)
        paths.append(path)
    return paths
