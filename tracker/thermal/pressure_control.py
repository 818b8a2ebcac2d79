"""Ductile iron judged by pressure control, from freezing times alone.

Pressure-control risering (Karsay's published method for ductile iron; its
statement here is from memory, DOMAIN.md): the riser only has to feed the
section's liquid contraction, which ends when the section reaches its
eutectic arrest; the neck is sized to freeze at that moment, and the riser
must still be liquid until the neck has frozen. After that, graphite
expansion in a mould that holds its shape feeds the section's remaining
shrinkage, so liquid sealed behind the frozen neck is expected, not a
fault. A neck that stays open long after the arrest lets the expansion push
metal back into the riser; here the bound is that the neck has frozen
before the section's own freezing time.

The mould is assumed rigid (it holds the expansion pressure). In a soft
(green-sand) mould the walls move, the expansion is partly lost and the
section behaves more like a shrinking alloy: the verdict does not hold there.

:func:`judge` takes plain figures (freezing times in s, an error share), so
any solve, 2-D or 3-D, can be judged by the same rule.
"""

from __future__ import annotations

from dataclasses import dataclass, field

MOULD_ASSUMED = ("rigid mould assumed (it holds the graphite expansion); in green sand the walls move and "
                 "this verdict does not hold")
LABELS = {"neck_after_arrest": "neck against the section's eutectic arrest",
          "riser_after_neck": "riser against its neck", "neck_before_section": "neck against the section"}
SOURCE = "pressure control (Karsay's ductile-iron risering, from memory)"


@dataclass(frozen=True)
class Verdict:
    """``verdict`` is "pass", "fail" or "inconclusive"; ``margins`` the three shares
    (above 0 where the rule holds) by name; ``reasons`` the rules failed or unsettled, in words."""

    verdict: str
    margins: dict
    reasons: list = field(default_factory=list)


def judge(arrest_s: float, neck_s: float, riser_s: float, section_s: float,
          error_share: float = 0.0) -> Verdict:
    """Pressure control from four times, s: ``arrest_s`` when the section's liquid
    contraction ends (the whole section at its eutectic arrest), ``neck_s`` when the
    neck has frozen, ``riser_s`` when the riser has, ``section_s`` the section's own
    freezing time. ``error_share``: the solver's error as a share of each time (0.03 =
    3 %); a margin inside twice that (two times compared) is inconclusive.

    The rules: the neck stays open until the arrest (neck_s >= arrest_s), the riser
    outlasts the neck (riser_s >= neck_s), and the neck has frozen before the section
    (neck_s <= section_s)."""
    rules = (
        ("neck_after_arrest", neck_s / arrest_s - 1.0,
         "the neck freezes before the section's liquid contraction ends (the section reaching its eutectic "
         "arrest): the riser is cut off too early"),
        ("riser_after_neck", riser_s / neck_s - 1.0, "the riser freezes before its neck"),
        ("neck_before_section", section_s / neck_s - 1.0,
         "the neck is still open when the section has frozen: the graphite expansion pushes metal back "
         "into the riser (the neck is too wide)"),
    )
    band = 2.0 * max(error_share, 0.0)
    margins = {name: m for name, m, _ in rules}
    failed = [why for _, m, why in rules if m < -band]
    unsure = [f"{LABELS[name]}: margin {m:+.1%}, inside the solver's error of ±{band:.1%}"
              for name, m, _ in rules if band > 0 and -band <= m <= band]
    if failed:
        return Verdict("fail", margins, failed)
    if unsure:
        return Verdict("inconclusive", margins, unsure)
    return Verdict("pass", margins, [])
