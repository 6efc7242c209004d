"""The shop's catalog as the bench lookups need it, read by SQL straight into arrays.

``match`` and ``fit`` compare a measurement with every part, so they need every part's
kind, dimensions, material, hardness and standard size as columns (numpy arrays), not as
ORM objects: one plain SELECT of those columns, then the columns built with array
operations (:func:`columns_from_rows`, the same values :func:`inventory.bench.fit_columns.
columns_from_specs` gives from records). A :class:`PartSpec` is made only for the parts a
lookup shows (:class:`PartRows`). Stock is summed in SQL per candidate shown
(:mod:`inventory.bench.service`), and so are the shelf-life checks.
"""

from __future__ import annotations

import math
from collections.abc import Collection, Iterator, Mapping, Sequence
from typing import Any

import numpy as np
from sqlalchemy import select
from sqlalchemy.orm import Session
from sqlmodel import col

from inventory.bench.fit_columns import (
    TOL_ASSUMED,
    TOL_TABLE,
    PartColumns,
    _standard_tolerances,
    assumed_ring_tolerances,
    material_code,
)
from inventory.bench.fit_limits import KIND_CODE
from inventory.bench.matching import PartArrays
from inventory.bench.seals import ROUND_SECTION
from inventory.bench.sizes import normalise_designation
from inventory.core.model import PartKind, PartSpec
from inventory.core.tables import Part

#: The columns read, in order (the PartSpec fields they fill).
COLUMNS = ("code", "kind", "description", "id_mm", "od_mm", "height_mm", "cs_mm", "material",
           "hardness", "volume_cm3", "unit", "standard")
_FLOATS = ("id_mm", "od_mm", "height_mm", "cs_mm", "hardness", "volume_cm3")
CHUNK = 10_000


def _given(values: np.ndarray) -> np.ndarray:
    """True where an object column holds a value (not NULL)."""
    return np.fromiter((v is not None for v in values), dtype=bool, count=len(values))


class PartRows(Sequence[PartSpec]):
    """The parts as columns; ``rows[i]`` makes the :class:`PartSpec` of one part on demand
    (a lookup shows a handful; iterating makes them all, as ``parts find`` needs)."""

    def __init__(self, data: dict[str, Any]) -> None:
        self.data = data
        self.codes: np.ndarray = data["code"]
        self._index: dict[str, int] | None = None
        self._asked = 0

    def __len__(self) -> int:
        return len(self.codes)

    def __getitem__(self, i):
        if isinstance(i, slice):
            return [self[j] for j in range(*i.indices(len(self)))]
        d = self.data

        def num(name: str, cast=float):
            v = d[name][i]
            return None if v is None or (isinstance(v, float) and math.isnan(v)) else cast(v)

        return PartSpec(code=str(d["code"][i]), kind=PartKind(d["kind"][i]),
                        description=d["description"][i] or "", id_mm=num("id_mm"),
                        od_mm=num("od_mm"), height_mm=num("height_mm"), cs_mm=num("cs_mm"),
                        material=d["material"][i], hardness_shore_a=num("hardness", int),
                        volume_cm3=num("volume_cm3"), unit=d["unit"][i] or "each",
                        standard=d["standard"][i])

    def __iter__(self) -> Iterator[PartSpec]:
        return (self[i] for i in range(len(self)))

    def index_of(self, code: str) -> int | None:
        """Row of ``code``: a scan for the first few codes asked (a lookup shows a handful),
        an index once many are asked."""
        self._asked += 1
        if self._index is None and self._asked > 16:
            self._index = {str(c): i for i, c in enumerate(self.codes)}
        if self._index is not None:
            return self._index.get(code)
        hit = np.flatnonzero(self.codes == code)
        return int(hit[0]) if len(hit) else None

    def standards(self) -> Iterator[tuple[str, str]]:
        """(code, standard designation) of the parts that name a standard size."""
        std = self.data["standard"]
        for i in np.flatnonzero(_given(std)):
            yield str(self.codes[i]), str(std[i])

    def by_code(self) -> Mapping[str, PartSpec]:
        return _ByCode(self)


class _ByCode(Mapping[str, PartSpec]):
    """``code -> PartSpec`` over :class:`PartRows`, made per code asked for."""

    def __init__(self, rows: PartRows) -> None:
        self.rows = rows

    def __getitem__(self, code: str) -> PartSpec:
        i = self.rows.index_of(code)
        if i is None:
            raise KeyError(code)
        return self.rows[i]

    def __iter__(self) -> Iterator[str]:
        return (str(c) for c in self.rows.codes)

    def __len__(self) -> int:
        return len(self.rows)


def read_rows(session: Session, *, exclude: Collection[PartKind] = ()) -> PartRows:
    """Every part but those of the ``exclude`` kinds, ordered by code, as columns (one
    SELECT of the columns, no ORM objects)."""
    q = select(*[getattr(Part, c) for c in COLUMNS]).order_by(Part.code)
    if exclude:
        q = q.where(col(Part.kind).not_in([str(k) for k in exclude]))
    conn = session.connection()
    # the driver's own cursor: plain tuples, no result-row objects for 100,000 parts (the
    # kinds bound as literals are the tool's own enum values)
    sql = str(q.compile(dialect=conn.dialect, compile_kwargs={"literal_binds": True}))
    chunks: dict[str, list[np.ndarray]] = {name: [] for name in COLUMNS}
    shared: dict[Any, Any] = {}  # one object per repeated text (kind, unit, material, ...)
    cursor = conn.connection.dbapi_connection.cursor()  # type: ignore[union-attr]
    try:
        cursor.execute(sql)
        while rows := cursor.fetchmany(CHUNK):  # a chunk at a time: no 100,000-row list
            for name, values in zip(COLUMNS, zip(*rows, strict=True), strict=True):
                if name in _FLOATS:
                    chunks[name].append(np.array(values, dtype=float))  # NULL -> NaN
                elif name == "code":
                    chunks[name].append(np.array(values, dtype=object))
                else:
                    chunks[name].append(np.array([shared.setdefault(v, v) for v in values],
                                                 dtype=object))
    finally:
        cursor.close()
    data: dict[str, Any] = {
        name: (np.concatenate(parts) if parts
               else np.empty(0, dtype=float if name in _FLOATS else object))
        for name, parts in chunks.items()}
    return PartRows(data)


def columns_from_rows(rows: PartRows) -> PartColumns:
    """The match/fit columns of ``rows``, built with array operations: the same values as
    :func:`inventory.bench.fit_columns.columns_from_specs` (round-section rings missing an
    outside diameter or height get ``id + 2 cs`` and ``cs``; ring tolerances from the
    standard size's table row when the part names one, else assumed)."""
    d = rows.data
    n = len(rows)
    kind_of = {str(k): KIND_CODE[k] for k in PartKind}
    kinds = d["kind"]
    kind = np.fromiter((kind_of[k] for k in kinds), dtype=np.int16, count=n)
    idm, cs = d["id_mm"].copy(), d["cs_mm"].copy()
    od, h = d["od_mm"].copy(), d["height_mm"].copy()
    round_codes = np.array([KIND_CODE[k] for k in ROUND_SECTION], dtype=np.int16)
    ring = np.isin(kind, round_codes)
    od = np.where(ring & np.isnan(od), idm + 2.0 * cs, od)
    h = np.where(ring & np.isnan(h), cs, h)
    id_tol = np.full(n, math.nan)
    cs_tol = np.full(n, math.nan)
    basis = np.full(n, TOL_ASSUMED, dtype=np.int8)
    ring_at = np.flatnonzero(ring)
    if len(ring_at):
        a_id, a_cs = assumed_ring_tolerances(idm[ring_at], cs[ring_at])
        id_tol[ring_at], cs_tol[ring_at] = a_id, a_cs
        table = _standard_tolerances()
        std = d["standard"]
        for i in ring_at[_given(std[ring_at])]:
            if not std[i]:
                continue
            hit = table.get(normalise_designation(std[i]))
            if hit is not None:
                id_tol[i], cs_tol[i], basis[i] = hit[0], hit[1], TOL_TABLE
    codes: dict[Any, int] = {}
    mats = d["material"]
    mat = np.fromiter((codes[m] if m in codes else codes.setdefault(m, material_code(m))
                       for m in mats), dtype=np.int16, count=n)
    any_mat = ~_given(mats) & _given(d["standard"])
    return PartColumns(kind=kind, id_mm=idm, od_mm=od, height_mm=h, cs_mm=cs,
                       volume_cm3=d["volume_cm3"].copy(), hardness=d["hardness"].copy(),
                       material=mat, any_material=np.asarray(any_mat, dtype=bool),
                       id_tol_mm=id_tol, cs_tol_mm=cs_tol, tol_basis=basis)


def read_part_arrays(session: Session, *,
                     exclude: Collection[PartKind] = ()) -> tuple[PartRows, PartArrays]:
    """The shop's parts (but ``exclude`` kinds) and their match/fit arrays, by SQL."""
    rows = read_rows(session, exclude=exclude)
    return rows, PartArrays(rows.codes, columns_from_rows(rows), "stock",
                            rows)  # type: ignore[arg-type]
