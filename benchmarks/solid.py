"""The 3-D solve of whole castings, beside the 2-D check: ``python -m benchmarks.solid``.

Two invented castings of the demo (sample_data/castings): the 300 x 300 x 50 mm
steel plate with its 155 mm top riser, and the bossed plate of like size with
two risers, each solved at the default cell size (the thinnest section in 4
cells). Each runs in a fresh child process; the report gives its cells, the
wall time of the solve and of the whole run (reading and filling the cells
included), the process's CPU time (on a shared machine the wall time also
holds the waits for a core), its peak resident memory, and the peak of the
arrays it allocated (tracemalloc, a second traced run) beside the bound the
solve stated in advance. Target: each within 60 s on a 2-core machine.
"""

from __future__ import annotations

import concurrent.futures as cf
import json
import multiprocessing as mp
import resource
import sys
import time
import tracemalloc

from benchmarks.report import measure

CASTINGS = {"solid_plate": ("plate.stl", "plate-riser.stl"),
            "solid_two_risers": ("bossed-plate.stl", "bossed-plate-risers.stl")}


def _c_solid(name: str) -> dict:
    """One whole-casting solve (in a child process): its figures."""
    from tracker.demo.castings import write_castings
    from tracker.demo.files import default_out_dir
    from tracker.solid import stl
    from tracker.solid.run import run

    folder = default_out_dir() / "castings"
    if not folder.exists():
        write_castings(default_out_dir())
    cast_file, riser_file = CASTINGS[name]
    cpu0, t0 = time.process_time(), time.perf_counter()
    r = run(stl.read(folder / cast_file), stl.read(folder / riser_file), "steel", keep_maps=False)
    wall, cpu = time.perf_counter() - t0, time.process_time() - cpu0
    tracemalloc.start()       # a second run, traced: the arrays' own peak against the stated bound
    run(stl.read(folder / cast_file), stl.read(folder / riser_file), "steel", keep_maps=False)
    traced = tracemalloc.get_traced_memory()[1] / 1e6
    tracemalloc.stop()
    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return {"ours_s": wall, "solve_s": r.solve_s, "cpu_s": cpu, "cells": r.cells, "cell_mm": r.cell_mm,
            "steps": r.steps, "memory_bound_mb": r.memory_mb, "traced_peak_mb": traced, "thermal_ok": r.thermal_ok,
            "peak_rss_mb": peak / 2**20 if sys.platform == "darwin" else peak / 1024.0}


def solid_measures(in_child) -> list[dict]:
    """The two whole-casting solves as benchmark measures (``in_child`` runs a function in a child)."""
    out = []
    for name, (cast_file, riser_file) in CASTINGS.items():
        d = in_child(_c_solid, name)
        out.append(measure(name, d.pop("ours_s"), None, d.pop("peak_rss_mb"),
                           note=f"3-D solve of sample_data/castings/{cast_file} with {riser_file}", **d))
    return out


def text(measures: list[dict]) -> str:
    """One line per measure."""
    return "\n".join(
        f"{m['name']}: {m['cells']:,} cells of {m['cell_mm']:.1f} mm, {m['steps']} steps; run {m['ours_s']:.1f} s "
        f"(solve {m['solve_s']:.1f} s, CPU {m['cpu_s']:.1f} s), peak RSS {m['peak_rss_mb']:.0f} MB (interpreter "
        f"and libraries included); the solve's arrays {m['traced_peak_mb']:.0f} MB at most, against the "
        f"{m['memory_bound_mb']:.0f} MB stated in advance, target {m['target']}: {'met' if m['met'] else 'NOT met'}"
        for m in measures)


def _in_child(fn, *args):
    """``fn(*args)`` in a fresh child process (forked where possible), so its peak memory is its own."""
    method = "fork" if "fork" in mp.get_all_start_methods() else "spawn"
    with cf.ProcessPoolExecutor(max_workers=1, mp_context=mp.get_context(method)) as ex:
        return ex.submit(fn, *args).result()


def main(argv=None) -> int:
    """Run the two solves and print the report (``--json`` for JSON)."""
    args = sys.argv[1:] if argv is None else argv
    found = solid_measures(_in_child)
    print(json.dumps(found, indent=2) if "--json" in args else text(found))
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
