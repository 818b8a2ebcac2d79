"""The zones file: one row per zone of a pattern (its volume, cooling area and sizes)."""

from __future__ import annotations

import numpy as np
import pandas as pd

from tracker import units
from tracker.design import geometry
from tracker.errors import BadInput
from tracker.log.ingest.checks import Checks
from tracker.log.ingest.kinds.base import Validator
from tracker.log.ingest.result import MAX_PROBLEMS
from tracker.log.ingest.values import int_or_none
from tracker.numbers import finite

POSITION_MM = 10_000.0      # a position on a casting's model lies within 10 m of its origin


class ZonesValidator(Validator):
    """Checks the rows of a zones file."""

    kind = "zones"

    def validate(self, c: Checks) -> list[tuple]:
        pattern = c.text("pattern", max_len=64)
        zone = c.text("zone", max_len=64)
        vol = c.measure("volume_cm3")
        area = c.measure("cooling_area_cm2")
        thick = c.measure("thickness_mm", required=False)
        joined = self._joined(c)
        m = (vol / area).to_numpy(dtype=float)
        self._check_modulus(c, m, thick, joined.notna().to_numpy())
        length = c.measure("length_mm", required=False)
        width = c.measure("width_mm", required=False)
        level = c.number("required_xray_level", required=False, low=1, low_inclusive=True, high=5,
                         whole=True)
        # where the zone's hot spot lies on the casting's model and its modulus from the 3-D solve
        # (``pourback casting --write-zones``), all optional
        pos = [c.number(k, required=False, low=-POSITION_MM, low_inclusive=True, high=POSITION_MM, unit="mm")
               for k in ("x_mm", "y_mm", "z_mm")]
        thermal_m = c.number("modulus_cm", required=False, low=0.0, high=100.0, unit="cm")
        self.known_patterns(c, pattern)
        self._warn_joined(c, zone, vol, area, m)
        # finite(): a refused number arrives as NaN (never infinite), stored as NULL
        return [(p, z, v, a, finite(t), finite(ln), int_or_none(lv), finite(w), j if isinstance(j, str) else None,
                 finite(x), finite(y), finite(zz), finite(tm))
                for p, z, v, a, t, ln, lv, w, j, x, y, zz, tm in zip(pattern, zone, vol, area, thick, length, level,
                                                                     width, joined, *pos, thermal_m, strict=False)]

    @staticmethod
    def _joined(c: Checks) -> pd.Series:
        """The optional joined_faces column in canonical form (None where empty)."""
        s = c.text("joined_faces", required=False, max_len=40)
        out: list[str | bool | None] = []
        for v in s:
            try:
                out.append(geometry.joined_faces(v))
            except BadInput:
                out.append(False)
        got = pd.Series(out, index=s.index, dtype=object)
        c.fail((got == False).to_numpy(), "joined_faces",  # noqa: E712 (False marks a refused cell, None an empty one)
               "joined_faces lists the faces joined to the rest of the casting: any of "
               + ", ".join(geometry.JOINED_FACES) + ", separated by ';' (for example bottom;edges)")
        return got.where(got != False, None)  # noqa: E712 (as above)

    @staticmethod
    def _check_modulus(c: Checks, m: np.ndarray, thick: pd.Series, joined: np.ndarray) -> None:
        """A section of thickness T cooling on both faces has a modulus of at most T/2 (a plate);
        a zone that names its joined faces may exceed it."""
        measured = ("cooling_area_cm2", "volume_cm3", "thickness_mm")
        msys = c.system("volume_cm3")  # the modulus is worded in the volume's system
        c.fail(thick.notna().to_numpy() & ~joined & ~np.isnan(m)
               & (m > thick.to_numpy(dtype=float) / 20.0 * (1 + 1e-9)),
               "cooling_area_cm2",
               lambda i: f"the modulus V/A = {units.show('length_cm', m[i], msys, 2)} is above half the "
                         f"thickness ({units.show('length_cm', thick.iloc[i] / 20.0, msys, 2)}), more than a "
                         "plate of that thickness cooling on both faces can have; check the units "
                         f"({', '.join(units.symbol(n, c.system(n)) for n in measured)}), or name the faces "
                         "joined to the rest of the casting in joined_faces")

    def _warn_joined(self, c: Checks, zone: pd.Series, vol: pd.Series, area: pd.Series, m: np.ndarray) -> None:
        """Below a same-volume sphere's area is possible where faces are joined to
        other metal: `check` notes it, the import takes it with a warning."""
        msys = c.system("volume_cm3")
        joined = ~c.bad & ~np.isnan(m) & geometry.exceeds_sphere_modulus(vol.to_numpy(dtype=float),
                                                                          area.to_numpy(dtype=float))
        for i in np.flatnonzero(joined)[:MAX_PROBLEMS]:
            self.result.warnings.append(
                f"{self.file}, row {int(c.rows[i])}, zone {zone.iloc[i]}: "
                + geometry.joined_faces_warning(float(vol.iloc[i]), float(area.iloc[i]), msys))
