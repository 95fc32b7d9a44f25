"""The transportation problem of the night's bound, solved exactly by a network simplex.

The bound (:mod:`planner.scheduling.bound`) is a transportation problem: slots supply
minutes, requests demand them, each minute worth ``value[r, k]`` to request r in slot k.
Written as a general LP it takes HiGHS's simplex about a thousand iterations over
thousands of columns (≈ 20 ms for a 60-target night); the network simplex built for
exactly this problem (the Python Optimal Transport library, POT: Flamary et al. 2021,
JMLR 22, 78; its solver from the LEMON graph library) takes under a millisecond.

POT's ``import ot`` loads its whole toolbox (scipy.stats, its backends: about 0.6 s),
more than a whole ``gcplan schedule``.  Its solver is one compiled module
(``ot.lp.emd_wrap``) whose only needs are numpy and a name from ``ot.utils`` it uses for
another function; it is loaded by itself, under its own name (a later ``import ot``
finds it and uses it as its own).  When that cannot be done (another POT layout, a
failed load), POT's public import is used instead — slower to load, the same result.
"""

from __future__ import annotations

import sys
import types

import numpy as np

_SOLVER = "ot.lp.emd_wrap"


def _load_solver():
    """POT's compiled network simplex module, loaded without running ``ot/__init__``."""
    if _SOLVER in sys.modules:
        return sys.modules[_SOLVER]
    try:
        import importlib.util

        found = importlib.util.find_spec("ot")
        folder = found.submodule_search_locations[0] if found and found.submodule_search_locations else None
        if folder is None:
            raise ImportError("POT not installed")
        import importlib.machinery
        from pathlib import Path

        lp = Path(folder) / "lp"
        path = next(lp / ("emd_wrap" + s) for s in importlib.machinery.EXTENSION_SUFFIXES
                    if (lp / ("emd_wrap" + s)).is_file())
        module = _load_alone(path, folder)
    except Exception:  # another layout, no such file, a failed load: the public import instead
        import ot.lp.emd_wrap as module  # noqa: F401  (about 0.6 s: the whole of POT)
    return module


def _load_alone(path, folder):
    """Execute the compiled module with stand-ins for its parent packages, then take the
    stand-ins out again (so a later ``import ot`` runs POT's own ``__init__``)."""
    import importlib.util

    def dist(*args, **kwargs):  # the one name it imports from ot.utils: POT's own, when used
        from ot.utils import dist as real

        return real(*args, **kwargs)

    names = ("ot", "ot.lp", "ot.utils")
    saved = {n: sys.modules.get(n) for n in names}
    stand_ins = {n: types.ModuleType(n) for n in names}
    stand_ins["ot"].__path__ = [str(folder)]
    stand_ins["ot.lp"].__path__ = [str(path.parent)]
    stand_ins["ot.utils"].dist = dist
    try:
        for n in names:
            if saved[n] is None:
                sys.modules[n] = stand_ins[n]
        spec = importlib.util.spec_from_file_location(_SOLVER, path)
        module = importlib.util.module_from_spec(spec)
        sys.modules[_SOLVER] = module
        try:
            spec.loader.exec_module(module)
        except BaseException:
            sys.modules.pop(_SOLVER, None)
            raise
    finally:
        for n in names:
            if saved[n] is None and sys.modules.get(n) is stand_ins[n]:
                del sys.modules[n]
    if not callable(getattr(module, "emd_c", None)):
        sys.modules.pop(_SOLVER, None)
        raise ImportError("no emd_c")
    return module


def max_transport(value: np.ndarray, allowed: np.ndarray, demand: np.ndarray, supply: np.ndarray):
    """Maximise Σ value[r, k] y[r, k] over y ≥ 0 on the ``allowed`` pairs, with
    Σ_k y[r, k] ≤ demand[r] and Σ_r y[r, k] ≤ supply[k].

    Returns (optimum, y, demand duals λ ≥ 0, supply duals p ≥ 0) — the duals with
    p[k] + λ[r] ≥ value[r, k] on allowed pairs, equal where y flows — or None when the
    solver does not reach optimality.  Written as a balanced transportation problem: a
    dummy supply takes the minutes no request uses and a dummy demand the requests'
    unmet minutes, both at no cost; a pair not allowed costs more than any value gains,
    so it never carries flow (moving its flow through the two dummies costs less)."""
    n_r, n_k = value.shape
    demand = np.maximum(np.asarray(demand, dtype=float), 0.0)
    supply = np.maximum(np.asarray(supply, dtype=float), 0.0)
    worth = np.where(allowed, value, 0.0)
    big = float(np.max(np.abs(worth))) + 1.0 if worth.size else 1.0
    cost = np.zeros((n_r + 1, n_k + 1))
    cost[:n_r, :n_k] = np.where(allowed, -worth, big)
    a = np.concatenate([demand, [supply.sum()]])
    b = np.concatenate([supply, [demand.sum()]])
    flow, alpha, beta, optimal = _network_simplex(a, b, cost)
    if not optimal:
        return None
    y = flow[:n_r, :n_k]
    if np.any(y[~allowed] > 1e-9 * max(1.0, float(b.sum()))):
        return None
    # Potentials: alpha[i] + beta[j] ≤ cost[i, j].  With the dummies' potentials as the zero:
    price = np.maximum(-(alpha[n_r] + beta[:n_k]), 0.0)
    lam = np.maximum(-(alpha[:n_r] + beta[n_k]), 0.0)
    # The solver leaves out rows and columns of zero weight, and their potentials with them;
    # the least duals that keep every allowed pair covered (their weight is 0: the dual
    # objective does not change).
    price = np.where(supply > 0, price, np.max(np.where(allowed & (demand > 0)[:, None],
                                                        worth - lam[:, None], 0.0), axis=0, initial=0.0))
    lam = np.where(demand > 0, lam, np.max(np.where(allowed, worth - price[None, :], 0.0), axis=1, initial=0.0))
    return float(np.sum(worth * y)), y, lam, price


def _network_simplex(a, b, cost):
    """POT's exact solver: (flow, row potentials, column potentials, optimal?).  Its compiled
    function's arguments have changed between POT versions; when the call as written for
    POT 0.9 is refused, POT's public ``ot.emd`` (the same solver) is used."""
    try:
        # (a, b, costs, iteration limit, threads: one, as everywhere in gcplan)
        flow, _, alpha, beta, code = _load_solver().emd_c(a, b, cost, 1_000_000, 1)
        return flow, alpha, beta, code == 1  # 1: POT's OPTIMAL
    except TypeError:
        import ot

        flow, log = ot.emd(a, b, cost, numItermax=1_000_000, log=True)
        return np.asarray(flow), np.asarray(log["u"]), np.asarray(log["v"]), log.get("warning") is None
