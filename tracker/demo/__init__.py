"""The invented demo foundry: a seeded, reproducible pour and inspection history.

``generate(out_dir)`` writes six CSV files (patterns, zones, sleeves, risers,
lots, inspections) in the import formats, for an invented jobbing foundry,
"the demo foundry" (a made-up name; every pattern, inspector and heat in it
is invented). It pours 30 patterns -- 13 steel, 9 ductile iron, 8 aluminium --
over 26 ISO weeks ending at ``end_week``.

Geometry. Every zone is a plate or block of invented dimensions (cm); its
volume is L·W·T and its cooling area the block's surface less the faces joined
to other metal. Every zone is fed by exactly one cylindrical riser. Most risers
are designed properly, by the alloy's own rule set (pressure control for ductile
iron, the liquid contraction at the alloy's default superheat): sized with
:func:`tracker.design.sizing.size_riser` and rounded up to 10 mm steps (finer where
10 mm would make a ductile-iron riser oversized), or fitted with the cheapest
sleeve of the shop's catalogue that meets every rule. ``pourback check`` passes
every one of them.

Reject law. Reject counts are not written per pattern. One law is applied to
every zone of every lot (:func:`riser_margins`, :func:`shrinkage_rate`):

- the riser's margins are the ones ``pourback check`` gives
  (:func:`tracker.design.assess.assess_frame`: the modulus ratio against what the
  rule set asks, Caine's margin X - X_curve(Y) where the alloy has Caine
  constants, the feed-volume margin with the liquid contraction, the neck,
  and for steel the feeding distance where the zone gives it);
- each margin is turned into a shortfall on a linear-size scale (0 when the
  rule passes; e.g. 1 - ratio/1.2 for the modulus rule, 1 - cbrt(give/need)
  for feed volume) and the worst one is taken (an oversized riser costs
  yield, not soundness);
- shrinkage reject probability per casting in the zone is
  ``base + p_max · s² / (s² + s0²)`` (base 0.35 %, p_max 20 %, s0 0.15), times a
  small pour-temperature factor (hotter metal shrinks more);
- lot-to-lot noise: each lot draws its rate from a beta distribution around
  that mean (beta-binomial counts);
- every pattern also has small background rates of other defects (sand, slag,
  misrun, cold shut, dimensional, ... each well under 1 %).

The story that emerges from the geometry (for the default window, 2026-W22 to
2026-W47; see ``sample_data/README.md`` and :func:`story`):

- three undersized risers, shrinkage rejects concentrated in their zone:
  P-1017 (steel valve body 200) riser R3 on zone flange-B, a bare side riser of
  100 mm where its twin R2 on the identical zone flange-A has 130 mm (fails the
  modulus rule, Caine's curve, feed volume and the neck); P-1036 (steel bearing
  housing 90) riser R2 on zone boss, fitted with too small an exothermic sleeve, XS-90
  (fails Caine's curve and the modulus rule); P-3014 (aluminium gearbox
  cover) riser R2 on zone boss, a bare 70 mm top riser, under three quarters
  of the 96 mm the rules ask (fails all three rules).
- P-1009 (steel impeller 300): every riser passes with margin, yet about 8 % of
  castings are rejected for gas porosity (x-ray category A) -- a core-venting
  problem, not a riser problem.
- P-1031 (steel pump casing 150): riser R1 on zone volute was a bare 140 mm
  top riser in revision 1 (fails all three rules); revision 2, effective on the
  Monday of the 14th week (2026-08-24, 2026-W35, by default), fits an XS-160
  exothermic sleeve (160 x 200 mm) that passes every rule, and its shrinkage
  rejects fall by the same law.
- the other patterns run at low background rates.

Units inside: cm, cm², cm³; diameters and heights in mm at the CSV edges.
"""

from tracker.demo.files import COLUMNS, FILES, default_out_dir, generate
from tracker.demo.foundry import (
    INSPECTORS,
    METAL_COST_PER_KG,
    PATTERNS,
    POUR_TEMP_C,
    RADIOGRAPHERS,
    SCENARIO_NAME,
    SLEEVE_BY_CODE,
    SLEEVES,
    PatternSpec,
    Sleeve,
    ZoneSpec,
)
from tracker.demo.law import (
    BACKGROUND,
    BACKGROUND_CONCENTRATION,
    BASE_SHRINKAGE_RATE,
    LOT_CONCENTRATION,
    MAX_EXCESS_RATE,
    REWORK_SHARE,
    SHORTFALL_SCALE,
    TEMP_COEFF,
    riser_margins,
    shortfall,
    shrinkage_rate,
)
from tracker.demo.scenario import RiserRow, story

__all__ = [
    "BACKGROUND", "BACKGROUND_CONCENTRATION", "BASE_SHRINKAGE_RATE", "COLUMNS", "FILES", "INSPECTORS",
    "LOT_CONCENTRATION", "MAX_EXCESS_RATE", "METAL_COST_PER_KG", "PATTERNS", "POUR_TEMP_C", "RADIOGRAPHERS",
    "REWORK_SHARE", "SCENARIO_NAME", "SHORTFALL_SCALE", "SLEEVES", "SLEEVE_BY_CODE", "TEMP_COEFF",
    "PatternSpec", "RiserRow", "Sleeve", "ZoneSpec", "default_out_dir", "generate", "riser_margins",
    "shortfall", "shrinkage_rate", "story",
]
