"""Load cases: the ``components:`` and ``load_cases:`` sections of a design file (field tables,
reader, typed cases, checks against the plates), and their mapping onto a mesh. Takes the raw
design tree and a Mesh; gives typed load cases and, per case, fixed degrees of freedom, springs and
a load vector (N, mm).
"""
