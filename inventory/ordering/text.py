"""The readable sentence on every plan line, made from the line's own figures."""

from __future__ import annotations

from datetime import date
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from inventory.ordering.model import PlanLine


def _n(x: float) -> str:
    """A quantity for people: whole numbers plain, others with one decimal."""
    return f"{x:.0f}" if abs(x - round(x)) < 0.05 or abs(x) >= 100 else f"{x:.1f}"


def _pct(x: float) -> str:
    return f"{x * 100:.1f}".rstrip("0").rstrip(".") + "%"


def _d(x: float) -> str:
    return f"{x:.0f} d" if abs(x - round(x)) < 0.05 else f"{x:.1f} d"


def policy_phrase(line: PlanLine, *, pooled: bool, service: str, cover_end: date) -> str:
    """The policy behind a line in words: its level, target and class, the demand quantile
    over the lead time (and for a pre-season line the cover and the build-ahead)."""
    policy, level, order_quantity, eoq = line.policy, line.level, line.order_quantity, line.eoq
    fill_target, abc, lead_quantile = line.fill_target, line.abc, line.lead_quantile
    build_ahead = line.build_ahead
    what = "fill" if service == "fill" else "cycle service"
    target = f"{_pct(fill_target)} {what}" + (f" (class {abc}, pooled)" if pooled
                                                else f" (class {abc})")
    quant = f"the {_pct(fill_target)} demand quantile over the lead time is {_n(lead_quantile)}"
    if policy == "reorder-point":
        return (f"reorder point {_n(level)} with order quantity {order_quantity} "
                f"(EOQ {eoq:.1f}) for {target}; {quant}")
    if policy == "pre-season":
        ahead = f", build-ahead {_n(build_ahead)} for the peak" if build_ahead >= 0.5 else ""
        q = f", at least the EOQ {order_quantity}" if order_quantity else ""
        return (f"pre-season level {_n(level)} covers now to the next possible delivery on "
                f"{cover_end.isoformat()} at {target}{ahead}{q}; {quant}")
    return f"order-up-to level {_n(level)} for {target}; {quant}"


def unit_suffix(unit: str) -> str:
    """" ml" after a quantity of a part counted in millilitres; nothing for whole parts."""
    return "" if not unit or unit == "each" else f" {unit}"


def line_sentence(line: PlanLine) -> str:
    """One sentence naming every step from forecast to order quantity, from the line's own
    figures."""
    part, supplier, choice = line.part, line.supplier, line.supplier_choice
    forecast_cover, cover_days = line.forecast_cover, line.cover_days
    lead_days, lead_sd_days, review_days = line.lead_days, line.lead_sd_days, line.review_days
    peak_days, policy_text = line.peak_days, line.policy_text
    on_hand, expired, on_order = line.on_hand, line.expired, line.on_order
    raw_need, for_kits, assembled, to_kits = (line.raw_need, line.for_kits, line.assembled,
                                              line.to_kits)
    qty, packs, pack, minimum, rounded = (line.qty, line.packs, line.pack_size, line.minimum,
                                          line.rounded)
    shelf_cap, shelf_limit, cure_assumed = line.shelf_cap, line.shelf_limit, line.cure_assumed
    capped, min_forced, late = ("shelf_life" in line.caps, "min_forced" in line.caps,
                                "late" in line.caps)
    topped_up, min_order_value, budget_cut = (line.topped_up, line.min_order_value,
                                              line.budget_cut)
    need_date, arrival = line.need_date, line.arrival
    unit_cost, value, currency = line.unit_cost, line.value, line.currency
    fill, fill_before = line.expected_fill, line.fill_before_caps
    lead = f"lead {_d(lead_days)}" + (f" ± {_d(lead_sd_days)}" if lead_sd_days else "")
    if peak_days is not None and peak_days > lead_days:
        lead += f", {_d(peak_days)} in season"
    u = unit_suffix(line.unit)
    head = (f"{part} from {supplier} ({choice}): expected demand {_n(forecast_cover)}{u} over the "
            f"{cover_days:.0f}-day cover ({lead}, review {_d(review_days)}); {policy_text}; ")
    stock = f"on hand {on_hand}{u}"
    if expired:
        stock += f" (+{expired} past their storage period, not counted)"
    stock += f", on order {on_order}: raw need {raw_need}"
    if assembled:
        stock += (f", of which {min(assembled, raw_need)} kits are assembled from loose seals "
                  "instead (see Kits)")
    if for_kits:
        stock += f" + {for_kits} for kits assembled from loose seals"
    if to_kits:
        stock += f"; {to_kits} spare units go into kits assembled from stock"
    parts = [head + stock]
    need = max(raw_need - assembled, 0) + for_kits
    if need <= 0 and qty == 0:
        parts.append("nothing to order")
    else:
        if rounded > need:
            parts.append(f"rounded to {rounded} ({rounded // max(pack, 1)} x {pack}"
                         + (f", minimum {minimum})" if minimum > pack else ")"))
        if capped and shelf_cap is not None:
            limit = shelf_limit.isoformat() if shelf_limit else "?"
            why = (f"shelf life caps it at {shelf_cap} (expected use before {limit}, a lot "
                   f"cured about {cure_assumed}, less the margin)")
            if min_forced:
                why += (f"; the supplier's minimum {minimum} forces {qty - shelf_cap} above "
                        "the cap")
            why += f"; expected fill {_pct(fill_before)} uncapped"
            parts.append(why)
        if topped_up:
            parts.append(f"+{topped_up} to reach {supplier}'s minimum order of "
                         f"{min_order_value:.2f} {currency}")
        if budget_cut:
            parts.append(f"cut by {budget_cut} to stay within the budget")
        if late and need_date is not None:
            parts.append(f"late: stock runs out about {need_date.isoformat()}, the earliest "
                         f"delivery is {arrival.isoformat()}")
        if qty > 0:
            parts.append(f"order {qty}{u} ({packs} x {pack}{u}) at {unit_cost} = {value:.2f} "
                         f"{currency}, expected fill {_pct(fill)}")
        else:
            parts.append("nothing ordered")
    return "; ".join(parts) + "."


def short_reason(line: PlanLine) -> str:
    """The console's few words on a plan line: what the level asks for, what the shelf and
    the kits change, and what the caps, the supplier minimum and the budget did."""
    u = unit_suffix(line.unit)
    parts = [f"level {_n(line.level)}{u} for {_pct(line.fill_target)}, "
             f"have {line.position}" + (f" (-{line.to_kits} into kits)" if line.to_kits else "")]
    if line.raw_need > 0:
        parts.append(f"short {line.raw_need}")
    if line.assembled:
        parts.append(f"{line.assembled} assembled from seals")
    if line.for_kits:
        parts.append(f"+{line.for_kits} for kits")
    if line.rounded > max(line.raw_need - line.assembled, 0) + line.for_kits:
        parts.append(f"packs/minimum -> {line.rounded}")
    if line.topped_up:
        parts.append(f"+{line.topped_up} to the supplier's minimum")
    if line.budget_cut:
        parts.append(f"-{line.budget_cut} by the budget")
    return "; ".join(parts)
