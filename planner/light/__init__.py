"""Light and exposure: bands, extinction, sky brightness, science levels, the CCD equation.

Pure computation on floats and numpy arrays.  May import :mod:`planner.model`
and :mod:`planner.errors`; never the sky package's ephemerides, the inputs,
the logbook or the shells.
"""
