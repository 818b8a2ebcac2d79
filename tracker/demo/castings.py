"""Invented castings of the demo foundry as STL, made from trimesh primitives
joined by manifold3d's boolean union, so that the 3-D path runs on bundled data.

Every shape is made up (no real part): a plate with one top riser (the size
of the 2-D check's worked example), a base plate with two round bosses and a
rib, fed by two top risers, and a T junction without risers. Lengths in mm;
the z axis points up, the casting stands on z = 0.
"""

from __future__ import annotations

import pathlib
from typing import cast

import trimesh

from tracker.solid import stl

SECTIONS = 64      # facets around a round face


def _cylinder(d: float, h: float, x: float = 0.0, y: float = 0.0, z0: float = 0.0) -> trimesh.Trimesh:
    return trimesh.creation.cylinder(radius=d / 2, height=h, sections=SECTIONS).apply_translation((x, y, z0 + h / 2))


def _box(dx: float, dy: float, dz: float, x: float = 0.0, y: float = 0.0, z0: float = 0.0) -> trimesh.Trimesh:
    return trimesh.creation.box((dx, dy, dz)).apply_translation((x, y, z0 + dz / 2))


def _union(parts: list[trimesh.Trimesh]) -> trimesh.Trimesh:
    return trimesh.boolean.union(parts, engine="manifold")


def _joined(parts: list[trimesh.Trimesh]) -> trimesh.Trimesh:
    """Separate shells in one mesh (each a riser)."""
    return cast(trimesh.Trimesh, trimesh.util.concatenate(parts))


def castings() -> dict[str, trimesh.Trimesh]:
    """The demo castings and their risers by file name (without .stl)."""
    boss_x = 85.0
    return {
        "plate": _box(300.0, 300.0, 50.0),
        "plate-riser": _cylinder(155.0, 155.0, z0=50.0),
        "bossed-plate": _union([_box(300.0, 200.0, 40.0), _cylinder(110.0, 60.0, -boss_x, z0=40.0),
                                _cylinder(110.0, 60.0, boss_x, z0=40.0), _box(2 * boss_x, 25.0, 30.0, z0=40.0)]),
        "bossed-plate-risers": _joined([_cylinder(140.0, 140.0, -boss_x, z0=100.0),
                                                         _cylinder(140.0, 140.0, boss_x, z0=100.0)]),
        "tee": _union([_box(200.0, 80.0, 40.0), _box(40.0, 80.0, 80.0, z0=40.0)]),
    }


def write_castings(out_dir) -> dict[str, pathlib.Path]:
    """Write the demo castings as binary STL into ``out_dir``/castings; returns name -> path."""
    folder = pathlib.Path(out_dir) / "castings"
    folder.mkdir(parents=True, exist_ok=True)
    out = {}
    for name, mesh in castings().items():
        out[name] = folder / f"{name}.stl"
        stl.write(mesh, out[name])
    return out


# The demo log keeps one casting model with one of its steel patterns (an invented pairing:
# the demo's zones are typed-in blocks, not this shape), so that the pattern file's 3-D view
# has a model to show.
DEMO_CASTINGS = {"P-1004": "bossed-plate"}


def store_demo_castings(store, folder=None) -> int:
    """Keep the demo castings with their demo patterns (those in the log); returns how many."""
    from tracker.solid.pattern import store_casting

    folder = pathlib.Path(folder) if folder is not None else None
    done = 0
    known = set(store.patterns_info())
    for pattern, name in DEMO_CASTINGS.items():
        if pattern not in known:
            continue
        path = folder / "castings" / f"{name}.stl" if folder is not None else None
        data = path.read_bytes() if path is not None and path.is_file() else stl.to_bytes(castings()[name])
        store_casting(store, pattern, data, f"{name}.stl")
        done += 1
    return done
