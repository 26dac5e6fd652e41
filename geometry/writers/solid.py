"""Solid model of a plate: the as-cut region extruded to the sheet thickness (mm), and its files.

The region (outline minus holes, fit allowance applied, before kerf) comes from
:func:`.region.plate_region` at ``CHORD_TOL_MM``. It is triangulated with shapely's constrained
Delaunay triangulation (no extra points, every polygon edge kept) and extruded here with numpy:
the triangulation at z = thickness is the top face, the same triangles reversed at z = 0 the
bottom face, and each boundary segment of each ring becomes two wall triangles. Top and bottom
share the ring vertices with the walls, so the solid is closed (every edge is used by exactly
two faces, once in each direction) and all faces point outward.

The files are written without any mesh library:

* binary STL (mm): 80-byte header, uint32 triangle count, then per triangle the unit normal and
  the three corners as float32 and a uint16 attribute of 0, all little-endian;
* GLB (binary glTF 2.0, Khronos specification): 12-byte header, a JSON chunk padded with spaces
  and a BIN chunk padded with zeros to 4 bytes; one mesh with one indexed triangle primitive.
  glTF's unit is the metre, so positions are scaled by 1/1000 in this file only.

trimesh is imported only by :func:`plate_solid`, for Python users who want a mesh object; the
command line never pays for importing it.
"""

from __future__ import annotations

import json
import os
import struct
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import shapely
from shapely.geometry.polygon import orient

from platewright.geometry.model import Plate
from platewright.geometry.plate.region import plate_region

if TYPE_CHECKING:  # pragma: no cover - typing only
    import trimesh

__all__ = [
    "triangulate_region",
    "extrude_region",
    "plate_solid_arrays",
    "plate_solid",
    "stl_bytes",
    "glb_bytes",
    "write_plate_stl",
    "write_plate_glb",
]

_STL_HEADER = b"platewright binary STL, units mm"
_STL_RECORD = np.dtype(
    [("normal", "<f4", (3,)), ("corners", "<f4", (3, 3)), ("attribute", "<u2")]
)
_GLB_MAGIC = 0x46546C67  # b"glTF" read as little-endian uint32
_GLB_VERSION = 2
_CHUNK_JSON = 0x4E4F534A  # b"JSON"
_CHUNK_BIN = 0x004E4942  # b"BIN\0"
_GL_FLOAT = 5126
_GL_UNSIGNED_INT = 5125
_GL_ARRAY_BUFFER = 34962
_GL_ELEMENT_ARRAY_BUFFER = 34963
_GL_TRIANGLES = 4
_MM_TO_M = 1e-3


def triangulate_region(region: shapely.Polygon) -> tuple[np.ndarray, np.ndarray]:
    """Triangles covering ``region`` exactly: vertices (n, 2) float mm and faces (m, 3) int,
    counter-clockwise. Uses only the region's own boundary points; vertices are unique and
    sorted lexicographically by (x, y)."""
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


def _ring_segments(region: shapely.Polygon, vertices: np.ndarray) -> np.ndarray:
    """Boundary segments of ``region`` as index pairs (s, 2) int into ``vertices`` (n, 2),
    material on the left of each segment (exterior counter-clockwise, holes clockwise)."""
    rings = [region.exterior, *region.interiors]
    points = [np.asarray(r.coords, dtype=float)[:, :2] for r in rings]
    stacked = np.vstack([vertices, *points])
    unique, inverse = np.unique(stacked, axis=0, return_inverse=True)
    if len(unique) != len(vertices):
        raise ValueError("region boundary has points that are not triangulation vertices")
    inverse = inverse.reshape(-1)[len(vertices):]
    pairs = []
    start = 0
    for p in points:
        idx = inverse[start:start + len(p)]  # closed ring: last point repeats the first
        start += len(p)
        seg = np.column_stack([idx[:-1], idx[1:]])
        pairs.append(seg[seg[:, 0] != seg[:, 1]])  # drop repeated points
    return np.vstack(pairs)


def _check_closed(faces: np.ndarray, n_vertices: int) -> None:
    """Raise ValueError unless every directed edge of ``faces`` (m, 3) int occurs once and its
    reverse occurs once too (closed, consistently oriented surface)."""
    a = faces.reshape(-1).astype(np.int64)
    b = np.roll(faces, -1, axis=1).reshape(-1).astype(np.int64)
    forward = np.sort(a * n_vertices + b)
    backward = np.sort(b * n_vertices + a)
    if np.any(forward[1:] == forward[:-1]) or not np.array_equal(forward, backward):
        raise ValueError("extruded solid is not closed")


def extrude_region(
    region: shapely.Polygon, thickness_mm: float
) -> tuple[np.ndarray, np.ndarray]:
    """``region`` (mm) extruded from z = 0 to z = ``thickness_mm`` as a closed triangle mesh.

    Returns vertices (2 n, 3) float mm (rows 0..n-1 at z = 0, rows n..2n-1 the same points at
    z = thickness) and faces (2 m + 2 s, 3) int, outward-facing by the right-hand rule: m top
    triangles, m bottom triangles, then two wall triangles per boundary segment (s in all).
    Raises ValueError when the thickness is not positive or the result is not closed.
    """
    if not thickness_mm > 0.0:
        raise ValueError(f"thickness must be positive, got {thickness_mm} mm")
    region = orient(region, 1.0)
    flat, tri = triangulate_region(region)
    seg = _ring_segments(region, flat)
    n = len(flat)
    vertices = np.empty((2 * n, 3), dtype=float)
    vertices[:n, :2] = flat
    vertices[n:, :2] = flat
    vertices[:n, 2] = 0.0
    vertices[n:, 2] = thickness_mm
    top = tri + n
    bottom = tri[:, ::-1]
    p, q = seg[:, 0], seg[:, 1]
    # wall quad p0 q0 q1 p1: normal (q - p) x z points to the right of the segment, i.e. away
    # from the material, which lies on the left
    wall_a = np.column_stack([p, q, q + n])
    wall_b = np.column_stack([p, q + n, p + n])
    faces = np.vstack([top, bottom, wall_a, wall_b])
    _check_closed(faces, len(vertices))
    return vertices, faces


def plate_solid_arrays(plate: Plate) -> tuple[np.ndarray, np.ndarray]:
    """The plate as a closed mesh: vertices (n, 3) float mm and faces (m, 3) int (see
    :func:`extrude_region`), z from 0 to ``plate.thickness_mm``."""
    try:
        return extrude_region(plate_region(plate), plate.thickness_mm)
    except ValueError as exc:
        raise ValueError(f"plate {plate.name!r}: {exc}") from exc


def plate_solid(plate: Plate) -> trimesh.Trimesh:
    """The plate as a watertight ``trimesh.Trimesh`` (mm), z from 0 to ``plate.thickness_mm``.

    For Python users; imports trimesh on first call. The mesh is exactly the one the STL and
    GLB writers store (vertices not merged or reordered further)."""
    import trimesh

    vertices, faces = plate_solid_arrays(plate)
    return trimesh.Trimesh(vertices=vertices, faces=faces, process=False)


def _unit_normals(corners: np.ndarray) -> np.ndarray:
    """Right-hand-rule unit normals (m, 3) float of triangles ``corners`` (m, 3, 3); zero for a
    degenerate triangle."""
    cross = np.cross(corners[:, 1] - corners[:, 0], corners[:, 2] - corners[:, 0])
    length = np.linalg.norm(cross, axis=1)
    out = np.zeros_like(cross)
    ok = length > 0.0
    out[ok] = cross[ok] / length[ok, None]
    return out


def stl_bytes(vertices: np.ndarray, faces: np.ndarray) -> bytes:
    """Binary STL of the mesh ``vertices`` (n, 3) float mm, ``faces`` (m, 3) int, coordinates
    written in mm as float32."""
    corners = np.asarray(vertices, dtype=float)[np.asarray(faces)]
    records = np.zeros(len(corners), dtype=_STL_RECORD)
    records["normal"] = _unit_normals(corners)
    records["corners"] = corners
    header = _STL_HEADER.ljust(80, b" ")
    return header + struct.pack("<I", len(records)) + records.tobytes()


def _pad(data: bytes, fill: bytes) -> bytes:
    """``data`` padded with ``fill`` to a multiple of 4 bytes (glTF chunk alignment)."""
    return data + fill * (-len(data) % 4)


def glb_bytes(vertices_m: np.ndarray, faces: np.ndarray, name: str = "plate") -> bytes:
    """Binary glTF 2.0 (GLB) of the mesh ``vertices_m`` (n, 3) float, in metres, and ``faces``
    (m, 3) int: one node, one mesh, one triangle primitive with POSITION (float32 VEC3 with
    min/max) and uint32 indices."""
    positions = np.ascontiguousarray(vertices_m, dtype="<f4")
    indices = np.ascontiguousarray(faces, dtype="<u4").reshape(-1)
    pos_bytes = positions.tobytes()
    idx_bytes = indices.tobytes()
    binary = _pad(pos_bytes + idx_bytes, b"\x00")
    document = {
        "asset": {"version": "2.0", "generator": "platewright"},
        "scene": 0,
        "scenes": [{"nodes": [0]}],
        # glTF's up axis is +y; the plate's normal is +z: turn the node -90 degrees about x so the
        # plate lies flat in a viewer (quaternion x, y, z, w). The mesh itself keeps plate axes.
        "nodes": [{"mesh": 0, "name": name, "rotation": [-0.7071067811865476, 0.0, 0.0,
                                                         0.7071067811865476]}],
        "meshes": [
            {
                "name": name,
                "primitives": [
                    {"attributes": {"POSITION": 0}, "indices": 1, "mode": _GL_TRIANGLES}
                ],
            }
        ],
        "accessors": [
            {
                "bufferView": 0,
                "componentType": _GL_FLOAT,
                "count": len(positions),
                "type": "VEC3",
                # the spec asks for the bounds of the stored (float32) values
                "min": [float(v) for v in positions.min(axis=0)],
                "max": [float(v) for v in positions.max(axis=0)],
            },
            {
                "bufferView": 1,
                "componentType": _GL_UNSIGNED_INT,
                "count": len(indices),
                "type": "SCALAR",
            },
        ],
        "bufferViews": [
            {"buffer": 0, "byteOffset": 0, "byteLength": len(pos_bytes),
             "target": _GL_ARRAY_BUFFER},
            {"buffer": 0, "byteOffset": len(pos_bytes), "byteLength": len(idx_bytes),
             "target": _GL_ELEMENT_ARRAY_BUFFER},
        ],
        "buffers": [{"byteLength": len(binary)}],
    }
    text = _pad(json.dumps(document, separators=(",", ":")).encode("utf-8"), b" ")
    total = 12 + 8 + len(text) + 8 + len(binary)
    return b"".join(
        [
            struct.pack("<III", _GLB_MAGIC, _GLB_VERSION, total),
            struct.pack("<II", len(text), _CHUNK_JSON),
            text,
            struct.pack("<II", len(binary), _CHUNK_BIN),
            binary,
        ]
    )


def write_plate_stl(plate: Plate, path: str | os.PathLike) -> None:
    """Write the plate's solid (:func:`plate_solid_arrays`) as binary STL (mm) to ``path``."""
    vertices, faces = plate_solid_arrays(plate)
    Path(path).write_bytes(stl_bytes(vertices, faces))


def write_plate_glb(plate: Plate, path: str | os.PathLike) -> None:
    """Write the plate's solid as binary glTF (GLB) to ``path``. glTF's unit is the metre, so
    the positions are scaled by 1/1000 for this file only."""
    vertices, faces = plate_solid_arrays(plate)
    Path(path).write_bytes(glb_bytes(vertices * _MM_TO_M, faces, plate.name))
