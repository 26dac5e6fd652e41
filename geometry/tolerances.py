"""Tolerances used across platewright, defined once (all lengths in mm)."""

from __future__ import annotations

__all__ = ["LENGTH_TOL_MM", "CHORD_TOL_MM", "MIN_SEGMENT_MM", "ANGLE_TOL_RAD"]

#: Two points closer than this are the same point (mm).
LENGTH_TOL_MM = 1e-9
#: Largest sagitta allowed when an arc is turned into a polyline for booleans and meshing (mm).
CHORD_TOL_MM = 0.005
#: Segments shorter than this are merged away before writing cut files (mm).
MIN_SEGMENT_MM = 1e-4
#: Two directions closer than this are parallel (radians).
ANGLE_TOL_RAD = 1e-9
