"""The running totals per pattern and pour day (``day_totals``, ``zone_totals``) and
the riser revisions' before/after the weekly review reads from them.

Every figure is checked against a straightforward recount: the lots and the
current inspection records (``Store.lots_frame``, ``Store.current_inspections``)
summed with pandas over each span, after imports, late records, corrections and
voids. Fisher's p-value of each revision is checked against scipy.
"""

import csv
import datetime as dt
import pathlib

import numpy as np
import pandas as pd
import pytest
from scipy import stats as sps

from tracker.log import totals as store_module
from tracker.log.ingest import correct_inspection, import_dir, import_file, log_inspection
from tracker.log.migrations import MIGRATIONS, _migration_9
from tracker.log.store import Store
from tracker.review import stats
from tracker.review.weekly import weekly_review

pytestmark = pytest.mark.slow  # handed out first under pytest-xdist (DEVELOPERS.md)

TODAY = dt.date(2027, 3, 1)
FIRST_DAY = dt.date(2024, 1, 1)
DAYS = 2 * 365 + 60
ZONES = ("a", "b", "c")


def _write(path: pathlib.Path, rows: list[dict]) -> pathlib.Path:
    cols = list(dict.fromkeys(k for r in rows for k in r))
    with open(path, "w", newline="", encoding="utf-8") as fh:
        w = csv.DictWriter(fh, fieldnames=cols)
        w.writeheader()
        w.writerows(rows)
    return path


def _records(rng, lot: str, poured: dt.date, castings: int, rate: float) -> list[dict]:
    """An accept record and some reject / rework records of one lot: shrinkage rejects
    at ``rate`` (in zone a, b, c or no zone), a few sand rejects and reworks."""
    day = (poured + dt.timedelta(days=int(rng.integers(1, 5)))).isoformat()
    out, left = [], castings
    kinds = [("shrinkage", "a", "reject", rate), ("shrinkage", str(rng.choice(ZONES)), "reject", rate / 3),
             ("shrinkage", "", "reject", rate / 6), ("sand", str(rng.choice(ZONES)), "reject", 0.02),
             ("shrinkage", "a", "rework", 0.01)]
    for defect, zone, result, p in kinds:
        k = min(int(rng.binomial(castings, p)), left)
        if k:
            left -= k
            out.append({"lot": lot, "inspected_on": day, "method": "xray", "quantity": k, "result": result,
                        "defect": defect, "zone": zone})
    if left:
        out.append({"lot": lot, "inspected_on": day, "method": "visual", "quantity": left, "result": "accept",
                    "defect": "", "zone": ""})
    return out


def _scenario(folder: pathlib.Path, seed: int):
    """A small invented foundry over two years: four patterns, each with three or four
    riser revisions (one of them in force for a single day), lots and their records. Returns
    the folder of the first import and the records held back (late inspections)."""
    rng = np.random.default_rng(seed)
    folder.mkdir(parents=True, exist_ok=True)
    patterns, zones, risers, lots, first, late = [], [], [], [], [], []
    for p in range(4):
        code = f"S-{seed}-{p}"
        cpm = int(rng.integers(1, 4))
        patterns.append({"pattern": code, "description": "simulated", "alloy": "steel", "casting_weight_kg": 10,
                         "castings_per_mold": cpm, "metal_cost_per_kg": 2, "processing_cost_per_casting": 5})
        zones += [{"pattern": code, "zone": z, "volume_cm3": 2000, "cooling_area_cm2": 1100} for z in ZONES]
        days = sorted(int(d) for d in rng.choice(np.arange(20, DAYS - 30), size=3, replace=False))
        if p == 0:
            days.insert(2, days[1] + 1)  # a revision in force for one day
        for r, d in enumerate([0] + days):
            eff = (FIRST_DAY + dt.timedelta(days=d)).isoformat()
            for riser, zone in (("R1", "a"), ("R2", "b")):
                grow = r if (riser == "R1") == (r % 2 == 1) else 0  # one riser changes per revision
                risers.append({"pattern": code, "revision": str(r + 1), "effective_from": eff, "riser": riser,
                               "zone": zone, "placement": "side", "top": "blind",
                               "diameter_mm": 100 + 10 * grow, "height_mm": 140})
        rates = rng.choice([0.002, 0.01, 0.06], size=len(days) + 1)  # shrinkage rate under each revision
        for i, d in enumerate(sorted(rng.integers(0, DAYS, size=70))):
            poured = FIRST_DAY + dt.timedelta(days=int(d))
            lot, molds = f"{code}-L{i:03d}", int(rng.integers(10, 40))
            lots.append({"lot": lot, "pattern": code, "poured_on": poured.isoformat(), "heat": "H", "molds": molds})
            rate = rates[int(np.searchsorted(days, int(d), side="right"))]
            recs = _records(rng, lot, poured, molds * cpm, rate)
            (late if rng.random() < 0.25 else first).extend(recs)
    for name, rows in (("patterns", patterns), ("zones", zones), ("risers", risers), ("lots", lots),
                       ("inspections", first)):
        _write(folder / f"{name}.csv", rows)
    return folder, late


# --- the straightforward recount -------------------------------------------------------

def _recount(store: Store) -> pd.DataFrame:
    """One row per lot: pattern, poured_on, castings poured, castings inspected (0 unless
    the lot holds a current record), and its current rejects: all, shrinkage, shrinkage
    naming a zone, shrinkage per zone."""
    lots = store.lots_frame()[["lot", "pattern", "poured_on", "castings"]].set_index("lot")
    cur = store.current_inspections()
    lots["inspected_castings"] = np.where(lots.index.isin(set(cur["lot"])), lots["castings"], 0)
    rej = cur[cur["result"] == "reject"]
    shr = rej[rej["defect"] == "shrinkage"]
    sums = {"rejected": rej, "shrinkage": shr, "zoned": shr[shr["zone"].notna()],
            **{f"zone_{z}": shr[shr["zone"] == z] for z in ZONES}}
    for name, rows in sums.items():
        lots[name] = rows.groupby("lot")["quantity"].sum().reindex(lots.index).fillna(0).astype(int)
    return lots.reset_index()


def _span(tab: pd.DataFrame, pattern: str, start: str, end: str, zones=None) -> dict:
    """The recount over ``pattern``'s lots poured from ``start`` to ``end`` (ISO, inclusive);
    shrinkage rejects of ``zones`` only, if given."""
    mine = tab[(tab["pattern"] == pattern) & (tab["poured_on"] >= start) & (tab["poured_on"] <= end)]
    shrinkage = mine["shrinkage"] if zones is None else sum(mine[f"zone_{z}"] for z in zones)
    return {"lots": len(mine), "poured": int(mine["castings"].sum()),
            "inspected": int(mine["inspected_castings"].sum()), "rejected": int(mine["rejected"].sum()),
            "shrinkage_rejected": int(np.sum(shrinkage)), "zoned": int(mine["zoned"].sum())}


def _check_totals(store: Store):
    """totals_before and zone_shrinkage_before at every pour day, the day after each and
    two days outside the log equal the recount of the lots poured before that day."""
    tab = _recount(store)
    days = sorted(set(tab["poured_on"]))
    probes = sorted(set(days) | {(dt.date.fromisoformat(d) + dt.timedelta(days=1)).isoformat() for d in days}
                    | {"2020-01-01", "2030-01-01"})
    patterns = sorted(set(tab["pattern"]))
    got = store.totals_before((p, d) for p in patterns for d in probes)
    got_z = store.zone_shrinkage_before((p, z, d) for p in patterns for z in ZONES for d in probes)
    cols = ["castings", "inspected_castings", "rejected", "shrinkage", "zoned"] + [f"zone_{z}" for z in ZONES]
    for p in patterns:
        mine = tab[tab["pattern"] == p].sort_values("poured_on")
        day = mine["poured_on"].to_numpy().astype(str)
        cum = np.vstack([np.zeros(len(cols), dtype=int), np.cumsum(mine[cols].to_numpy(), axis=0)])
        for d in probes:
            k = int(np.searchsorted(day, d, side="left"))  # lots poured before d
            want = cum[k]
            assert got[(p, d)] == (k, *want[:5]), (p, d)
            for j, z in enumerate(ZONES):
                assert got_z[(p, z, d)] == want[5 + j], (p, z, d)


def _changed_zones(store: Store) -> dict[tuple[str, str], list[str]]:
    """Per revision, the zones of the risers that differ from the revision before it."""
    risers = store.risers_frame()
    fields = ["zone", "placement", "top", "diameter_mm", "height_mm", "sleeve", "neck_diameter_mm"]
    out = {}
    for pattern, g in risers.groupby("pattern"):
        revs = g.drop_duplicates("revision").sort_values(["effective_from", "revision"])["revision"].tolist()
        for prev, rev in zip(revs, revs[1:], strict=False):
            old = g[g["revision"] == prev].set_index("riser")[fields]
            new = g[g["revision"] == rev].set_index("riser")[fields]
            zones = set()
            for riser in set(old.index) | set(new.index):
                a = old.loc[riser].tolist() if riser in old.index else None
                b = new.loc[riser].tolist() if riser in new.index else None
                if a != b:
                    zones |= {r[0] for r in (a, b) if r is not None}
            out[(pattern, rev)] = sorted(zones)
    return out


def _check_review(store: Store, week: str, weeks: int):
    """The review's riser revisions: which are shown, and each one's figures, against
    the recount (and scipy's Fisher test)."""
    review = weekly_review(store, week, weeks=weeks)
    tab = _recount(store)
    changes = _changed_zones(store)
    monday = stats.week_start(week)
    first = (monday - dt.timedelta(weeks=weeks - 1)).isoformat()
    end = (monday + dt.timedelta(days=6)).isoformat()
    day = lambda iso, n: (dt.date.fromisoformat(iso) + dt.timedelta(days=n)).isoformat()  # noqa: E731 (a one-line local helper)
    revs = store.revisions_frame()
    shown = {(r["pattern"], r["revision"]): r for r in review["revisions"]}
    expected = set()
    for pattern, g in revs.groupby("pattern"):
        g = g.sort_values(["effective_from", "revision"]).reset_index(drop=True)
        for i, row in g.iterrows():
            eff = row["effective_from"]
            if eff > end:
                continue
            prev = g.iloc[i - 1] if i else None
            nxt = g.iloc[i + 1]["effective_from"] if i + 1 < len(g) else None
            start = eff if prev is None else max(prev["effective_from"], day(eff, -7 * weeks))
            after_end = end if nxt is None else min(end, day(nxt, -1))
            changed = changes.get((pattern, row["revision"]), [])
            zoned = _span(tab, pattern, start, after_end)["zoned"] > 0
            use = changed if changed and zoned else None
            b = _span(tab, pattern, start, day(eff, -1), use)
            a = _span(tab, pattern, eff, after_end, use)
            verdict = stats.compare_rates(b["shrinkage_rejected"], b["inspected"], a["shrinkage_rejected"],
                                          a["inspected"])["verdict"]
            inside = eff >= first
            pending = prev is not None and (nxt is None or nxt > first) and verdict == "not_enough_data"
            if not (inside or pending):
                continue
            expected.add((pattern, row["revision"]))
            got = shown.get((pattern, row["revision"]))
            assert got is not None, (pattern, row["revision"])
            assert got["changed_zones"] == changed
            for side, want in (("before", b), ("after", a)):
                assert {k: got[side][k] for k in ("lots", "poured", "inspected", "rejected",
                                                  "shrinkage_rejected")} == \
                    {k: want[k] for k in ("lots", "poured", "inspected", "rejected", "shrinkage_rejected")}, \
                    (pattern, row["revision"], side)
            assert got["zone_basis"] == ("all zones (no riser changed)" if not changed else
                                         "zones of the changed risers" if zoned else
                                         "all zones (no zone recorded on the shrinkage rejects)")
            kb, nb, ka, na = b["shrinkage_rejected"], b["inspected"], a["shrinkage_rejected"], a["inspected"]
            if nb and na:
                # scipy.stats.fisher_exact, two-sided
                ref = sps.fisher_exact([[kb, nb - kb], [ka, na - ka]], alternative="two-sided").pvalue
                assert got["p_value"] == pytest.approx(ref, rel=1e-12)
            else:
                assert got["p_value"] is None
    assert set(shown) == expected
    return review


@pytest.fixture(params=[False, True], ids=["pattern-by-pattern", "all-patterns-at-once"])
def at_once(request, monkeypatch):
    """Both ways of bringing the totals up to date: each touched pattern on its own, and
    every pattern from the earliest touched day (as a large import does)."""
    if request.param:
        monkeypatch.setattr(store_module, "TOTALS_ONE_BY_ONE", 0)
    else:
        monkeypatch.setattr(store_module, "TOTALS_AT_ONCE_COST", 0)
    return request.param


@pytest.mark.parametrize("seed", [1, 2])
def test_totals_and_revisions_follow_imports_late_records_corrections_and_voids(tmp_path, logs, seed, at_once):
    folder, late = _scenario(tmp_path / "log", seed)
    rng = np.random.default_rng(seed + 100)
    with Store(logs.new()) as s:
        import_dir(s, folder, today=TODAY)
        _check_totals(s)
        # late inspections: a second file with the records held back, for lots poured long ago
        import_file(s, "inspections", _write(tmp_path / "late.csv", late[: len(late) // 2]), today=TODAY)
        _check_totals(s)
        # records typed in one by one (the rest held back)
        for rec in late[len(late) // 2:][:12]:
            log_inspection(s, rec, by="QE-T", today=TODAY)
        _check_totals(s)
        # corrections: a shrinkage reject moved to another zone, recounted, made a sand reject; voids
        cur = s.current_inspections()
        rejects = cur[cur["result"] == "reject"].reset_index(drop=True)
        picks = rng.choice(len(rejects), size=min(12, len(rejects)), replace=False)
        for j, k in enumerate(picks):
            rec = rejects.iloc[int(k)]
            change = [{"zone": "c" if rec["zone"] != "c" else "a"}, {"quantity": 1},
                      {"defect": "sand"}, {"void": True}][j % 4]
            correct_inspection(s, int(rec["id"]), change, by="QE-B", reason="recount", today=TODAY)
        _check_totals(s)
        for week, weeks in (("2025-W40", 13), ("2026-W02", 1), ("2026-W05", 52), ("2026-W10", 4)):
            _check_review(s, week, weeks)


def test_a_refused_import_leaves_the_totals_as_they_were(tmp_path, logs):
    folder, late = _scenario(tmp_path / "log", 3)
    with Store(logs.new()) as s:
        import_dir(s, folder, today=TODAY)
        pattern = s.lots_frame()["pattern"].iloc[0]
        probes = [(pattern, "2030-01-01")]
        before = s.totals_before(probes)
        bad = late[:5] + [dict(late[5], quantity="-3")]
        with pytest.raises(Exception):
            import_file(s, "inspections", _write(tmp_path / "bad.csv", bad), today=TODAY)
        assert s.totals_before(probes) == before
        _check_totals(s)


def test_an_import_in_many_chunks_counts_the_same_and_is_all_or_nothing(tmp_path, logs):
    """Chunks of 40 rows: on PostgreSQL each chunk's COPY runs while the next chunk is
    validated. The totals are the recount's, and a row refused in the last chunk
    leaves the log as it was."""
    folder, late = _scenario(tmp_path / "log", 5)
    with Store(logs.new()) as s:
        import_dir(s, folder, today=TODAY, chunk_rows=40)
        _check_totals(s)
        before = s.snapshot()
        bad = late + [dict(late[0], quantity="-3")]
        assert len(bad) > 3 * 40
        with pytest.raises(Exception, match="quantity"):
            import_file(s, "inspections", _write(tmp_path / "bad.csv", bad), today=TODAY, chunk_rows=40)
        assert s.snapshot() == before
        added = import_file(s, "inspections", _write(tmp_path / "late.csv", late), today=TODAY, chunk_rows=40)
        assert added.added == len(late)
        _check_totals(s)


def test_a_log_from_before_the_totals_gets_them_when_opened(tmp_path):
    folder, _ = _scenario(tmp_path / "log", 4)
    path = tmp_path / "log.db"
    with Store(path) as s:
        import_dir(s, folder, today=TODAY)
        # as an older program left it (an SQLite file): no totals tables, the schema version before
        # them, and none of what later migrations added (joined faces, the actions, the casting
        # models and the positions)
        for table in ("day_totals", "zone_totals", "actions", "castings"):
            s.conn.execute(f"DROP TABLE {table}")
        for table, columns in (("risers", ("x_mm", "y_mm", "z_mm", "axis")),
                               ("zones", ("joined_faces", "x_mm", "y_mm", "z_mm", "modulus_cm"))):
            for column in columns:
                s.conn.execute(f"ALTER TABLE {table} DROP COLUMN {column}")
        s.conn.execute(f"PRAGMA user_version = {MIGRATIONS.index(_migration_9)}")
        s.conn.commit()
    with Store(path) as s:
        assert s.schema_version() == store_module.SCHEMA_VERSION
        _check_totals(s)


def test_new_records_alone_are_added_to_the_totals_as_a_recompute_gives_them(tmp_path, logs, monkeypatch):
    """A write of new records only (no lot, no correction or void) adds them to
    ``day_totals`` instead of recomputing it: the rows are those a recompute from the
    lots and records gives, to the bit, and the recount's. A lot's first record makes
    it inspected; a further record does not count its castings again."""
    folder, late = _scenario(tmp_path / "log", 6)
    taken = []
    add = Store._add_records_to_totals
    monkeypatch.setattr(Store, "_add_records_to_totals", lambda self: taken.append(add(self)) or taken[-1])

    def rows(s, table):
        return sorted(tuple(r) for r in s.conn.execute(f"SELECT * FROM {table}").fetchall())

    with Store(logs.new()) as s:
        import_dir(s, folder, today=TODAY)  # lots written too: recomputed
        assert taken == []
        import_file(s, "inspections", _write(tmp_path / "late.csv", late[: len(late) // 2]), today=TODAY)
        inspected = set(s.current_inspections()["lot"])
        held = late[len(late) // 2:]
        again = next(r for r in held if r["lot"] in inspected)
        first = next(r for r in held if r["lot"] not in inspected)
        for rec in (again, first, dict(first, result="accept", defect="", zone="", quantity=1)):
            log_inspection(s, rec, by="QE-T", today=TODAY)
        assert taken == [True] * 4
        _check_totals(s)
        added = {t: rows(s, t) for t in store_module.TOTALS_TABLES}
        with s.write():
            store_module._totals_from(s.conn.execute, store_module.EARLIEST_DAY)
        assert {t: rows(s, t) for t in store_module.TOTALS_TABLES} == added
        # a correction supersedes a record: recomputed, not added
        rec = s.current_inspections().iloc[0]
        correct_inspection(s, int(rec["id"]), {"void": True}, by="QE-B", reason="recount", today=TODAY)
        assert taken == [True] * 4
        _check_totals(s)


def test_without_update_from_new_records_are_recomputed_the_same(tmp_path, logs, monkeypatch):
    """Where the database knows no UPDATE ... FROM (SQLite before 3.33), a write of new
    records recomputes the totals instead of adding to them: the recount's figures."""
    from tracker.log import dialect

    for cls in (dialect.SQLite, dialect.PostgreSQL):
        monkeypatch.setattr(cls, "update_from", False)
    folder, late = _scenario(tmp_path / "log", 7)
    with Store(logs.new()) as s:
        import_dir(s, folder, today=TODAY)
        import_file(s, "inspections", _write(tmp_path / "late.csv", late), today=TODAY)
        assert not s._add_records_to_totals()
        _check_totals(s)
