"""The data the core works on: frozen dataclasses and the standard tables they name.

Site profiles, targets, variables, constraints, campaigns, the standard bands and
how cluster names compare.  The bottom layer: it imports only the standard
library, numpy, :mod:`planner.errors` and :mod:`planner.sky.airmass` (a formula,
for the altitude limit of an airmass limit).  The readers in :mod:`planner.inputs`
build these objects; the core computes with them.
"""
