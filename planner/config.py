"""Process-wide configuration, set once by the entry points (never at import).

astropy's IERS handling is the one global setting gcplan needs: it must never
download at run time (observers are often offline, and CI has no network), and
dates beyond the bundled tables (astropy-iers-data) must still work with a
warning rather than an error.
"""

from __future__ import annotations

import warnings


def configure_runtime() -> None:
    """Set astropy's IERS policy: no downloads; degrade with a warning past the table."""
    from astropy.utils import iers

    iers.conf.auto_download = False
    iers.conf.auto_max_age = None
    iers.conf.iers_degraded_accuracy = "warn"
    # astropy repeats the same "beyond the table" warning for every transform;
    # one per process is enough for a user.
    warnings.filterwarnings("once", category=iers.IERSDegradedAccuracyWarning)
    try:
        from astropy.utils.exceptions import AstropyWarning
        from erfa import ErfaWarning

        warnings.filterwarnings("ignore", message=".*dubious year.*", category=ErfaWarning)
        del AstropyWarning
    except ImportError:  # pragma: no cover - erfa always ships with astropy
        pass
