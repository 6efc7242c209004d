"""The project's one csv reader: bytes to text (UTF-8 with or without BOM, UTF-16 with a
BOM, else Windows-1252), the delimiter sniffed (comma, semicolon or tab), every problem one
:class:`InventoryError` naming the file. Imports, the catalog, the demo, the backtest's
demand files and the shipped standard tables all read csv through it.

It imports nothing beyond the standard library and the core's error type, so pure modules
(the bench's size tables) may use it."""

from __future__ import annotations

import csv
import io
from pathlib import Path
from typing import Any

from inventory.core.errors import InventoryError


def decode_csv(data: bytes, file: str) -> tuple[str, str]:
    """Text of a csv file and the encoding used: UTF-16 when it starts with a byte-order mark
    (spreadsheet programs' "Unicode text"), UTF-8 (with or without BOM), else the Windows
    western code page that spreadsheet programs often save in."""
    if data.startswith((b"\xff\xfe", b"\xfe\xff")):
        try:
            return data.decode("utf-16"), "utf-16"
        except UnicodeDecodeError:
            pass
    elif b"\x00" in data[:4096]:
        raise InventoryError(
            f"{file}: the file holds NUL bytes: it is not a text csv (perhaps UTF-16 without a "
            "byte-order mark, or a binary file renamed .csv)",
            hint="save it as 'CSV UTF-8' from the spreadsheet program")
    for enc in ("utf-8-sig", "cp1252"):
        try:
            return data.decode(enc), enc
        except UnicodeDecodeError:
            continue
    raise InventoryError(f"{file}: cannot decode the file as UTF-8 or Windows-1252",
                         hint="save it as 'CSV UTF-8' from the spreadsheet program")


def csv_grid(path: Path) -> tuple[list[list[Any]], str]:
    """The cells of a csv file as text, and the encoding it was read in. The delimiter
    (comma, semicolon or tab) is sniffed from the start of the file."""
    data = path.read_bytes()
    if not data.strip():
        raise InventoryError(f"{path.name}: the file is empty",
                             hint="export the sheet again with its header row and data")
    text, enc = decode_csv(data, path.name)
    return csv_text_grid(text, path.name), enc


def csv_text_grid(text: str, file: str, *, sniff: bool = True) -> list[list[str]]:
    """The cells of csv text (already decoded), one list per line as :mod:`csv` reads
    them (a blank line is an empty list). ``sniff`` picks the delimiter (comma, semicolon or
    tab) from the start of the text; without it the text is read as comma-separated."""
    dialect: Any = csv.excel
    if sniff:
        try:
            dialect = csv.Sniffer().sniff(text[:4096], delimiters=",;\t")
        except csv.Error:
            dialect = csv.excel
    try:
        return [list(r) for r in csv.reader(io.StringIO(text, newline=""), dialect)]
    except csv.Error as exc:
        raise InventoryError(f"{file}: not a readable csv file ({exc})",
                             hint="save it again as 'CSV UTF-8' from the spreadsheet program"
                             ) from None
