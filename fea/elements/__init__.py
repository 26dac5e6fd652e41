"""Element formulations: plane-stress material matrices, linear (T3) and quadratic (T6) membrane
triangles, the discrete Kirchhoff triangle (DKT) for bending, midside nodes for quadratic meshes,
and the rigid-body modes of both families. Takes node coordinates (mm) and material data (MPa)
and gives element stiffness matrices, load vectors and stress recovery, vectorised over elements.
"""
