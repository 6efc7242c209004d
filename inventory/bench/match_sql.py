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
from datetime import date
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


def _spec(row: tuple) -> PartSpec:
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


def _dimension(spec: PartSpec, dim: str) -> float:
    """The value matching compares (NaN when absent), as the array columns hold it."""
    value = getattr(spec, f"{dim}_mm")
    v = math.nan if value is None else float(value)
    if math.isnan(v) and dim in ("od", "height") and PartKind(spec.kind) in ROUND_SECTION:
        idm = math.nan if spec.id_mm is None else float(spec.id_mm)
        cs = math.nan if spec.cs_mm is None else float(spec.cs_mm)
        v = idm + 2.0 * cs if dim == "od" else cs
    return v


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

    def parts(self, spec: PartSpec) -> dict[str, float]:
        out: dict[str, float] = {}
        for dim, value in self.dims.items():
            part = abs(_dimension(spec, dim) - value) / self.tol[dim]
            out[dim] = self.weights.missing_dimension if math.isnan(part) else part
        if self.kinds is not None:
            out["kind"] = self.kinds[KIND_CODE[PartKind(spec.kind)]]
        if self.materials is not None:
            any_material = spec.material is None and spec.standard is not None
            out["material"] = 0.0 if any_material else self.materials[
                material_code(spec.material)]
        return out

    def best(self, specs: Sequence[PartSpec], source: str, limit: int) -> list[Candidate]:
        """The ``limit`` best of ``specs`` (in the catalog's order), best first."""
        scored = []
        for i, spec in enumerate(specs):
            parts = self.parts(spec)
            total = 0.0
            for v in parts.values():
                total += v
            scored.append((total, i, parts))
        scored.sort(key=lambda t: (t[0], t[1]))
        out = []
        for total, i, parts in scored[:limit]:
            spec = specs[i]
            dim_parts = {d: parts[d] for d in DIMENSIONS if d in parts}
            out.append(Candidate(
                index=i, code=spec.code, source=source, kind=str(PartKind(spec.kind)),
                id_mm=spec.id_mm, od_mm=spec.od_mm, height_mm=spec.height_mm,
                cs_mm=spec.cs_mm, score=total, parts=parts,
                driver=max(dim_parts, key=dim_parts.__getitem__) if dim_parts else None))
        return out


def _window(reader: Reader, scorer: Scorer, width: float | None) -> list[PartSpec]:
    """The bench parts within ``width`` tolerances of every reading (None: every part), in
    the catalog's code order."""
    where = ["kind NOT IN :excluded"]
    params: dict[str, Any] = {"excluded": sorted(str(k) for k in NOT_BENCH_KINDS),
                              "rings": _RINGS}
    if width is not None:
        for dim, value in scorer.dims.items():
            half = width * (1.0 + EDGE) * scorer.tol[dim] + EDGE
            where.append(_WINDOW_SQL[dim])
            params[f"{dim}_lo"], params[f"{dim}_hi"] = value - half, value + half
    sql = (f"SELECT {', '.join(COLUMNS)} FROM part WHERE {' AND '.join(where)} "
           "ORDER BY code")
    if "rings" not in " ".join(where):
        params.pop("rings")
    return [_spec(r) for r in reader.rows(sql, **params)]


def shop_candidates(reader: Reader, scorer: Scorer, limit: int) -> list[tuple[PartSpec,
                                                                              Candidate]]:
    """The ``limit`` best shop parts, the window widened until it holds them for sure."""
    for width in (*WINDOWS, None):
        specs = _window(reader, scorer, width)
        best = scorer.best(specs, "stock", limit)
        if width is None or (len(best) == limit and best[-1].score <= width):
            return [(specs[c.index], c) for c in best]
    raise AssertionError("unreachable")  # pragma: no cover


def standard_candidates(scorer: Scorer, limit: int) -> list[tuple[PartSpec, Candidate]]:
    specs = [PartSpec(code=d, kind=PartKind.O_RING, id_mm=i, cs_mm=c, standard=d)
             for d, i, c in standard_ring_rows()]
    return [(specs[c.index], c) for c in scorer.best(specs, "standard", limit)]


def stocked_as(reader: Reader, designations: Sequence[str]) -> dict[str, list[str]]:
    """Standard designation -> the shop's bench parts stocked as it (in code order), for
    the ``designations`` shown."""
    wanted = set(designations)
    if not wanted:
        return {}
    out: dict[str, list[str]] = {}
    for code, standard in reader.rows(
            "SELECT code, standard FROM part WHERE standard IS NOT NULL AND standard <> '' "
            "AND kind NOT IN :excluded ORDER BY code",
            excluded=sorted(str(k) for k in NOT_BENCH_KINDS)):
        key = normalise_designation(standard)
        if key in wanted:
            out.setdefault(key, []).append(code)
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


def stock_of(reader: Reader, specs: dict[str, PartSpec], on: date) -> dict[str, StockInfo]:
    """On hand, locations and units past storage of the parts ``specs`` (by code), the
    movements summed per part, location and lot by the database (as
    :func:`inventory.bench.stock_read.stock_infos` sums them)."""
    if not specs:
        return {}
    sql = STOCK_SQL.format(where="WHERE p.code IN :codes")
    return collect_stock(reader.rows(sql, codes=sorted(specs)), specs, on)


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
