"""The whole casting from its CAD model: a 3-D solidification solve from STL.

``stl`` reads a closed triangle mesh (trimesh: a maintained library that
reads binary and ASCII STL, merges vertices and answers whether a mesh is
closed; its primitives and manifold3d's booleans also make the demo
castings) and checks it; ``voxel`` turns the casting and its risers into
cells with a sand mould around them, at a cell size set by the thinnest
section, with the memory bounded before anything is allocated; ``solve3d``
solves the enthalpy equation in 3-D with implicit sweeps along x, y and z
(the 2-D check's kernel and properties, tracker.thermal); ``hotspots``
finds the local maxima of the freezing-time field and what feeds them;
``verdict`` judges the result (one small function of plain figures);
``run`` ties them together. A screening solve, not a validated casting
simulation.
"""
