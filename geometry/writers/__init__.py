"""Cut-file and model writers: DXF (millimetres at 1:1, one layer per operation, inner cuts
first, byte-identical across builds), SVG at 1:1, binary STL and GLB solids, and the DXF/SVG of a
nested sheet. They take finished plates and cut paths and write files; they compute no engineering
values.
"""
