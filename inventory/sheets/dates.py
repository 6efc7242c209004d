"""Spreadsheet dates: the parser lives in :mod:`inventory.core.dates` (one date parser for the
command line, the spreadsheet cells and the web forms); this module keeps the old import
path for the spreadsheet edge."""

from inventory.core.dates import (  # noqa: F401
    EXPECTED,
    MAX_SERIAL_1900,
    MAX_SERIAL_1904,
    MONTHS,
    ORDERS,
    Order,
    OrderDecision,
    decide_order,
    from_serial,
    orders_for,
    parse_date,
    parse_text,
    to_serial,
)
