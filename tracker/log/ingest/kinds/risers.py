"""The risers file: the risers of each revision of a pattern's riser design.

A revision has one effective date, lists all its risers at once and is never
changed once stored, so its rows wait for the whole file (:meth:`RisersValidator.finish`).
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

from tracker import units
from tracker.design import geometry
from tracker.errors import BadRow
from tracker.log.ingest.checks import Checks
from tracker.log.ingest.kinds.base import Validator
from tracker.log.ingest.text import log_spelling, zones_text
from tracker.log.ingest.values import to_null
from tracker.numbers import finite

H_OVER_D_SANE = (0.25, 4.0)
REMOVED_SPLIT = re.compile(r"[\s;,]+")  # removed_risers: riser codes separated by spaces, ';' or ','


def _codes(codes: set) -> str:
    return ", ".join(sorted(codes))


def _removal_problem(pattern: str, revision: str, prev: str, before: set, listed: set, removed: set) -> str:
    """Why a new revision's risers do not follow from the one before ('' when they do)."""
    left_out = before - listed - removed
    if left_out:
        return (f"revision {revision} of {pattern} lists risers {_codes(listed)} but leaves out "
                f"{_codes(left_out)} of revision {prev} before it; a revision lists every riser the pattern "
                "keeps (unchanged ones too): add their rows, or name the risers it removes in the column "
                "removed_risers")
    unknown = removed - before
    if unknown:
        return (f"revision {revision} of {pattern} removes {_codes(unknown)} in removed_risers, but revision "
                f"{prev} before it has no such riser (it has {_codes(before)})")
    both = removed & listed
    if both:
        return (f"revision {revision} of {pattern} both lists and removes {_codes(both)}; remove the row or "
                "the name in removed_risers")
    return ""


RISER_SHAPE = ["riser", "zone", "placement", "top", "diameter_mm", "height_mm", "sleeve", "neck_diameter_mm",
               "x_mm", "y_mm", "z_mm", "axis"]
# Where a riser stands on the casting's STL model (optional): the contact centre, mm, in the
# model's frame, and the axis from the contact into the riser (z: up, for a top riser).
AXES = ("x", "-x", "y", "-y", "z", "-z")
POSITION_MM = 10_000.0


class RisersValidator(Validator):
    """Checks the rows of a risers file; its revisions are checked and written at the end."""

    kind = "risers"

    def __init__(self, *args, **kwargs):
        super().__init__(*args, **kwargs)
        self._revisions_in_file: dict[tuple, dict] = {}
        self.pending_risers: list[tuple] = []  # riser rows, written after their revisions
        self._new_revs: list[tuple] = []
        self._named: dict[tuple, set] = {}  # the risers each revision's rows name, refused rows included

    def validate(self, c: Checks) -> list[tuple]:
        pattern = c.text("pattern", max_len=64)
        revision = c.text("revision", max_len=64)
        eff = c.date("effective_from", today=self.today)
        riser = c.text("riser", max_len=64)
        zone = c.text("zone", max_len=64)
        placement = c.code("placement", geometry.PLACEMENTS)
        top = c.code("top", geometry.TOPS)
        dia = c.measure("diameter_mm")
        h = c.measure("height_mm")
        sleeve = c.text("sleeve", required=False, max_len=64)
        neck = c.measure("neck_diameter_mm", required=False)
        removed = c.text("removed_risers", required=False, max_len=1000)
        pos = [c.number(k, required=False, low=-POSITION_MM, low_inclusive=True, high=POSITION_MM, unit="mm")
               for k in ("x_mm", "y_mm", "z_mm")]
        axis = self._check_position(c, pos)
        self._check_shape(c, dia, h, neck, placement)
        self.known_patterns(c, pattern)
        zone = self._check_zone(c, pattern, zone)
        self._check_sleeve(c, sleeve, dia)
        # finite(): a refused number arrives as NaN (never infinite), stored as NULL
        rows = [(p, r, rs, z, pl, t, d, hh, to_null(s), finite(n), finite(x), finite(y), finite(zz), to_null(a))
                for p, r, rs, z, pl, t, d, hh, s, n, x, y, zz, a in
                zip(pattern, revision, riser, zone, placement, top, dia, h, sleeve, neck, *pos, axis, strict=False)]
        self._collect_revisions(c, pattern, revision, eff, rows, removed)
        return rows

    @staticmethod
    def _check_position(c: Checks, pos: list[pd.Series]) -> pd.Series:
        """The axis, lower-cased (blank: none); a position is all three of x_mm, y_mm, z_mm or none."""
        axis = c.text("axis", required=False, max_len=4).str.strip().str.lower().str.lstrip("+")
        c.fail((axis != "").to_numpy() & ~axis.isin(AXES).to_numpy(), "axis",
               "axis must be one of " + ", ".join(AXES) + " (from the contact into the riser; z: up)")
        given = np.array([p.notna().to_numpy() for p in pos])
        c.fail(given.any(axis=0) & ~given.all(axis=0), "x_mm",
               "give all three of x_mm, y_mm and z_mm (the contact centre), or none")
        c.fail((axis != "").to_numpy() & ~given.all(axis=0), "axis", "an axis needs the position x_mm, y_mm, z_mm")
        return axis

    @staticmethod
    def _check_shape(c: Checks, dia: pd.Series, h: pd.Series, neck: pd.Series, placement: pd.Series) -> None:
        hd = (h / dia).to_numpy()
        lo, hi = H_OVER_D_SANE
        c.fail(dia.notna().to_numpy() & h.notna().to_numpy() & ~((hd >= lo) & (hd <= hi)),
               "height_mm", f"height over diameter must lie between {lo:g} and {hi:g}")
        c.fail(neck.notna() & dia.notna() & (neck >= dia), "neck_diameter_mm",
               "the neck must be narrower than the riser")
        c.fail(neck.notna() & (placement == "top"), "neck_diameter_mm",
               "a neck is only given for a side riser")

    def _check_zone(self, c: Checks, pattern: pd.Series, zone: pd.Series) -> pd.Series:
        """Refuse a zone its pattern does not have; the zones as the log spells them."""
        zones = self.store.zone_levels()
        zone = log_spelling(zone, pattern.tolist(), zones)
        keys = list(zip(pattern, zone, strict=False))
        c.fail(c.ok("pattern", "zone") & np.array([k not in zones for k in keys], dtype=bool), "zone",
               lambda i: f"got {zone.iloc[i]!r}; pattern {pattern.iloc[i]} has no such zone; "
                         f"{zones_text(zones, pattern.iloc[i])}; import it in zones.csv first")
        return zone

    def _check_sleeve(self, c: Checks, sleeve: pd.Series, dia: pd.Series) -> None:
        """Refuse an unknown sleeve, or a riser diameter other than its sleeve's."""
        sleeves = self.store.table("sleeves").set_index("sleeve") if self.store.count("sleeves") else None
        has_sleeve = (sleeve != "").to_numpy()
        known = np.array([s in sleeves.index if sleeves is not None else False for s in sleeve])
        c.fail(has_sleeve & ~known, "sleeve", "unknown sleeve; import it in sleeves.csv first")
        if sleeves is None:
            return
        inner = np.array([sleeves.at[s, "inner_diameter_mm"] if k else np.nan
                          for s, k in zip(sleeve, known, strict=False)], dtype=float)
        dsys = c.system("diameter_mm")
        c.fail(has_sleeve & known & (np.abs(dia.to_numpy() - inner) > 1.0), "diameter_mm",
               lambda i: f"got {units.value_in('diameter_mm', dia.iloc[i], dsys):g}; sleeve {sleeve.iloc[i]} "
                         f"has an inner diameter of {units.value_in('diameter_mm', inner[i], dsys):g} "
                         f"{units.symbol('diameter_mm', dsys)}; the riser diameter is the sleeve's")

    def _collect_revisions(self, c: Checks, pattern: pd.Series, revision: pd.Series, eff: pd.Series,
                           rows: list[tuple], removed: pd.Series) -> None:
        """Gather the good rows by revision: one effective date each, and the
        risers it removes (``removed_risers``, on any of its rows)."""
        for i, (p, r, e, gone) in enumerate(zip(pattern, revision, eff, removed, strict=False)):
            self._named.setdefault((p, r), set()).add(rows[i][2])  # a refused row still names its riser
            if c.bad[i]:
                continue
            rev = self._revisions_in_file.setdefault((p, r), {"effective_from": e, "rows": [], "removed": set(),
                                                               "first_row": int(c.rows[i])})
            rev["removed"].update(x for x in REMOVED_SPLIT.split(gone) if x)
            if rev["effective_from"] != e:
                c.fail(np.arange(len(rows)) == i, "effective_from",
                       f"revision {r} of {p} is dated {rev['effective_from']} on an earlier row; "
                       "all risers of one revision share one date")
                continue
            rev["rows"].append(rows[i])

    def write(self, good: list[tuple], following: pd.DataFrame | None) -> None:
        self.pending_risers.extend(good)  # written after their revisions, at the end

    def finish(self) -> list[BadRow]:
        """Check the file's revisions against the stored ones as a whole; the
        revisions to add are kept for :meth:`write_last`."""
        stored = self.store.revisions_frame()
        stored_rev = {(p, r): e for p, r, e in stored.itertuples(index=False)}
        dates: dict[tuple, str] = {}
        for p, r, e in stored.itertuples(index=False):
            dates[(p, e)] = r
        new_revs, problems = [], []
        for (p, r), rev in self._revisions_in_file.items():
            e = rev["effective_from"]
            other = dates.get((p, e))
            if other is not None and other != r:
                problems.append(BadRow(self.file, rev["first_row"], "effective_from",
                                       f"revision {r} of {p} takes effect on {e}, the same day as "
                                       f"revision {other}; give each revision its own date"))
                continue
            dates[(p, e)] = r
            if (p, r) not in stored_rev:
                new_revs.append((p, r, e))
            elif stored_rev[(p, r)] != e or self._stored_risers(p, r) != {row[2:] for row in rev["rows"]}:
                problems.append(BadRow(self.file, rev["first_row"], "revision",
                                       f"revision {r} of {p} is stored already with other content; "
                                       "a stored revision is never changed: give the new design "
                                       "a new revision code and date"))
        self._new_revs = new_revs
        return problems + self._left_out(new_revs, stored)

    def _left_out(self, new_revs: list[tuple], stored: pd.DataFrame) -> list[BadRow]:
        """A new revision lists every riser its pattern keeps: refuse one that leaves
        out a riser of the revision before it (the one in effect the day before,
        stored or earlier in this file) unless ``removed_risers`` names it."""
        by_pattern: dict[str, list[tuple]] = {}
        for p, r, e in stored.itertuples(index=False):
            by_pattern.setdefault(p, []).append((e, r, None))
        for (p, r), rev in self._revisions_in_file.items():
            if (p, r, rev["effective_from"]) in new_revs:
                by_pattern.setdefault(p, []).append((rev["effective_from"], r, rev))
        problems = []
        for p, revs in by_pattern.items():
            revs.sort(key=lambda x: x[0])
            for (_, prev, prev_rev), (_, r, rev) in zip(revs, revs[1:], strict=False):
                if rev is None:
                    continue
                before = ({row[2] for row in prev_rev["rows"]} if prev_rev is not None
                          else set(self.store.risers_frame(pattern=p, revision=prev)["riser"]))
                listed = {row[2] for row in rev["rows"]} | self._named.get((p, r), set())
                problem = _removal_problem(p, r, prev, before, listed, rev["removed"])
                if problem:
                    problems.append(BadRow(self.file, rev["first_row"], "revision", problem))
            first = next((x for x in revs if x[2] is not None), None)
            if first is not None and first is revs[0] and first[2]["removed"]:
                problems.append(BadRow(self.file, first[2]["first_row"], "removed_risers",
                                       f"revision {first[1]} of {p} is its first: it has no earlier risers "
                                       "to remove; leave removed_risers blank"))
        return problems

    def _stored_risers(self, pattern: str, revision: str) -> set[tuple]:
        risers = self.store.risers_frame(pattern=pattern, revision=revision)
        return {tuple(x) for x in risers[RISER_SHAPE].astype(object).where(risers.notna(), None)
                .itertuples(index=False)}

    def write_last(self) -> None:
        """Write the new revisions, then their risers. With skip_bad the revisions
        without problems are written; the rows of a refused revision (the only
        pending rows outside the new revisions) go with it."""
        self.store.insert_rows("revisions", self._new_revs)
        stored_revs = {(p, r) for p, r, _ in self._new_revs}
        rows_new = [r for r in self.pending_risers if (r[0], r[1]) in stored_revs]
        self.result.added += self.store.insert_rows("risers", rows_new)
