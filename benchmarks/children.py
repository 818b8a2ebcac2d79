"""What each measure of the scale benchmark does, one function per child process.

``benchmarks.scale`` runs each ``_c_*`` function in a fresh child process
(``_in_child``) and reads its result: seconds, counts and the process's peak
resident memory at its end (``getrusage(RUSAGE_SELF).ru_maxrss``, so it
includes the interpreter and the imported libraries).
"""

from __future__ import annotations

import datetime as dt
import gc
import os
import pathlib
import resource
import statistics
import sys
import time

import numpy as np

from benchmarks.history import generate_history

# Where the Store's methods live: a query is named by the first public function in these
# files above the dialect's ``execute`` (the dialect's own functions are not the query).
LOG_DIR = os.path.join("tracker", "log") + os.sep
DIALECT_FILE = os.path.join("tracker", "log", "dialect.py")


def _peak_mb() -> float:
    """This process's peak resident memory so far, MB (ru_maxrss is KB on Linux, bytes on macOS)."""
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return peak / 2**20 if sys.platform == "darwin" else peak / 1024.0



def _timed(fn, *args, **kwargs):
    t = time.perf_counter()
    out = fn(*args, **kwargs)
    return time.perf_counter() - t, out


# --- the child processes ----------------------------------------------------------------

def _c_generate(out_dir: str, lots: int, seed: int) -> dict:
    secs, summary = _timed(generate_history, out_dir, lots, seed)
    return {**summary, "generate_s": secs, "peak_rss_mb": _peak_mb()}


def _c_setup(db: str, paths: dict) -> dict:
    from tracker.log.ingest import import_files
    from tracker.log.store import Store

    with Store(db) as store:
        items = [(k, paths[k]) for k in ("patterns", "zones", "sleeves", "risers", "lots")]
        secs, _ = _timed(import_files, store, items)
    return {"setup_s": secs, "peak_rss_mb": _peak_mb()}


def _c_import(db: str, path: str) -> dict:
    from tracker.log.ingest import import_file
    from tracker.log.store import Store

    before = _peak_mb()
    with Store(db) as store:
        secs, result = _timed(import_file, store, "inspections", path)
    return {"seconds": secs, "added": result.added, "refused": result.refused,
            "rss_before_mb": before, "peak_rss_mb": _peak_mb()}


def _c_import_floor(src_db: str, floor_db: str) -> dict:
    """The floor: the rows the import wrote, already in memory, into an identical empty table."""
    from tracker.log.store import Store

    rows: list[tuple] = []
    memo: dict = {}
    with Store(src_db) as src:
        for batch in src.iter_rows("inspections"):
            # Share repeated values (as parsed text would) so the floor does not need gigabytes.
            rows.extend(tuple(v if j == 12 else memo.setdefault(v, v) for j, v in enumerate(r)) for r in batch)
    memo.clear()
    before = _peak_mb()
    with Store(floor_db) as floor:
        t = time.perf_counter()
        with floor.write():
            floor.insert_rows_alone("inspections", rows)
        secs = time.perf_counter() - t
        stored = floor.count("inspections")
    return {"seconds": secs, "rows": len(rows), "stored": stored, "rss_before_mb": before,
            "peak_rss_mb": _peak_mb()}


def _query_name(frame) -> str:
    """The Store method a statement ran in: the first public function of the log's
    modules (the dialect's aside) from ``frame`` upwards, "?" where there is none."""
    f = frame
    while f is not None:
        path = f.f_code.co_filename
        if LOG_DIR in path and not path.endswith(DIALECT_FILE) and not f.f_code.co_name.startswith(("_", "<")):
            return f.f_code.co_name
        f = f.f_back
    return "?"


def _plans(store, calls) -> list[dict]:
    """The SQL each call ran (caught at the dialect's ``execute``), named by the
    Store method that ran it, with the database's query plan."""
    seen: dict = {}
    run_sql = store.dialect.execute

    def trace(sql, params=()):
        kept = tuple(params)
        if sql.lstrip().upper().startswith(("SELECT", "WITH")):
            seen.setdefault(_query_name(sys._getframe(1)), []).append((sql, kept))
        return run_sql(sql, params)

    store.dialect.execute = trace
    try:
        for call in calls:
            call()
    finally:
        del store.dialect.execute
    out = []
    for name, statements in seen.items():
        plans = []
        for sql, params in statements:
            plan = store.query_plan(sql, params)
            if plan not in plans:
                plans.append(plan)
        out += [{"query": name, "plan": plan} for plan in plans]
    return out


def _old_baseline(store, review: dict, week: str, weeks: int, repeats: int, ours_s: float, monday,
                  end: str) -> dict:
    """For information: the old single-aggregate baseline of the reviewed week (against the
    review's median ``ours_s``), whether its per-pattern rejects agree with the review, and
    the review's query plans."""
    from tracker.review.weekly import weekly_review

    wk_start, wk_end = monday.isoformat(), end
    _, agg = _timed(store.rejects_by_pattern, wk_start, wk_end)  # the first call, not counted
    agg_runs = [_timed(store.rejects_by_pattern, wk_start, wk_end)[0] for _ in range(repeats)]
    got = {p["pattern"]: p["rejected"] for p in review["patterns"] if p["rejected"] and weeks == 1}
    want = {p: int(q) for p, q in zip(agg["pattern"], agg["rejected"], strict=False) if q}
    out: dict = {"aggregate_s": statistics.median(agg_runs)}
    out["aggregate_ratio"] = ours_s / out["aggregate_s"] if out["aggregate_s"] else None
    out["aggregate_note"] = ("the old baseline, for information: one SQL aggregate of the week's "
                             "rejects per pattern (Store.rejects_by_pattern)")
    out["agrees_with_baseline"] = got == want
    out["plans"] = _plans(store, [lambda: weekly_review(store, week=week, weeks=weeks),
                                  lambda: weekly_review(store, week=week, weeks=52)])
    return out


def _c_review(db: str, week: str, weeks: int, repeats: int, extras: bool = False) -> dict:
    """The review of ``weeks`` weeks against its floor, paired run by run (median of
    ``repeats``). ``extras``: also the old single-aggregate baseline and the query plans."""
    from tracker.log.store import Store
    from tracker.review import stats
    from tracker.review.revisions import revision_probes
    from tracker.review.weekly import weekly_review

    monday = stats.week_start(week)
    # the span the review reads: its weeks and the week before them (for "what changed")
    start = (monday - dt.timedelta(weeks=weeks)).isoformat()
    end = (monday + dt.timedelta(days=6)).isoformat()
    out: dict = {"week": week, "weeks": weeks}
    with Store(db, create=False) as store:
        first_ours, review = _timed(weekly_review, store, week=week, weeks=weeks)
        first_floor, rows = _timed(store.review_floor, start, end)
        ours, floor, floor_no_gc = [], [], []
        for _ in range(repeats):
            ours.append(_timed(weekly_review, store, week=week, weeks=weeks)[0])
            floor.append(_timed(store.review_floor, start, end)[0])
            # the review pauses the garbage collector while it builds its output; the
            # floor the same way, for information (creating its tuples sets off collections too)
            gc.disable()
            try:
                floor_no_gc.append(_timed(store.review_floor, start, end)[0])
            finally:
                gc.enable()
        # For information, the floor with what judging riser revisions reads besides: the
        # running totals of each revision under judgement at its span's edges.
        probes, zone_probes = revision_probes(store, week, weeks)

        def floor_and_totals():
            store.review_floor(start, end)
            store.totals_and_zones_before(probes, zone_probes)

        floor_tot = [_timed(floor_and_totals)[0] for _ in range(repeats)]
        out["baseline_with_totals_s"] = statistics.median(floor_tot)
        out["ratio_to_floor_with_totals"] = statistics.median(ours) / statistics.median(floor_tot)
        out["totals_rows"] = len(probes) + len(zone_probes)
        out.update({"ours_s": statistics.median(ours), "baseline_s": statistics.median(floor),
                    "baseline_gc_paused_s": statistics.median(floor_no_gc),
                    "ratio_to_gc_paused_floor": statistics.median(ours) / statistics.median(floor_no_gc),
                    "ours_runs_s": ours, "baseline_runs_s": floor, "first_ours_s": first_ours,
                    "first_baseline_s": first_floor, "baseline": "Store.review_floor",
                    "floor_rows": {k: len(v) for k, v in rows.items()},
                    "patterns": len(review["patterns"]), "problems": len(review["problems"]),
                    "trend_weeks": len(review["trend"]["overall"])})
        if extras:
            out.update(_old_baseline(store, review, week, weeks, repeats, out["ours_s"], monday, end))
    out["peak_rss_mb"] = _peak_mb()
    return out


def _sizing_inputs(n: int, seed: int):
    from tracker.design import geometry

    rng = np.random.default_rng(seed + 1)
    alloys = np.array(["steel", "aluminum", "gray_iron", "aluminum_bronze"])[rng.integers(0, 4, n)]
    vol = np.exp(rng.uniform(np.log(50.0), np.log(50_000.0), n))
    sphere_m = geometry.sphere_modulus(np.cbrt(6.0 * vol / np.pi))
    area = vol / (sphere_m * rng.uniform(0.3, 0.9, n))
    placement = np.where(rng.random(n) < 0.5, "top", "side")
    hd = np.round(rng.uniform(0.5, 3.0, n), 2)
    f = np.where(rng.random(n) < 0.4, np.round(rng.uniform(1.1, 1.5, n), 2), 1.0)
    return alloys, vol, area, placement, hd, f


def _c_sizing(n: int, seed: int, repeats: int) -> dict:
    from tracker.design.sizing import size_riser, size_risers

    alloys, vol, area, placement, hd, f = _sizing_inputs(n, seed)

    def ours():
        d = np.empty(n)
        for a in np.unique(alloys):
            m = alloys == a
            d[m] = size_risers(vol[m], area[m], str(a), placement[m], hd[m], f[m])["diameter_mm"]
        return d

    def baseline():
        return np.array([size_riser(float(v), float(s), str(a), str(p), float(h), float(k)).diameter_mm
                         for a, v, s, p, h, k in zip(alloys, vol, area, placement, hd, f, strict=False)])

    ours()  # warm-up (imports, first allocation)
    runs = []
    for _ in range(repeats):
        secs, d_ours = _timed(ours)
        runs.append(secs)
    base_s, d_base = _timed(baseline)
    return {"ours_s": statistics.median(runs), "baseline_s": base_s, "ours_runs_s": runs, "risers": n,
            "max_abs_diff_mm": float(np.max(np.abs(d_ours - d_base))), "peak_rss_mb": _peak_mb()}


def _c_fit(db: str) -> dict:
    from tracker.advice.fitting import fit_model
    from tracker.log.store import Store

    with Store(db, create=False) as store:
        secs, model = _timed(fit_model, store)
    return {"ours_s": secs, "rows": int(model.n_rows_), "castings": int(model.n_castings_),
            "peak_rss_mb": _peak_mb()}


def _c_suggest(db: str, week: str) -> dict:
    from tracker.advice.fitting import get_model
    from tracker.advice.suggest import suggest
    from tracker.log.store import Store

    with Store(db, create=False) as store:
        load_s, model = _timed(get_model, store)  # the stored model (fitted by _c_fit)
        secs, out = _timed(suggest, store, week=week, model=model, thermal=False)
    return {"ours_s": secs + load_s, "model_load_s": load_s, "suggestions": len(out),
            "problem_patterns": len({s["pattern"] for s in out}),
            "riser_changes": sum(1 for s in out if s.get("action") != "no_riser_change"),
            "peak_rss_mb": _peak_mb()}


def _c_thermal_solve() -> dict:
    from tracker.thermal import ThermalCase, run

    # the worked example of docs/thermal-check.md: a 155 mm top riser on a 300 x 300 x 50 mm steel plate
    case = ThermalCase("steel", "top", 50.0, 300.0, 300.0, 155.0, 155.0)
    secs, r = _timed(run, case, keep_maps=False)
    return {"ours_s": secs, "cells": r.cells, "grid": list(r.grid), "time_step_s": r.time_step_s,
            "steps": r.steps, "thermal_ok": r.thermal_ok, "peak_rss_mb": _peak_mb()}


def _c_thermal_suggestions(db: str, week: str) -> dict:
    from tracker.advice.fitting import get_model
    from tracker.advice.suggest import suggest
    from tracker.log.store import Store
    from tracker.thermal.checks import check_suggestions, solve_case

    with Store(db, create=False) as store:
        model = get_model(store)
        found = suggest(store, week=week, model=model, thermal=False)
        solve_case.cache_clear()  # every proposed riser solved here, none reused
        secs, checks = _timed(check_suggestions, store, found)
        solve_case.cache_clear()
        with_s, _ = _timed(suggest, store, week=week, model=model, thermal=True)
    done = [c for c in checks if c is not None]
    return {"ours_s": secs, "suggestions": len(found), "solves": len(done),
            "thermal_ok": sum(c["thermal_ok"] for c in done),
            "per_solve_s": secs / len(done) if done else None, "suggest_with_thermal_s": with_s,
            "peak_rss_mb": _peak_mb()}


def _dashboard_pages() -> dict:
    """The weekly review and design map page files, where they exist."""
    root = pathlib.Path(__file__).resolve().parents[1] / "dashboard"
    files = [p for p in root.rglob("*.py") if p.name not in ("__init__.py", "common.py", "charts.py")]
    found = {}
    for p in sorted(files):
        stem = p.stem.lower()
        if "review" in stem and "dashboard_review" not in found:
            found["dashboard_review"] = p
        elif "design" in stem and "map" in stem and "dashboard_design_map" not in found:
            found["dashboard_design_map"] = p
        elif "suggest" in stem and "dashboard_suggestions" not in found:
            found["dashboard_suggestions"] = p
    return found


def _c_dashboard(db: str, page: str, warm: bool = False) -> dict:
    """First render and rerun of one page. ``warm``: import the libraries a
    page needs before the clock starts, as a running dashboard has (the
    render then counts the page's own work)."""
    os.environ["POURBACK_DB"] = db
    from streamlit import logger as st_logger
    from streamlit.testing.v1 import AppTest

    st_logger.set_log_level("error")  # no "bare mode" warnings in the middle of the report
    if warm:
        import altair  # noqa: F401 (imported before the clock starts, as a running dashboard has it)

        import tracker.advice.suggest  # noqa: F401 (imported before the clock starts)
        import tracker.review.weekly  # noqa: F401 (imported before the clock starts)
        import tracker.views.design_map  # noqa: F401 (imported before the clock starts)
        import tracker.views.pattern_file  # noqa: F401 (imported before the clock starts)
        import tracker.views.review  # noqa: F401 (imported before the clock starts)
        import tracker.views.suggestions  # noqa: F401 (imported before the clock starts)

    at = AppTest.from_file(page, default_timeout=900)
    first, _ = _timed(at.run)
    errors = [str(e.value) for e in at.exception]
    rerun, _ = _timed(at.run)
    errors += [str(e.value) for e in at.exception]
    return {"first_s": first, "rerun_s": rerun, "errors": errors[:3], "peak_rss_mb": _peak_mb()}



def _c_version(db: str) -> str:
    from tracker.log.store import Store

    with Store(db) as store:
        return store.server_version()

