"""HiGHS and the linear assignment, from scipy's compiled modules without ``import scipy.optimize``.

The night planner needs two pieces of scipy.optimize: the LP solver HiGHS (the bound,
:mod:`planner.scheduling.bound`) and the linear assignment (the polish pass,
:mod:`planner.scheduling.polish`).  ``import scipy.optimize`` costs about 0.3 s of CPU
(scipy 1.17: scipy.linalg, the array-API layer and its docstrings) — more than the whole
plan of a 60-target night, and most of a ``gcplan schedule`` process.  The two pieces
are compiled modules (``scipy.optimize._highspy._core``, ``scipy.optimize._lsap``) that
load in about 20 ms by themselves.  So they are loaded from scipy's own files and
entered under their own names in ``sys.modules`` (a later ``import scipy.optimize``
then finds and reuses them).

Both are private to scipy: when anything about them is not as expected (another scipy
layout, a missing attribute, a failed load), the public functions —
:func:`scipy.optimize.linprog` (``method="highs-ds"``) and
:func:`scipy.optimize.linear_sum_assignment` — are used instead.  The direct LP call sets
the options linprog sets for that method, so both paths give the same optimum, solution
and duals (tests/test_scheduling_placement.py compares them).
"""

from __future__ import annotations

import sys

import numpy as np


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

        import scipy

        folder = Path(scipy.__file__).parent / "optimize" / Path(*name.split(".")[:-1])
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


def solve_lp(cost, col_start, row_index, values, row_upper, col_upper, *, direct=True):
    """min cost·x subject to A x ≤ row_upper, 0 ≤ x ≤ col_upper, A given column-wise
    (``col_start``, ``row_index``, ``values``: compressed sparse columns), by HiGHS's dual
    simplex with devex pricing and no presolve.  Returns (optimum, x, row duals — as
    linprog's ``ineqlin.marginals``, ≤ 0 for binding rows), or None when not solved to
    optimality.  ``direct=False`` goes through linprog (as it does when the direct call
    cannot be made)."""
    core = _compiled("_highspy._core") if direct else None
    if core is not None:
        try:
            return _solve_direct(core, cost, col_start, row_index, values, row_upper, col_upper)
        except (AttributeError, TypeError, ValueError):
            pass  # another scipy: its API differs
    return _solve_linprog(cost, col_start, row_index, values, row_upper, col_upper)


def _finite(x, inf):
    x = np.array(x, dtype=float)
    x[np.isinf(x)] = np.sign(x[np.isinf(x)]) * inf  # HiGHS's infinity (as linprog sends it)
    return x


def _solve_direct(core, cost, col_start, row_index, values, row_upper, col_upper):
    """The HiGHS call linprog makes for method="highs-ds", without linprog."""
    n_col, n_row = len(cost), len(row_upper)
    inf = core.kHighsInf
    lp = core.HighsLp()
    lp.num_col_ = n_col
    lp.num_row_ = n_row
    lp.a_matrix_.num_col_ = n_col
    lp.a_matrix_.num_row_ = n_row
    lp.a_matrix_.format_ = core.MatrixFormat.kColwise
    lp.col_cost_ = np.asarray(cost, dtype=float)
    lp.col_lower_ = np.zeros(n_col)
    lp.col_upper_ = _finite(col_upper, inf)
    lp.row_lower_ = np.full(n_row, -inf)
    lp.row_upper_ = _finite(row_upper, inf)
    lp.a_matrix_.start_ = np.asarray(col_start, dtype=np.int32)
    lp.a_matrix_.index_ = np.asarray(row_index, dtype=np.int32)
    lp.a_matrix_.value_ = np.asarray(values, dtype=float)
    highs = core._Highs()
    options = core.HighsOptions()
    options.presolve = "off"
    options.solver = "simplex"
    options.simplex_strategy = int(core.simplex_constants.SimplexStrategy.kSimplexStrategyDual)
    options.simplex_dual_edge_weight_strategy = int(
        core.simplex_constants.SimplexEdgeWeightStrategy.kSimplexEdgeWeightStrategyDevex)
    options.log_to_console = False
    options.output_flag = False
    if highs.passOptions(options) == core.HighsStatus.kError:
        raise ValueError("options refused")
    if highs.passModel(lp) == core.HighsStatus.kError:
        raise ValueError("model refused")
    if highs.run() == core.HighsStatus.kError or highs.getModelStatus() != core.HighsModelStatus.kOptimal:
        return None
    solution = highs.getSolution()
    return (float(highs.getInfo().objective_function_value), np.array(solution.col_value),
            np.array(solution.row_dual))


def _solve_linprog(cost, col_start, row_index, values, row_upper, col_upper):
    from scipy.optimize import linprog
    from scipy.sparse import csc_matrix

    a_ub = csc_matrix((values, row_index, col_start), shape=(len(row_upper), len(cost)))
    res = linprog(cost, A_ub=a_ub, b_ub=row_upper, bounds=np.column_stack([np.zeros(len(cost)), col_upper]),
                  method="highs-ds", options={"simplex_dual_edge_weight_strategy": "devex", "presolve": False})
    if res.status != 0:
        return None
    return float(res.fun), np.asarray(res.x), np.asarray(res.ineqlin.marginals)
