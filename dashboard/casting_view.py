"""The pattern file's 3-D section: the stored casting with its hot spots and risers
(plotly, drawn by Streamlit's own bundled plotly.js: nothing from another host),
and slices through the freezing-time field. Colour: viridis, a perceptual scale."""

from __future__ import annotations

import plotly.graph_objects as go
import streamlit as st

from dashboard import common

SCALE = "Viridis"


def _figure(view: dict) -> go.Figure:
    fig = go.Figure()
    c = view["casting"]
    fig.add_trace(go.Mesh3d(**c, color="lightgray", opacity=0.35, name="casting", hoverinfo="name"))
    for r in view["risers_mesh"]:
        fig.add_trace(go.Mesh3d(**{k: r[k] for k in "xyzijk"}, color="steelblue", opacity=0.5, name=r["riser"],
                                hoverinfo="name"))
    spots = view["hot_spots"]
    if spots:
        fig.add_trace(go.Scatter3d(
            x=[s["x_mm"] for s in spots], y=[s["y_mm"] for s in spots], z=[s["z_mm"] for s in spots],
            mode="markers+text", text=[f"H{i + 1}" for i in range(len(spots))], name="hot spots",
            marker={"size": 6, "color": "crimson"},
            hovertemplate="%{text}: x %{x:.0f}, y %{y:.0f}, z %{z:.0f} mm<extra></extra>"))
    rej = view["rejects"]
    if rej:
        top = max(r["shrinkage_rejects"] for r in rej)
        fig.add_trace(go.Scatter3d(
            x=[r["x_mm"] for r in rej], y=[r["y_mm"] for r in rej], z=[r["z_mm"] for r in rej],
            mode="markers", name="shrinkage rejects (by zone)", text=[r["zone"] for r in rej],
            customdata=[r["shrinkage_rejects"] for r in rej],
            marker={"symbol": "x", "color": "darkorange", "size": [6 + 14 * r["shrinkage_rejects"] / top for r in rej]},
            hovertemplate="zone %{text}: %{customdata} shrinkage rejects<extra></extra>"))
    fig.update_layout(scene={"aspectmode": "data", "xaxis_title": "x (mm)", "yaxis_title": "y (mm)",
                             "zaxis_title": "z (mm)"}, margin={"l": 0, "r": 0, "t": 10, "b": 0}, height=480,
                      legend={"orientation": "h"})
    return fig


def _slice(sl: dict) -> go.Figure:
    fig = go.Figure(go.Heatmap(x=sl["h"], y=sl["v"], z=sl["minutes"], colorscale=SCALE,
                               colorbar={"title": "min"}, hovertemplate="%{x:.0f}, %{y:.0f} mm: %{z:.1f} min"
                                                                         "<extra></extra>"))
    fig.update_layout(xaxis_title=sl["h_label"], yaxis_title=sl["v_label"], height=300,
                      margin={"l": 0, "r": 0, "t": 30, "b": 0}, title=sl["plane"],
                      yaxis={"scaleanchor": "x"})
    return fig


def section(code: str) -> None:
    """The 3-D view of ``code``'s stored casting (on request: it solves)."""
    if not common.load("has_casting", code):
        return
    st.subheader("The whole casting in 3-D")
    if not st.toggle("Solve the stored casting in 3-D (up to a minute)", key="casting_3d_on"):
        st.caption("The casting's STL model (`pourback casting`) solved in 3-D: its hot spots, and with the "
                   "current revision's risers where they have positions, what each riser feeds.")
        return
    view = common.load("casting_view", code, status=f"Solving {code}'s casting in 3-D")
    s = view["summary"]
    c = st.columns(3)
    c[0].metric("Thermal check", ("pass" if s["thermal_ok"] else "fail") if view["with_risers"] else "hot spots only")
    c[1].metric("Casting freezing (min)", f"{s['casting_freeze_s'] / 60:.1f}")
    c[2].metric("Hot spots", len(view["hot_spots"]))
    if view["with_risers"] and s["reasons"]:
        st.warning(common.md_escape("Fails: " + "; ".join(s["reasons"]) + "."))
    st.plotly_chart(_figure(view), key="casting_3d_chart", config={"displaylogo": False})
    rows = [{"hot spot": f"H{i + 1}", "x (mm)": h["x_mm"], "y (mm)": h["y_mm"], "z (mm)": h["z_mm"],
             "freezes (min)": round(h["freeze_s"] / 60, 1), "modulus (cm)": round(h["modulus_cm"], 2),
             "region (cm³)": round(h["volume_cm3"], 0), "fed by": ", ".join(h.get("fed_by", [])) or "-"}
            for i, h in enumerate(view["hot_spots"])]
    st.dataframe(rows, hide_index=True, key="casting_3d_spots")
    st.markdown("**Freezing time through the hottest spot** (min; blank: mould)")
    for i, sl in enumerate(view["slices"]):
        st.plotly_chart(_slice(sl), key=f"casting_3d_slice_{i}", config={"displaylogo": False})
    st.caption(common.md_escape(f"{s['cells']:,} cells of {s['cell_mm']:.1f} mm, {s['steps']} steps, solved in "
                                f"{s['solve_s']:.1f} s. " + " ".join(s["notes"])))
    st.info(common.md_escape(view["caution"]), icon=":material/warning:")
