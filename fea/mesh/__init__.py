"""Meshing: a plate's as-cut material as tagged boundary rings, a size field from the local feature
size, a conforming Delaunay mesher with boundary recovery and smoothing, and structured meshes for
verification. Takes a Plate (or rings of points in mm) and gives a linear triangle
:class:`triangles.Mesh` whose boundary edges carry the feature ids they lie on.
"""
