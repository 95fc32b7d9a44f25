"""A site profile as the core sees it: where the telescope is, what it can do, its sky.

Frozen dataclasses, built by :mod:`planner.inputs.sites` from a TOML file (whose
docstring holds the schema with units, ranges and defaults).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from types import MappingProxyType
from typing import Mapping

TWILIGHTS = ("civil", "nautical", "astronomical")
# The stars' profile on the frame.  Seeing-limited stars are Moffat profiles; β = 4.765
# is what Kolmogorov turbulence gives (Trujillo et al. 2001, MNRAS 328, 977).  Real
# PSFs with optics and guiding often have broader wings (β ≈ 2.5-3.5, from memory):
# a site may give its own β, or choose a Gaussian.
PSF_KINDS = ("moffat", "gaussian")
DEFAULT_PSF = "moffat"
DEFAULT_MOFFAT_BETA = 4.765


@dataclass(frozen=True)
class Location:
    name: str
    latitude_deg: float
    longitude_deg: float  # east-positive
    elevation_m: float
    timezone: str  # IANA name, e.g. "America/Santiago"


@dataclass(frozen=True)
class Limits:
    min_altitude_deg: float
    max_airmass: float
    sun_avoidance_deg: float
    min_moon_separation_deg: float
    twilight: str  # which twilight bounds the usable night: one of TWILIGHTS
    # Optional horizon mask: altitude (deg) of the local horizon at azimuths
    # (deg, from north through east), linearly interpolated and wrapped at 360.
    horizon_az_deg: tuple[float, ...] = ()
    horizon_alt_deg: tuple[float, ...] = ()
    # Optional upper altitude limit (zenith avoidance for an alt-az mount); None: none.
    max_altitude_deg: float | None = None


@dataclass(frozen=True)
class Telescope:
    name: str
    aperture_m: float
    obstruction_diameter_m: float
    slew_rate_deg_s: float
    settle_s: float
    acquisition_s: float
    filter_change_s: float

    @property
    def collecting_area_m2(self) -> float:
        return math.pi / 4.0 * (self.aperture_m**2 - self.obstruction_diameter_m**2)


@dataclass(frozen=True)
class Camera:
    name: str
    pixel_scale_arcsec: float
    read_noise_e: float
    gain_e_per_adu: float
    dark_e_per_s: float  # per pixel
    full_well_e: float
    linearity_limit_e: float  # ≤ full_well_e
    readout_s: float
    min_exposure_s: float
    detector_pixels: tuple[int, int]
    # FITS header keywords for cameras that do not use the standard names
    # (standard name -> this camera's name), e.g. {"FILTER": "FILTNAME"}.
    fits_keywords: Mapping[str, str] = field(default_factory=lambda: MappingProxyType({}))


@dataclass(frozen=True)
class Filter:
    name: str  # the name used at this site, e.g. "V" or "Ic"
    band: str  # the standard band it stands for: U B V R I J H Ks (photometry tables)
    throughput: float | None = None  # total: optics × filter × QE, excluding the atmosphere
    bandwidth_angstrom: float | None = None  # None: the standard band's width
    zero_point_mag: float | None = None  # magnitude giving 1 e-/s above the atmosphere


@dataclass(frozen=True)
class Sky:
    typical_seeing_arcsec: float
    dark_mag_arcsec2: Mapping[str, float]  # per filter name, zenith, moonless
    extinction_mag_per_airmass: Mapping[str, float]  # per filter name
    psf: str = DEFAULT_PSF  # the stars' profile, one of PSF_KINDS (planner.light.ccd)
    moffat_beta: float = DEFAULT_MOFFAT_BETA  # Moffat β, > 1


#: Semesters by the common convention: A from April, B from October (no source needed).
DEFAULT_SEMESTER_A_START_MONTH = 4
DEFAULT_SEMESTER_B_START_MONTH = 10


@dataclass(frozen=True)
class ProposalSettings:
    """What a time request at this site assumes: when its semesters start, and the share
    of the time the weather takes (None: not given; the proposal then uses a typical value)."""

    semester_a_start_month: int = DEFAULT_SEMESTER_A_START_MONTH  # A runs to the month before B's
    semester_b_start_month: int = DEFAULT_SEMESTER_B_START_MONTH  # B runs to the month before A's
    weather_loss_fraction: float | None = None


@dataclass(frozen=True)
class SiteProfile:
    location: Location
    limits: Limits
    telescope: Telescope
    camera: Camera
    filters: Mapping[str, Filter]
    sky: Sky
    source: str = "<memory>"  # the file (or option) it was read from, for messages
    notes: str = ""
    proposal: ProposalSettings = ProposalSettings()  # the optional [proposal] table

    @property
    def name(self) -> str:
        return self.location.name
