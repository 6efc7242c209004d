"""The compatibility matrix: every seat of every fork family against every part of a kind
that goes there, computed by the fit rules (:func:`inventory.bench.matching.fit_matrix`),
never typed by hand.

:func:`build_compat` turns records (seats, parts as :class:`PartArrays`) into a
:class:`CompatReport`: one block per seal kind, seats as rows, parts as columns.
:func:`compat_workbook` lays it out as an openpyxl workbook: a ``Legend`` sheet first, then
one sheet per kind with coloured verdict cells, frozen headers and the legend under the
matrix. :func:`write_compat` saves it atomically. No database access here.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path

import numpy as np
from openpyxl import Workbook
from openpyxl.styles import Alignment, Border, Font, PatternFill, Side
from openpyxl.utils import get_column_letter

from inventory.bench.fit import CAUTION, FitRules
from inventory.bench.fit_limits import NOT_APPLICABLE, STATUS_NAMES
from inventory.bench.matching import PartArrays, fit_matrix
from inventory.bench.seals import kind_label
from inventory.core.model import PartKind, PartSpec, SeatSpec
from inventory.sheets.write import save_workbook

#: Our palette and labels: code -> (label in the cell, fill colour, meaning).
PALETTE: dict[int, tuple[str, str, str]] = {
    0: ("fits", "9FD8B4", "pass: every check within its pass range"),
    1: ("check", "F7D98B", "marginal: a check in its marginal band; read the numbers with "
                           "`inventory fit PART --fork F --seat S`"),
    2: ("no", "E9A3A0", "fail: a check outside its range, or the polymer does not suit "
                        "the seat's fluid"),
    NOT_APPLICABLE: ("", "EFEFEF", "the part's kind does not go in this seat"),
}
HEADER_FILL = PatternFill("solid", fgColor="D9DEE8")
BOLD = Font(bold=True)
THIN = Side(style="thin", color="BFBFBF")
CELL_BORDER = Border(left=THIN, right=THIN, top=THIN, bottom=THIN)
FIXED = ("fork", "seat", "position", "gland", "seat geometry (mm)")


@dataclass(frozen=True, eq=False)
class CompatBlock:
    """One seal kind: its seats (rows), the parts that may go there (columns), verdicts."""

    kind: PartKind
    seats: tuple[SeatSpec, ...]
    parts: tuple[PartSpec, ...]
    sources: tuple[str, ...]  # "stock" or "standard" per column
    verdicts: np.ndarray  # int8 (seats x parts): 0 pass, 1 marginal, 2 fail, -1 n/a

    def counts(self) -> dict[str, int]:
        return {STATUS_NAMES[c]: int((self.verdicts == c).sum()) for c in (0, 1, 2)}

    def fitting(self, row: int) -> dict[str, list[str]]:
        """Part codes that pass and that are marginal in seat ``row``."""
        return {STATUS_NAMES[c]: [self.parts[j].code
                                  for j in np.flatnonzero(self.verdicts[row] == c)]
                for c in (0, 1)}

    def to_dict(self) -> dict:
        return {
            "kind": str(self.kind),
            "seats": [{"fork": s.fork, "seat": s.seat, "position": s.position}
                      for s in self.seats],
            "parts": [{"code": p.code, "source": src} for p, src in
                      zip(self.parts, self.sources, strict=True)],
            "verdicts": [[None if c == NOT_APPLICABLE else STATUS_NAMES[c] for c in row]
                         for row in self.verdicts.tolist()],
        }


@dataclass(frozen=True, eq=False)
class CompatReport:
    blocks: tuple[CompatBlock, ...]
    generated: date = field(default_factory=date.today)

    def to_dict(self) -> dict:
        return {"generated": self.generated.isoformat(),
                "legend": {PALETTE[c][0] or "n/a": (STATUS_NAMES[c] if c >= 0 else None)
                           for c in PALETTE},
                "kinds": [b.to_dict() for b in self.blocks],
                "caution": CAUTION}


def build_compat(seats: Sequence[SeatSpec], sources: Sequence[PartArrays], *,
                 rules: FitRules = FitRules(), kinds: Sequence[PartKind] | None = None,
                 reference_shore_a: float | None = None,
                 generated: date | None = None) -> CompatReport:
    """Verdicts of every part in every seat, grouped by the seat's kind.

    ``sources`` are candidate sets (the shop's parts, optionally the standard series); a
    part becomes a column of a kind's block when its kind goes in that kind's seats.
    ``kinds`` keeps only those seat kinds.
    """
    wanted = None if kinds is None else {PartKind(k) for k in kinds}
    seats = [s for s in seats if wanted is None or PartKind(s.part_kind) in wanted]
    matrices = [fit_matrix(seats, arrays, rules=rules, reference_shore_a=reference_shore_a)
                for arrays in sources]
    blocks = []
    seat_kinds = dict.fromkeys(PartKind(s.part_kind) for s in seats)
    for kind in sorted(seat_kinds, key=lambda k: list(PartKind).index(k)):
        rows = [i for i, s in enumerate(seats) if PartKind(s.part_kind) == kind]
        parts: list[PartSpec] = []
        srcs: list[str] = []
        cols = []
        for arrays, m in zip(sources, matrices, strict=True):
            sub = m[rows]
            keep = np.flatnonzero((sub != NOT_APPLICABLE).any(axis=0))
            parts += [arrays.spec(int(j)) for j in keep]
            srcs += [arrays.source] * len(keep)
            cols.append(sub[:, keep])
        verdicts = np.concatenate(cols, axis=1) if cols else np.zeros((len(rows), 0), np.int8)
        blocks.append(CompatBlock(kind, tuple(seats[i] for i in rows), tuple(parts),
                                  tuple(srcs), verdicts.astype(np.int8)))
    return CompatReport(tuple(blocks), generated or date.today())


# ------------------------------------------------------------------------- workbook

def _num(v: float | None) -> str:
    return "-" if v is None else f"{v:g}"


def part_size(p: PartSpec) -> str:
    """Short size text for a column header: ``24.99 x 3.53`` for rings, else
    ``id/od/height``, or the spacer's volume."""
    if p.cs_mm is not None and PartKind(p.kind) in (PartKind.O_RING, PartKind.X_RING):
        return f"{_num(p.id_mm)} x {_num(p.cs_mm)}"
    if PartKind(p.kind) == PartKind.VOLUME_SPACER:
        return f"od {_num(p.od_mm)} h {_num(p.height_mm)} {_num(p.volume_cm3)} cm3"
    return f"{_num(p.id_mm)}/{_num(p.od_mm)}/{_num(p.height_mm)}"


def seat_geometry(s: SeatSpec) -> str:
    """The seat's recorded geometry as short text (only the fields it has)."""
    names = (("rod", s.rod_mm), ("bore", s.bore_mm), ("groove", s.groove_mm),
             ("width", s.groove_width_mm), ("depth", s.housing_depth_mm))
    text = " ".join(f"{n} {v:g}" for n, v in names if v is not None)
    if s.bore_fit:
        text += f" ({s.bore_fit})"
    return text


def sheet_title(kind: PartKind) -> str:
    return kind_label(kind).capitalize()[:31]


def _legend_rows(ws, top: int, col: int = 1) -> int:
    ws.cell(top, col, "Legend").font = BOLD
    r = top + 1
    for code in (0, 1, 2, NOT_APPLICABLE):
        label, colour, meaning = PALETTE[code]
        cell = ws.cell(r, col, label or "n/a")
        cell.fill = PatternFill("solid", fgColor=colour)
        cell.alignment = Alignment(horizontal="center")
        cell.border = CELL_BORDER
        ws.cell(r, col + 1, meaning)
        r += 1
    return r


def _kind_sheet(wb: Workbook, block: CompatBlock, report: CompatReport) -> None:
    ws = wb.create_sheet(sheet_title(block.kind))
    n_fixed = len(FIXED)
    for c, h in enumerate(FIXED, start=1):
        ws.cell(1, c, h)
    ws.cell(2, n_fixed, "part size (mm)")
    for j, (p, src) in enumerate(zip(block.parts, block.sources, strict=True)):
        col = n_fixed + 1 + j
        head = ws.cell(1, col, p.code)
        head.data_type = "s"
        head.alignment = Alignment(text_rotation=90, horizontal="center")
        size = ws.cell(2, col, part_size(p) + (" (std)" if src == "standard" else ""))
        size.data_type = "s"
        size.alignment = Alignment(text_rotation=90, horizontal="center", wrap_text=False)
        ws.column_dimensions[get_column_letter(col)].width = 6.5
    for row in (1, 2):
        for c in range(1, n_fixed + len(block.parts) + 1):
            ws.cell(row, c).font = BOLD
            ws.cell(row, c).fill = HEADER_FILL
    ws.row_dimensions[1].height = 80
    ws.row_dimensions[2].height = 90
    fills = {code: PatternFill("solid", fgColor=colour)
             for code, (_, colour, _) in PALETTE.items()}
    for i, s in enumerate(block.seats):
        r = 3 + i
        values = (s.fork, s.seat, s.position, f"{s.gland}, {s.motion}, {s.medium}",
                  seat_geometry(s))
        for c, v in enumerate(values, start=1):
            ws.cell(r, c, v).data_type = "s"
        for j, code in enumerate(block.verdicts[i].tolist()):
            cell = ws.cell(r, n_fixed + 1 + j, PALETTE[code][0] or None)
            cell.fill = fills[code]
            cell.border = CELL_BORDER
            cell.alignment = Alignment(horizontal="center")
    for c, width in zip(range(1, n_fixed + 1), (10, 22, 18, 22, 40), strict=True):
        ws.column_dimensions[get_column_letter(c)].width = width
    ws.freeze_panes = ws.cell(3, n_fixed + 1)
    r = _legend_rows(ws, 3 + len(block.seats) + 2, 2)
    ws.cell(r + 1, 2, f"Computed by the fit rules on {report.generated.isoformat()}; "
                      "never typed by hand.")
    ws.cell(r + 2, 2, CAUTION)


def compat_workbook(report: CompatReport) -> Workbook:
    """The workbook: ``Legend`` first (palette, counts per kind, caution), then one sheet
    per seal kind."""
    wb = Workbook()
    ws = wb.active
    ws.title = "Legend"
    ws.cell(1, 1, "Seal compatibility: seats (rows) x parts (columns)").font = Font(
        bold=True, size=14)
    ws.cell(2, 1, f"Computed by the fit rules on {report.generated.isoformat()}; never "
                  "typed by hand. One sheet per seal kind.")
    r = _legend_rows(ws, 4)
    r += 1
    for c, h in enumerate(("sheet", "seats", "parts", "fits", "check", "no"), start=1):
        ws.cell(r, c, h).font = BOLD
        ws.cell(r, c).fill = HEADER_FILL
    for block in report.blocks:
        r += 1
        counts = block.counts()
        for c, v in enumerate((sheet_title(block.kind), len(block.seats), len(block.parts),
                               counts["pass"], counts["marginal"], counts["fail"]), start=1):
            ws.cell(r, c, v)
    ws.cell(r + 2, 1, CAUTION)
    ws.column_dimensions["A"].width = 16
    ws.column_dimensions["B"].width = 14
    ws.freeze_panes = "A4"
    for block in report.blocks:
        _kind_sheet(wb, block, report)
    return wb


def write_compat(report: CompatReport, path: str | Path) -> Path:
    """Save the workbook of ``report`` at ``path`` (atomically)."""
    return save_workbook(compat_workbook(report), path)
