"""Reading an STL model and checking that it encloses a solid.

STL holds triangles and no unit: the caller states mm or in, and the model's
bounding box is reported so that a unit slip shows. A model is refused with
one line when it is not closed (open edges), its faces are not consistently
oriented, it is inside out (its enclosed volume is negative) or it intersects
itself (found where the cells are filled, ``voxel.fill``). Volume and area
follow from the divergence theorem (signed tetrahedra; triangle areas).
"""

from __future__ import annotations

import hashlib
import io
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import trimesh

from tracker.errors import BadInput, BadModel

MM_PER_UNIT = {"mm": 1.0, "in": 25.4}
MAX_FACES = 2_000_000        # a larger model is refused before it is processed (memory)


@dataclass
class Model:
    """A closed mesh in mm: ``bodies`` its closed shells (one riser each, for a risers file)."""

    name: str
    mesh: trimesh.Trimesh
    units: str
    digest: str

    @property
    def volume_cm3(self) -> float:
        """Enclosed volume, cm³ (sum of signed tetrahedra)."""
        return float(self.mesh.volume) / 1000.0

    @property
    def surface_area_cm2(self) -> float:
        """Surface area, cm² (sum of the triangles' areas)."""
        return float(self.mesh.area) / 100.0

    @property
    def bounds_mm(self) -> np.ndarray:
        """(2, 3) lowest and highest corner, mm."""
        return np.asarray(self.mesh.bounds, dtype=float)

    def bodies(self) -> list[trimesh.Trimesh]:
        """The closed shells of the model, largest first."""
        parts = self.mesh.split(only_watertight=False)
        return sorted(parts, key=lambda m: -float(m.volume))

    def bbox_text(self) -> str:
        """The bounding box as the user reads it: size and corner, mm."""
        lo, hi = self.bounds_mm
        size = hi - lo
        return (f"{size[0]:.1f} x {size[1]:.1f} x {size[2]:.1f} mm (from {lo[0]:.1f}, {lo[1]:.1f}, "
                f"{lo[2]:.1f} mm)")


def check_units(units: str) -> str:
    """``units`` (mm or in) lower-cased; BadInput otherwise."""
    u = str(units).strip().lower()
    if u not in MM_PER_UNIT:
        raise BadInput("units", units, "an STL model's units are mm or in")
    return u


def read(path, units: str = "mm", name: str | None = None) -> Model:
    """The model in the STL file ``path`` (binary or ASCII), scaled from ``units`` to mm."""
    p = Path(path)
    data = p.read_bytes()
    return read_bytes(data, units, name or p.name)


def read_bytes(data: bytes, units: str = "mm", name: str = "model.stl") -> Model:
    """The model in STL bytes ``data``; BadModel with one line where it is no closed solid."""
    u = check_units(units)
    if not data.strip():
        raise BadModel(name, "the file is empty; export the casting as STL (binary or ASCII)")
    try:
        mesh = trimesh.load(io.BytesIO(data), file_type="stl", process=True, force="mesh")
    except Exception as exc:  # noqa: BLE001 (any parse failure is the same message to a user)
        raise BadModel(name, f"not readable as STL ({type(exc).__name__}); export it again as STL") from None
    if not isinstance(mesh, trimesh.Trimesh) or len(mesh.faces) == 0:
        raise BadModel(name, "holds no triangles; export the casting as STL (binary or ASCII)")
    if len(mesh.faces) > MAX_FACES:
        raise BadModel(name, f"{len(mesh.faces):,} triangles, more than {MAX_FACES:,}; export it coarser")
    if not np.isfinite(mesh.vertices).all():
        raise BadModel(name, "holds coordinates that are not numbers; export it again")
    mesh.apply_scale(MM_PER_UNIT[u])
    check_closed(mesh, name)
    return Model(name, mesh, u, hashlib.sha256(data).hexdigest())


def check_closed(mesh: trimesh.Trimesh, name: str) -> None:
    """BadModel where ``mesh`` does not enclose a solid with its faces facing out."""
    if not mesh.is_watertight:
        open_edges = _open_edges(mesh)
        raise BadModel(name, f"the mesh is not closed ({open_edges:,} open edge(s)); close the holes in "
                       "the CAD model and export it again")
    if not mesh.is_winding_consistent:
        raise BadModel(name, "the triangles are not consistently oriented; repair the mesh (make the "
                       "normals consistent) and export it again")
    if float(mesh.volume) <= 0:
        raise BadModel(name, "the mesh is inside out (its normals point inwards); flip the normals and "
                       "export it again")
    for body in mesh.split(only_watertight=False):
        if float(body.volume) <= 0:
            raise BadModel(name, "a shell of the mesh is inside out, or a cavity floats free inside the "
                           "solid; flip its normals or remove it")


def _open_edges(mesh: trimesh.Trimesh) -> int:
    """Edges used by one face only."""
    edges = np.sort(mesh.edges, axis=1)
    _, counts = np.unique(edges, axis=0, return_counts=True)
    return int((counts != 2).sum())


def write(mesh: trimesh.Trimesh, path, ascii_: bool = False) -> None:
    """Write ``mesh`` (mm) to ``path`` as binary (default) or ASCII STL."""
    Path(path).write_bytes(to_bytes(mesh, ascii_))


def to_bytes(mesh: trimesh.Trimesh, ascii_: bool = False) -> bytes:
    """``mesh`` as STL bytes, binary or ASCII."""
    out = trimesh.exchange.stl.export_stl_ascii(mesh) if ascii_ else trimesh.exchange.stl.export_stl(mesh)
    return out.encode() if isinstance(out, str) else bytes(out)
