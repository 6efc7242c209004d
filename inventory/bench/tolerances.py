"""ISO 286 limits for the fits used around seals: holes E-H, shafts e-h, grades 5-11.

A seal housing drawing says "bore 41 H8"; the press-fit check of a wiper needs the smallest
and largest bore that class allows. :func:`limits` gives them from the ISO 286-1 standard
tolerance grades (IT) and fundamental deviations shipped in ``standards/iso286.csv``.

Rule (ISO 286-1): a shaft's upper deviation is its fundamental deviation ``es`` and its lower
deviation ``ei = es - IT``; a hole's lower deviation is ``EI`` and ``ES = EI + IT``; for
hole letters A-H, ``EI = -es`` of the same shaft letter. Sizes are covered from above 0 up
to and including 120 mm; a band "over 30 to 50" holds 30 < size <= 50.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import lru_cache

from inventory.bench.sizes import ISO286_FILE, read_standard_csv
from inventory.core.fits import (  # noqa: F401 - re-exported: the class names live in core
    GRADES,
    HOLE,
    HOLE_LETTERS,
    SHAFT,
    SHAFT_LETTERS,
    check_role,
    parse_fit,
)


@dataclass(frozen=True, slots=True)
class _Band:
    over_mm: float
    to_mm: float
    it_um: dict[int, int]
    es_um: dict[str, int]  # shafts
    ei_um: dict[str, int]  # holes (lower deviation EI)


@lru_cache(maxsize=1)
def _bands() -> tuple[_Band, ...]:
    _, rows = read_standard_csv(ISO286_FILE)
    bands = []
    for r in rows:
        bands.append(
            _Band(
                over_mm=float(r["over_mm"]),
                to_mm=float(r["to_mm"]),
                it_um={g: int(r[f"IT{g}"]) for g in GRADES},
                es_um={ch: int(r[f"es_{ch}"]) for ch in SHAFT_LETTERS},
                ei_um={ch: int(r[f"EI_{ch}"]) for ch in HOLE_LETTERS},
            )
        )
    return tuple(sorted(bands, key=lambda b: b.over_mm))


def covered_range_mm() -> tuple[float, float]:
    """Lowest (exclusive) and highest (inclusive) nominal size the shipped table covers."""
    bands = _bands()
    return bands[0].over_mm, bands[-1].to_mm


def _band(nominal_mm: float) -> _Band:
    for band in _bands():
        if band.over_mm < nominal_mm <= band.to_mm:
            return band
    low, high = covered_range_mm()
    raise ValueError(
        f"nominal size {nominal_mm:g} mm is outside the ISO 286 table shipped "
        f"(over {low:g} up to {high:g} mm)"
    )


def it_um(nominal_mm: float, grade: int) -> int:
    """Standard tolerance IT``grade`` in micrometres for a nominal size."""
    if grade not in GRADES:
        raise ValueError(f"IT grade {grade} not covered: grades 5 to 11")
    return _band(nominal_mm).it_um[grade]


def deviations_um(nominal_mm: float, fit: str = "f7") -> tuple[int, int]:
    """(upper, lower) deviation in micrometres: ``(es, ei)`` for shafts, ``(ES, EI)`` holes."""
    letter, grade = parse_fit(fit)
    band = _band(nominal_mm)
    it = band.it_um[grade]
    if letter.islower():
        es = band.es_um[letter]
        return es, es - it
    ei = band.ei_um[letter]
    return ei + it, ei


def limits(nominal_mm: float, fit: str = "f7") -> tuple[float, float]:
    """(low_mm, high_mm): the smallest and largest size a tolerance class allows.

    >>> limits(32, "f7")
    (31.95, 31.975)
    """
    if not nominal_mm > 0:
        raise ValueError(f"nominal size must be positive, got {nominal_mm!r}")
    upper, lower = deviations_um(nominal_mm, fit)
    return round(nominal_mm + lower / 1000, 6), round(nominal_mm + upper / 1000, 6)
