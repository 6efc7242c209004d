"""Standard O-ring size series (SAE AS568, ISO 3601-1 metric) as numpy arrays.

The tables ship with the package as CSV files in ``inventory/standards`` and are read once
through :mod:`importlib.resources` (package data, not user files) and the project's one csv
reader (:func:`inventory.sheets.csvread.csv_text_grid`), then cached. Each file
starts with a ``# source: ...`` line naming where its numbers come from and which are
recalled from memory; :func:`table_source` returns that line so reports can cite it.

Designations are labels only (REFERENCE.md 1.1, common practice): ``AS568-214`` and
``ISO3601 31.5x3.55``; the numbers are what matching and fit use.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cache, lru_cache
from importlib import resources
from typing import TYPE_CHECKING

from inventory.core.units import MM_PER_INCH
from inventory.sheets.csvread import csv_text_grid

if TYPE_CHECKING:  # the arrays load numpy when first built (a lookup by SQL needs none)
    import numpy as np

AS568_FILE = "as568.csv"
ISO3601_FILE = "iso3601_metric.csv"
ISO286_FILE = "iso286.csv"
ISO2230_FILE = "iso2230.csv"


@cache
def read_standard_csv(name: str) -> tuple[str, tuple[dict[str, str], ...]]:
    """The ``# source:`` line and the rows (as dicts) of one shipped standard table."""
    text = resources.files("inventory.standards").joinpath(name).read_text(encoding="utf-8")
    comments = [line for line in text.splitlines() if line.startswith("#")]
    if not comments or not comments[0].startswith("# source:"):
        raise ValueError(f"standard table {name} lacks its '# source:' line")
    body = "\n".join(line for line in text.splitlines()
                     if line.strip() and not line.startswith("#"))
    header, *lines = csv_text_grid(body, name, sniff=False)
    rows = tuple(dict(zip(header, line, strict=True)) for line in lines)
    return comments[0][len("# source:"):].strip(), rows


def table_source(name: str) -> str:
    """The source statement of a shipped standard table (its first comment line)."""
    return read_standard_csv(name)[0]


@dataclass(frozen=True, slots=True)
class StandardRings:
    """Standard O-ring sizes as parallel read-only arrays (one entry per size).

    ``series`` is ``"AS568"`` or ``"ISO3601"``; lengths and their ± tolerances in mm.
    """

    designation: np.ndarray  # str
    series: np.ndarray  # str
    id_mm: np.ndarray
    cs_mm: np.ndarray
    id_tol_mm: np.ndarray
    cs_tol_mm: np.ndarray

    def __len__(self) -> int:
        return len(self.designation)

    def index(self, designation: str) -> int:
        """Row of a designation (case and spacing tolerant), ``KeyError`` when unknown."""
        import numpy as np

        key = normalise_designation(designation)
        hits = np.flatnonzero(self.designation == key)
        if not len(hits):
            raise KeyError(designation)
        return int(hits[0])


def as568_designation(dash: int) -> str:
    return f"AS568-{dash:03d}"


def iso3601_designation(d1_mm: float, d2_mm: float) -> str:
    return f"ISO3601 {d1_mm:g}x{d2_mm:.2f}"


def normalise_designation(text: str) -> str:
    """``as568 214``, ``AS568-214``, ``2-214`` -> ``AS568-214``; ``iso3601 31.5 x 3.55`` ->
    ``ISO3601 31.5x3.55``. Other text is returned stripped and upper-cased."""
    t = " ".join(text.strip().upper().replace("×", "x").replace("X", "x").split())
    t = t.replace("AS 568", "AS568")
    for prefix in ("AS568-", "AS568 ", "AS568", "2-"):
        if t.startswith(prefix) and t[len(prefix):].strip().isdigit():
            return as568_designation(int(t[len(prefix):]))
    for prefix in ("ISO 3601 ", "ISO3601 ", "ISO3601-1 ", "ISO 3601-1 "):
        if t.startswith(prefix):
            parts = t[len(prefix):].replace(" ", "").split("x")
            if len(parts) == 2:
                try:
                    return iso3601_designation(float(parts[0]), float(parts[1]))
                except ValueError:
                    break
    return t


def _frozen(values: list, dtype=float) -> np.ndarray:
    import numpy as np

    arr = np.asarray(values, dtype=dtype)
    arr.setflags(write=False)
    return arr


@cache
def standard_ring_rows() -> tuple[tuple[str, float, float], ...]:
    """(designation, inside diameter mm, cross-section mm) of every standard size, AS568
    then ISO 3601-1, as plain numbers: the same values and order as
    :func:`standard_orings`, without numpy."""
    _, as568 = read_standard_csv(AS568_FILE)
    _, iso = read_standard_csv(ISO3601_FILE)
    return (tuple((as568_designation(int(r["dash"])), float(r["id_in"]) * MM_PER_INCH,
                   float(r["cs_in"]) * MM_PER_INCH) for r in as568)
            + tuple((iso3601_designation(float(r["d1_mm"]), float(r["d2_mm"])),
                     float(r["d1_mm"]), float(r["d2_mm"])) for r in iso))


@lru_cache(maxsize=1)
def as568_rings() -> StandardRings:
    """Every AS568 dash number in the shipped table, converted to mm (0.001 mm kept)."""
    _, rows = read_standard_csv(AS568_FILE)
    des = [as568_designation(int(r["dash"])) for r in rows]
    return StandardRings(
        designation=_frozen(des, str),
        series=_frozen(["AS568"] * len(rows), str),
        id_mm=_frozen([float(r["id_in"]) * MM_PER_INCH for r in rows]),
        cs_mm=_frozen([float(r["cs_in"]) * MM_PER_INCH for r in rows]),
        id_tol_mm=_frozen([float(r["id_tol_in"]) * MM_PER_INCH for r in rows]),
        cs_tol_mm=_frozen([float(r["cs_tol_in"]) * MM_PER_INCH for r in rows]),
    )


@lru_cache(maxsize=1)
def iso3601_rings() -> StandardRings:
    """The ISO 3601-1 metric series in the shipped table."""
    _, rows = read_standard_csv(ISO3601_FILE)
    return StandardRings(
        designation=_frozen(
            [iso3601_designation(float(r["d1_mm"]), float(r["d2_mm"])) for r in rows], str
        ),
        series=_frozen(["ISO3601"] * len(rows), str),
        id_mm=_frozen([float(r["d1_mm"]) for r in rows]),
        cs_mm=_frozen([float(r["d2_mm"]) for r in rows]),
        id_tol_mm=_frozen([float(r["d1_tol_mm"]) for r in rows]),
        cs_tol_mm=_frozen([float(r["d2_tol_mm"]) for r in rows]),
    )


@lru_cache(maxsize=1)
def standard_orings() -> StandardRings:
    """AS568 followed by the ISO 3601-1 metric series, as one set of arrays."""
    import numpy as np

    a, b = as568_rings(), iso3601_rings()
    return StandardRings(
        **{
            name: _frozen(
                np.concatenate([getattr(a, name), getattr(b, name)]).tolist(),
                str if name in ("designation", "series") else float,
            )
            for name in StandardRings.__slots__
        }
    )


def iso3601_class_b_id_tolerance(d1_mm: float) -> float:
    """± tolerance on d1 of a class B ring from ISO 3601-1:2012 Annex A, Eq. A.1:
    ``(d1^0.95 x 0.009) + 0.11`` mm, unrounded (recalled from memory; also quoted in a
    public code file, REFERENCE.md 1.1). For sizes outside the shipped tables."""
    if not d1_mm > 0:
        raise ValueError(f"inside diameter must be positive, got {d1_mm!r}")
    return d1_mm ** 0.95 * 0.009 + 0.11
