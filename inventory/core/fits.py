"""ISO 286 tolerance-class names and the geometry a seat must have to exist at all.

Pure checks shared by the catalog load (an error at the cell) and the fit rules (a failed
"seat data" check): no silent fall-back to nominal sizes anywhere.

- :func:`parse_fit` reads a class name such as ``H8`` or ``f7``: one letter and a grade.
  The letters and grades covered are those of the shipped ISO 286 table
  (``inventory/standards/iso286.csv``): holes E-H, shafts e-h, grades 5-11.
- :func:`check_role`: ISO 286-1 writes hole classes in upper case and shaft classes in
  lower case; a bore or a rod-gland groove is a hole, a rod, stanchion, bolt or piston-groove
  root a shaft. ``f7`` typed for a bore is a mistake, not a bore class.
- :func:`seat_problems`: a groove root at or above the bore it sits in, a rod-gland groove
  at or below its rod, a housing bore not above the stanchion give negative or zero gland
  depths; each is reported with the column to blame.
"""

from __future__ import annotations

import re

from inventory.core.model import Gland, SeatSpec

GRADES = range(5, 12)
SHAFT_LETTERS = "efgh"
HOLE_LETTERS = "EFGH"
HOLE, SHAFT = "hole", "shaft"
_FIT = re.compile(r"^\s*([A-Za-z])\s*(\d{1,2})\s*$")


def parse_fit(fit: str) -> tuple[str, int]:
    """``"f7"`` -> ``("f", 7)``; ``ValueError`` for letters or grades not covered."""
    m = _FIT.match(fit or "")
    if not m:
        raise ValueError(f"not a tolerance class: {fit!r} (examples: H8, f7, h9)")
    letter, grade = m.group(1), int(m.group(2))
    if letter not in SHAFT_LETTERS + HOLE_LETTERS:
        raise ValueError(
            f"tolerance class {fit!r} not covered: letters E-H (holes) and e-h (shafts)"
        )
    if grade not in GRADES:
        raise ValueError(f"tolerance class {fit!r} not covered: grades 5 to 11")
    return letter, grade


def check_role(fit: str, role: str) -> tuple[str, int]:
    """:func:`parse_fit`, and a ``ValueError`` when the class is of the other role: a hole
    (bore, rod-gland groove) takes upper-case letters E-H, a shaft (rod, piston-groove root)
    lower-case e-h (ISO 286-1 convention)."""
    letter, grade = parse_fit(fit)
    if role == HOLE and letter.islower():
        raise ValueError(f"{fit.strip()} is a shaft class; a hole needs a hole class "
                         f"(upper-case E-H, e.g. H8)")
    if role == SHAFT and letter.isupper():
        raise ValueError(f"{fit.strip()} is a hole class; a shaft needs a shaft class "
                         f"(lower-case e-h, e.g. f7)")
    return letter, grade


#: The role of each tolerance-class column of a seat.
FIT_COLUMNS = {"rod_fit": (SHAFT, "a shaft tolerance class (e-h, grades 5-11, e.g. f7)"),
               "bore_fit": (HOLE, "a hole tolerance class (E-H, grades 5-11, e.g. H8)")}


def fit_class_problems(seat: SeatSpec) -> list[tuple[str, str]]:
    """(column, "expected ..., got ...") for each tolerance class of the wrong role or not
    covered."""
    out = []
    for column, (role, expected) in FIT_COLUMNS.items():
        value = getattr(seat, column)
        if value is None or not str(value).strip():
            continue
        try:
            check_role(str(value), role)
        except ValueError:
            out.append((column, f"expected {expected}, got {value!r}"))
    return out


def seat_problems(seat: SeatSpec) -> list[tuple[str, str]]:
    """(column, "expected ..., got ...") for geometry that cannot exist: the radial gland
    depth or the room a part sits in would be zero or negative. Values not given are not
    judged here (the fit rules name what they miss)."""
    gland = Gland(seat.gland)
    rod, bore, groove = seat.rod_mm, seat.bore_mm, seat.groove_mm
    out = []
    if gland == Gland.PISTON and bore is not None and groove is not None and groove >= bore:
        out.append(("groove_mm", f"expected a groove root diameter below the bore "
                                 f"(bore_mm {bore:g}), got {groove:g}"))
    if gland == Gland.ROD and rod is not None and groove is not None and groove <= rod:
        out.append(("groove_mm", f"expected a groove diameter above the rod "
                                 f"(rod_mm {rod:g}), got {groove:g}"))
    if gland in (Gland.HOUSING, Gland.FACE, Gland.SHAFT) and rod is not None \
            and bore is not None and bore <= rod:
        what = {Gland.HOUSING: "housing bore", Gland.FACE: "counterbore",
                Gland.SHAFT: "room around the part"}[gland]
        out.append(("bore_mm", f"expected a {what} above the rod (rod_mm {rod:g}), "
                               f"got {bore:g}"))
    return out
