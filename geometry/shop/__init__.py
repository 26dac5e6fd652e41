"""The shop floor: cutting-machine profiles and their files, calibration coupons and the kerf and
fits measured from them, cut time and cost of a job, and nesting of parts onto stock sheets. Takes
plates and a machine profile; gives kerf and fit allowances, costs and sheet layouts (mm, s).
"""
