"""The fixed choices people pick from (command-line options, spreadsheet cells, web form
selects), as Enums in one place so every face offers the same values and the same default.

They are ``StrEnum``: a member equals its text (``Allocation.UNIFORM == "uniform"``), so the
libraries that compare with plain strings keep working.
"""

from __future__ import annotations

from enum import StrEnum


class ForecastBy(StrEnum):
    """What a forecast counts: seals (kits exploded), kits, jobs per fork family, or stock
    items as they leave the shelf."""

    PART = "part"
    KIT = "kit"
    FAMILY = "family"
    ITEM = "item"


class Allocation(StrEnum):
    """How a pooled fill-rate target is shared out between parts (ordering backtest)."""

    UNIFORM = "uniform"  # one per-part target set so the POOLED fill meets the asked rate
    PART = "part"  # each part's own smallest level reaching the target
    MARGINAL = "marginal"  # least stock for the pooled target


#: The one default, used by the command line and by the library functions alike.
DEFAULT_ALLOCATION = Allocation.UNIFORM


class KitMode(StrEnum):
    """When the planner buys service kits instead of their seals."""

    STOCK = "stock"  # kits the shop stocks are planned as kits
    CHEAPER = "cheaper"  # whichever is cheaper for the need
    WHOLE = "whole"  # always kits


DEFAULT_KIT_MODE = KitMode.STOCK


class Valuation(StrEnum):
    """Month-end stock valuation."""

    FIFO = "fifo"  # lot cost, oldest cure first (as the ledger issues)
    AVERAGE = "average"  # moving average


DEFAULT_VALUATION = Valuation.FIFO
