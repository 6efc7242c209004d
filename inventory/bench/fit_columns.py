"""Parts as parallel arrays for the fit rules, and ring tolerances (standard or assumed)."""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache
from typing import Any

import numpy as np

from inventory.bench.fit_limits import KIND_CODE
from inventory.bench.fit_limits import material_code as material_code  # re-exported
from inventory.bench.seals import ROUND_SECTION
from inventory.bench.sizes import normalise_designation, standard_orings
from inventory.core.model import PartKind, PartSpec


@dataclass(frozen=True, eq=False)
class PartColumns:
    """Parts as parallel arrays (NaN = not recorded). Built by :func:`columns_from_specs`."""

    kind: np.ndarray  # int16 index into KINDS
    id_mm: np.ndarray
    od_mm: np.ndarray
    height_mm: np.ndarray
    cs_mm: np.ndarray
    volume_cm3: np.ndarray
    hardness: np.ndarray
    material: np.ndarray  # int16 index into MATERIAL_CODES, UNKNOWN_MATERIAL or NO_MATERIAL
    any_material: np.ndarray  # bool: a standard size, orderable in the compound the seat needs
    #: +/- tolerances of d1 and d2 (mm) of round-section rings and where they come from
    #: (TOL_TABLE, TOL_ASSUMED). None: derived from the dimensions by
    #: :func:`assumed_ring_tolerances` when the ring rules need them.
    id_tol_mm: np.ndarray | None = None
    cs_tol_mm: np.ndarray | None = None
    tol_basis: np.ndarray | None = None

    def __len__(self) -> int:
        return len(self.kind)

    def take(self, index: np.ndarray) -> PartColumns:
        return PartColumns(**{name: getattr(self, name)[index] for name in _COLUMN_NAMES
                              if getattr(self, name) is not None})


_COLUMN_NAMES = ("kind", "id_mm", "od_mm", "height_mm", "cs_mm", "volume_cm3", "hardness",
                 "material", "any_material", "id_tol_mm", "cs_tol_mm", "tol_basis")

#: Where a ring's tolerances come from.
TOL_TABLE, TOL_ASSUMED = 0, 1
TOL_BASIS_TEXT = (
    "tolerances of its standard size (shipped AS568 / ISO 3601-1 table)",
    "tolerances assumed: ISO 3601-1:2012 Annex A Eq. A.1 on d1 (recalled from memory) and "
    "the nearest standard cross-section's tolerance on d2",
)


@lru_cache(maxsize=1)
def _standard_tolerances() -> dict[str, tuple[float, float]]:
    rings = standard_orings()
    return {str(d): (float(it), float(ct)) for d, it, ct in
            zip(rings.designation, rings.id_tol_mm, rings.cs_tol_mm, strict=True)}


def assumed_ring_tolerances(id_mm: Any, cs_mm: Any) -> tuple[np.ndarray, np.ndarray]:
    """(+/- d1, +/- d2) in mm for rings of no standard size: d1 by ISO 3601-1:2012 Annex A
    Eq. A.1, ``d1^0.95 x 0.009 + 0.11`` (recalled from memory, REFERENCE.md 1.1); d2 the
    tolerance of the nearest cross-section in the shipped AS568 / ISO 3601-1 tables."""
    d1 = np.asarray(id_mm, dtype=float)
    d2 = np.asarray(cs_mm, dtype=float)
    with np.errstate(invalid="ignore"):
        id_tol = np.where(d1 > 0, np.abs(d1) ** 0.95 * 0.009 + 0.11, np.nan)
    rings = standard_orings()
    cs_values, first = np.unique(rings.cs_mm, return_index=True)
    cs_tols = rings.cs_tol_mm[first]
    nearest = np.abs(np.nan_to_num(d2, nan=0.0)[..., None] - cs_values).argmin(axis=-1)
    cs_tol = np.where(np.isnan(d2), np.nan, cs_tols[nearest])
    return id_tol, cs_tol


def ring_tolerances(spec: PartSpec) -> tuple[float, float, int]:
    """(+/- d1, +/- d2, basis) of one ring: its standard size's table row when the part
    names one, else :func:`assumed_ring_tolerances`."""
    if spec.standard:
        hit = _standard_tolerances().get(normalise_designation(spec.standard))
        if hit is not None:
            return hit[0], hit[1], TOL_TABLE
    id_tol, cs_tol = assumed_ring_tolerances(_f(spec.id_mm), _f(spec.cs_mm))
    return float(id_tol), float(cs_tol), TOL_ASSUMED


def _f(value: float | None) -> float:
    return math.nan if value is None else float(value)


def columns_from_specs(specs: Sequence[PartSpec]) -> PartColumns:
    """Columns for a list of parts. Round-section rings missing an outside diameter or height
    get ``id + 2 cs`` and ``cs`` (used by matching; the ring rules read id and cs only)."""
    n = len(specs)
    kind = np.empty(n, dtype=np.int16)
    cols = {name: np.empty(n, dtype=float) for name in
            ("id_mm", "od_mm", "height_mm", "cs_mm", "volume_cm3", "hardness")}
    mat = np.empty(n, dtype=np.int16)
    any_mat = np.zeros(n, dtype=bool)
    id_tol = np.full(n, math.nan)
    cs_tol = np.full(n, math.nan)
    basis = np.full(n, TOL_ASSUMED, dtype=np.int8)
    for i, p in enumerate(specs):
        k = PartKind(p.kind)
        kind[i] = KIND_CODE[k]
        idm, od, h, cs = _f(p.id_mm), _f(p.od_mm), _f(p.height_mm), _f(p.cs_mm)
        if k in ROUND_SECTION:
            if math.isnan(od):
                od = idm + 2.0 * cs
            if math.isnan(h):
                h = cs
            id_tol[i], cs_tol[i], basis[i] = ring_tolerances(p)
        cols["id_mm"][i], cols["od_mm"][i], cols["height_mm"][i], cols["cs_mm"][i] = idm, od, h, cs
        cols["volume_cm3"][i] = _f(p.volume_cm3)
        cols["hardness"][i] = _f(p.hardness_shore_a)
        mat[i] = material_code(p.material)
        any_mat[i] = p.material is None and p.standard is not None
    return PartColumns(kind=kind, material=mat, any_material=any_mat, id_tol_mm=id_tol,
                       cs_tol_mm=cs_tol, tol_basis=basis, **cols)
