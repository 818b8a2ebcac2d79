"""The weekly review's charts as Altair specifications: the dashboard shows them
(``dashboard/charts.py`` re-exports them) and the printable review pack renders
the same specifications to inline SVG with vl-convert (:func:`to_svg`), so the
page and the paper show one picture. Each function takes display-ready frames
(from :mod:`tracker.views.review`) and returns a chart; nothing is computed here
beyond placing marks.

Look: greys for context, one blue for the measured values, one orange for
what needs attention. Every axis names its unit.
"""

from __future__ import annotations

import json

import altair as alt
import pandas as pd

INK = "#3a4a5c"        # measured values
CONTEXT = "#9aa5b1"    # limits, centre lines, bars in the background
ATTENTION = "#d9822b"  # signals, the curve a design must clear
GOOD = "#4c8c6a"

HEIGHT = 320
Drawn = alt.LayerChart | alt.Chart | alt.FacetChart  # what a chart function returns


def _empty(text: str) -> alt.Chart:
    return alt.Chart(pd.DataFrame({"t": [text]})).mark_text(size=14, color=CONTEXT).encode(
        text="t:N").properties(height=120)


def pareto(df: pd.DataFrame, item: str, value_title: str, item_title: str) -> Drawn:
    """Bars of ``value`` per item, largest first, with the cumulative share (%) as a line."""
    if df.empty:
        return _empty("nothing rejected in this window")
    order = df[item].tolist()
    # every bar keeps its label: the frame holds at most a dozen bars (the rest in one)
    base = alt.Chart(df).encode(x=alt.X(f"{item}:N", sort=order, title=item_title,
                                        axis=alt.Axis(labelAngle=-45, labelOverlap=False, labelLimit=200)))
    tips = [alt.Tooltip(f"{item}:N", title=item_title),
            alt.Tooltip("value:Q", title=value_title, format=",.0f"),
            alt.Tooltip("share_pct:Q", title="share (%)", format=".1f"),
            alt.Tooltip("cumulative_pct:Q", title="cumulative share (%)", format=".1f")]
    bars = base.mark_bar(color=INK).encode(
        y=alt.Y("value:Q", title=value_title, axis=alt.Axis(format=",.0f")),
        opacity=alt.condition("datum.vital_few", alt.value(1.0), alt.value(0.45)),
        tooltip=tips)
    line = base.mark_line(color=ATTENTION, point=alt.OverlayMarkDef(color=ATTENTION)).encode(
        y=alt.Y("cumulative_pct:Q", title="cumulative share (%)", scale=alt.Scale(domain=[0, 100])),
        tooltip=tips)
    return alt.layer(bars, line).resolve_scale(y="independent").properties(height=HEIGHT)


def _week_axis(df: pd.DataFrame) -> alt.X:
    return alt.X("week:O", title="ISO week of pour", sort=df["week"].tolist(),
                 axis=alt.Axis(labelAngle=-45, labelOverlap=True))


def trend(df: pd.DataFrame, target_pct: float, cost_title: str = "scrap cost") -> Drawn:
    """Weekly reject rate (%) of all patterns with its 95 % Wilson band and the target."""
    if df.empty:
        return _empty("no pours in this window")
    tips = [alt.Tooltip("week:N", title="ISO week"),
            alt.Tooltip("inspected:Q", title="inspected (castings)"),
            alt.Tooltip("rejected:Q", title="rejected (castings)"),
            alt.Tooltip("reject_rate_pct:Q", title="reject rate (%)", format=".2f"),
            alt.Tooltip("wilson_low_pct:Q", title="low bound (%)", format=".2f"),
            alt.Tooltip("wilson_high_pct:Q", title="high bound (%)", format=".2f"),
            alt.Tooltip("scrap_cost:Q", title=cost_title, format=",.0f")]
    base = alt.Chart(df).encode(x=_week_axis(df))
    band = base.mark_area(color=CONTEXT, opacity=0.3).encode(
        y=alt.Y("wilson_low_pct:Q", title="reject rate (% of castings inspected)"), y2="wilson_high_pct:Q")
    line = base.mark_line(color=INK, point=True).encode(y="reject_rate_pct:Q", tooltip=tips)
    goal = alt.Chart(pd.DataFrame({"target": [target_pct], "label": [f"target {target_pct:g} %"]}))
    rule = goal.mark_rule(color=ATTENTION, strokeDash=[6, 4]).encode(y="target:Q")
    label = goal.mark_text(color=ATTENTION, align="left", dx=4, dy=-7, fontWeight="bold").encode(
        y="target:Q", text="label:N", x=alt.value(0))
    return alt.layer(band, line, rule, label).properties(height=HEIGHT)


def p_chart(df: pd.DataFrame, target_pct: float | None = None) -> Drawn:
    """One pattern's weekly reject rate (%) inside its band of control limits (exact binomial), centre
    line drawn; with ``target_pct``, the target as a second line, so the pattern is seen against the
    target as well as against its own centre."""
    if df.empty:
        return _empty("no weeks to chart")
    base = alt.Chart(df).encode(x=_week_axis(df))
    tips = [alt.Tooltip("week:N", title="ISO week"),
            alt.Tooltip("inspected:Q", title="inspected (castings)"),
            alt.Tooltip("rejected:Q", title="rejected (castings)"),
            alt.Tooltip("p_pct:Q", title="reject rate (%)", format=".2f"),
            alt.Tooltip("lcl_pct:Q", title="lower limit (%)", format=".2f"),
            alt.Tooltip("ucl_pct:Q", title="upper limit (%)", format=".2f"),
            alt.Tooltip("centre_pct:Q", title="centre (%)", format=".2f"),
            alt.Tooltip("status:N", title="week")]
    band = base.mark_bar(color=CONTEXT, opacity=0.25, width=alt.RelativeBandSize(0.92)).encode(
        y=alt.Y("lcl_pct:Q", title="reject rate (% of castings inspected)"), y2="ucl_pct:Q",
        tooltip=tips)
    centre = base.mark_line(color=INK, strokeDash=[6, 3], opacity=0.6).encode(y="centre_pct:Q")
    line = base.mark_line(color=INK).encode(y="p_pct:Q")
    domain = ["in control", "signal"]
    pts = base.transform_filter("datum.inspected > 0").mark_point(filled=True, size=90, opacity=1).encode(
        y="p_pct:Q",
        color=alt.Color("status:N", title="week", scale=alt.Scale(domain=domain, range=[INK, ATTENTION])),
        shape=alt.Shape("status:N", title="week", scale=alt.Scale(domain=domain,
                                                                  range=["circle", "triangle-up"])),
        tooltip=tips)
    layers = [band, centre, line, pts]
    if target_pct is not None:
        goal = alt.Chart(pd.DataFrame({"target": [target_pct], "label": [f"target {target_pct:g} %"]}))
        layers.append(goal.mark_rule(color=ATTENTION, strokeDash=[6, 4]).encode(y="target:Q"))
        layers.append(goal.mark_text(color=ATTENTION, align="left", dx=4, dy=-7, fontWeight="bold").encode(
            y="target:Q", text="label:N", x=alt.value(0)))
    return alt.layer(*layers).properties(height=HEIGHT)


def target_chance(df: pd.DataFrame, signal_pct: float) -> Drawn:
    """Each pattern's probability (%) that its reject rate is above the target, highest
    first, with the signal threshold (``signal_pct``) as a rule; signalling bars in the
    attention colour (``tracker.review.target``)."""
    if df.empty:
        return _empty("nothing inspected in this window")
    order = df["pattern"].tolist()
    tips = [alt.Tooltip("pattern:N", title="pattern"),
            alt.Tooltip("inspected:Q", title="inspected (castings)"),
            alt.Tooltip("rejected:Q", title="rejected (castings)"),
            alt.Tooltip("reject_rate_pct:Q", title="reject rate (%)", format=".2f"),
            alt.Tooltip("target_pct:Q", title="target (%)", format=".2f"),
            alt.Tooltip("chance_pct:Q", title="chance above target (%)", format=".1f")]
    domain = ["above the target (signal)", "not shown above it"]
    bars = alt.Chart(df).mark_bar().encode(
        x=alt.X("pattern:N", sort=order, title="pattern",
                axis=alt.Axis(labelAngle=-45, labelOverlap=False, labelLimit=200)),
        y=alt.Y("chance_pct:Q", title="chance the reject rate is above the target (%)",
                scale=alt.Scale(domain=[0, 100])),
        color=alt.Color("verdict:N", title=None, scale=alt.Scale(domain=domain, range=[ATTENTION, CONTEXT]),
                        legend=alt.Legend(orient="top")),
        tooltip=tips)
    line = alt.Chart(pd.DataFrame({"y": [signal_pct], "label": [f"signal at {signal_pct:g} %"]}))
    rule = line.mark_rule(color=INK, strokeDash=[6, 4]).encode(y="y:Q")
    label = line.mark_text(color=INK, align="left", dx=4, dy=-7).encode(y="y:Q", text="label:N", x=alt.value(0))
    return alt.layer(bars, rule, label).properties(height=HEIGHT)


def to_svg(chart, width: int = 680) -> str:
    """The chart as one inline SVG element (vl-convert renders the Vega-Lite spec offline,
    with no fonts or scripts fetched). ``width`` in CSS pixels, for the printed page."""
    import vl_convert as vlc

    spec = json.dumps(chart.properties(width=width).to_dict(), default=str)  # dates as ISO text
    svg = vlc.vegalite_to_svg(spec)
    svg = svg[svg.index("<svg"):]  # no XML prolog inside an HTML page
    # HTML gives inline SVG its namespace: the namespace names (URLs that are never fetched) go
    for name in XML_NAMESPACES:
        svg = svg.replace(name, "", 1)
    # vl-convert escapes < and & but leaves apostrophes of user text (pattern codes, defects)
    # bare; a character reference reads the same in SVG text and in quoted attributes
    return svg.replace("'", "&#x27;")


XML_NAMESPACES = (' xmlns="http://www.w3.org/2000/svg"', ' xmlns:xlink="http://www.w3.org/1999/xlink"')
