"""Process-wide configuration, set once by the entry points (never at import).

astropy's IERS handling is the one global setting gcplan needs: it must never
download at run time (observers are often offline, and CI has no network), and
dates beyond the bundled tables (astropy-iers-data) must still work.  astropy
then warns many times per call (leap seconds "dubious year", polar motion
"defaulting to the 50-yr mean"); gcplan silences those and says it once in
its own words (see :func:`planner.ephemeris.iers_warning`).

Importing astropy's IERS module costs half a second (it brings astropy.table
and astropy.time), and many commands (``expose``, ``--help``) never touch
astropy.  So the policy is applied at once when that module is already
loaded, and otherwise the moment it loads: a finder on ``sys.meta_path`` that
finds nothing itself but, for that one module, sets the policy right after
the module has run — before any code can use it.
"""

from __future__ import annotations

import sys
import warnings

_IERS_MODULE = "astropy.utils.iers.iers"


def configure_runtime() -> None:
    """Set astropy's IERS policy (no downloads, degrade past the table) and quiet its repeats."""
    # The two filters that need no astropy class: set now.
    warnings.filterwarnings("ignore", message=".*polar motion.*")
    warnings.filterwarnings("ignore", message=".*dubious year.*")
    module = sys.modules.get(_IERS_MODULE)
    if module is not None:
        _apply_iers_policy(module)
    elif not any(isinstance(f, _IersPolicyOnImport) for f in sys.meta_path):
        sys.meta_path.insert(0, _IersPolicyOnImport())


def skip_final_collection() -> None:
    """Leave out the cyclic garbage collector's last pass when the process exits.

    Python's shutdown runs a full collection over every object still alive — numpy's,
    astropy's and every module's functions, about 20 ms of a 0.3 s command — only to
    free memory the operating system takes back at once.  Moving them all into the
    collector's permanent generation at exit (``gc.freeze``) skips that pass; objects
    are still released one by one as the modules are torn down.  For commands whose
    files are all written and closed before they return (a ``with`` block each), as
    every output of gcplan is; stdout and stderr are flushed by the interpreter as
    always.  Registered once however often it is called.
    """
    import atexit
    import gc

    atexit.unregister(gc.freeze)
    atexit.register(gc.freeze)


def quiet_astropy_time_warnings() -> None:
    from astropy.utils import iers
    from astropy.utils.exceptions import AstropyWarning

    warnings.filterwarnings("ignore", category=iers.IERSWarning)
    warnings.filterwarnings("ignore", message=".*polar motion.*", category=AstropyWarning)
    warnings.filterwarnings("ignore", message=".*dubious year.*")


def _apply_iers_policy(module) -> None:
    module.conf.auto_download = False
    module.conf.auto_max_age = None
    module.conf.iers_degraded_accuracy = "warn"
    warnings.filterwarnings("ignore", category=module.IERSWarning)


class _IersPolicyOnImport:
    """A ``sys.meta_path`` finder for astropy's IERS module only: the normal spec,
    its loader's ``exec_module`` followed by :func:`_apply_iers_policy`."""

    def find_spec(self, fullname, path=None, target=None):
        if fullname != _IERS_MODULE:
            return None
        from importlib.machinery import PathFinder

        if self in sys.meta_path:
            sys.meta_path.remove(self)  # once is enough
        spec = PathFinder.find_spec(fullname, path, target)
        loader = getattr(spec, "loader", None)
        if loader is None or not hasattr(loader, "exec_module"):
            return spec
        run_module = loader.exec_module

        def exec_module(module):
            run_module(module)
            _apply_iers_policy(module)

        loader.exec_module = exec_module  # this spec's own loader object
        return spec

    def invalidate_caches(self) -> None:
        pass
