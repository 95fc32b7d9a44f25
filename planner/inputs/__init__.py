"""Files users write, read and checked: site profiles, target lists, the bundled catalog,
variables and times tables, campaign files, written plans, and the typed TOML readers.

Each reader turns a file into :mod:`planner.model` objects and raises a
:class:`planner.errors.InputError` subclass naming file, field and value.  May
import :mod:`planner.model`, :mod:`planner.errors`, :mod:`planner.sky.nights`
(calendar dates and Julian dates) and each other; never the computing core it
feeds (sky, light, variables, scheduling) nor a shell.
"""
