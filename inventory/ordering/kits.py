"""Kits versus loose seals: cover each kit's need the cheaper way, and say which.

A service kit is a stocked item bought whole, but its bill of materials lists parts the shop
also stocks loose. Where every component has a supplier, the planner compares the kit's
landed price with the loose components' (plus an optional assembly cost per kit):

- loose cheaper: kits are assembled from loose stock above the components' own
  order-up-to levels (seals the shop holds anyway) and only the rest is bought whole
  (``mode="stock"``, the default: the kit is the way the shop services forks, assembly
  from stock is the saving); with ``mode="cheaper"`` the rest is assembled too, from loose
  seals added to this plan (the components' needs grow by the kits' bill of materials) and
  the kit itself is not ordered;
- kit cheaper (or a component has no supplier): the kit is bought whole.

``mode="whole"`` never assembles. The kit need is the kit's own (raw need from its level and
position); it moves to the components unchanged, so assembling keeps the kit's service
target.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from decimal import Decimal
from typing import Literal

from inventory.core.model import KitSpec

KitMode = Literal["cheaper", "stock", "whole"]


@dataclass(frozen=True, slots=True)
class KitDecision:
    """How one kit's need is covered.

    ``how``: "whole" (buy the kit), "assemble" (from loose seals), "none" (no need).
    ``from_stock`` kits come from loose stock above the components' own levels,
    ``from_loose`` kits from loose seals added to this plan (``adds``: part -> units to
    order); ``from_surplus``: part -> loose units already held or on order above the part's
    own level that go into those ``from_loose`` kits (a component whose stock plus open
    orders covers its share is never ordered for them).
    """

    kit: str
    need: int
    how: str
    cost_whole: Decimal | None
    cost_loose: Decimal | None
    from_stock: int = 0
    from_loose: int = 0
    adds: Mapping[str, int] = field(default_factory=dict)
    reason: str = ""
    from_surplus: Mapping[str, int] = field(default_factory=dict)


def _money(x: Decimal | None) -> str:
    return "n/a" if x is None else f"{x:.2f}"


def decide_kits(
    kits: Sequence[KitSpec],
    need: Mapping[str, int],
    landed: Mapping[str, Decimal],
    surplus: Mapping[str, int],
    *,
    mode: KitMode = "cheaper",
    assembly_cost: Decimal = Decimal("0"),
) -> list[KitDecision]:
    """One decision per kit with a positive need (see the module docstring).

    ``need``: raw need per kit code; ``landed``: landed unit cost of each part's chosen
    supply option (parts without one are absent); ``surplus``: loose units per part above
    its own order-up-to level. Kits are served in order of need, largest first, so the
    surplus goes where most kits are wanted.
    """
    left = {p: max(int(v), 0) for p, v in surplus.items()}
    out: list[KitDecision] = []
    for kit in sorted(kits, key=lambda k: (-need.get(k.code, 0), k.code)):
        n = int(need.get(kit.code, 0))
        if n <= 0:
            continue
        whole = landed.get(kit.code)
        missing = [p for p, _ in kit.lines if p not in landed]
        loose = None if missing else (
            sum((landed[p] * q for p, q in kit.lines), Decimal(0)) + assembly_cost)
        if mode == "whole" or loose is None or (whole is not None and loose >= whole):
            if whole is None:
                why = (f"no supplier for the kit and {', '.join(missing)} has none either"
                       if missing else "no supplier for the kit")
                out.append(KitDecision(kit.code, n, "none", whole, loose, reason=why))
                continue
            if mode == "whole":
                why = f"bought whole (kits are not assembled in this plan; {_money(whole)})"
            elif loose is None:
                why = (f"bought whole at {_money(whole)}: {', '.join(missing)} has no "
                       "supplier, so it cannot be assembled")
            else:
                why = f"bought whole: {_money(whole)} per kit vs {_money(loose)} from loose seals"
            out.append(KitDecision(kit.code, n, "whole", whole, loose, reason=why))
            continue
        stock = min((left.get(p, 0) // q for p, q in kit.lines), default=0)
        stock = min(stock, n)
        for p, q in kit.lines:
            left[p] = left.get(p, 0) - stock * q
        rest = 0 if mode == "stock" else n - stock
        if mode == "stock" and stock < n and whole is not None:
            # the rest is bought whole
            head = (f"{stock} of {n} assembled from loose stock already held, "
                    if stock else "no loose stock to spare; ")
            out.append(KitDecision(
                kit.code, n, "whole", whole, loose, from_stock=stock,
                reason=(f"{head}{n - stock} bought whole at {_money(whole)} (loose seals "
                        f"would cost {_money(loose)} per kit: see kit mode 'cheaper')")))
            continue
        adds: dict[str, int] = {}
        used: dict[str, int] = {}
        for p, q in kit.lines:
            if rest:
                # the surplus left after the kits from stock covers what it can; only the
                # rest is ordered (stock plus open orders is never bought again)
                take = min(max(left.get(p, 0), 0), rest * q)
                left[p] = left.get(p, 0) - take
                if take:
                    used[p] = used.get(p, 0) + take
                if rest * q - take:
                    adds[p] = adds.get(p, 0) + rest * q - take
        saving = "" if whole is None else f" vs {_money(whole)} whole"
        parts = []
        if stock:
            parts.append(f"{stock} from loose stock already held")
        if rest:
            held = f" (with {', '.join(f'{u} {p}' for p, u in used.items())} already held)" \
                if used else ""
            parts.append(f"{rest} from loose seals ordered on this plan{held}")
        why = (f"assemble {n} from loose seals ({_money(loose)} per kit{saving}): "
               + ", ".join(parts))
        out.append(KitDecision(kit.code, n, "assemble", whole, loose, from_stock=stock,
                               from_loose=rest, adds=adds, reason=why, from_surplus=used))
    return out
