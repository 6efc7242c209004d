"""The catalog's file layout: one column definition per table (the csv file or workbook
sheet of that name), in load order; read by the load, written by the export and the
history export's catalog tables."""

from __future__ import annotations

from inventory.catalog.service import TABLES
from inventory.core.model import (
    Gland,
    Medium,
    Motion,
    PartKind,
    ServiceLevel,
    SpringLayout,
)
from inventory.sheets import cells
from inventory.sheets.columns import Column, Schema

C = Column
MM = cells.positive_number
OPT_TEXT = dict(default="")

SCHEMAS: dict[str, Schema] = {
    "locations": Schema("locations", (
        C("code", cells.code, required=True, example="MAIN"),
        C("description", **OPT_TEXT, example="Store room"),
    ), key=("code",)),
    "parts": Schema("parts", (
        C("code", cells.code, required=True, aliases=("part", "part code", "sku"), example="OR-214-N70"),
        C("kind", cells.choice(*PartKind), required=True, aliases=("type",), example="o_ring"),
        C("description", aliases=("desc", "name"), **OPT_TEXT, example="O-ring 24.99 x 3.53 NBR 70"),
        C("id_mm", MM, aliases=("id", "inner diameter", "inside diameter")),
        C("od_mm", MM, aliases=("od", "outer diameter", "outside diameter")),
        C("height_mm", MM, aliases=("height", "width", "axial width")),
        C("cs_mm", MM, aliases=("cs", "cross section", "cross-section")),
        C("material", cells.text, aliases=("polymer", "compound")),
        C("hardness", cells.positive_int, aliases=("shore a", "shore")),
        C("volume_cm3", MM, aliases=("volume",)),
        C("unit", cells.choice("each", "ml"), default="each"),
        C("standard", cells.text, aliases=("designation",)),
        C("notes", **OPT_TEXT),
    ), key=("code",)),
    "suppliers": Schema("suppliers", (
        C("code", cells.code, required=True, aliases=("supplier",)),
        C("name", cells.text, required=True),
        C("lead_time_days", cells.nonneg_int, required=True, aliases=("lead time",)),
        C("lead_time_sd_days", cells.nonneg_number, default=0.0),
        C("min_order_value", cells.money, aliases=("minimum order",), default=None),
        C("order_cycle_days", cells.positive_int, default=7),
        C("currency", cells.text, default="EUR"),
    ), key=("code",)),
    "supplier_items": Schema("supplier_items", (
        C("supplier", cells.code, required=True),
        C("part", cells.code, required=True),
        C("supplier_code", **OPT_TEXT),
        C("unit_cost", cells.money, required=True, aliases=("cost", "price")),
        C("pack_size", cells.positive_int, default=1, aliases=("pack",)),
        C("min_order_qty", cells.nonneg_int, default=1, aliases=("moq",)),
        C("lead_time_days", cells.nonneg_int),
    ), key=("supplier", "part")),
    "fork_families": Schema("fork_families", (
        C("code", cells.code, required=True, aliases=("fork",)),
        C("description", **OPT_TEXT),
        C("stanchion_mm", MM, required=True, aliases=("stanchion",)),
        C("travel_min_mm", cells.positive_int, required=True),
        C("travel_max_mm", cells.positive_int, required=True),
        C("spring", cells.choice(*SpringLayout), required=True),
        C("year_from", cells.positive_int, required=True),
        C("year_to", cells.positive_int),
    ), key=("code",)),
    "seats": Schema("seats", (
        C("fork", cells.code, required=True),
        C("seat", cells.code, required=True),
        C("position", cells.text, required=True),
        C("part_kind", cells.choice(*PartKind), required=True),
        C("gland", cells.choice(*Gland), required=True),
        C("motion", cells.choice(*Motion), default="static"),
        C("medium", cells.choice(*Medium), default="oil"),
        C("qty_per_fork", cells.positive_int, default=1),
        C("rod_mm", MM), C("bore_mm", MM), C("groove_mm", MM), C("groove_width_mm", MM),
        C("housing_depth_mm", MM), C("rod_fit", cells.text), C("bore_fit", cells.text),
        C("chamber_volume_cm3", MM), C("piston_mm", MM), C("travel_mm", MM),
        C("set_pressure_bar", cells.nonneg_number),
        C("notes", **OPT_TEXT),
    ), key=("fork", "seat")),
    "kits": Schema("kits", (
        C("kit", cells.code, required=True),
        C("fork", cells.code, required=True),
        C("service_level", cells.choice(*ServiceLevel), required=True, aliases=("service",)),
        C("description", **OPT_TEXT),
    ), key=("kit",)),
    "kit_lines": Schema("kit_lines", (
        C("kit", cells.code, required=True),
        C("part", cells.code, required=True),
        C("qty", cells.positive_int, required=True),
    ), key=("kit", "part")),
}
ORDER = list(TABLES)
