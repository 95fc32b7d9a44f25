"""A variable star with its ephemeris, as the phase and recovery core use it.

Built by :mod:`planner.inputs.variable_files` from a variables table.
"""

from __future__ import annotations

from dataclasses import dataclass

VARIABLE_TYPES = ("RRab", "RRc", "RRd")
# Time systems of an ephemeris: heliocentric Julian date on the UTC scale, the system
# cluster-variable ephemerides were traditionally published in, or barycentric Julian
# date in TDB, the recommended standard (Eastman, Siverd & Gaudi 2010, PASP 122, 935).
TIME_SYSTEMS = ("HJD_UTC", "BJD_TDB")


@dataclass(frozen=True)
class Variable:
    """One variable star with its ephemeris (epoch of maximum light in ``time_system``)."""

    id: str
    period_d: float
    epoch_hjd: float  # the epoch of maximum light, in time_system (HJD_UTC by default)
    ra_deg: float
    dec_deg: float
    type: str | None = None  # one of VARIABLE_TYPES, or None when not known
    cluster: str | None = None
    amplitude_mag: float | None = None  # peak-to-peak, V
    mean_mag: float | None = None  # V
    time_system: str = "HJD_UTC"  # one of TIME_SYSTEMS
