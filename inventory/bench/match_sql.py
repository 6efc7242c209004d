"""``inventory match`` with measured dimensions, answered by the database: the catalog is
filtered by SQL to the parts near the readings, and only those are scored (in plain
Python, no numpy, no ORM: a command that runs once should not load either).

The score is :func:`inventory.bench.matching.match`'s: per measured dimension
``|part - reading| / tolerance`` (a dimension the part does not record counts
:attr:`~inventory.bench.match_query.MatchWeights.missing_dimension`), plus the kind and
material penalties, all at least 0. So a part more than ``T`` tolerances off on any one
dimension scores more than ``T``: the SELECT keeps the parts within ``T`` tolerances of
every reading (the ``part`` table's dimension indexes, migration 0006), and once the
``limit``-th best of them scores at most ``T`` no part left out can rank among the
``limit`` best. Otherwise the window widens (:data:`WINDOWS`), at last to the whole
catalog. Ties rank in the catalog's code order, as the array search ranks them, and the
rows are built and ordered by :mod:`inventory.bench.match_rows`, so both searches give the
same candidates in the same order (tests/test_matching.py compares them).
"""

from __future__ import annotations

import math
from collections.abc import Callable, Iterable, Mapping, Sequence
from dataclasses import dataclass
from datetime import date
from functools import cache
from typing import Any

from inventory.bench.fit_limits import KIND_CODE, material_code
from inventory.bench.inputs import NOT_BENCH_KINDS
from inventory.bench.match_query import (
    DIMENSIONS,
    Candidate,
    MatchQuery,
    MatchWeights,
    kind_penalty_table,
    material_penalty_table,
)
from inventory.bench.match_rows import (
    DEFAULT_LIMIT,
    Found,
    MatchRequest,
    MatchResult,
    StockInfo,
    lot_past_storage,
    ranked_rows,
)
from inventory.bench.seals import ROUND_SECTION
from inventory.bench.sizes import normalise_designation, standard_ring_rows
from inventory.core.errors import InventoryError
from inventory.core.model import PartKind, PartSpec
from inventory.core.sqlread import Reader

#: Half-widths of the window tried, in tolerances; past the missing-dimension weight a
#: window no longer bounds the score, so the last try reads every part.
WINDOWS = (1.0, 2.5)
#: Widening a window by this relative margin keeps a part that rounding would put on the
#: wrong side of its edge.
EDGE = 1e-9
COLUMNS = ("code", "kind", "description", "id_mm", "od_mm", "height_mm", "cs_mm", "material",
           "hardness", "volume_cm3", "unit", "standard")
_RINGS = sorted(str(k) for k in ROUND_SECTION)

# a dimension's value as matching reads it: rings without an outside diameter or height
# get ``id + 2 cs`` and ``cs`` (inventory.bench.fit_columns.columns_from_specs)
_WINDOW_SQL = {
    "id": "id_mm BETWEEN :id_lo AND :id_hi",
    "cs": "cs_mm BETWEEN :cs_lo AND :cs_hi",
    "od": "(od_mm BETWEEN :od_lo AND :od_hi OR (od_mm IS NULL AND kind IN :rings AND "
          "id_mm + 2 * cs_mm BETWEEN :od_lo AND :od_hi))",
    "height": "(height_mm BETWEEN :height_lo AND :height_hi OR (height_mm IS NULL AND "
              "kind IN :rings AND cs_mm BETWEEN :height_lo AND :height_hi))",
}


_KIND_CODE = {str(k): code for k, code in KIND_CODE.items()}
_ROUND = frozenset(str(k) for k in ROUND_SECTION)
_AT = {"id": 0, "od": 1, "height": 2, "cs": 3}
_NAN = math.nan


def _f(value: Any) -> float:
    return _NAN if value is None else float(value)


def _dims(kind: str, idm: Any, od: Any, height: Any, cs: Any) -> tuple[float, ...]:
    """(id, od, height, cs) as matching compares them, NaN when absent: rings without an
    outside diameter or height get ``id + 2 cs`` and ``cs`` (as the array columns)."""
    i, o, h, c = _f(idm), _f(od), _f(height), _f(cs)
    if kind in _ROUND:
        if math.isnan(o):
            o = i + 2.0 * c
        if math.isnan(h):
            h = c
    return (i, o, h, c)


def _spec(row: Sequence[Any]) -> PartSpec:
    d = dict(zip(COLUMNS, row, strict=True))

    def num(name: str, cast: Callable[[Any], Any] = float) -> Any:
        v = d[name]
        return None if v is None else cast(float(v))

    return PartSpec(code=str(d["code"]), kind=PartKind(d["kind"]),
                    description=d["description"] or "", id_mm=num("id_mm"),
                    od_mm=num("od_mm"), height_mm=num("height_mm"), cs_mm=num("cs_mm"),
                    material=d["material"], hardness_shore_a=num("hardness", int),
                    volume_cm3=num("volume_cm3"), unit=d["unit"] or "each",
                    standard=d["standard"])


@dataclass(frozen=True, slots=True)
class Scored:
    """What the scorer reads of one candidate: kind, the four dimensions as compared,
    material and standard designation."""

    kind: str
    dims: tuple[float, ...]
    material: str | None
    standard: str | None


class Scorer:
    """The score of one part for one query, in parts named as :func:`matching.match`
    names them, with the same arithmetic (float64, summed in the same order)."""

    def __init__(self, query: MatchQuery, req: MatchRequest,
                 weights: MatchWeights = MatchWeights()) -> None:
        self.dims = query.dims()
        self.tol = {d: req.tolerance.for_value(v) for d, v in self.dims.items()}
        self.weights = weights
        self.kinds = (None if query.kind is None
                      else kind_penalty_table(PartKind(query.kind), weights))
        self.materials = (None if query.material is None
                          else material_penalty_table(query.material, weights))
        self._codes: dict[str | None, int] = {}

    def parts(self, c: Scored) -> dict[str, float]:
        out: dict[str, float] = {}
        for dim, value in self.dims.items():
            part = abs(c.dims[_AT[dim]] - value) / self.tol[dim]
            out[dim] = self.weights.missing_dimension if math.isnan(part) else part
        if self.kinds is not None:
            out["kind"] = self.kinds[_KIND_CODE[c.kind]]
        if self.materials is not None:
            if c.material is None and c.standard is not None:  # any material
                out["material"] = 0.0
            else:
                code = self._codes.get(c.material)
                if code is None:
                    code = self._codes.setdefault(c.material, material_code(c.material))
                out["material"] = self.materials[code]
        return out

    def best(self, candidates: Sequence[Scored], limit: int) -> list[tuple[int, float,
                                                                          dict[str, float]]]:
        """(position, score, parts) of the ``limit`` best, best first; ties by position
        (the catalog's order)."""
        scored = []
        for i, c in enumerate(candidates):
            parts = self.parts(c)
            total = 0.0
            for v in parts.values():
                total += v
            scored.append((total, i, parts))
        scored.sort(key=lambda t: (t[0], t[1]))
        return [(i, total, parts) for total, i, parts in scored[:limit]]

    def candidate(self, spec: PartSpec, source: str, index: int, score: float,
                  parts: dict[str, float]) -> Candidate:
        dim_parts = {d: parts[d] for d in DIMENSIONS if d in parts}
        return Candidate(index=index, code=spec.code, source=source,
                         kind=str(PartKind(spec.kind)), id_mm=spec.id_mm, od_mm=spec.od_mm,
                         height_mm=spec.height_mm, cs_mm=spec.cs_mm, score=score,
                         parts=parts,
                         driver=max(dim_parts, key=dim_parts.__getitem__) if dim_parts
                         else None)


def _window(reader: Reader, scorer: Scorer, width: float | None) -> list[tuple]:
    """The bench parts within ``width`` tolerances of every reading (None: every part), in
    the catalog's code order."""
    where = ["kind NOT IN :excluded"]
    params: dict[str, Any] = {"excluded": sorted(str(k) for k in NOT_BENCH_KINDS)}
    if width is not None:
        for dim, value in scorer.dims.items():
            half = width * (1.0 + EDGE) * scorer.tol[dim] + EDGE
            where.append(_WINDOW_SQL[dim])
            params[f"{dim}_lo"], params[f"{dim}_hi"] = value - half, value + half
            if dim in ("od", "height"):
                params["rings"] = _RINGS
    sql = (f"SELECT {', '.join(COLUMNS)} FROM part WHERE {' AND '.join(where)} "
           "ORDER BY code")
    return reader.rows(sql, **params)


def shop_candidates(reader: Reader, scorer: Scorer, limit: int) -> list[tuple[PartSpec,
                                                                              Candidate]]:
    """The ``limit`` best shop parts, the window widened until it holds them for sure."""
    for width in (*WINDOWS, None):
        rows = _window(reader, scorer, width)
        scored = [Scored(r[1], _dims(r[1], r[3], r[4], r[5], r[6]), r[7], r[11]) for r in rows]
        best = scorer.best(scored, limit)
        if width is None or (len(best) == limit and best[-1][1] <= width):
            out = []
            for i, score, parts in best:
                spec = _spec(rows[i])
                out.append((spec, scorer.candidate(spec, "stock", i, score, parts)))
            return out
    raise AssertionError("unreachable")  # pragma: no cover


@cache
def _standard_scored() -> tuple[Scored, ...]:
    kind = str(PartKind.O_RING)
    return tuple(Scored(kind, _dims(kind, i, None, None, c), None, d)
                 for d, i, c in standard_ring_rows())


def standard_candidates(scorer: Scorer, limit: int) -> list[tuple[PartSpec, Candidate]]:
    rings = standard_ring_rows()
    out = []
    for i, score, parts in scorer.best(_standard_scored(), limit):
        d, idm, cs = rings[i]
        spec = PartSpec(code=d, kind=PartKind.O_RING, id_mm=idm, cs_mm=cs, standard=d)
        out.append((spec, scorer.candidate(spec, "standard", i, score, parts)))
    return out


def stocked_as(reader: Reader, designations: Sequence[str]) -> dict[str, list[str]]:
    """Standard designation -> the shop's bench parts stocked as it (in code order), for
    the ``designations`` shown."""
    wanted = set(designations)
    if not wanted:
        return {}
    excluded = sorted(str(k) for k in NOT_BENCH_KINDS)
    texts = [t for (t,) in reader.rows(  # the few spellings in use (index only)
        "SELECT DISTINCT standard FROM part WHERE standard IS NOT NULL AND standard <> ''")
        if normalise_designation(t) in wanted]
    out: dict[str, list[str]] = {}
    if texts:
        for code, standard in reader.rows(
                "SELECT code, standard FROM part WHERE standard IN :texts "
                "AND kind NOT IN :excluded ORDER BY code", texts=texts, excluded=excluded):
            out.setdefault(normalise_designation(standard), []).append(code)
    return out


#: The movements summed per part, location and lot (the grouping of
#: :func:`inventory.stock.ledger.on_hand`); ``{where}``: the parts asked for, or nothing.
STOCK_SQL = """
SELECT p.code, loc.code, lot.code, lot.cured, lot.extended_until, SUM(m.qty)
FROM movement m
JOIN part p ON p.id = m.part_id
JOIN location loc ON loc.id = m.location_id
JOIN lot ON lot.id = m.lot_id
{where}
GROUP BY p.code, loc.code, lot.code, lot.cured, lot.extended_until
HAVING SUM(m.qty) <> 0
ORDER BY p.code, loc.code, lot.code, lot.cured
"""


def stock_of(reader: Reader, specs: Mapping[str, PartSpec], on: date, *,
             codes: Sequence[str] | None = ()) -> dict[str, StockInfo]:
    """On hand, locations and units past storage of the parts ``codes`` (``()``: the parts
    of ``specs``; None: every part with stock), the movements summed per part, location and
    lot by the database. Parts with nothing on hand are left out."""
    if codes is None:
        return collect_stock(reader.rows(STOCK_SQL.format(where="")), specs, on)
    wanted = sorted(specs if isinstance(codes, tuple) and not codes else codes)
    if not wanted:
        return {}
    sql = STOCK_SQL.format(where="WHERE p.code IN :codes")
    return collect_stock(reader.rows(sql, codes=wanted), specs, on)


def collect_stock(rows: Iterable[Sequence[Any]], specs: Mapping[str, PartSpec],
                  on: date) -> dict[str, StockInfo]:
    """:class:`StockInfo` per part from (part, location, lot, cured, extended, qty) rows."""
    acc: dict[str, dict] = {}
    for part, loc, lot, cured, until, n in rows:
        n = int(n)
        if n <= 0:
            continue
        a = acc.setdefault(part, {"n": 0, "loc": {}, "past": 0, "lots": []})
        a["n"] += n
        a["loc"][loc] = a["loc"].get(loc, 0) + n
        spec = specs.get(part)
        if isinstance(until, str):  # SQLite's driver returns dates as text
            until = date.fromisoformat(until[:10])
        if spec and lot_past_storage(cured, spec.material, on, extended_until=until):
            a["past"] += n
            a["lots"].append(lot)
    return {
        code: StockInfo(a["n"], tuple(sorted(a["loc"].items(), key=lambda kv: (-kv[1], kv[0]))),
                        a["past"], tuple(dict.fromkeys(a["lots"])))
        for code, a in acc.items()
    }


def match_by_sql(reader: Reader, req: MatchRequest, *, on: date | None = None) -> MatchResult:
    """The ranked candidates for measured dimensions (a request without a seat), found by
    the database: the same rows :func:`inventory.bench.match_run.run_match` gives."""
    if req.seat is not None:
        raise ValueError("a seat's verdicts need the fit rules: use match_run.run_match")
    dims = req.query.dims()
    if not dims:
        raise InventoryError("give at least one dimension (--id, --od, --height, --cs), "
                             "or --fork and --seat to list the parts that fit a seat")
    for name, value in dims.items():
        if not value > 0:
            raise InventoryError(f"{name} must be a positive length, got {value!r}")
    limit = DEFAULT_LIMIT if req.limit is None else req.limit
    scorer = Scorer(req.query, req)
    found = [Found(spec, "stock", c) for spec, c in shop_candidates(reader, scorer, limit)]
    if req.wants_standard(req.query.kind):
        standard = standard_candidates(scorer, limit)
        shelf = stocked_as(reader, [spec.code for spec, _ in standard])
        found += [Found(spec, "standard", c, stocked_as=shelf.get(spec.code, ()))
                  for spec, c in standard]
    stock = stock_of(reader, {f.spec.code: f.spec for f in found if f.source == "stock"},
                     on or date.today())
    return MatchResult(ranked_rows(found, lambda code: stock.get(code, StockInfo()), req),
                       "match", req)
