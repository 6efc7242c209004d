"""Names the faces show before any work is done: option defaults and the choices named in
help texts. Kept here, free of any database or spreadsheet library, so ``inventory --help``
does not import the services that use them; tests/test_startup.py checks that each equals
the constant of the service that acts on it."""

from __future__ import annotations

#: The stock location used when none is given (inventory.stock.service.DEFAULT_LOCATION).
DEFAULT_LOCATION = "MAIN"
#: The catalog's tables in load order (inventory.catalog.service.TABLES).
CATALOG_TABLES = ("locations", "parts", "suppliers", "supplier_items", "fork_families", "seats",
                  "kits", "kit_lines")
#: What ``inventory export`` writes (inventory.history.service.TABLES).
EXPORT_TABLES = ("parts", "stock", "lots", "movements", "jobs")
#: What ``inventory import`` reads (inventory.history.service.KINDS).
IMPORT_KINDS = ("history", "counts", "receipts", "catalog")
