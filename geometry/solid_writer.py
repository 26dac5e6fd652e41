"""Solid model of a plate: the as-cut region extruded to the sheet thickness (mm).

The region (outline minus holes, fit allowance applied, before kerf) comes from
:func:`.region.plate_region` at ``CHORD_TOL_MM``. It is triangulated with shapely's constrained
Delaunay triangulation (no extra points, every polygon edge kept), then extruded with
``trimesh.creation.extrude_triangulation``, which closes the side walls; the result is a
watertight mesh from z = 0 to z = thickness. (trimesh's own ``extrude_polygon`` needs an optional
triangulation package that platewright does not depend on.)
"""

from __future__ import annotations

import os

import numpy as np
import shapely
import trimesh

from .model import Plate
from .region import plate_region

__all__ = ["plate_solid", "triangulate_region", "write_plate_stl", "write_plate_glb"]


def triangulate_region(region: shapely.Polygon) -> tuple[np.ndarray, np.ndarray]:
    """Triangles covering ``region`` exactly: vertices (n, 2) float mm and faces (m, 3) int,
    counter-clockwise. Uses only the region's own boundary points."""
    tris = shapely.constrained_delaunay_triangles(region)
    corners = np.array(
        [np.asarray(t.exterior.coords)[:3] for t in tris.geoms], dtype=float
    ).reshape(-1, 2)
    vertices, inverse = np.unique(corners, axis=0, return_inverse=True)
    faces = inverse.reshape(-1, 3)
    a, b, c = (vertices[faces[:, k]] for k in range(3))
    cross = (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])
    cw = cross < 0
    faces[cw] = faces[cw][:, ::-1]
    return vertices, faces


def plate_solid(plate: Plate) -> trimesh.Trimesh:
    """The plate as a watertight triangle mesh (mm), z from 0 to ``plate.thickness_mm``."""
    vertices, faces = triangulate_region(plate_region(plate))
    mesh = trimesh.creation.extrude_triangulation(vertices, faces, plate.thickness_mm)
    mesh.merge_vertices()
    if not mesh.is_watertight:
        raise ValueError(f"plate {plate.name!r}: extruded solid is not watertight")
    return mesh


def write_plate_stl(plate: Plate, path: str | os.PathLike) -> None:
    """Write :func:`plate_solid` as binary STL (mm) to ``path``."""
    plate_solid(plate).export(os.fspath(path), file_type="stl")


def write_plate_glb(plate: Plate, path: str | os.PathLike) -> None:
    """Write :func:`plate_solid` as binary glTF (GLB) to ``path``. glTF's unit is the metre, so
    the mesh is scaled by 1/1000 for this file only."""
    mesh = plate_solid(plate).copy()
    mesh.apply_scale(1e-3)
    mesh.export(os.fspath(path), file_type="glb")
