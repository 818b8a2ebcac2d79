"""Scale benchmark: a large foundry's ten years of history.

``python -m benchmarks.scale [--lots N] [--json] [--keep DIR] [--backend postgresql
--pg-url URL]`` generates a
seeded synthetic history (patterns, zones, a sleeve catalogue, riser
revisions, lots and inspections, written as CSV in the import formats) and
measures, side by side in one run, each of the project's heavy paths against
a floor or a plain alternative:

- ``import``: ``tracker.log.ingest.import_file`` on the inspections CSV (the code
  path of ``pourback import``, after patterns, zones, sleeves, risers and lots
  are in) against the very rows the import wrote, written raw into an
  identical empty table (the same database before the import) in one
  transaction: one ``executemany`` on SQLite, one ``COPY`` on PostgreSQL;
- ``review_week``: ``weekly_review`` of one week (``weeks=1``) against its
  floor, ``Store.review_floor``: hand-written SELECTs fetching exactly the
  rows the review reads (the lots of its span, the review weeks and the week
  before them, with pattern and castings; their current inspection records;
  the riser revisions in force) into Python lists, with no computation. The
  old baseline, one SQL aggregate of the week's rejects per pattern
  (``Store.rejects_by_pattern``), is kept for information; ``review_13w``
  (the default window, for information) and ``review_52w`` (the 52-week
  trend) against their own floors, measured the same way;
- ``sizing``: ``size_risers`` against ``size_riser`` (scipy's brentq) in a
  Python loop, with the largest difference in diameter;
- ``fit_model``: ``fit_model`` on the whole history, on its own (it stores
  the model, as ``pourback fit-model`` does);
- ``suggestions``: ``suggest`` for every problem pattern with the stored
  model (fitted beforehand, as the dashboard uses it);
- ``thermal_solve``: one thermal solve at the default resolution (target 5 s,
  500 MB); ``thermal_suggestions``: the thermal check of every suggestion's
  proposed riser; ``solid_plate`` and ``solid_two_risers``: the 3-D solve of
  a whole casting with its risers (benchmarks.solid, target 60 s each; the
  command line adds them after the run, ``--no-solid`` leaves them out);
- ``dashboard_*``: first render and a rerun of the weekly review, design
  map and suggestions pages with Streamlit's AppTest, where those pages
  exist (the suggestions page with the stored model).

Each measure runs in a fresh child process (forked from a parent that holds
no data); its peak memory is that process's ``getrusage(RUSAGE_SELF).ru_maxrss``
read at its end, so it includes the interpreter and the imported libraries.

``--backend postgresql`` runs the measures that touch the log on a PostgreSQL
server (``--pg-url``, default $POURBACK_BENCH_PG, else $POURBACK_TEST_PG), each
database a fresh schema dropped at the end; sizing does not touch the log and is
measured on the SQLite run only.

The synthetic foundry is invented: every code, name and number in it is made
up. At N = 1,000,000 lots it pours about 3,000 patterns for ten years, about
100,000 lots a year, and logs about three inspection records per lot.

The pieces: ``benchmarks.history`` writes the invented history,
``benchmarks.children`` holds what each child process measures,
``benchmarks.report`` the targets and the text report; this module runs
them in order and holds the command line.
"""

from __future__ import annotations

import argparse
import concurrent.futures as cf
import json
import multiprocessing as mp
import os
import pathlib
import shutil
import sys
import tempfile
import time

from benchmarks.children import (
    _c_dashboard,
    _c_fit,
    _c_generate,
    _c_import,
    _c_import_floor,
    _c_review,
    _c_setup,
    _c_sizing,
    _c_suggest,
    _c_thermal_solve,
    _c_thermal_suggestions,
    _c_version,
    _dashboard_pages,
)
from benchmarks.history import DEFAULT_LOTS, SEED
from benchmarks.report import (
    IMPORT_MEMORY_MB,
    SIZING_TOLERANCE_MM,
    THERMAL_MEMORY_MB,
    format_report,
    machine,
    measure,
)
from benchmarks.solid import solid_measures

BACKENDS = ("sqlite", "postgresql")
FULL_LOTS = 1_000_000
SIZING_RISERS = 100_000

# What each child process does, for the step status ``main`` shows on a terminal.
STEP_LABELS = {"_c_generate": "generating the synthetic history", "_c_setup": "importing patterns .. lots",
               "_c_import": "import (ours)", "_c_import_floor": "import floor (executemany)",
               "_c_review": "weekly review against its floor", "_c_sizing": "sizing",
               "_c_fit": "fitting the model", "_c_suggest": "suggestions", "_c_dashboard": "dashboard page"}
_STEPS = None  # a tracker.cli.steps.Steps while main() runs on a terminal


def _in_child(fn, *args, **kwargs):
    """Run ``fn`` in a fresh child process and return its result.

    Forked where possible (the parent holds no data, so the child starts with
    only the interpreter and the imported libraries), else spawned.
    """
    if _STEPS is not None:
        detail = {"_c_review": lambda: f" ({args[2]} weeks)",
                  "_c_dashboard": lambda: f" ({pathlib.Path(args[1]).stem})"}.get(fn.__name__, lambda: "")()
        _STEPS.step(STEP_LABELS.get(fn.__name__, fn.__name__) + detail)
    method = "fork" if "fork" in mp.get_all_start_methods() else "spawn"
    with cf.ProcessPoolExecutor(max_workers=1, mp_context=mp.get_context(method)) as ex:
        return ex.submit(fn, *args, **kwargs).result()



# --- the measures, in the report's order ---------------------------------------------------

def _databases(work: pathlib.Path, backend: str, pg_url: str):
    """(the setup database or None, the log measured, the import floor's log, the schemas made)."""
    from tracker.log.store import new_schema

    schemas: list[str] = []
    if backend == "sqlite":
        base_db, ours_db, floor_db = (str(work / "base.db"), str(work / "log.db"), str(work / "floor.db"))
        for p in (base_db, ours_db, floor_db):
            for q in (p, f"{p}-wal", f"{p}-shm"):
                pathlib.Path(q).unlink(missing_ok=True)
    else:
        tag = f"bench_{os.getpid()}"
        schemas = [f"{tag}_log", f"{tag}_floor"]
        base_db = None
        ours_db, floor_db = (new_schema(pg_url, s) for s in schemas)
    return base_db, ours_db, floor_db, schemas


def _setup(backend: str, gen: dict, base_db, ours_db, floor_db) -> dict:
    """Patterns .. lots into both logs (on SQLite imported once and copied)."""
    if backend == "sqlite":
        setup = _in_child(_c_setup, base_db, gen["paths"])
        shutil.copyfile(base_db, ours_db)
        shutil.copyfile(base_db, floor_db)  # the identical empty table (and the lots it references)
    else:
        setup = _in_child(_c_setup, ours_db, gen["paths"])
        _in_child(_c_setup, floor_db, gen["paths"])  # the identical empty table and its lots
    return setup


def _import_measure(ours_db, floor_db, gen: dict) -> dict:
    ours = _in_child(_c_import, str(ours_db), gen["paths"]["inspections"])
    floor = _in_child(_c_import_floor, str(ours_db), str(floor_db))
    m = measure("import", ours["seconds"], floor["seconds"], ours["peak_rss_mb"],
                baseline_peak_rss_mb=floor["peak_rss_mb"], rss_before_mb=ours["rss_before_mb"],
                rows=floor["rows"], added=ours["added"], refused=ours["refused"],
                memory_target=f"peak RSS < {IMPORT_MEMORY_MB:g} MB",
                memory_measured_by="getrusage(RUSAGE_SELF).ru_maxrss of the child process that ran "
                                   "import_file (interpreter and libraries included)")
    m["met_ratio"] = m["met"]
    m["met_memory"] = ours["peak_rss_mb"] < IMPORT_MEMORY_MB
    m["met"] = bool(m["met_ratio"] and m["met_memory"])
    return m


def _review_measures(ours_db, gen: dict, repeats: int) -> tuple[list[dict], list]:
    """The reviews of 1, 13 and 52 weeks, and the query plans of the review's queries."""
    measures: list[dict] = []
    plans: list = []
    for name, weeks in (("review_week", 1), ("review_13w", 13), ("review_52w", 52)):
        rv = _in_child(_c_review, str(ours_db), gen["review_week"], weeks,
                       int(repeats) if weeks == 1 else max(1, int(repeats) // 2), weeks == 1)
        plans = rv.pop("plans", plans)
        measures.append(measure(name, **rv))
    return measures, plans


def _sizing_measure(backend: str, sizing_risers: int, seed: int, repeats: int) -> dict:
    if backend != "sqlite":
        return measure("sizing", not_measured="does not touch the log; see the SQLite run")
    sz = _in_child(_c_sizing, int(sizing_risers), int(seed), int(repeats))
    m = measure("sizing", sz.pop("ours_s"), sz.pop("baseline_s"), sz.pop("peak_rss_mb"),
                tolerance_mm=SIZING_TOLERANCE_MM, **sz)
    m["met"] = bool(m["met"] and m["max_abs_diff_mm"] <= SIZING_TOLERANCE_MM)
    return m


def _model_measures(ours_db, gen: dict) -> list[dict]:
    """fit_model, then suggest with the model it stored."""
    ft = _in_child(_c_fit, str(ours_db))
    fit = measure("fit_model", ft.pop("ours_s"), None, ft.pop("peak_rss_mb"),
                  note="fit_model on the whole history, stored in the log", **ft)
    sg = _in_child(_c_suggest, str(ours_db), gen["review_week"])
    return [fit, measure("suggestions", sg.pop("ours_s"), None, sg.pop("peak_rss_mb"),
                         note="suggest for every problem pattern of the review week's 13-week "
                              "window with the stored model (loading it included)", **sg)]


def _thermal_measures(ours_db, gen: dict) -> list[dict]:
    """One solve at the default resolution, then the check of every suggestion's riser."""
    th = _in_child(_c_thermal_solve)
    m = measure("thermal_solve", th.pop("ours_s"), None, th.pop("peak_rss_mb"),
                memory_target=f"peak RSS < {THERMAL_MEMORY_MB:g} MB",
                note="one thermal solve at the default resolution (the worked example of docs/thermal-check.md)", **th)
    m["met"] = bool(m["met"] and m["peak_rss_mb"] < THERMAL_MEMORY_MB)
    ts = _in_child(_c_thermal_suggestions, str(ours_db), gen["review_week"])
    return [m, measure("thermal_suggestions", ts.pop("ours_s"), None, ts.pop("peak_rss_mb"),
                       note="the thermal check of every suggestion's proposed riser, each "
                            "solved afresh (suggest itself not timed)", **ts)]


def _dashboard_measures(ours_db, dashboard: bool) -> list[dict]:
    """First render and rerun of the review, design map and suggestions pages."""
    measures = []
    pages = _dashboard_pages() if dashboard else {}
    for name in ("dashboard_review", "dashboard_design_map", "dashboard_suggestions"):
        if name not in pages:
            measures.append(measure(name, not_measured="no dashboard pages" if dashboard
                                    else "dashboard measures switched off"))
            continue
        first = name == "dashboard_suggestions"  # its target is the first render, stored model
        d = _in_child(_c_dashboard, str(ours_db), str(pages[name]), first)
        m = measure(name, d["first_s"] if first else d["rerun_s"], None, d["peak_rss_mb"],
                    first_s=d["first_s"], rerun_s=d["rerun_s"],
                    page=str(pages[name].relative_to(pages[name].parents[1])), errors=d["errors"],
                    note="ours_s is the first render with the stored model, libraries imported "
                         "beforehand as in a running dashboard" if first else
                         "ours_s is the rerun (pages cache their loads on the database file); "
                         "first_s is the first render")
        if d["errors"]:
            m["met"] = False
        measures.append(m)
    return measures


def run(lots: int = DEFAULT_LOTS, *, keep: str | os.PathLike | None = None, seed: int = SEED,
        sizing_risers: int = SIZING_RISERS, repeats: int = 5, dashboard: bool = True,
        backend: str = "sqlite", pg_url: str | None = None) -> dict:
    """Generate the history and run every measure; returns the report (JSON-ready).

    ``keep``: a folder to keep the CSV files and databases in (default a
    temporary folder, removed at the end; on PostgreSQL the schemas are kept
    too). ``backend``: "sqlite" or "postgresql" (on the server at ``pg_url``).
    """
    from tracker.log.store import drop_schema

    if backend not in BACKENDS:
        raise ValueError(f"backend: got {backend!r}; use one of {', '.join(BACKENDS)}")
    if backend == "postgresql" and not pg_url:
        raise ValueError("backend postgresql needs a server: give pg_url (a postgresql:// URL)")
    server = pg_url or ""  # the server of the postgresql backend (checked above)
    t_start = time.perf_counter()
    work = pathlib.Path(keep) if keep else pathlib.Path(tempfile.mkdtemp(prefix="pourback-bench-"))
    work.mkdir(parents=True, exist_ok=True)
    base_db, ours_db, floor_db, schemas = _databases(work, backend, server)
    try:
        gen = _in_child(_c_generate, str(work / "csv"), int(lots), int(seed))
        setup = _setup(backend, gen, base_db, ours_db, floor_db)
        database = _in_child(_c_version, ours_db)
        measures = [_import_measure(ours_db, floor_db, gen)]
        reviews, plans = _review_measures(ours_db, gen, repeats)
        measures += reviews
        measures.append(_sizing_measure(backend, sizing_risers, seed, repeats))
        measures += _model_measures(ours_db, gen)
        measures += _thermal_measures(ours_db, gen)
        measures += _dashboard_measures(ours_db, dashboard)
    finally:
        if not keep:
            shutil.rmtree(work, ignore_errors=True)
            for s in schemas:
                drop_schema(server, s)
    return {
        "benchmark": "pourback scale", "lots": int(lots), "seed": int(seed), "backend": backend,
        "database": database, "machine": machine(),
        "data": {"rows": gen["rows"], "csv_mb": gen["csv_mb"], "last_day": gen["last_day"],
                 "review_week": gen["review_week"], "generate_s": gen["generate_s"],
                 "setup_import_s": setup["setup_s"],
                 "kept_in": str(work) if keep else None,
                 "schemas": schemas if keep else []},
        "measures": measures,
        "query_plans": plans,
        "total_s": time.perf_counter() - t_start,
    }


def main(argv=None) -> int:
    """``python -m benchmarks.scale``: run the benchmark and print its report (text or ``--json``)."""
    parser = argparse.ArgumentParser(
        prog="python -m benchmarks.scale",
        description="Scale benchmark on a synthetic ten-year history (see the module docstring).")
    parser.add_argument("--lots", type=int, default=DEFAULT_LOTS,
                        help=f"lots in the history (default {DEFAULT_LOTS:,}; full scale {FULL_LOTS:,})")
    parser.add_argument("--json", action="store_true", help="print the report as JSON")
    parser.add_argument("--keep", metavar="DIR", help="keep the CSV files and databases in DIR")
    parser.add_argument("--risers", type=int, default=SIZING_RISERS,
                        help=f"risers in the sizing measure (default {SIZING_RISERS:,})")
    parser.add_argument("--repeats", type=int, default=5, help="repeats of the short measures (median)")
    parser.add_argument("--seed", type=int, default=SEED)
    parser.add_argument("--backend", choices=BACKENDS, default="sqlite",
                        help="where the log lives (default sqlite)")
    parser.add_argument("--pg-url", default=os.environ.get("POURBACK_BENCH_PG") or os.environ.get("POURBACK_TEST_PG"),
                        help="PostgreSQL server for --backend postgresql (default $POURBACK_BENCH_PG, "
                             "else $POURBACK_TEST_PG); each database is a fresh schema in it")
    parser.add_argument("--no-solid", action="store_true",
                        help="leave out the 3-D whole-casting solves (benchmarks.solid)")
    args = parser.parse_args(argv)
    if args.backend == "postgresql" and not args.pg_url:
        parser.error("--backend postgresql: give --pg-url postgresql://user@host:port/dbname "
                     "(or set POURBACK_BENCH_PG)")
    if args.lots < 100:
        parser.error(f"--lots: got {args.lots}; give at least 100 lots")
    if args.risers < 1 or args.repeats < 1:
        parser.error("--risers and --repeats must be 1 or more")
    global _STEPS
    from tracker.cli.steps import Steps, terminal

    with Steps(not args.json and terminal(sys.stderr)) as steps:
        _STEPS = steps if steps.show else None
        try:
            report = run(args.lots, keep=args.keep, seed=args.seed, sizing_risers=args.risers,
                         repeats=args.repeats, backend=args.backend, pg_url=args.pg_url)
            if not args.no_solid:      # full-size solves, after the thermal check (not in the tests' run())
                at = next(i for i, m in enumerate(report["measures"]) if m["name"] == "thermal_suggestions") + 1
                report["measures"][at:at] = solid_measures(_in_child)
        finally:
            _STEPS = None
    print(json.dumps(report, indent=2) if args.json else format_report(report))
    return 0


if __name__ == "__main__":
    sys.exit(main())
