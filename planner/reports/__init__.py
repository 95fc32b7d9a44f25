"""Figures, printed reports and the text/JSON writers: shells over the core.

matplotlib lives here only (figures drawn on a passed-in or new ``Figure``,
never pyplot state or rcParams).  May import the core, the inputs and the
logbook; never a command module or the app.
"""
