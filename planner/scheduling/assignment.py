"""The linear assignment, from scipy's compiled module without ``import scipy.optimize``.

The night planner's polish pass (:mod:`planner.scheduling.polish`) needs one piece of
scipy.optimize, the linear assignment.  ``import scipy.optimize`` costs about 0.3 s of
CPU (scipy 1.17: scipy.linalg, the array-API layer and its docstrings) — more than the
whole plan of a 60-target night, and most of a ``gcplan schedule`` process.  The piece
is a compiled module (``scipy.optimize._lsap``) that loads in a few milliseconds by
itself.  So it is loaded from scipy's own files and entered under its own name in
``sys.modules`` (a later ``import scipy.optimize`` then finds and reuses it).

It is private to scipy: when anything about it is not as expected (another scipy
layout, a missing attribute, a failed load), the public
:func:`scipy.optimize.linear_sum_assignment` is used instead
(tests/test_scheduling_placement.py compares the two).
"""

from __future__ import annotations

import sys


def _compiled(name: str):
    """scipy's compiled module ``scipy.optimize.<name>``, loaded without running
    scipy.optimize's ``__init__``; None when that cannot be done."""
    full = "scipy.optimize." + name
    if full in sys.modules:
        return sys.modules[full]
    try:
        import importlib.machinery
        import importlib.util
        from pathlib import Path

        found = importlib.util.find_spec("scipy")  # where scipy is, without running its __init__
        folder = Path(found.submodule_search_locations[0]) / "optimize" / Path(*name.split(".")[:-1])
        stem = name.split(".")[-1]
        path = next(folder / (stem + s) for s in importlib.machinery.EXTENSION_SUFFIXES
                    if (folder / (stem + s)).is_file())
        spec = importlib.util.spec_from_file_location(full, path)
        module = importlib.util.module_from_spec(spec)
        spec.loader.exec_module(module)
    except Exception:  # another layout, no such file, a failed load: the public API instead
        return None
    sys.modules[full] = module
    return module


def linear_sum_assignment(cost):
    """:func:`scipy.optimize.linear_sum_assignment` (rows, columns of a least-cost assignment)."""
    lsap = _compiled("_lsap")
    fn = getattr(lsap, "linear_sum_assignment", None)
    if fn is None:
        from scipy.optimize import linear_sum_assignment as fn
    return fn(cost)
