"""Parameter sweeps: the engine that builds (and checks and lightens) every combination of varied
design fields, locally or on Dask, resumably; and what a sweep writes (sweep.csv, a plot, an HTML
page).
"""
