"""What calamine does not tell us about an xlsx file, read from its XML parts directly:
the date system (1900 or 1904) and which cells hold formulas (with or without a saved value).

An xlsx file is a zip of XML parts (ECMA-376 Part 1): ``xl/workbook.xml`` lists the sheets
and carries ``<workbookPr date1904="1"/>`` for the 1904 system; each sheet part holds cells
``<c r="B7"><f>SUM(B2:B6)</f><v>42</v></c>``, where ``<f>`` is the formula and ``<v>`` the
value the spreadsheet program saved the last time it calculated (absent when a program that
does not calculate wrote the file).
"""

from __future__ import annotations

import posixpath
import re
import zipfile
from dataclasses import dataclass
from pathlib import Path
from xml.etree import ElementTree as ET

NS = {"m": "http://schemas.openxmlformats.org/spreadsheetml/2006/main",
      "r": "http://schemas.openxmlformats.org/officeDocument/2006/relationships",
      "rel": "http://schemas.openxmlformats.org/package/2006/relationships"}
_CELL = re.compile(rb"<c\b([^>]*?)(?:/>|>(.*?)</c>)", re.S)
_REF = re.compile(rb'\br="([A-Z]+)(\d+)"')
_FORMULA = re.compile(rb"<f\b[^>]*?(?:/>|>(.*?)</f>)", re.S)
_VALUE = re.compile(rb"<v>[^<]+</v>|<is>", re.S)


@dataclass(frozen=True, slots=True)
class FormulaCell:
    row: int  # 1-based
    column: int  # 1-based
    formula: str  # without the leading "=", "" for a shared formula's followers
    has_value: bool


def _column_index(letters: bytes) -> int:
    n = 0
    for ch in letters:
        n = n * 26 + (ch - 64)
    return n


def _workbook_xml(z: zipfile.ZipFile) -> ET.Element | None:
    try:
        return ET.fromstring(z.read("xl/workbook.xml"))
    except (KeyError, ET.ParseError):
        return None


def is_1904(path: str | Path) -> bool:
    """True when the workbook uses the 1904 date system."""
    try:
        with zipfile.ZipFile(path) as z:
            root = _workbook_xml(z)
    except (zipfile.BadZipFile, OSError):
        return False
    if root is None:
        return False
    pr = root.find("m:workbookPr", NS)
    return pr is not None and pr.get("date1904", "0").lower() in ("1", "true")


def sheet_part(z: zipfile.ZipFile, sheet: str) -> str | None:
    """The zip member holding the named sheet."""
    root = _workbook_xml(z)
    if root is None:
        return None
    rid = None
    for el in root.iterfind("m:sheets/m:sheet", NS):
        if el.get("name") == sheet:
            rid = el.get(f"{{{NS['r']}}}id")
    if rid is None:
        return None
    try:
        rels = ET.fromstring(z.read("xl/_rels/workbook.xml.rels"))
    except (KeyError, ET.ParseError):
        return None
    for rel in rels.iterfind("rel:Relationship", NS):
        if rel.get("Id") == rid:
            target = rel.get("Target", "")
            if target.startswith("/"):
                return target.lstrip("/")
            return posixpath.normpath(posixpath.join("xl", target))
    return None


def formula_cells(path: str | Path, sheet: str) -> list[FormulaCell]:
    """Every formula cell of one sheet, with whether a value was saved with it. Fast on
    large sheets without formulas (one byte search)."""
    try:
        with zipfile.ZipFile(path) as z:
            part = sheet_part(z, sheet)
            if part is None:
                return []
            data = z.read(part)
    except (zipfile.BadZipFile, OSError, KeyError):
        return []
    if b"<f" not in data:
        return []
    out = []
    for m in _CELL.finditer(data):
        body = m.group(2) or b""
        f = _FORMULA.search(body)
        if f is None:
            continue
        ref = _REF.search(m.group(1))
        if ref is None:
            continue
        has_value = _VALUE.search(body) is not None
        text = (f.group(1) or b"").decode("utf-8", "replace")
        text = text.replace("&amp;", "&").replace("&lt;", "<").replace("&gt;", ">").replace(
            "&quot;", '"').replace("&apos;", "'")
        out.append(FormulaCell(int(ref.group(2)), _column_index(ref.group(1)), text, has_value))
    return out
