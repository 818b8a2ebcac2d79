"""The scale benchmark's targets, its record of one measure, and the report as text."""

from __future__ import annotations

import os
import platform
import sqlite3

import numpy as np
import pandas as pd

TARGETS = {  # name -> (kind, limit); "ratio_max": ours/baseline <= limit, "speedup_min", "seconds_max"
    "import": ("ratio_max", 2.0),
    "review_week": ("ratio_max", 2.5),
    "review_52w": ("ratio_max", 2.5),
    "sizing": ("speedup_min", 50.0),
    "fit_model": ("seconds_max", 30.0),
    "suggestions": ("seconds_max", 5.0),
    "thermal_solve": ("seconds_max", 5.0),
    "solid_plate": ("seconds_max", 60.0),
    "solid_two_risers": ("seconds_max", 60.0),
    "dashboard_review": ("seconds_max", 3.0),
    "dashboard_design_map": ("seconds_max", 3.0),
    "dashboard_suggestions": ("seconds_max", 3.0),
}
IMPORT_MEMORY_MB = 1024.0
THERMAL_MEMORY_MB = 500.0
SIZING_TOLERANCE_MM = 0.01


def machine() -> dict:
    """Cores, memory, CPU model and the versions the figures depend on."""
    info: dict = {"cores": os.cpu_count(), "platform": platform.platform(),
            "python": platform.python_version(), "sqlite": sqlite3.sqlite_version,
            "numpy": np.__version__, "pandas": pd.__version__}
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as fh:
            info["cpu"] = next((ln.split(":", 1)[1].strip() for ln in fh if ln.startswith("model name")), None)
    except OSError:
        info["cpu"] = platform.processor() or None
    try:
        with open("/proc/meminfo", encoding="utf-8") as fh:
            kb = next(int(ln.split()[1]) for ln in fh if ln.startswith("MemTotal"))
        info["ram_gb"] = round(kb / 2**20, 1)
    except (OSError, StopIteration):
        info["ram_gb"] = None
    return info


def measure(name: str, ours_s=None, baseline_s=None, peak_rss_mb=None, **extra) -> dict:
    """One measure's record: ours and the baseline in s, their ratio, the target of ``name``
    (TARGETS) and whether it is met, the peak RSS in MB, then ``extra``'s keys."""
    kind, limit = TARGETS.get(name, (None, None))
    ratio = None
    if ours_s is not None and baseline_s:
        ratio = baseline_s / ours_s if kind == "speedup_min" else ours_s / baseline_s
    text = None if kind is None else {"ratio_max": f"ours/baseline <= {limit:g}",
                                      "speedup_min": f"baseline/ours >= {limit:g}",
                                      "seconds_max": f"ours < {limit:g} s"}[kind]
    met = None
    if ours_s is not None and kind == "ratio_max":
        met = ratio is not None and ratio <= limit
    elif ours_s is not None and kind == "speedup_min":
        met = ratio is not None and ratio >= limit
    elif ours_s is not None and kind == "seconds_max":
        met = ours_s < limit
    return {"name": name, "ours_s": ours_s, "baseline_s": baseline_s, "ratio": ratio,
            "ratio_kind": "baseline/ours" if kind == "speedup_min" else ("ours/baseline" if baseline_s else None),
            "target": text, "met": met, "peak_rss_mb": peak_rss_mb, **extra}



def _fmt_s(v) -> str:
    if v is None:
        return "-"
    return f"{v * 1000:.1f} ms" if v < 1 else f"{v:.2f} s"


def _details(x: dict) -> list[str]:
    """The lines of detail under the table for one measure (none where it was not measured)."""
    out: list[str] = []
    if x["name"] == "import" and x.get("ours_s"):
        out.append(f"import: {x['rows']:,} rows, {x['rows'] / x['ours_s']:,.0f} rows/s validated vs "
               f"{x['rows'] / x['baseline_s']:,.0f} rows/s raw; peak RSS {x['peak_rss_mb']:.0f} MB "
               f"({x['memory_target']}: {'met' if x['met_memory'] else 'MISSED'}; "
               f"{x['memory_measured_by']}); floor process {x['baseline_peak_rss_mb']:.0f} MB")
    if x["name"].startswith("review_") and x.get("ours_s") is not None:
        out.append(f"{x['name']}: weekly_review(weeks={x['weeks']}) of {x['week']} vs Store.review_floor "
               f"({', '.join(f'{v:,} {k}' for k, v in x['floor_rows'].items())}; median of "
               f"{len(x['ours_runs_s'])}); first calls {_fmt_s(x['first_ours_s'])} / "
               f"{_fmt_s(x['first_baseline_s'])}; floor with the garbage collector paused "
               f"{_fmt_s(x['baseline_gc_paused_s'])} (ratio {x['ratio_to_gc_paused_floor']:.2f}); "
               f"with the {x['totals_rows']:,} running-total rows judging riser revisions reads "
               f"{_fmt_s(x['baseline_with_totals_s'])} (ratio {x['ratio_to_floor_with_totals']:.2f})")
    if x["name"] == "review_week" and x.get("aggregate_s") is not None:
        out.append(f"review_week, old baseline (information): Store.rejects_by_pattern "
               f"{_fmt_s(x['aggregate_s'])}, ours/aggregate {x['aggregate_ratio']:.0f}; "
               f"per-pattern rejects agree: {x['agrees_with_baseline']}")
    if x["name"] == "sizing" and x.get("ours_s"):
        out.append(f"sizing: {x['risers']:,} risers; max |diameter difference| "
               f"{x['max_abs_diff_mm']:.2e} mm (tolerance {x['tolerance_mm']} mm)")
    if x["name"] == "fit_model" and x.get("ours_s") is not None:
        out.append(f"fit_model: {x['rows']:,} rows ({x['castings']:,} castings), stored in the log")
    if x["name"] == "suggestions" and x.get("ours_s") is not None:
        out.append(f"suggestions: {x['suggestions']} for {x['problem_patterns']} problem patterns "
               f"({x['riser_changes']} riser changes), the stored model (loaded in "
               f"{_fmt_s(x['model_load_s'])})")
    if x["name"] == "thermal_solve" and x.get("cells") is not None:
        out.append(f"thermal_solve: grid {x['grid'][0]} x {x['grid'][1]} = {x['cells']:,} cells, "
               f"time step {x['time_step_s']:.2f} s, {x['steps']} steps; {x['memory_target']}")
    if x["name"].startswith("solid_") and x.get("cells") is not None:
        out.append(f"{x['name']}: {x['cells']:,} cells of {x['cell_mm']:.1f} mm, {x['steps']} steps, CPU "
                   f"{x['cpu_s']:.1f} s; arrays {x['traced_peak_mb']:.0f} MB at most (bound stated "
                   f"{x['memory_bound_mb']:.0f} MB)")
    if x["name"] == "thermal_suggestions" and x.get("suggestions") is not None:
        per = "-" if x["per_solve_s"] is None else _fmt_s(x["per_solve_s"])
        out.append(f"thermal_suggestions: {x['solves']} proposed risers of {x['suggestions']} "
               f"suggestions solved ({per} each), {x['thermal_ok']} pass the thermal check; "
               f"suggest --thermal (fallback candidates solved too) {_fmt_s(x['suggest_with_thermal_s'])}")
    if x["name"].startswith("dashboard") and x.get("first_s") is not None:
        out.append(f"{x['name']}: {x['page']}: first render {_fmt_s(x['first_s'])}, rerun "
               f"{_fmt_s(x['rerun_s'])}" + (f"; errors: {x['errors']}" if x["errors"] else ""))
    return out


def format_report(report: dict) -> str:
    """The report as text: machine, data, one line per measure, query plans."""
    m = report["machine"]
    d = report["data"]
    lines = [f"Pourback scale benchmark: {report['lots']:,} lots (seed {report['seed']}), "
             f"log on {report['database']}",
             f"machine: {m.get('cpu')}, {m['cores']} cores, {m.get('ram_gb')} GB RAM; Python {m['python']}",
             "data: " + ", ".join(f"{v:,} {k}" for k, v in d["rows"].items())
             + f"; inspections.csv {d['csv_mb']['inspections']} MB; generated in {_fmt_s(d['generate_s'])}, "
               f"setup import (patterns..lots) {_fmt_s(d['setup_import_s'])}; review week {d['review_week']}",
             ""]
    head = f"{'measure':<22}{'ours':>11}{'baseline':>11}{'ratio':>9}  {'target':<26}{'met':<5}{'peak RSS':>10}"
    lines += [head, "-" * len(head)]
    for x in report["measures"]:
        if x.get("not_measured"):
            lines.append(f"{x['name']:<22}not measured: {x['not_measured']}")
            continue
        ratio = "-" if x["ratio"] is None else (f"{x['ratio']:.1f}x" if x["ratio_kind"] == "baseline/ours"
                                                else f"{x['ratio']:.2f}")
        met = {True: "yes", False: "NO", None: "-"}[x["met"]]
        rss = "-" if x["peak_rss_mb"] is None else f"{x['peak_rss_mb']:.0f} MB"
        lines.append(f"{x['name']:<22}{_fmt_s(x['ours_s']):>11}{_fmt_s(x['baseline_s']):>11}{ratio:>9}  "
               f"{(x['target'] or '-'):<26}{met:<5}{rss:>10}")
    lines.append("")
    for x in report["measures"]:
        lines += _details(x)
    lines += ["", "Query plans of the review's queries ("
              + ("EXPLAIN QUERY PLAN" if report["backend"] == "sqlite" else "EXPLAIN") + "):"]
    for q in report["query_plans"]:
        lines.append(f"  Store.{q['query']}:")
        lines += [f"    {ln}" for ln in q["plan"]]
    lines.append(f"\ntotal {_fmt_s(report['total_s'])}")
    return "\n".join(lines)

