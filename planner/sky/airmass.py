"""Airmass from altitude, and the altitude of a given airmass.

gcplan uses Kasten & Young (1989), Applied Optics 28, 4735, eq. 3:

    X = 1 / (sin h + 0.50572 (h + 6.07995°)^−1.6364),   h in degrees,

an interpolation formula for the relative optical air mass of a model
atmosphere that stays finite down to the horizon (X ≈ 38 at h = 0), unlike
sec z.  Check values (tests/REFERENCES.md, "Airmass"): 1.9943 at 30°, 5.5860 at 10°.
Below the horizon the airmass is undefined: NaN.
"""

from __future__ import annotations

import numpy as np


def airmass_kasten_young(altitude_deg):
    """Relative air mass at geometric altitude ``altitude_deg`` (Kasten & Young 1989)."""
    h = np.asarray(altitude_deg, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore"):
        x = 1.0 / (np.sin(np.radians(h)) + 0.50572 * (h + 6.07995) ** -1.6364)
    return np.where(h >= 0.0, x, np.nan)


#: Where Kasten & Young's X(h) has its minimum (found numerically; see altitude_for_airmass).
_ALTITUDE_OF_MINIMUM_DEG = 89.984


def altitude_for_airmass(airmass):
    """The altitude (degrees) at which the Kasten & Young air mass equals ``airmass`` (≥ 1).

    The formula falls monotonically from the horizon to a shallow minimum of
    0.99971 at h = 89.984° (its zenith value is not exactly 1), so airmass 1.0
    is reached at 88.6°; the search runs on that monotonic stretch.  60
    bisection steps pin the answer far below any use here.
    """
    x = np.asarray(airmass, dtype=float)
    lo = np.zeros_like(x)
    hi = np.full_like(x, _ALTITUDE_OF_MINIMUM_DEG)
    for _ in range(60):
        mid = 0.5 * (lo + hi)
        too_low = airmass_kasten_young(mid) > x  # still more air than wanted: go higher
        lo = np.where(too_low, mid, lo)
        hi = np.where(too_low, hi, mid)
    return 0.5 * (lo + hi)
