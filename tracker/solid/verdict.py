"""The verdict of a solve, as one small function of plain figures.

``feeding_verdict`` takes times in s and shares, no grid, so that the 2-D
check and the 3-D solve can both judge by it. Shrinking alloys (steel,
aluminium, bronzes, brass): every riser must freeze after the casting at its
contact, every hot spot must keep a liquid path to a riser until it stops
feeding, no liquid may be cut off from every riser, and
Niyama must stay above the alloy's threshold where it has one. Ductile iron
by pressure control (Karsay's method, from memory; DOMAIN.md): the riser
must still hold liquid when its contact has frozen and when the section's
liquid contraction has ended; after that, graphite expansion feeds what is
left, so liquid sealed behind a frozen contact is expected in a rigid
mould, and counted as a fault in a green-sand mould, whose walls give way.
"""

from __future__ import annotations

import math

from tracker.thermal import pressure_control

PRESSURE_CONTROL = ("ductile_iron",)
ISOLATED_MIN_SHARE = 0.005        # the 2-D check's floor for a resolved pocket (tracker.thermal)


def feeding_verdict(alloy: str, *, rigid_mould: bool, risers: list[dict], unfed_hot_spots: int,
                    isolated_share: float, min_niyama: float | None,
                    niyama_threshold: float | None) -> tuple[bool, list[str]]:
    """(ok, reasons). ``risers``: one dict per riser with ``riser`` (its name), ``freeze_s`` (when its
    last metal froze), ``contact_freeze_s`` (when the casting at its contact froze) and
    ``contraction_end_s`` (when the section it feeds had all cooled to the liquidus), in s, and
    optionally ``section_freeze_s`` (when that section had frozen). Ductile iron is judged by
    :func:`tracker.thermal.pressure_control.judge`, as the 2-D check judges it."""
    reasons: list[str] = []
    if not risers:
        return False, ["no riser given: hot spots only, nothing fed"]
    if alloy in PRESSURE_CONTROL:
        for r in risers:  # the 2-D check's rule set, the contact in the neck's place
            v = pressure_control.judge(r["contraction_end_s"], r["contact_freeze_s"], r["freeze_s"],
                                       r.get("section_freeze_s", math.inf))
            reasons += [f"riser {r['riser']}: {why}" for why in v.reasons] if v.verdict == "fail" else []
        if not rigid_mould and isolated_share >= ISOLATED_MIN_SHARE:
            reasons.append(f"liquid sealed from every riser ({isolated_share:.1%} of the casting) in a "
                           "green-sand mould, whose walls give way to the graphite expansion")
        return not reasons, reasons
    for r in risers:
        if r["freeze_s"] < r["contact_freeze_s"]:
            reasons.append(f"riser {r['riser']} freezes at {r['freeze_s']:,.0f} s, before the casting at its "
                           f"contact ({r['contact_freeze_s']:,.0f} s)")
    if unfed_hot_spots:
        reasons.append(f"{unfed_hot_spots} hot spot(s) lose their liquid path to every riser before "
                       "they are solid")
    if isolated_share >= ISOLATED_MIN_SHARE:
        reasons.append(f"liquid cut off from every riser ({isolated_share:.1%} of the casting's volume)")
    if niyama_threshold is not None and min_niyama is not None and min_niyama < niyama_threshold:
        reasons.append(f"Niyama {min_niyama:.2f} below {niyama_threshold:g} in the casting")
    return not reasons, reasons
