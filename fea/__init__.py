"""Finite-element analysis of plates: mesher, elements, assembly, solvers, results."""
