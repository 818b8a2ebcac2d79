"""Riser shapes: volume, cooling area and modulus.

Units: lengths in cm, areas in cm², volumes in cm³, modulus in cm. Functions
take numpy arrays as well as floats. The cooling area counts only faces that
lose heat to the mould; a face joined to other metal does not count.
"""

from __future__ import annotations

import re

import numpy as np

from tracker import units
from tracker.errors import BadInput

PLACEMENTS = ("top", "side")
TOPS = ("open", "blind")


def check_placement(placement: str) -> str:
    p = str(placement).strip().lower()
    if p not in PLACEMENTS:
        raise BadInput("placement", placement, "must be top or side")
    return p


def cylinder_volume(d, h):
    """Volume of a cylinder of diameter d and height h, cm³."""
    d = np.asarray(d, dtype=float)
    return np.pi * d**2 / 4.0 * np.asarray(h, dtype=float)


def cylinder_cooling_area(d, h, placement: str = "side"):
    """Cooling area of a cylindrical riser, cm².

    side riser: wall, top and bottom cool (the neck contact is neglected);
    top riser: the bottom face sits on the casting and does not cool.
    An open top is counted like a blind one: both faces lose heat, to air and
    radiation or to sand (common practice; an open top without a topping
    compound loses somewhat more, which this does not model).
    """
    placement = check_placement(placement)
    d = np.asarray(d, dtype=float)
    h = np.asarray(h, dtype=float)
    ends = 2.0 if placement == "side" else 1.0
    return np.pi * d * h + ends * np.pi * d**2 / 4.0


def cylinder_modulus(d, h, placement: str = "side"):
    """Geometric modulus V/A of a cylindrical riser, cm."""
    return cylinder_volume(d, h) / cylinder_cooling_area(d, h, placement)


def modulus_per_diameter(h_over_d, placement: str = "side"):
    """M / D of a cylinder of the given H/D (M is linear in D at fixed H/D).

    side: M = D·r / (4r + 2); top: M = D·r / (4r + 1), with r = H/D.
    """
    placement = check_placement(placement)
    r = np.asarray(h_over_d, dtype=float)
    ends = 2.0 if placement == "side" else 1.0
    return r / (4.0 * r + ends)


def sphere_volume(d):
    d = np.asarray(d, dtype=float)
    return np.pi * d**3 / 6.0


def sphere_area(d):
    d = np.asarray(d, dtype=float)
    return np.pi * d**2


def sphere_modulus(d):
    """Modulus of a sphere, D/6 cm."""
    return sphere_volume(d) / sphere_area(d)


def bar_neck_modulus(neck_diameter):
    """Modulus of a round neck, cm: cross-section over perimeter, d/4.

    A short neck between riser and casting cools through its perimeter only
    (common practice for neck design; from memory).
    """
    return np.asarray(neck_diameter, dtype=float) / 4.0


def diameter_for_volume(volume, h_over_d):
    """Diameter of a cylinder of given volume and H/D, cm."""
    v = np.asarray(volume, dtype=float)
    r = np.asarray(h_over_d, dtype=float)
    return np.cbrt(4.0 * v / (np.pi * r))


def sphere_modulus_for_volume(volume):
    """Modulus of a sphere of the given volume, cm: the largest any body of
    that volume can have with all its faces cooling."""
    v = np.asarray(volume, dtype=float)
    return sphere_modulus(np.cbrt(6.0 * v / np.pi))


def exceeds_sphere_modulus(volume, cooling_area):
    """True where V/A is above a same-volume sphere's modulus: possible only
    where faces are joined to other metal (a boss inside a casting)."""
    v = np.asarray(volume, dtype=float)
    return v / np.asarray(cooling_area, dtype=float) > sphere_modulus_for_volume(v) * (1 + 1e-9)


def joined_faces_warning(volume, cooling_area, system: str = units.METRIC) -> str:
    """The warning text where V/A exceeds a same-volume sphere's modulus, else '';
    figures and units in ``system`` (tracker.units)."""
    if not bool(exceeds_sphere_modulus(volume, cooling_area)):
        return ""
    m, ms = float(volume) / float(cooling_area), float(sphere_modulus_for_volume(volume))
    return (f"modulus {units.show('length_cm', m, system, 2)} is above a same-volume sphere's "
            f"{units.show('length_cm', ms, system, 2)}: right only where faces are joined to other metal; "
            f"check the cooling area ({units.symbol('area_cm2', system)}) and volume "
            f"({units.symbol('volume_cm3', system)})")


# A zone's faces joined to the rest of the casting (they do not cool): V/A <= T/2 holds only
# where every face cools, so a zone that names its joined faces may exceed it, and the
# thermal model insulates those faces. "edges" are the section's sides (the far end of a
# plate, the rim of a disc).
JOINED_FACES = ("top", "bottom", "edges")


def joined_faces(value) -> str | None:
    """The joined faces as typed ("bottom; edges", "bottom+edges", any case) in their
    canonical form ("bottom;edges"), or None where none is given; BadInput naming the
    faces otherwise."""
    if value is None or (isinstance(value, float) and value != value):
        return None
    parts = [p for p in re.split(r"[;+,\s]+", str(value).strip().lower()) if p]
    if not parts:
        return None
    bad = [p for p in parts if p not in JOINED_FACES]
    if bad:
        raise BadInput("joined_faces", value, "list the faces joined to the rest of the casting: any of "
                       + ", ".join(JOINED_FACES) + ", separated by ';' (for example bottom;edges)")
    return ";".join(f for f in JOINED_FACES if f in parts)
