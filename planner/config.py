"""Process-wide configuration, set once by the entry points (never at import).

astropy's IERS handling is the one global setting gcplan needs: it must never
download at run time (observers are often offline, and CI has no network), and
dates beyond the bundled tables (astropy-iers-data) must still work.  astropy
then warns many times per call (leap seconds "dubious year", polar motion
"defaulting to the 50-yr mean"); gcplan silences those and says it once in
its own words (see :func:`planner.ephemeris.iers_warning`).
"""

from __future__ import annotations

import warnings


def configure_runtime() -> None:
    """Set astropy's IERS policy (no downloads, degrade past the table) and quiet its repeats."""
    from astropy.utils import iers

    iers.conf.auto_download = False
    iers.conf.auto_max_age = None
    iers.conf.iers_degraded_accuracy = "warn"
    quiet_astropy_time_warnings()


def quiet_astropy_time_warnings() -> None:
    from astropy.utils import iers
    from astropy.utils.exceptions import AstropyWarning

    warnings.filterwarnings("ignore", category=iers.IERSWarning)
    warnings.filterwarnings("ignore", message=".*polar motion.*", category=AstropyWarning)
    warnings.filterwarnings("ignore", message=".*dubious year.*")
