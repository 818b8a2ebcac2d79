"""The thermal view: freezing-time and Niyama maps of one riser and its section.

Shown in the pattern file (each riser of the current revision) and in what-if
(the changed riser). The solve is a screening estimate; the caution says so.
"""

from __future__ import annotations

import streamlit as st

from dashboard import charts, common


def show(view: dict, key: str) -> None:
    """Draw one thermal result (``tracker.views.thermal.view``)."""
    s = view["summary"]
    c = st.columns(3)
    c[0].metric("Thermal check", s["verdict"])
    c[1].metric("Last to freeze", s["last_to_freeze"])
    c[2].metric("Freezing ratio riser / section's own", f"{s['freeze_ratio']:.2f}")
    c = st.columns(4)
    c[0].metric("Section's own freezing (min)", f"{s['section_freeze_s'] / 60:.1f}",
                help="beyond the riser's footprint plus one section thickness")
    c[3].metric("Junction freezing (min)", f"{s['junction_freeze_s'] / 60:.1f}", help="under and beside the riser")
    c[1].metric("Riser freezing (min)", f"{s['riser_freeze_s'] / 60:.1f}")
    ny = "-" if s["min_niyama_shown"] is None else f"{s['min_niyama_shown']:.2f}" + (
        "" if s["niyama_uncertainty_shown"] is None else f" ± {s['niyama_uncertainty_shown']:.2f}")
    limit = s["niyama_threshold_shown"]
    thr = "no threshold" if limit is None else f"threshold {limit:.3g}"
    c[2].metric("Minimum Niyama", ny, help=f"{s['niyama_unit_shown']}; {thr}; "
                                          f"{common.PUBLISHED_FORM} {s['niyama_source']}")
    if s["reasons"]:
        word = "Fails" if s["verdict"] == "fail" else "Inconclusive (a margin inside the solver's own error)"
        st.warning(common.md_escape(f"{word}: " + "; ".join(s["reasons"]) + "."))
    # stacked, each at its own width: the maps keep one length scale on both axes
    st.markdown("**Freezing time** (min; + marks the last point to freeze; the narrow box beside a "
                "sleeved riser is its sleeve)")
    st.altair_chart(charts.thermal_freezing_map(view["cells"], view["outline"], s["last_point"],
                                                s["x_label"], s["z_label"]), key=f"{key}_freeze", width="content")
    st.markdown(f"**Niyama in the section** ({s['niyama_unit_shown']}"
                + ("" if limit is None else f"; orange: below the threshold {limit:.3g}") + ")")
    st.altair_chart(charts.thermal_niyama_map(view["cells"], view["outline"], limit, s["niyama_unit_shown"],
                                              s["x_label"], s["z_label"]), key=f"{key}_niyama", width="content")
    st.caption(common.md_escape(
        f"{s['model'].capitalize()} model, {s['grid'][0]} × {s['grid'][1]} = {s['cells']:,} cells "
        f"({s['cell_size']:.{1 if s['length_unit'] == 'mm' else 2}f} {s['length_unit']} in the section), "
        f"time step {s['time_step_s']:.1f} s, pouring at {s['pour_temp']:.0f} {s['temp_unit']}, solved in "
        f"{s['solve_s']:.1f} s. " + " ".join(s["notes"])))
    st.info(common.md_escape(s["caution"]), icon=":material/warning:")


def pattern_section(code: str) -> None:
    """The thermal check of each riser of the pattern's current revision (on request: it solves)."""
    st.subheader("Thermal check")
    if not st.toggle("Solve the current revision's risers (a few seconds per riser)", key="thermal_on"):
        st.caption("A 2-D solidification solve of each riser and the zone it feeds: where the last liquid is, "
                   "whether the zone's last liquid stays connected to the riser, and the Niyama criterion.")
        return
    views = common.load("pattern_thermal", code, system=common.unit_system(),
                        status=f"Solving the thermal check of each riser of {code} (a few seconds per riser)")
    labels = [f"{v['riser']} on {v['zone']} ({v['summary']['verdict']})" for v in views]
    tabs = st.tabs(labels)
    for tab, v in zip(tabs, views, strict=False):
        with tab:
            show(v, f"thermal_{v['riser']}")


def what_if_section(result: dict) -> None:
    """The thermal check of a what-if's changed riser (on request: it solves)."""
    st.markdown("**Thermal check**")
    if not st.toggle("Solve the changed riser and its zone (a few seconds)", key="whatif_thermal"):
        return
    keep = {k: result.get(k) for k in ("pattern", "revision", "riser", "diameter_mm", "height_mm", "sleeve",
                                       "neck_diameter_mm")}
    view = common.load("what_if_thermal", keep, system=common.unit_system(),
                       status=f"Solving the thermal check of the changed riser {keep['riser']} and its zone "
                              "(a few seconds)")
    show(view, "whatif_thermal")
