"""Importing the shop's own spreadsheets: ``history`` (service jobs with the parts or kits
they used), ``counts`` (shelf counts), ``receipts`` (deliveries) and ``catalog`` (part
updates), from csv or xlsx. One module per kind (:mod:`.history`, :mod:`.counts`,
:mod:`.receipts`, :mod:`.catalog`) on shared steps:

1. read and map headers (:mod:`.headers`): the sheet, the header row, the date system,
   formula and merged cells (:mod:`inventory.sheets.source`); names and aliases, then
   rapidfuzz above a threshold; ``--map HEADER=FIELD`` overrides;
2. type every cell (:mod:`inventory.sheets.rows`): dates with the file's day/month order,
   serials in the workbook's date system, decimal commas, units on dimensions;
3. the kind checks against the database and groups rows into units (a job, or one row):
   unknown codes, fork models in free text (:mod:`.forks`), jobs recorded before, stock;
4. run the units (:mod:`.engine`): a preview simulates (history) or runs inside a savepoint
   that is rolled back (the other kinds), so it finds every problem the real run would;
   ``apply`` writes all of it in the caller's transaction or raises with every problem and
   writes nothing.

Re-runs are no-ops (:mod:`.keys`): each applied unit leaves a row key (a hash of its
content) in ``imported_row``, and the file its fingerprint in ``import_batch``.
"""

from inventory.history.imports.catalog import PART_FIELDS, update_part
from inventory.history.imports.engine import (
    IMPORTERS,
    apply_import,
    preview_import,
    run_import,
    settings_for,
)
from inventory.history.imports.forks import resolve_forks
from inventory.history.imports.report import (
    Event,
    ForkDecision,
    ImportReport,
    ImportSettings,
    Unit,
)
from inventory.history.jobs import fork_choices, fork_key, resolve_fork_text
from inventory.sheets.kinds import (
    CATALOG,
    CODE_HINT,
    COUNTS,
    DATE,
    EXAMPLES,
    HISTORY,
    KINDS,
    RECEIPTS,
    SCHEMAS,
)

__all__ = [
    "CATALOG", "CODE_HINT", "COUNTS", "DATE", "EXAMPLES", "HISTORY", "IMPORTERS", "KINDS",
    "PART_FIELDS", "RECEIPTS", "SCHEMAS", "Event", "ForkDecision", "ImportReport",
    "ImportSettings", "Unit", "apply_import", "fork_choices", "fork_key", "preview_import",
    "resolve_fork_text", "resolve_forks", "run_import", "settings_for", "update_part",
]
