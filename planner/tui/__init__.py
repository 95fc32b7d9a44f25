"""gcplan's terminal app: tonight's almanac and targets, and the campaign night's plan.

Built on textual.  :mod:`planner.tui.night_data` gathers one night from the same
core functions as the command line (in a worker thread); :mod:`planner.tui.rows`
turns it into the lines the screens show; the screens and widgets only display.
May import the core, the inputs, the logbook and :mod:`planner.reports`; never a
command module.  textual is imported here only.
"""
