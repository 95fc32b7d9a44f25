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

# The phase and recovery cores' defaults, here (numpy-free) so the command line's
# help can quote them without loading numpy; planner.variables re-exports them.
# A nightly visit at the same clock time falls a fraction δ of a cycle later each day.
# With |δ| < 0.05 it takes more than 20 nights (longer than most runs) for the visits to
# sweep once through the cycle, so the light curve keeps the same gaps.
DEFAULT_MAX_DRIFT_PER_DAY = 0.05
RECOVERY_TOLERANCE = 1e-3  # |ΔP|/P below which a period counts as recovered
#: Crowding, flat fielding and the comparison stars rarely let cluster photometry do
#: better than about 0.01 mag per point, whatever the photon statistics (a rule of
#: thumb, from memory); added in quadrature to the photon noise.
NOISE_FLOOR_MAG = 0.01


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
