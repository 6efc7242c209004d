"""Fit thresholds and the per-kind rule sets, evaluated over columns of parts.

One implementation serves both the scalar :func:`inventory.bench.fit.fit` (a column of one
part) and the compatibility matrix (a column of many parts), so the two cannot disagree.
Each rule returns :class:`RawCheck` items: a name, the computed values, the allowed range
as text, a status code per part (0 pass, 1 marginal, 2 fail) and the rule's source.

Thresholds live in :class:`~inventory.bench.fit_limits.FitRules`; parts as columns in
:mod:`inventory.bench.fit_columns`; the building blocks of a check in
:mod:`inventory.bench.fit_checks`.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np

from inventory.bench.fit_checks import (
    ELASTOMER_FAMILIES,
    FAMILY,
    MATERIAL_FAMILIES,
    RADIAL,
    RawCheck,
    bore_class_limits,
    class_limits,
    kind_status_table,
    make_check,
    material_status_table,
    need,
    range_check,
    seat_problem,
    squeeze_range,
    swell_pct,
)
from inventory.bench.fit_columns import PartColumns, assumed_ring_tolerances
from inventory.bench.fit_geometry import (
    cross_section_bounds,
    spacer_end_pressure,
    stretched_cross_section,
)
from inventory.bench.fit_limits import (
    FAIL,
    NOT_APPLICABLE,
    PASS,
    SRC_CP,
    SRC_FILL,
    SRC_GAS,
    SRC_GLAND,
    SRC_GLIDE,
    SRC_HARDNESS,
    SRC_ISO286,
    SRC_KIND,
    SRC_MATERIAL,
    SRC_STRETCH,
    STATUS_CODE,
    FitRules,
)
from inventory.bench.tolerances import HOLE, SHAFT
from inventory.core.fits import fit_class_problems, seat_problems
from inventory.core.model import Gland, Medium, PartKind, SeatSpec


def _ring_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    """Stretch, squeeze and fill at nominal sizes and over the tolerance range.

    The range runs over the ring's d1 and d2 limits and the seat's ISO 286 limits (bore
    and groove root of a piston gland, rod and groove of a rod gland, the bolt of a face
    seal when it has a class). The minimum squeeze and fill use the smaller stretched
    cross-section (larger reduction), the maximum the larger one (REFERENCE.md 2,
    corrected); the nominal uses constant volume.

    Squeeze ``1 - t / d2'`` and fill grow with d2' and fall with t; d2' grows with d2 and
    with d1 (less stretch), and the outer diameter (bore, rod-gland groove, counterbore)
    moves only t or the face width. So the minimum takes d1 and d2 low and the outer
    diameter high, the maximum the opposite; only the inner diameter (groove root, rod,
    bolt) moves both t and the stretch, and both of its limits are tried.
    """
    gland = Gland(seat.gland)
    d1, d2 = c.id_mm, c.cs_mm
    if gland in RADIAL:
        g = need(seat, *RADIAL[gland])
    elif gland == Gland.FACE:
        g = need(seat, "rod_mm", "bore_mm", "housing_depth_mm")
    else:
        return seat_problem(len(c), f"no O-ring rules for a {gland} gland")
    if isinstance(g, str):
        return seat_problem(len(c), g)
    if gland == Gland.PISTON:
        outer = class_limits(g["bore_mm"], seat.bore_fit, rules.default_bore_fit, HOLE,
                              "bore")
        inner = class_limits(g["groove_mm"], None, rules.default_piston_groove_fit, SHAFT,
                              "groove root")
    elif gland == Gland.ROD:
        outer = class_limits(g["groove_mm"], None, rules.default_rod_groove_fit, HOLE,
                              "groove")
        inner = class_limits(g["rod_mm"], seat.rod_fit, rules.default_rod_fit, SHAFT, "rod")
    else:  # face seal round a bolt: the bolt's class when given; depth and counterbore nominal
        outer = (g["bore_mm"], g["bore_mm"], f"counterbore {g['bore_mm']:g} and depth "
                 f"{g['housing_depth_mm']:g} nominal")
        inner = (class_limits(g["rod_mm"], seat.rod_fit, "", SHAFT, "bolt") if seat.rod_fit
                 else (g["rod_mm"], g["rod_mm"], f"bolt {g['rod_mm']:g} nominal (no class)"))
    for lim in (outer, inner):
        if isinstance(lim, str):
            return seat_problem(len(c), lim)
    assert not isinstance(outer, str) and not isinstance(inner, str)
    seat_text = f"{outer[2]}; {inner[2]}"
    if gland == Gland.PISTON:
        def geometry(o, i):  # d_seat, depth, width
            return i, (o - i) / 2.0, g["groove_width_mm"]
        nominal_oi = (g["bore_mm"], g["groove_mm"])
    elif gland == Gland.ROD:
        def geometry(o, i):
            return i, (o - i) / 2.0, g["groove_width_mm"]
        nominal_oi = (g["groove_mm"], g["rod_mm"])
    else:
        def geometry(o, i):
            return i, g["housing_depth_mm"], (o - i) / 2.0
        nominal_oi = (g["bore_mm"], g["rod_mm"])
    id_tol, cs_tol = c.id_tol_mm, c.cs_tol_mm
    if id_tol is None or cs_tol is None:
        id_tol, cs_tol = assumed_ring_tolerances(d1, d2)
    swell = 1.0 + swell_pct(seat, rules) / 100.0
    with np.errstate(divide="ignore", invalid="ignore"):
        d_seat, depth, width = geometry(*nominal_oi)
        stretch = (d_seat - d1) / d1 * 100.0
        d2s = np.asarray(stretched_cross_section(d1, d2, d_seat))
        squeeze = (d2s - depth) / d2s * 100.0
        fill = np.pi * d2s * d2s / 4.0 / (width * depth) * 100.0 * swell
        d1_lo, d1_hi, d2_lo, d2_hi = d1 - id_tol, d1 + id_tol, d2 - cs_tol, d2 + cs_tol
        lows, highs, depths = [], [], []
        for inner_mm in (inner[0], inner[1]):
            ds_lo, t_lo, w_lo = geometry(outer[1], inner_mm)  # outer high: deepest
            small, _ = cross_section_bounds(d1_lo, d2_lo, ds_lo)
            ds_hi, t_hi, w_hi = geometry(outer[0], inner_mm)  # outer low: shallowest
            _, large = cross_section_bounds(d1_hi, d2_hi, ds_hi)
            lows.append(((small - t_lo) / small * 100.0,
                         np.pi * small * small / 4.0 / (w_lo * t_lo) * 100.0 * swell,
                         outer[1] - (d1_lo + 2.0 * small)))
            highs.append(((large - t_hi) / large * 100.0,
                          np.pi * large * large / 4.0 / (w_hi * t_hi) * 100.0 * swell,
                          outer[0] - (d1_hi + 2.0 * large)))
            depths += [t_lo, t_hi]
        sq_lo, fill_lo, room_hi = (np.minimum(a, b) if i < 2 else np.maximum(a, b)
                                   for i, (a, b) in enumerate(zip(*lows, strict=True)))
        sq_hi, fill_hi, room_lo = (np.maximum(a, b) if i < 2 else np.minimum(a, b)
                                   for i, (a, b) in enumerate(zip(*highs, strict=True)))
        stretch_lo = (inner[0] - d1_hi) / d1_hi * 100.0
        stretch_hi = (inner[1] - d1_lo) / d1_lo * 100.0
    squeeze_limit = rules.squeeze_static if gland == Gland.FACE else squeeze_range(seat, rules)
    regime = "static" if squeeze_limit is rules.squeeze_static else (
        "dynamic, air" if squeeze_limit is rules.squeeze_dynamic_air else "dynamic, oil")
    depth_text = (f"radial depth {depth:.3f} mm nominal, {float(np.min(depths)):.3f}-"
                  f"{float(np.max(depths)):.3f} over the seat limits")
    out = [
        range_check("installed stretch", stretch, stretch_lo, stretch_hi, rules.stretch,
                     SRC_STRETCH,
                     note=f"range over ring and seat tolerances; {seat_text}"),
        range_check("squeeze", squeeze, sq_lo, sq_hi, squeeze_limit, SRC_GLAND,
                     note=f"{regime} range; cross-section reduced by stretch (nominal: "
                          f"constant volume; minimum: the larger, maximum: the smaller of "
                          f"the handbook and constant-volume reductions); {depth_text}"),
        range_check("gland fill", fill, fill_lo, fill_hi, rules.fill, SRC_FILL,
                     note=f"includes {swell_pct(seat, rules):g} % swell; groove width nominal"),
    ]
    if gland == Gland.FACE:
        room = g["bore_mm"] - (d1 + 2.0 * d2s)
        out.append(range_check("room to counterbore", room, room_lo, room_hi,
                                rules.face_outer_room, SRC_CP))
    return out


def _lip_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    gland = Gland(seat.gland)
    if gland not in RADIAL:
        return seat_problem(len(c), f"no lip-seal rules for a {gland} gland")
    g = need(seat, *RADIAL[gland])
    if isinstance(g, str):
        return seat_problem(len(c), g)
    section = (c.od_mm - c.id_mm) / 2.0
    with np.errstate(divide="ignore", invalid="ignore"):
        if gland == Gland.ROD:
            depth = (g["groove_mm"] - g["rod_mm"]) / 2.0
            contact = (g["rod_mm"] - c.id_mm) / g["rod_mm"] * 100.0
            contact_name = "lip contact on rod"
        else:
            depth = (g["bore_mm"] - g["groove_mm"]) / 2.0
            contact = (c.od_mm - g["bore_mm"]) / g["bore_mm"] * 100.0
            contact_name = "lip contact in bore"
        interference = (section - depth) / section * 100.0
        axial = (g["groove_width_mm"] - c.height_mm) / c.height_mm * 100.0
    return [
        make_check("section interference", interference, rules.lip_section_interference,
               SRC_CP, note=f"gland depth {depth:.3f} mm"),
        make_check(contact_name, contact, rules.lip_contact, SRC_CP),
        make_check("axial clearance in groove", axial, rules.lip_axial_clearance, SRC_CP),
    ]


def _wiper_in_groove(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    """A scraper or wiper held in a rod-gland groove (an air-shaft seal head): lip on the
    rod, outside diameter in the groove, height in the groove width."""
    g = need(seat, *RADIAL[Gland.ROD])
    if isinstance(g, str):
        return seat_problem(len(c), g)
    rod, groove = g["rod_mm"], g["groove_mm"]
    return [
        make_check("lip interference on rod", (rod - c.id_mm) / rod * 100.0,
               rules.wiper_lip_interference, SRC_CP),
        make_check("outside in groove", (c.od_mm - groove) / groove * 100.0,
               rules.wiper_groove_fit, SRC_CP, note=f"groove diameter {groove:g} mm"),
        make_check("axial clearance in groove", g["groove_width_mm"] - c.height_mm,
               rules.wiper_groove_axial, SRC_CP),
    ]


def _wiper_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    if Gland(seat.gland) == Gland.ROD:
        return _wiper_in_groove(c, seat, rules)
    if Gland(seat.gland) != Gland.HOUSING:
        return seat_problem(len(c), f"no wiper rules for a {seat.gland} gland")
    g = need(seat, "rod_mm", "bore_mm")
    if isinstance(g, str):
        return seat_problem(len(c), g)
    rod, bore = g["rod_mm"], g["bore_mm"]
    bore_limits = bore_class_limits(bore, seat.bore_fit, rules)
    if isinstance(bore_limits, str):
        return seat_problem(len(c), bore_limits)
    low, high, note = bore_limits
    out = [
        make_check("lip interference on stanchion", (rod - c.id_mm) / rod * 100.0,
               rules.wiper_lip_interference, SRC_CP),
        make_check("press fit at largest bore", (c.od_mm - high) / bore * 100.0,
               rules.wiper_press_fit_loosest, SRC_ISO286, note),
        make_check("press fit at smallest bore", (c.od_mm - low) / bore * 100.0,
               rules.wiper_press_fit_tightest, SRC_ISO286, note),
    ]
    depth = seat.housing_depth_mm
    if depth is not None:
        out.append(make_check("height above housing depth", c.height_mm - depth,
                          rules.wiper_protrusion, SRC_CP))
    return out


def _glide_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    """A PTFE guide band in a groove: band width against groove width, band thickness
    against groove depth (the guiding play) and the free band against its running surface.

    Piston gland: depth ``(bore - groove root) / 2``, running clearance ``bore - od``.
    Rod gland (a guide band in a seal head): depth ``(groove - rod) / 2``, running
    clearance ``id - rod``. Thickness is ``(od - id) / 2``.
    """
    gland = Gland(seat.gland)
    if gland not in RADIAL:
        return seat_problem(len(c), f"no glide-ring rules for a {gland} gland")
    g = need(seat, *RADIAL[gland])
    if isinstance(g, str):
        return seat_problem(len(c), g)
    thickness = (c.od_mm - c.id_mm) / 2.0
    if gland == Gland.PISTON:
        depth = (g["bore_mm"] - g["groove_mm"]) / 2.0
        running, surface = g["bore_mm"] - c.od_mm, "bore"
    else:
        depth = (g["groove_mm"] - g["rod_mm"]) / 2.0
        running, surface = c.id_mm - g["rod_mm"], "rod"
    return [
        make_check("axial clearance in groove", g["groove_width_mm"] - c.height_mm,
               rules.glide_axial_clearance, SRC_GLIDE),
        make_check("radial play (depth - thickness)", depth - thickness, rules.glide_radial_play,
               SRC_GLIDE, note=f"groove depth {depth:.3f} mm"),
        make_check(f"clearance to {surface}", running, rules.glide_running_clearance, SRC_GLIDE,
               note="diametral, free band"),
    ]


def _foam_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    g = need(seat, "rod_mm", "bore_mm")
    if isinstance(g, str):
        return seat_problem(len(c), g)
    rod, bore = g["rod_mm"], g["bore_mm"]
    out = [
        make_check("inside on stanchion", (rod - c.id_mm) / rod * 100.0,
               rules.foam_id_interference, SRC_CP),
        make_check("outside against pocket bore", (c.od_mm - bore) / bore * 100.0,
               rules.foam_od_interference, SRC_CP),
    ]
    depth = seat.housing_depth_mm
    if depth:
        out.append(make_check("thickness over pocket depth", c.height_mm / depth,
                          rules.foam_height_ratio, SRC_CP))
    return out


def _bumper_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    g = need(seat, "rod_mm")
    if isinstance(g, str):
        return seat_problem(len(c), g)
    with np.errstate(divide="ignore", invalid="ignore"):
        out = [make_check("stretch onto shaft", (g["rod_mm"] - c.id_mm) / c.id_mm * 100.0,
                      rules.bumper_stretch, SRC_CP)]
    bore, depth = seat.bore_mm, seat.housing_depth_mm
    if bore is not None:
        out.append(make_check("radial room", (bore - c.od_mm) / 2.0, rules.bumper_radial_room,
                          SRC_CP))
    if depth:
        out.append(make_check("height over axial room", c.height_mm / depth,
                          rules.bumper_height_ratio, SRC_CP))
    return out


def _spacer_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    g = need(seat, "bore_mm")
    if isinstance(g, str):
        return seat_problem(len(c), g)
    out = [make_check("radial clearance in chamber", (g["bore_mm"] - c.od_mm) / 2.0,
                  rules.spacer_radial_clearance, SRC_CP)]
    depth = seat.housing_depth_mm
    if depth is not None:
        out.append(make_check("usable length left", depth - c.height_mm,
                          rules.spacer_length_room, SRC_CP))
    gas = need(seat, "chamber_volume_cm3", "piston_mm", "travel_mm", "set_pressure_bar")
    if not isinstance(gas, str):
        # a spacer without a recorded volume counts as a solid cylinder (the safe side)
        solid = np.pi * c.od_mm * c.od_mm / 4.0 * c.height_mm / 1000.0
        volume = np.where(np.isnan(c.volume_cm3), solid, c.volume_cm3)
        for n in dict.fromkeys((1.0, rules.polytropic_n)):
            eff = spacer_end_pressure(gas["chamber_volume_cm3"], volume,
                                      piston_mm=gas["piston_mm"], travel_mm=gas["travel_mm"],
                                      set_pressure_bar=gas["set_pressure_bar"], n=n,
                                      p_atm_bar=rules.p_atm_bar)
            if n == 1.0:
                out.append(make_check("compression ratio", np.asarray(eff.ratio, float),
                                  rules.spacer_compression_ratio, SRC_GAS))
            out.append(make_check(f"end pressure n={n:g}",
                              np.asarray(eff.p2_gauge_bar, float), rules.spacer_end_pressure,
                              SRC_GAS, note=f"bar gauge at full travel, set "
                                                 f"{gas['set_pressure_bar']:g} bar gauge"))
    return out


def _washer_rules(c: PartColumns, seat: SeatSpec, rules: FitRules) -> list[RawCheck]:
    g = need(seat, "rod_mm")
    if isinstance(g, str):
        return seat_problem(len(c), g)
    out = [make_check("inside clearance over bolt", c.id_mm - g["rod_mm"],
                  rules.washer_id_clearance, SRC_CP)]
    bore = seat.bore_mm
    if bore is not None:
        out.append(make_check("room to counterbore", bore - c.od_mm, rules.washer_outer_room,
                          SRC_CP))
    return out


_RULE_SETS = {
    "ring": _ring_rules, "lip": _lip_rules, "wiper": _wiper_rules, "foam": _foam_rules,
    "bumper": _bumper_rules, "spacer": _spacer_rules, "washer": _washer_rules,
    "glide": _glide_rules,
}


def evaluate(c: PartColumns, seat: SeatSpec, rules: FitRules, *,
             reference_shore_a: float | None = None) -> list[RawCheck]:
    """All checks of the seat's rule set over the parts in ``c`` (kind check first).

    Parts whose kind does not go in the seat get FAIL in the kind check; the caller decides
    whether to show them (the matrix marks them NOT_APPLICABLE instead).
    """
    n = len(c)
    kinds = kind_status_table(PartKind(seat.part_kind), rules)[c.kind]
    checks = [RawCheck("kind", None, str(PartKind(seat.part_kind)),
                       np.where(kinds == NOT_APPLICABLE, FAIL, kinds).astype(np.int8), SRC_KIND)]
    family = FAMILY.get(PartKind(seat.part_kind))
    if family is None:
        return checks + seat_problem(n, f"no fit rules for {seat.part_kind} seats")
    impossible = seat_problems(seat) + fit_class_problems(seat)
    if impossible:  # geometry that cannot exist or a class of the wrong role: no numbers
        return checks + seat_problem(n, "; ".join(f"{col}: {msg}" for col, msg in impossible))
    checks += _RULE_SETS[family](c, seat, rules)
    if family in MATERIAL_FAMILIES:
        mat = material_status_table(Medium(seat.medium), rules)[c.material]
        mat = np.where(c.any_material, PASS, mat).astype(np.int8)
        checks.append(RawCheck("material", None, f"suits {Medium(seat.medium)}", mat,
                               SRC_MATERIAL))
        if reference_shore_a is not None and family in ELASTOMER_FAMILIES:
            diff = c.hardness - float(reference_shore_a)
            status = rules.hardness.grade(diff)
            unknown = STATUS_CODE[rules.unknown_hardness_status]
            status = np.where(np.isnan(diff) & ~c.any_material, unknown, status)
            status = np.where(np.isnan(diff) & c.any_material, PASS, status).astype(np.int8)
            checks.append(RawCheck("hardness", diff, rules.hardness.text(), status,
                                   SRC_HARDNESS, "Shore A",
                                   f"difference to the reference {reference_shore_a:g} Shore A"))
    return checks


def worst(checks: Sequence[RawCheck]) -> np.ndarray:
    """Worst status per part over the checks (the verdict code)."""
    return np.maximum.reduce([ch.status for ch in checks]).astype(np.int8)
