"""A variable star with its ephemeris, as the phase and recovery core use it.

Built by :mod:`planner.inputs.variable_files` from a variables table.
"""

from __future__ import annotations

from dataclasses import dataclass

VARIABLE_TYPES = ("RRab", "RRc", "RRd")


@dataclass(frozen=True)
class Variable:
    """One variable star with its ephemeris (epoch of maximum light, HJD UTC)."""

    id: str
    period_d: float
    epoch_hjd: float
    ra_deg: float
    dec_deg: float
    type: str | None = None  # one of VARIABLE_TYPES, or None when not known
    cluster: str | None = None
    amplitude_mag: float | None = None  # peak-to-peak, V
    mean_mag: float | None = None  # V
