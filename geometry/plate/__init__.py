"""Exact plate geometry: closed contours of lines and arcs (``curves``), outlines and features,
exact offsets for kerf and fit, cut paths (inner before outer), polygon views, manufacturability
rules, mass properties and the nominal-against-cut dimension table. Takes a validated Design and
gives :class:`~platewright.geometry.model.Plate` objects with their cut paths, findings and mass
(:func:`pipeline.build_design` runs the whole stage). All lengths in mm.
"""
