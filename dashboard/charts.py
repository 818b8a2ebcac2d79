"""Every chart of the dashboard, in Altair. Each function takes display-ready
frames (from ``tracker.views``) and returns a chart; nothing is computed here
beyond placing marks. The weekly review's charts live in
:mod:`tracker.views.charts` (the printable review pack draws them too) and are
re-exported here.

Look: greys for context, one blue for the measured values, one orange for
what needs attention. Every axis names its unit.
"""

from __future__ import annotations

import math

import altair as alt
import pandas as pd

from tracker.views.charts import (  # noqa: F401 (re-exported: the pages draw them from here)
    ATTENTION,
    CONTEXT,
    HEIGHT,
    INK,
    _empty,
    _week_axis,
    p_chart,
    pareto,
    target_chance,
    trend,
)

PICK = "pick"  # the design map's point selection: the pattern clicked


def design_map(points: pd.DataFrame, curve: pd.DataFrame | None) -> alt.LayerChart:
    """Each riser zone at (volume ratio, freezing ratio), sized by castings poured and
    shaded by its shrinkage reject rate (the scale runs from 0 to the highest rate
    shown); the alloy's Caine curve where it has one. Designs a later revision
    superseded are faded; zones of patterns the review flags get a thick dark ring.
    Clicking a point selects its pattern (selection ``PICK``)."""
    x = alt.X("volume_ratio:Q", title="volume ratio Y = riser volume / zone volume (no unit)",
              scale=alt.Scale(zero=False, nice=True))
    y = alt.Y("freezing_ratio:Q", title="freezing ratio X = riser modulus / zone modulus (no unit)",
              scale=alt.Scale(zero=False, nice=True))
    tips = [alt.Tooltip("pattern:N", title="pattern"), alt.Tooltip("zone:N", title="zone"),
            alt.Tooltip("riser:N", title="riser"), alt.Tooltip("revision:N", title="revision"),
            alt.Tooltip("design:N", title="design"),
            alt.Tooltip("castings:Q", title="castings poured", format=","),
            alt.Tooltip("shrinkage_rejects:Q", title="shrinkage rejects (castings)", format=","),
            alt.Tooltip("shrinkage_rate_pct:Q", title="shrinkage reject rate (%)", format=".2f"),
            alt.Tooltip("wilson_low_pct:Q", title="rate, low bound (%)", format=".2f"),
            alt.Tooltip("wilson_high_pct:Q", title="rate, high bound (%)", format=".2f"),
            alt.Tooltip("volume_ratio:Q", title="volume ratio", format=".2f"),
            alt.Tooltip("freezing_ratio:Q", title="freezing ratio", format=".2f"),
            alt.Tooltip("rules_text:N", title="rules")]
    top = float(points["shrinkage_rate_pct"].max()) if len(points) else 0.0
    top = top if not math.isnan(top) and top > 0 else 1.0
    designs = ["in use", "in use, pattern flagged", "superseded by a later revision"]
    pick = alt.selection_point(name=PICK, fields=["pattern"], on="click", clear="dblclick")
    dots = alt.Chart(points).mark_circle().encode(
        x=x, y=y,
        size=alt.Size("castings:Q", title="castings poured", scale=alt.Scale(range=[30, 900])),
        color=alt.Color("shrinkage_rate_pct:Q", title="shrinkage rejects (% of castings poured)",
                        scale=alt.Scale(scheme="goldred", domain=[0, top], clamp=True),
                        legend=alt.Legend(orient="top", gradientLength=220, titleLimit=400, format=".1f",
                                          values=[0, round(top / 2, 1), round(top, 1)])),
        opacity=alt.Opacity("design:N", scale=alt.Scale(domain=designs, range=[0.9, 0.95, 0.22]), legend=None),
        stroke=alt.Stroke("design:N", title="design", scale=alt.Scale(domain=designs, range=["#ffffff", INK, CONTEXT]),
                          legend=alt.Legend(orient="bottom", labelLimit=260, symbolType="circle", symbolSize=160,
                                            symbolFillColor="#f2c66d", symbolStrokeWidth=2.5)),
        strokeWidth=alt.StrokeWidth("design:N", scale=alt.Scale(domain=designs, range=[0.8, 3, 0.6]),
                                    legend=None),
        tooltip=tips).add_params(pick)
    layers = []
    if curve is not None and not curve.empty:
        c = curve.assign(series="Caine curve (sound above it)")
        line = alt.Chart(c).mark_line(color=ATTENTION, strokeWidth=2).encode(
            x=x, y=y,
            strokeDash=alt.StrokeDash("series:N", title=None, legend=alt.Legend(orient="top", labelLimit=400)),
            tooltip=[alt.Tooltip("volume_ratio:Q", title="volume ratio", format=".2f"),
                     alt.Tooltip("freezing_ratio:Q", title="freezing ratio on the curve", format=".2f")])
        layers.append(line)
    layers.append(dots)
    return alt.layer(*layers).resolve_scale(color="independent").properties(height=460)


def pattern_history(weekly: pd.DataFrame, marks: pd.DataFrame) -> alt.LayerChart | alt.Chart:
    """Castings poured per week (bars) and the reject rate (%) (lines), with the week each
    riser revision took effect marked by a vertical rule."""
    if weekly.empty:
        return _empty("no pours of this pattern")
    x = _week_axis(weekly)
    tips = [alt.Tooltip("week:N", title="ISO week"), alt.Tooltip("lots:Q", title="lots"),
            alt.Tooltip("poured:Q", title="poured (castings)"),
            alt.Tooltip("inspected:Q", title="inspected (castings)"),
            alt.Tooltip("rejected:Q", title="rejected (castings)"),
            alt.Tooltip("shrinkage_rejected:Q", title="of which shrinkage (castings)"),
            alt.Tooltip("reject_rate_pct:Q", title="reject rate (%)", format=".1f"),
            alt.Tooltip("shrinkage_rate_pct:Q", title="shrinkage rate (%)", format=".1f")]
    long = weekly.melt(id_vars=["week"], value_vars=["reject_rate_pct", "shrinkage_rate_pct"],
                       var_name="series", value_name="rate_pct")
    long["series"] = long["series"].map({"reject_rate_pct": "all rejects",
                                         "shrinkage_rate_pct": "shrinkage rejects"})
    bars = alt.Chart(weekly).mark_bar(color=CONTEXT, opacity=0.55).encode(
        x=x, y=alt.Y("poured:Q", title="castings poured per week"), tooltip=tips)
    lines = alt.Chart(long).mark_line(point=True).encode(
        x=x, y=alt.Y("rate_pct:Q", title="reject rate (% of castings inspected)"),
        color=alt.Color("series:N", title="rate", scale=alt.Scale(
            domain=["all rejects", "shrinkage rejects"], range=[INK, ATTENTION]),
            legend=alt.Legend(orient="top")),
        strokeDash=alt.StrokeDash("series:N", title="rate", scale=alt.Scale(
            domain=["all rejects", "shrinkage rejects"], range=[[1, 0], [5, 3]])),
        tooltip=[alt.Tooltip("week:N", title="ISO week"), alt.Tooltip("series:N", title="rate"),
                 alt.Tooltip("rate_pct:Q", title="% of castings inspected", format=".1f")])
    layers = [bars, lines]
    if marks is not None and not marks.empty:
        m = alt.Chart(marks).encode(x=alt.X("week:O", sort=weekly["week"].tolist()))
        layers.append(m.mark_rule(color=INK, strokeWidth=2, strokeDash=[2, 2]).encode(
            tooltip=[alt.Tooltip("label:N", title="riser design"),
                     alt.Tooltip("effective_from:T", title="effective from", format="%Y-%m-%d")]))
        layers.append(m.mark_text(align="left", dx=5, dy=4, color=INK, baseline="top",
                                  fontWeight="bold").encode(text="label:N", y=alt.value(0)))
    return alt.layer(*layers).resolve_scale(y="independent").properties(height=HEIGHT + 60)


def margins(df: pd.DataFrame) -> alt.Chart:
    """Rule margins of one riser, now and changed, as paired bars (above 0 passes)."""
    if df.empty:
        return _empty("no margins")
    return alt.Chart(df).mark_bar().encode(
        y=alt.Y("rule:N", title=None, sort=None),
        yOffset=alt.YOffset("design:N", sort=["now", "changed"]),
        x=alt.X("margin:Q", title="margin above the rule (0 = just passes; no unit)"),
        color=alt.Color("design:N", title="design", scale=alt.Scale(domain=["now", "changed"],
                                                                    range=[CONTEXT, INK])),
        tooltip=[alt.Tooltip("rule:N"), alt.Tooltip("design:N"),
                 alt.Tooltip("margin:Q", format=".2f")],
    ).properties(height=180)


def plant_rates(table: pd.DataFrame) -> alt.LayerChart | alt.Chart:
    """Each plant's reject rate (%) with its 95 % range, side by side."""
    if table.empty or table["reject rate (%)"].isna().all():
        return _empty("nothing inspected in this alloy")
    base = alt.Chart(table).encode(y=alt.Y("plant:N", title="plant", sort=None))
    bars = base.mark_bar(color=CONTEXT).encode(
        x=alt.X("reject rate (%):Q", title="reject rate (%), castings rejected / inspected"),
        tooltip=["plant:N", alt.Tooltip("reject rate (%):Q", format=".2f"), "castings inspected:Q",
                 "castings rejected:Q"])
    ranges = base.mark_rule(color=INK, strokeWidth=2).encode(x="95 % range from (%):Q",
                                                             x2="95 % range to (%):Q")
    return (bars + ranges).properties(height=max(80, 36 * len(table)))


# --- thermal check ------------------------------------------------------------------

def _thermal_frame(cells: pd.DataFrame, x_title: str, width: int = 520):
    """Axes in one length unit (mm or in) at one scale for x and z, so the bodies keep their shape."""
    x0, x1 = float(cells["x0"].min()), float(cells["x1"].max())
    z0, z1 = float(cells["z0"].min()), float(cells["z1"].max())
    pad = 0.04 * max(x1 - x0, z1 - z0)
    x0, x1, z0, z1 = x0 - pad, x1 + pad, z0 - pad, z1 + pad
    height = int(min(max(width * (z1 - z0) / (x1 - x0), 120), 600))
    width = int(height * (x1 - x0) / (z1 - z0)) if height in (120, 600) else width
    x = alt.Scale(domain=[x0, x1], nice=False, zero=False)
    z = alt.Scale(domain=[z0, z1], nice=False, zero=False)
    return x, z, width, height


def _outline_layer(outline: pd.DataFrame, xs, zs):
    return alt.Chart(outline).mark_rule(color="#000000", strokeWidth=1.2).encode(
        x=alt.X("x:Q", scale=xs), y=alt.Y("z:Q", scale=zs), x2="x2:Q", y2="z2:Q")


def thermal_freezing_map(cells: pd.DataFrame, outline: pd.DataFrame, last_point, x_title: str,
                         z_title: str = "z (mm), height") -> alt.LayerChart:
    """Freezing time of every metal cell (min), the bodies' outlines, the last point to freeze;
    the axes titled with their length unit (``x_title``, ``z_title``)."""
    xs, zs, w, h = _thermal_frame(cells, x_title)
    heat = alt.Chart(cells).mark_rect().encode(
        x=alt.X("x0:Q", scale=xs, title=x_title), x2="x1:Q",
        y=alt.Y("z0:Q", scale=zs, title=z_title), y2="z1:Q",
        color=alt.Color("freeze_min:Q", title="freezing time (min)", scale=alt.Scale(scheme="inferno")),
        tooltip=[alt.Tooltip("body:N"), alt.Tooltip("freeze_min:Q", title="freezing time (min)", format=".1f")])
    last = pd.DataFrame({"x": [last_point[0]], "z": [last_point[1]], "label": ["last to freeze"]})
    mark = alt.Chart(last).mark_point(shape="cross", size=260, color="#1fa3ff", strokeWidth=3, filled=True).encode(
        x=alt.X("x:Q", scale=xs), y=alt.Y("z:Q", scale=zs), tooltip=["label:N"])
    text = alt.Chart(last).mark_text(align="left", dx=10, dy=-10, color="#1fa3ff", fontWeight="bold").encode(
        x=alt.X("x:Q", scale=xs), y=alt.Y("z:Q", scale=zs), text="label:N")
    return alt.layer(heat, _outline_layer(outline, xs, zs), mark, text).properties(width=w, height=h)


def thermal_niyama_map(cells: pd.DataFrame, outline: pd.DataFrame, threshold, unit: str,
                       x_title: str, z_title: str = "z (mm), height") -> alt.LayerChart:
    """Niyama value of the section's cells; cells below the threshold in the attention colour."""
    sec = cells[cells["body"] == "section"].dropna(subset=["niyama"])
    xs, zs, w, h = _thermal_frame(cells, x_title)
    base = alt.Chart(sec).mark_rect().encode(
        x=alt.X("x0:Q", scale=xs, title=x_title), x2="x1:Q",
        y=alt.Y("z0:Q", scale=zs, title=z_title), y2="z1:Q",
        color=alt.Color("niyama:Q", title=f"Niyama {unit}",
                        scale=alt.Scale(scheme="blues", domain=[0, 4.0 * (threshold or 1.0)], clamp=True)),
        tooltip=[alt.Tooltip("niyama:Q", title=f"Niyama {unit}", format=".2f")])
    layers = [base]
    if threshold is not None:
        low = sec[sec["niyama"] < threshold]
        if not low.empty:
            layers.append(alt.Chart(low).mark_rect(color=ATTENTION).encode(
                x=alt.X("x0:Q", scale=xs), x2="x1:Q", y=alt.Y("z0:Q", scale=zs), y2="z1:Q",
                tooltip=[alt.Tooltip("niyama:Q", title=f"Niyama below {threshold:.3g}", format=".2f")]))
    layers.append(_outline_layer(outline, xs, zs))
    return alt.layer(*layers).properties(width=w, height=h)
