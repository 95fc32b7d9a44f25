"""Sub-commands of the gcplan command line, one module each (thin shells over the core).

A command parses its options, calls the core and a writer from
:mod:`planner.reports`, and prints.  Only :mod:`planner.cli` imports a command
module; commands import :mod:`planner.commands.common` and nothing else of each other.
"""
