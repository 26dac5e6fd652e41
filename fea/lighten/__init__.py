"""Lightening: the design region of a plate (minus keep-outs), a SIMP topology optimiser with its
plate density model and the half-MBB reference grid, density-to-hole tracing into cuttable
contours, regular hole patterns, and the search that re-meshes and re-solves every candidate.
Takes a Plate and its load cases; gives verified lightening holes and a ``lightening`` report
section.
"""
