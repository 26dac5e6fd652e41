"""Plate geometry: design model, exact curves, features, kerf and fit, rules, mass, writers."""
