"""Write the demo's deliberately messy service-history workbooks.

Run from anywhere: ``python catalog_demo/make_messy.py``. Output is deterministic (no clock,
no randomness) and sits beside this script:

- ``messy_history.xlsx``: last month's jobs as another till would export them. A title and
  an export note above the header, odd headers (``Job No.``, ``Date in``, ``Servce type``,
  ``Quantitiy``), fork models typed as free text, dates as day-first text, date cells,
  spreadsheet serial numbers and written-out forms, ride hours with units and decimal commas,
  codes in lower case, a blank row, a notes-only row and a totals row with a formula. It
  goes through preview, review (three fork texts need a person) and apply.
- ``messy_history_broken.xlsx``: the same plus rows a person typed wrong (a date that is not
  a date, text and a negative number as quantities, unknown part codes, a future date, an
  unknown service level): the preview lists every one at its cell, and nothing is written.

The fork families, kits and kit lines come from the catalog CSVs beside this script.
"""

from __future__ import annotations

import csv
import re
import zipfile
from datetime import date, datetime
from pathlib import Path

from openpyxl import Workbook
from openpyxl.styles import Font

HERE = Path(__file__).resolve().parent
HEADER = ["Job No.", "Date in", "Fork model", "Servce type", "Hrs", "Serial", "Part no",
          "Quantitiy", "Tech", "Notes"]

# (job, day, fork text, service text, hours, (family, level) of the kit, loose part?)
# Fork texts: some resolve on their own, three need a person (see the module docstring).
JOBS = [
    ("WS-2611-01", date(2026, 11, 2), "TR-34", "Lower leg", "55", ("TR-34", "LL"), True),
    ("WS-2611-02", date(2026, 11, 3), "tr34 gen2", "Air can", "120 h", ("TR-34", "AS"), False),
    ("WS-2611-03", date(2026, 11, 4), "Enduro 36 170mm", "lowers", "37,5", ("EN-36", "LL"), False),
    ("WS-2611-04", date(2026, 11, 5), "coil trail fork 34", "Damper", "", ("CL-34", "DA"), False),
    ("WS-2611-05", date(2026, 11, 6), "dual crown dh", "Lower leg", "80", ("DH-40", "LL"), True),
    ("WS-2611-06", date(2026, 11, 9), "XC air neg 2023", "air spring service", "45",
     ("XC-32", "AS"), False),
    ("WS-2611-07", date(2026, 11, 10), "34mm trail fork 2019 air", "LL", "60 hrs",
     ("TR-34", "LL"), False),
    ("WS-2611-08", date(2026, 11, 11), "All-Mountain 35 160", "Damper", "210",
     ("AM-35", "DA"), False),
    ("WS-2611-09", date(2026, 11, 12), "cross country 30 100mm", "Lower leg", "33",
     ("XC-30", "LL"), False),
    ("WS-2611-10", date(2026, 11, 13), "Trail 32 140", "Air can", "72", ("TR-32", "AS"), False),
    ("WS-2611-11", date(2026, 11, 16), "EN36", "damper", "150", ("EN-36", "DA"), False),
    ("WS-2611-12", date(2026, 11, 17), "dual crown dh", "Air can", "95", ("DH-40", "AS"), False),
    ("WS-2611-13", date(2026, 11, 18), "Trail 34mm air", "Lower leg", "41", ("TR-34", "LL"), True),
    ("WS-2611-14", date(2026, 11, 19), "XC air neg 2023", "Lower leg", "28", ("XC-32", "LL"),
     False),
    ("WS-2611-15", date(2026, 11, 20), "34mm trail fork 2019 air", "Air can", "66",
     ("TR-34", "AS"), False),
    ("WS-2611-16", date(2026, 11, 23), "Enduro 36 170mm", "Air can", "58,0", ("EN-36", "AS"),
     False),
    ("WS-2611-17", date(2026, 11, 24), "coil trail fork 34", "lowers", "", ("CL-34", "LL"), True),
    ("WS-2611-18", date(2026, 11, 25), "TR-34", "Damper", "175", ("TR-34", "DA"), False),
    ("WS-2611-19", date(2026, 11, 26), "Trail 32 140", "Lower leg", "39", ("TR-32", "LL"), False),
    ("WS-2611-20", date(2026, 11, 27), "tr34 gen2", "lowers", "52", ("TR-34", "LL"), False),
]
LEVELS = {"LL": "lower_leg", "AS": "air_spring", "DA": "damper"}
FIRST_DATA_ROW = 4  # a title, an export note, then the header on row 3


def _read(name: str) -> list[dict]:
    with open(HERE / name, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))


def kits() -> dict[tuple[str, str], str]:
    return {(r["fork"], r["service_level"]): r["kit"] for r in _read("kits.csv")}


def loose_part(kit: str, lines: list[dict], parts: dict[str, dict]) -> str:
    """A small part of the kit fitted loose as well (a crush washer or an O-ring)."""
    mine = sorted(r["part"] for r in lines if r["kit"] == kit)
    for kind in ("crush_washer", "o_ring", "x_ring"):
        for code in mine:
            if parts[code]["kind"] == kind:
                return code
    return mine[0]


def serial(d: date) -> int:
    """The 1900-system serial number of a date after 1900-03-01 (ECMA-376 Part 1,
    18.17.4.1: serial 61 is 1900-03-01)."""
    return (d - date(1899, 12, 30)).days


def written_date(i: int, d: date):
    """The date of the i-th job in one of the forms a till or a person writes."""
    form = i % 5
    if form == 0:
        return d.strftime("%d/%m/%Y")  # day-first text; days above 12 settle the order
    if form == 1:
        return datetime(d.year, d.month, d.day)  # a real date cell
    if form == 2:
        return serial(d)  # a bare serial number (the column lost its date format)
    if form == 3:
        return f"{d.day} {d.strftime('%b')} {d.year}"  # 4 Nov 2026
    return d.isoformat()


def rows() -> list[list]:
    kit_of = kits()
    lines = _read("kit_lines.csv")
    parts = {r["code"]: r for r in _read("parts.csv")}
    out: list[list] = []
    for i, (ref, d, fork, service, hours, (fam, lvl), loose) in enumerate(JOBS):
        kit = kit_of[(fam, LEVELS[lvl])]
        when = written_date(i, d)
        tech = ["AB", "CD", "EF"][i % 3]
        code = kit.lower() if i % 7 == 3 else kit
        out.append([ref, when, fork, service, hours, f"F-{9000 + i}", code, 1, tech, ""])
        if loose:
            out.append([ref, when, fork, service, hours, f"F-{9000 + i}",
                        loose_part(kit, lines, parts), 2, tech, "extra seal fitted"])
        if i == 9:
            out.append([None] * len(HEADER))  # a blank row
            out.append([None] * 9 + ["bench 2 closed for painting"])  # a notes-only row
    return out


BROKEN = [
    ["WS-2611-E1", "next tue", "TR-34", "Lower leg", "40", "F-9101", "K-TR34-LL", 1, "AB", ""],
    ["WS-2611-E2", "2026-11-10", "TR-34", "Lower leg", "40", "F-9102", "K-TR34-LL", "two", "AB",
     ""],
    ["WS-2611-E3", "2026-11-11", "EN36", "Air can", "40", "F-9103", "K-EN36-AS", -1, "CD", ""],
    ["WS-2611-E4", "2026-11-12", "TR-34", "Lower leg", "40", "F-9104", "OR-999-XX", 2, "CD", ""],
    ["WS-2611-E5", "2027-03-01", "TR-34", "Damper", "40", "F-9105", "K-TR34-DA", 1, "EF", ""],
    ["WS-2611-E6", "2026-11-13", "TR-34", "Lower leg", "40", "F-9106", "K-TR34-LLL", 1, "EF", ""],
    ["WS-2611-E7", "2026-11-16", "TR-34", "paint job", "40", "F-9107", "K-TR34-LL", 1, "AB", ""],
]


def write(path: Path, body: list[list]) -> Path:
    wb = Workbook()
    ws = wb.active
    ws.title = "Jobs export"
    ws.append(["Workshop jobs, exported from the till"])
    ws.merge_cells(start_row=1, start_column=1, end_row=1, end_column=4)
    ws["A1"].font = Font(bold=True, size=13)
    ws.append(["exported 2026-12-01 by the front desk"])
    ws.append(HEADER)
    for row in body:
        ws.append(row)
        for c in ws[ws.max_row]:
            if isinstance(c.value, datetime):
                c.number_format = "dd.mm.yyyy"
    last = ws.max_row
    ws.append(["Total", None, None, None, None, None, None, f"=SUM(H{FIRST_DATA_ROW}:H{last})"])
    wb.properties.creator = "demo"
    wb.save(path)
    return _freeze(path)


def _freeze(path: Path) -> Path:
    """Make the file byte-identical run to run: fixed zip entry times and document dates
    (openpyxl stamps both with the clock)."""
    with zipfile.ZipFile(path) as z:
        parts = [(info.filename, z.read(info.filename)) for info in z.infolist()]
    stamp = b"2026-12-01T08:00:00Z"
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as z:
        for name, data in parts:
            if name == "docProps/core.xml":
                data = re.sub(rb"\d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ", stamp, data)
            info = zipfile.ZipInfo(name, date_time=(2026, 12, 1, 8, 0, 0))
            info.compress_type = zipfile.ZIP_DEFLATED
            z.writestr(info, data)
    return path


def main() -> None:
    body = rows()
    print(write(HERE / "messy_history.xlsx", body))
    print(write(HERE / "messy_history_broken.xlsx", body + BROKEN))


if __name__ == "__main__":
    main()
