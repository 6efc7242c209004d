"""Rows of the database as the plain records of the pure core."""

from __future__ import annotations

from sqlmodel import Session, select

from inventory.core.model import (
    ForkFamilySpec,
    Gland,
    Medium,
    Motion,
    PartKind,
    PartSpec,
    SeatSpec,
    SpringLayout,
)
from inventory.core.tables import ForkFamily, Part, Seat


def part_spec(p: Part) -> PartSpec:
    return PartSpec(
        code=p.code, kind=PartKind(p.kind), description=p.description, id_mm=p.id_mm,
        od_mm=p.od_mm, height_mm=p.height_mm, cs_mm=p.cs_mm, material=p.material,
        hardness_shore_a=p.hardness, volume_cm3=p.volume_cm3, unit=p.unit, standard=p.standard,
    )


def seat_spec(seat: Seat, fork_code: str) -> SeatSpec:
    return SeatSpec(
        fork=fork_code, seat=seat.code, position=seat.position,
        part_kind=PartKind(seat.part_kind), gland=Gland(seat.gland), motion=Motion(seat.motion),
        medium=Medium(seat.medium), qty_per_fork=seat.qty_per_fork, rod_mm=seat.rod_mm,
        bore_mm=seat.bore_mm, groove_mm=seat.groove_mm, groove_width_mm=seat.groove_width_mm,
        housing_depth_mm=seat.housing_depth_mm, rod_fit=seat.rod_fit, bore_fit=seat.bore_fit,
        chamber_volume_cm3=seat.chamber_volume_cm3, piston_mm=seat.piston_mm,
        travel_mm=seat.travel_mm, set_pressure_bar=seat.set_pressure_bar, notes=seat.notes,
    )


def fork_spec(f: ForkFamily) -> ForkFamilySpec:
    return ForkFamilySpec(
        code=f.code, description=f.description, stanchion_mm=f.stanchion_mm,
        travel_min_mm=f.travel_min_mm, travel_max_mm=f.travel_max_mm,
        spring=SpringLayout(f.spring), year_from=f.year_from, year_to=f.year_to,
    )


def all_parts(session: Session, *, include_kits: bool = False) -> list[PartSpec]:
    q = select(Part).order_by(Part.code)
    if not include_kits:
        q = q.where(Part.kind != PartKind.KIT.value)
    return [part_spec(p) for p in session.exec(q)]


def all_seats(session: Session) -> list[SeatSpec]:
    rows = session.exec(
        select(Seat, ForkFamily.code).join(ForkFamily, ForkFamily.id == Seat.fork_family_id)
        .order_by(ForkFamily.code, Seat.code)
    )
    return [seat_spec(s, code) for s, code in rows]
