"""The match table of ``inventory match``: what each row says (size, stock, notes) and how
the table narrows on a small terminal without cutting a part code or losing the stock."""

from __future__ import annotations

from rich.table import Table

from inventory.core.units import format_length


def _len(mm: float | None, unit: str) -> str:
    return "" if mm is None else format_length(mm, unit, with_unit=False)

def flags(row: dict) -> str:
    out = []
    if row.get("material_note"):
        out.append(row["material_note"])
    if row.get("past_storage"):
        out.append(f"PAST STORAGE x{row['past_storage_units']}")
    if row.get("hardness_ok") is False:
        out.append(f"hardness {row['hardness_shore_a']}")
    stocked = row.get("stocked_as") or []
    if stocked:
        out.append(f"stocked as {stocked[0]}" + (f" +{len(stocked) - 1}" if len(stocked) > 1
                                                 else ""))
    return "; ".join(out)


def driver(row: dict) -> str:
    d = row.get("driver")
    return "" if not d else f"{d} {row['parts'][d]:.2f}"


def size_text(row: dict, unit: str) -> str:
    """``24.99 x 3.53`` for a ring (inside x section), ``31.20/42.10/10.50`` for parts
    with inside, outside and height (missing ones as ``-``)."""
    if row.get("cs_mm") is not None and row["kind"] in ("o_ring", "x_ring"):
        return f"{_len(row['id_mm'], unit) or '-'} x {_len(row['cs_mm'], unit)}"
    return "/".join(_len(row.get(k), unit) or "-" for k in ("id_mm", "od_mm", "height_mm"))


def stock_text(row: dict) -> str:
    if row["source"] == "standard":
        return "order"
    return f"{row['on_hand']} {row['location']}" if row["on_hand"] else "0"


#: Columns of the match table that may be left out on a narrow terminal, first to go first.
#: The part code, size, stock and verdict always stay (the bench asks "is it on the shelf,
#: or do I order it?"); the code is never cut or wrapped. Before the material goes, the
#: notes move under the table.
DROP_ORDER = ("driven by", "kind", "score")
DROP_LAST = ("material",)
#: The one column that wraps (at spaces); every other column keeps its values on one line.
WRAPPING = "notes"


def _longest(name: str, values: list[str], *, words: bool = False) -> int:
    lines = [line for v in values + [name] for line in v.split("\n")]
    if words:
        return max((len(w) for line in lines for w in line.split()), default=1)
    return max(len(line) for line in lines)


def match_table(title: str, columns: dict[str, list[str]], width: int, *,
                caption: dict[str, str] | None = None) -> tuple[Table, list[str]]:
    """The candidates as a rich table that fits ``width`` columns, and lines to print under
    it. Part codes are never cut and the stock never left out: the notes wrap at spaces
    first, then the columns of :data:`DROP_ORDER` are left out, then the notes move under
    the table (``#3: ...``), then :data:`DROP_LAST` goes, then the size and the stock wrap."""
    cols = dict(columns)
    wrapping = {WRAPPING}
    footnotes: list[str] = []

    def need() -> int:  # rich's box: one rule and two padding spaces per column, one more
        return (sum(_longest(n, v, words=n in wrapping) for n, v in cols.items())
                + 3 * len(cols) + 1)

    for name in DROP_ORDER:
        if need() <= width:
            break
        cols.pop(name, None)
    if need() > width and WRAPPING in cols:
        notes = cols.pop(WRAPPING)
        footnotes = [f"#{n}: {text}" for n, text in zip(cols["#"], notes, strict=True)
                     if text]
    for name in DROP_LAST:
        if need() <= width:
            break
        cols.pop(name, None)
    size = next((n for n in cols if n.startswith("size")), None)
    if need() > width and size:
        wrapping.add(size)
    if need() > width and "stock" in cols:  # last: the locations go one under the other
        wrapping.add("stock")
    shown = "; ".join(text for name, text in (caption or {}).items() if name in cols)
    table = Table(title=title, caption=shown or None, header_style="bold")
    for name, values in cols.items():
        if name in wrapping:
            table.add_column(name, min_width=_longest(name, values, words=True))
        else:
            table.add_column(name, justify="right" if name in ("#", "score") else "left",
                             no_wrap=True, width=_longest(name, values))
    n_rows = len(next(iter(cols.values()))) if cols else 0
    for i in range(n_rows):
        table.add_row(*[cols[name][i] for name in cols])
    return table, footnotes


def material_text(row: dict) -> str:
    mat = row.get("material")
    if mat is None:
        return "any" if row.get("source") == "standard" else "-"
    return f"{mat} !" if row.get("material_note") else str(mat)
