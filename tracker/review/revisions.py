"""Riser revisions under judgement: the before/after of each revision the weekly
review of a window judges, from the log's running totals.

Every revision that took effect inside the window, and every revision in
effect at the window's start that is still ``not_enough_data`` as of the
review week's end, however long ago it took effect: a change stays under
judgement until it has a verdict. Lots poured under the previous revision (at
most ``weeks`` weeks before the change) are compared with lots poured from the
change to the review week's end (or to the next revision) by
:func:`tracker.review.stats.compare_rates_many` (Fisher's exact test) on
shrinkage rejects in the zones of the risers that changed.

The before/after figures come from the log's running totals per pattern and
pour day (``Store.totals_before``, read with the changed zones' in one
statement by ``Store.totals_and_zones_before``; kept up to date by every write
of lots and records): two rows a span, however long ago the revision took
effect, instead of re-reading its history.
"""

from __future__ import annotations

import datetime as dt
import math

from tracker import numbers, units
from tracker.log.store import Store
from tracker.review import stats

EARLIEST_DAY = "0001-01-01"  # "from the start of the log" for date filters
RISER_FIELDS = ("zone", "placement", "top", "diameter_mm", "height_mm", "sleeve", "neck_diameter_mm")


def iso(d: dt.date) -> str:
    """A date as ISO text, "2026-11-16"."""
    return d.isoformat()


def _day_before(day: str) -> str:
    return iso(dt.date.fromisoformat(day) - dt.timedelta(days=1))


def _fmt(v) -> str:
    if v is None:
        return "none"
    if isinstance(v, float):
        return f"{v:g}"
    return str(v)


def _riser_changes(old: dict, new: dict) -> list[dict]:
    """Risers whose zone, geometry or sleeve differ between two revisions ({riser: fields})."""
    out = []
    empty = dict.fromkeys(RISER_FIELDS)
    for riser in sorted(set(old) | set(new)):
        before, after = old.get(riser, empty), new.get(riser, empty)
        if before == after:
            continue
        zones = sorted({z for z in (before["zone"], after["zone"]) if z})
        out.append({"riser": riser, "zones": zones, "before": before, "after": after,
                    "change": riser_change_text(before, after)})
    return out


def riser_change_text(before: dict, after: dict, system: str = units.METRIC) -> str:
    """What changed between two states of one riser (RISER_FIELDS each, metric),
    sizes worded in ``system``: "diameter 120 → 140 mm", "diameter 4.72 → 5.51 in"."""
    if before["zone"] is None:
        return "added"
    if after["zone"] is None:
        return "removed"

    def size(f, v):
        if system != units.US or v is None or not f.endswith("_mm"):
            return _fmt(v)
        return units.number(f, v, system)

    return ", ".join(f"{f.removesuffix('_mm')} {size(f, before[f])} → {size(f, after[f])}"
                     + (f" {units.symbol(f, system)}" if f.endswith("_mm") else "")
                     for f in ("diameter_mm", "height_mm", "neck_diameter_mm", "sleeve", "placement", "top", "zone")
                     if before[f] != after[f])



def _candidates(store: Store, mondays: list[dt.date], weeks: int) -> dict | None:
    """The riser revisions the review of the weeks ``mondays`` judges, with their spans."""
    first, review_end = iso(mondays[0]), iso(mondays[-1] + dt.timedelta(days=6))
    # every revision up to the review week: one still without a verdict stays under
    # judgement however long ago it took effect (the revisions table is small)
    revs = store.revision_steps(EARLIEST_DAY, review_end, columns=True)
    steps = zip(revs["effective_from"], revs["previous"], revs["next_from"], strict=False)
    keep = [i for i, (eff, prev, nxt) in enumerate(steps)
            if first <= eff <= review_end or (eff < first and prev is not None and (nxt is None or nxt > first))]
    if not keep:
        return None
    cand = {c: [v[i] for i in keep] for c, v in revs.items()}
    cand["in_window"] = [eff >= first for eff in cand["effective_from"]]
    cand["before_start"] = [eff if prev is None else max(prev_from, iso(dt.date.fromisoformat(eff)
                                                                         - dt.timedelta(weeks=weeks)))
                            for eff, prev, prev_from in zip(cand["effective_from"], cand["previous"],
                                                            cand["previous_from"], strict=False)]
    cand["before_end"] = [_day_before(e) for e in cand["effective_from"]]
    cand["after_end"] = [review_end if nf is None else min(review_end, _day_before(nf))
                         for nf in cand["next_from"]]
    return cand


def _changed(store: Store, cand: dict) -> tuple[list[list[str]], list[list[dict]]]:
    """Per candidate, the zones of its changed risers and the changes (from the risers
    of the candidates' patterns, a handful of rows each)."""
    designs: dict[tuple, dict] = {}
    for pattern, revision, riser, *fields in store.riser_designs(sorted(set(cand["pattern"]))):
        designs.setdefault((pattern, revision), {})[riser] = dict(zip(RISER_FIELDS, fields, strict=False))
    changes = [_riser_changes(designs.get((c, prev), {}), designs.get((c, rv), {})) if prev else []
               for c, rv, prev in zip(cand["pattern"], cand["revision"], cand["previous"], strict=False)]
    return [sorted({z for ch in chs for z in ch["zones"]}) for chs in changes], changes


def _read_totals(store: Store, cand: dict, zones: list[list[str]]) -> dict:
    """The running totals each candidate's spans are read from.

    Per candidate three edges (``edges``: before_start, effective_from, the day
    after after_end): before = [before_start, effective_from), after =
    [effective_from, after_end], each the difference of the pattern's totals at
    two edges (``totals``, ``Store.totals_before``), however long ago the
    revision took effect. ``use_zones``: the revision changed risers and
    shrinkage rejects in its spans name a zone; then the shrinkage rejects of
    the changed zones at the edges (``zone_totals``, read with the totals for
    every revision that changed risers, used for those only). ``probes`` and
    ``zone_probes`` list what was read.
    """
    day_after: dict[str, str] = {}
    for e in cand["after_end"]:
        if e not in day_after:
            day_after[e] = iso(dt.date.fromisoformat(e) + dt.timedelta(days=1))
    edges = [(bs, eff, day_after[ae])
             for bs, eff, ae in zip(cand["before_start"], cand["effective_from"], cand["after_end"], strict=False)]
    probes = [(c, d) for c, e in zip(cand["pattern"], edges, strict=False) for d in e]
    # the changed zones of every revision, read with the totals (one statement) though
    # only those whose spans hold zoned shrinkage rejects are used
    zone_probes = [(c, z, d) for c, zs, e in zip(cand["pattern"], zones, edges, strict=False) for z in zs for d in e]
    totals, zone_totals = store.totals_and_zones_before(probes, zone_probes)
    zoned = Store.TOTALS.index("zoned_shrinkage")
    use_zones = [bool(zs) and totals[(c, e[2])][zoned] - totals[(c, e[0])][zoned] > 0
                 for c, zs, e in zip(cand["pattern"], zones, edges, strict=False)]
    return {"edges": edges, "totals": totals, "use_zones": use_zones,
            "zone_totals": zone_totals, "probes": probes, "zone_probes": zone_probes}


def revision_probes(store: Store, week: str, weeks: int) -> tuple[list, list]:
    """The rows of ``day_totals`` and ``zone_totals`` the review of ``week`` (``weeks``
    weeks) reads to judge riser revisions, as the probes of ``Store.totals_before``
    and ``Store.zone_shrinkage_before``: for the benchmark, which times that read
    beside the floor (the review itself reads them in :func:`judge_revisions`)."""
    monday = stats.week_start(week)
    cand = _candidates(store, [monday - dt.timedelta(weeks=weeks - 1 - i) for i in range(weeks)], weeks)
    if cand is None:
        return [], []
    read = _read_totals(store, cand, _changed(store, cand)[0])
    return read["probes"], read["zone_probes"]


def judge_revisions(store: Store, mondays: list[dt.date], weeks: int, confidence: float) -> list[dict]:
    """The before/after of each riser revision the review of the weeks ``mondays``
    (Mondays, oldest first) judges, newest first; ``confidence`` the coverage of the
    intervals of the difference. JSON-ready (the review's ``revisions``)."""
    cand = _candidates(store, mondays, weeks)
    if cand is None:
        return []
    n = len(cand["pattern"])
    in_window, before_start, before_end, after_end = (
        cand["in_window"], cand["before_start"], cand["before_end"], cand["after_end"])
    zones, changes = _changed(store, cand)
    read = _read_totals(store, cand, zones)
    edges, totals, zone_totals = read["edges"], read["totals"], read["zone_totals"]
    at = {k: j for j, k in enumerate(Store.TOTALS)}
    basis, sums = [], []
    for i in range(n):
        c, (bs, eff, end) = cand["pattern"][i], edges[i]
        t0, t1, t2 = totals[(c, bs)], totals[(c, eff)], totals[(c, end)]
        use_zones = read["use_zones"][i]
        if not zones[i]:
            basis.append("all zones (no riser changed)")
        elif use_zones:
            basis.append("zones of the changed risers")
        else:
            basis.append("all zones (no zone recorded on the shrinkage rejects)")
        if use_zones:
            s0, s1, s2 = (sum(zone_totals[(c, z, d)] for z in zones[i]) for d in (bs, eff, end))
        else:
            s0, s1, s2 = t0[at["shrinkage"]], t1[at["shrinkage"]], t2[at["shrinkage"]]
        sums.append({side: {"lots": b[at["lots"]] - a[at["lots"]], "poured": b[at["castings"]] - a[at["castings"]],
                            "inspected": b[at["inspected_castings"]] - a[at["inspected_castings"]],
                            "rejected": b[at["rejected"]] - a[at["rejected"]], "shrinkage_rejected": sb - sa}
                     for side, (a, b, sa, sb) in (("before", (t0, t1, s0, s1)),
                                                  ("after", (t1, t2, s1, s2)))})

    bounds = {"before": (before_start, before_end), "after": (cand["effective_from"], after_end)}
    judged = stats.compare_rates_many([s["before"]["shrinkage_rejected"] for s in sums],
                                      [s["before"]["inspected"] for s in sums],
                                      [s["after"]["shrinkage_rejected"] for s in sums],
                                      [s["after"]["inspected"] for s in sums], confidence)
    out = []
    for i in range(n):
        part = {}
        for side, (a, b) in bounds.items():
            part[side] = {"start": a[i] if side == "after" or cand["previous"][i] is not None else None,
                          "end": b[i], **sums[i][side]}
        b, a = part["before"], part["after"]
        c = judged[i]
        if not in_window[i] and c["verdict"] != "not_enough_data":
            continue
        rb = b["rejected"] / b["inspected"] if b["inspected"] else math.nan
        ra = a["rejected"] / a["inspected"] if a["inspected"] else math.nan
        out.append({
            "pattern": cand["pattern"][i], "revision": cand["revision"][i],
            "previous_revision": cand["previous"][i],
            "effective_from": cand["effective_from"][i], "took_effect_in_window": bool(in_window[i]),
            "changed_risers": [ch["riser"] for ch in changes[i]], "changed_zones": zones[i],
            "riser_changes": changes[i], "zone_basis": basis[i],
            "before": b, "after": a,
            **{k: numbers.finite(c[k]) for k in ("rate_before", "rate_after", "difference", "diff_low",
                                                 "diff_high", "p_value", "power_to_halve")},
            "verdict": c["verdict"],
            "all_defects": {"rate_before": numbers.finite(rb), "rate_after": numbers.finite(ra),
                            "difference": numbers.finite(ra - rb)},
        })
    out.sort(key=lambda d: (d["effective_from"], d["pattern"], d["revision"]), reverse=True)
    return out  # JSON-ready as built: counts, text and riser fields as read; floats through numbers.finite
