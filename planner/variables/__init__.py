"""Variable stars: phases and coverage, synthetic light curves, period search, recovery.

Pure computation.  May import :mod:`planner.model`, :mod:`planner.errors` and
astropy (time scales for heliocentric dates); never the inputs, the logbook or
the shells.
"""
