"""Site profiles: where the telescope is, what it can do, and what its sky is like.

A site profile is a TOML file (examples in ``site_profiles/``).  This module
holds the frozen dataclasses the core works with, and the parser/validator that
builds them.  The first problem found raises :class:`~planner.errors.SiteProfileError`
naming file, table, key, bad value and what would be valid, as in
``x.toml: [camera] read_noise_e must be ≥ 0 (got -3)``.

Schema
------
Every key is required unless a default (``= x``) is given; numbers are finite
integers or floats, never booleans; ``a..b`` is inclusive; unknown tables and
keys are errors.  ::

    [site]        name; latitude_deg -90..90; longitude_deg -180..360, east-positive,
                  stored as -180..180; elevation_m -500..6000; timezone: an IANA
                  name known to zoneinfo ("America/Santiago", "UTC")
    [limits]      (the table is optional) min_altitude_deg 0..90 = 0 if max_airmass
                  is given, else 20; max_airmass ≥ 1 = sec z at min_altitude_deg
                  (inf at 0: no limit); sun_avoidance_deg 0..180 = 45;
                  min_moon_separation_deg 0..180 = 30; twilight "civil" | "nautical"
                  | "astronomical" = "astronomical"; horizon [[az_deg, alt_deg], ...]
                  = none: az 0..360 (north through east) strictly increasing, alt
                  -10..90, interpolated linearly, wrapped at 360 (0 and 360, if
                  both given, must agree); max_altitude_deg = none (no upper limit):
                  zenith avoidance for an alt-az mount, above min_altitude_deg (and
                  the altitude of max_airmass), ≤ 90
    [telescope]   name; aperture_m > 0, ≤ 40 (the cap catches centimetres);
                  obstruction_diameter_m ≥ 0, < aperture_m, = 0; slew_rate_deg_s > 0;
                  settle_s, acquisition_s, filter_change_s ≥ 0
    [camera]      name; pixel_scale_arcsec > 0; read_noise_e ≥ 0; gain_e_per_adu > 0;
                  dark_e_per_s ≥ 0 per pixel, = 0; full_well_e > 0 (the lesser of the
                  pixel's and the ADC's limit); linearity_limit_e > 0, ≤ full_well_e,
                  = full_well_e; readout_s ≥ 0; min_exposure_s ≥ 0, = 0;
                  detector_pixels [nx, ny], positive integers
    [camera.fits_keywords]  (optional) STANDARD = "THEIRS", both FITS keywords (1-8
                  of A-Z 0-9 - _, or "HIERARCH ..."), upper-cased, e.g. FILTER = "FILTNAME"
    [filters.NAME]  at least one; NAME as used at the site ("V", "Ic").  band: one
                  of U B V R I J H Ks, = NAME if NAME is one; throughput 0 < t ≤ 1
                  (optics × filter × QE, without the atmosphere); bandwidth_angstrom
                  > 0 = none (the standard band's width); zero_point_mag 10..35, the
                  magnitude giving 1 e-/s above the atmosphere.  throughput and
                  zero_point_mag are each optional, but not both
    [sky]         typical_seeing_arcsec > 0, ≤ 10; psf "moffat" | "gaussian" = "moffat",
                  the stars' profile; moffat_beta > 1, ≤ 20 = 4.765 (Trujillo et al. 2001),
                  for psf = "moffat" only; [sky.dark_mag_arcsec2] (zenith,
                  moonless, 10..25 mag/arcsec²) and [sky.extinction_mag_per_airmass]
                  (0..2 mag/airmass), each a value for every filter NAME and no other
    [proposal]    (optional) what a time request (``gcplan proposal``) assumes here:
                  semester_a_start_month 1..12 = 4 and semester_b_start_month 1..12 = 10,
                  different (the common convention: A April-September, B October-March;
                  each semester runs to the day before the other starts);
                  weather_loss_fraction 0..0.95 = none, the share of the nights lost to
                  weather (none: the proposal uses a typical value and says so)
    top level     notes = "..." = "": free text (operators' rules, cautions)
"""

from __future__ import annotations

import math
import re
from dataclasses import replace
from pathlib import Path
from types import MappingProxyType
from typing import Any, Mapping

from planner.errors import SiteProfileError
from planner.inputs.resources import site_profiles_dir
from planner.inputs.tomlcheck import (
    Schema,
    Table,
    bound,
    error,
    read_toml,
    show,
    suggest,
    toml_key,
)
from planner.model.bands import BANDS as _BAND_TABLE
from planner.model.site import (
    DEFAULT_MOFFAT_BETA,
    DEFAULT_PSF,
    PSF_KINDS,
    TWILIGHTS,
    Camera,
    Filter,
    Limits,
    Location,
    ProposalSettings,
    SiteProfile,
    Sky,
    Telescope,
)

#: Standard bands a site filter can stand for: those the photometry knows.
BANDS = tuple(_BAND_TABLE)

# --- Parsing and validation ------------------------------------------------

# Keys each table accepts ("" is the top level), in schema order.
_KEYS: dict[str, tuple[str, ...]] = {
    "": ("site", "limits", "telescope", "camera", "filters", "sky", "proposal", "notes"),
    "site": ("name", "latitude_deg", "longitude_deg", "elevation_m", "timezone"),
    "limits": ("min_altitude_deg", "max_airmass", "sun_avoidance_deg",
               "min_moon_separation_deg", "twilight", "horizon", "max_altitude_deg"),
    "telescope": ("name", "aperture_m", "obstruction_diameter_m", "slew_rate_deg_s",
                  "settle_s", "acquisition_s", "filter_change_s"),
    "camera": ("name", "pixel_scale_arcsec", "read_noise_e", "gain_e_per_adu", "dark_e_per_s",
               "full_well_e", "linearity_limit_e", "readout_s", "min_exposure_s",
               "detector_pixels", "fits_keywords"),
    "filter": ("band", "throughput", "bandwidth_angstrom", "zero_point_mag"),
    "sky": ("typical_seeing_arcsec", "psf", "moffat_beta", "dark_mag_arcsec2", "extinction_mag_per_airmass"),
    "proposal": ("semester_a_start_month", "semester_b_start_month", "weather_loss_fraction"),
}
_SCHEMA = Schema(_KEYS, SiteProfileError)
DEFAULT_MIN_ALTITUDE_DEG = 20.0  # a common telescope limit (airmass 2.9), from memory
DEFAULT_SUN_AVOIDANCE_DEG = 45.0  # typical for optical telescopes, from memory
DEFAULT_MIN_MOON_SEPARATION_DEG = 30.0  # typical, from memory
DEFAULT_TWILIGHT = "astronomical"
GENERIC_PROFILE = "generic"  # bundled stem giving the non-location values for LAT,LON sites

_FITS_KEYWORD = re.compile(r"[A-Z0-9_-]{1,8}|HIERARCH( [A-Z0-9_-]+)+")
_DECIMAL = re.compile(r"[+-]?(\d+(\.\d*)?|\.\d+)([eE][+-]?\d+)?")
_COORDS = "LAT,LON or LAT,LON,ELEV_M (degrees, longitude east-positive; metres), e.g. -30.2,-70.8,2200"


def _timezone_problem(name: str) -> str | None:
    """None if zoneinfo knows the IANA zone ``name``, else the complaint."""
    from zoneinfo import ZoneInfo, ZoneInfoNotFoundError, available_timezones

    try:
        ZoneInfo(name)
        return None
    except (ZoneInfoNotFoundError, ValueError, OSError):
        guess = suggest(name.strip(), available_timezones())
    hint = f"; did you mean {show(guess[0])}?" if guess else ""
    offset = re.fullmatch(r"(?:UTC|GMT)\s*([+-])\s*(\d{1,2})", name.strip(), re.IGNORECASE)
    if offset:  # "UTC-4" is Etc/GMT+4: POSIX signs are reversed
        hint = f'; for a fixed offset use "Etc/GMT{"+-"[offset[1] == "+"]}{int(offset[2])}"'
    return f'must be an IANA time zone name such as "America/Santiago" or "UTC" (got {show(name)}){hint}'


def _location(t: Table) -> Location:
    name, lat = t.string("name"), t.number("latitude_deg", -90, 90)
    lon, elev = t.number("longitude_deg", -180, 360), t.number("elevation_m", -500, 6000)
    tz = t.string("timezone")
    if _timezone_problem(tz):
        t.fail(f"timezone {_timezone_problem(tz)}")
    return Location(name, lat, lon - 360.0 if lon > 180.0 else lon, elev, tz)


def _limits(t: Table) -> Limits:
    min_alt = t.number("min_altitude_deg", 0, 90, required=False)
    max_am = t.number("max_airmass", 1, required=False)
    # A missing limit never cuts in before the given one.  With only an airmass
    # limit, the altitude limit is the horizon.  With only an altitude limit, the
    # airmass limit is sec z there: every standard airmass formula gives ≤ sec z.
    if min_alt is None:
        min_alt = DEFAULT_MIN_ALTITUDE_DEG if max_am is None else 0.0
    if max_am is None:
        max_am = 1.0 / math.sin(math.radians(min_alt)) if min_alt > 0 else math.inf
    max_alt = t.number("max_altitude_deg", 0, 90, required=False)
    lower = max(min_alt, math.degrees(math.asin(1.0 / max_am)) if math.isfinite(max_am) else 0.0)
    if max_alt is not None and max_alt <= lower + 1e-9:
        t.fail(f"max_altitude_deg must be above the lower altitude limit {lower:.1f}° (min_altitude_deg "
               f"and max_airmass) (got {max_alt:g})")
    return Limits(
        min_alt, max_am, t.number("sun_avoidance_deg", 0, 180, default=DEFAULT_SUN_AVOIDANCE_DEG),
        t.number("min_moon_separation_deg", 0, 180, default=DEFAULT_MIN_MOON_SEPARATION_DEG),
        t.string("twilight", DEFAULT_TWILIGHT, TWILIGHTS), *_horizon(t, t.get("horizon", False)),
        max_altitude_deg=max_alt)


def _horizon(t: Table, raw: Any) -> tuple[tuple[float, ...], tuple[float, ...]]:
    if raw is None:
        return (), ()
    if not isinstance(raw, list) or not raw:
        t.fail(f"horizon must be a non-empty array of [azimuth_deg, altitude_deg] pairs (got {show(raw)})")
    az: list[float] = []
    alt: list[float] = []
    for i, point in enumerate(raw, 1):
        if not isinstance(point, list) or len(point) != 2:
            t.fail(f"horizon point {i} must be a pair [azimuth_deg, altitude_deg] (got {show(point)})")
        a = t.check(point[0], f"horizon point {i} azimuth", 0, 360)
        if az and a <= az[-1]:
            t.fail(f"horizon point {i} azimuth must be > {bound(az[-1])} (the previous point's): "
                   f"azimuths increase strictly (got {show(point[0])})")
        az.append(a)
        alt.append(t.check(point[1], f"horizon point {i} altitude", -10, 90))
    if az[0] == 0 and az[-1] == 360 and len(az) > 1 and alt[0] != alt[-1]:
        t.fail(f"horizon altitudes at azimuth 0 and 360 (one direction) must agree "
               f"(got {bound(alt[0])} and {bound(alt[-1])})")
    return tuple(az), tuple(alt)


def _telescope(t: Table) -> Telescope:
    name = t.string("name")
    aperture = t.number("aperture_m", 0, 40, lo_open=True)  # the cap catches centimetres
    obstruction = t.number("obstruction_diameter_m", 0, aperture, hi_open=True,
                           hi_name="aperture_m", default=0.0)
    return Telescope(name, aperture, obstruction, t.number("slew_rate_deg_s", 0, lo_open=True),
                     *(t.number(key, 0) for key in ("settle_s", "acquisition_s", "filter_change_s")))


def _camera(t: Table) -> Camera:
    name = t.string("name")
    scale = t.number("pixel_scale_arcsec", 0, lo_open=True)
    read_noise = t.number("read_noise_e", 0)
    gain = t.number("gain_e_per_adu", 0, lo_open=True)
    dark = t.number("dark_e_per_s", 0, default=0.0)
    full_well = t.number("full_well_e", 0, lo_open=True)
    linearity = t.number("linearity_limit_e", 0, full_well, lo_open=True, hi_name="full_well_e",
                         default=full_well)
    readout = t.number("readout_s", 0)
    min_exposure = t.number("min_exposure_s", 0, default=0.0)
    px = t.get("detector_pixels", True)
    if not isinstance(px, list) or len(px) != 2 or any(
            isinstance(n, bool) or not isinstance(n, int) or n <= 0 for n in px):
        t.fail(f"detector_pixels must be [nx, ny], two positive integers (got {show(px)})")
    keywords = t.sub("fits_keywords", None, required=False)
    mapping: dict[str, str] = {}
    for key, value in keywords.table.items():
        if not isinstance(value, str):
            keywords.fail(f"{toml_key(key)} must be a string naming this camera's keyword "
                          f"(got {show(value)})")
        for word in (key, value):
            if not _FITS_KEYWORD.fullmatch(word.strip().upper()):
                keywords.fail(f"{toml_key(key)}: {show(word)} is not a FITS keyword "
                              "(1-8 characters A-Z 0-9 - _, or HIERARCH ...)")
        mapping[key.strip().upper()] = value.strip().upper()
    return Camera(name, scale, read_noise, gain, dark, full_well, linearity, readout,
                  min_exposure, (px[0], px[1]), MappingProxyType(mapping))


def _filter(name: str, t: Table) -> Filter:
    if not name.strip():
        t.fail(f"[filters] a filter needs a non-empty name (got {show(name)})", bare=True)
    if "band" not in t.table and name not in BANDS:
        guess = suggest(name, BANDS)
        t.fail(f"band is required: the name {show(name)} is not a standard band "
               f"({' '.join(BANDS)})" + (f'; band = "{guess[0]}"?' if guess else ""))
    band = t.string("band", choices=BANDS) if "band" in t.table else name
    throughput = t.number("throughput", 0, 1, lo_open=True, required=False)
    bandwidth = t.number("bandwidth_angstrom", 0, lo_open=True, required=False)
    # A zero point (1 e-/s) is about 20 for a 20 cm telescope and 28-29 for a 10 m
    # one (from memory); the range catches zero points in other units.
    zero_point = t.number("zero_point_mag", 10, 35, required=False)
    if throughput is None and zero_point is None:
        t.fail("needs throughput (0 < t ≤ 1) or zero_point_mag (magnitude giving 1 e-/s), or both")
    return Filter(name, band, throughput, bandwidth, zero_point)


def _per_filter(sky: Table, key: str, filters: Mapping[str, Filter], lo: float, hi: float):
    t = sky.sub(key, None, required=True)
    for name, value in t.table.items():
        if name not in filters:
            guess = suggest(name, filters)
            hint = f"; did you mean {guess[0]}?" if guess else ""
            t.fail(f"{toml_key(name)} is not a filter in [filters]{hint} (filters: {', '.join(filters)})")
        t.check(value, toml_key(name), lo, hi)
    missing = [name for name in filters if name not in t.table]
    if missing:
        t.fail(f"has no value for filter {missing[0]} (every filter in [filters] needs one)")
    return MappingProxyType({name: float(t.table[name]) for name in filters})


def _proposal(t: Table) -> ProposalSettings:
    months = []
    for key, default in (("semester_a_start_month", ProposalSettings.semester_a_start_month),
                         ("semester_b_start_month", ProposalSettings.semester_b_start_month)):
        month = t.number(key, 1, 12, default=default)
        if month != int(month):
            t.fail(f"{key} must be a whole month 1..12 (got {show(month)})")
        months.append(int(month))
    if months[0] == months[1]:
        t.fail(f"semester_b_start_month must differ from semester_a_start_month (got {months[1]} for both)")
    # Above 0.95 a request would grow more than twentyfold: surely a percentage typed as a fraction.
    loss = t.number("weather_loss_fraction", 0, 0.95, required=False)
    return ProposalSettings(months[0], months[1], loss)


def parse_site_profile(data: Mapping, source: str) -> SiteProfile:
    """Validate ``data`` (a TOML document, as from tomllib) and build the profile.

    ``source`` (where it came from, as the user gave it) starts every message of
    the :class:`SiteProfileError` raised at the first problem.
    """
    if not isinstance(data, Mapping):
        raise error(SiteProfileError, f"a site profile must be a TOML table (got {show(data)})", source)
    top = Table(data, "", "", source, _SCHEMA)
    notes = top.get("notes", False)
    if notes is not None and not isinstance(notes, str):
        top.fail(f"notes must be a string (got {show(notes)})")
    location = _location(top.sub("site", "site", True))
    limits = _limits(top.sub("limits", "limits", False))
    telescope = _telescope(top.sub("telescope", "telescope", True))
    camera = _camera(top.sub("camera", "camera", True))
    table = top.sub("filters", None, True)
    if not table.table:
        table.fail("must hold at least one filter table, e.g. [filters.V]")
    filters = MappingProxyType({name: _filter(name, table.sub(name, "filter", True)) for name in table.table})
    sky = top.sub("sky", "sky", True)
    psf = sky.string("psf", DEFAULT_PSF, PSF_KINDS)
    if psf != "moffat" and sky.get("moffat_beta", False) is not None:
        sky.fail(f"moffat_beta applies only to psf = \"moffat\" (psf is {show(psf)})")
    return SiteProfile(location, limits, telescope, camera, filters, Sky(
        typical_seeing_arcsec=sky.number("typical_seeing_arcsec", 0, 10, lo_open=True),
        dark_mag_arcsec2=_per_filter(sky, "dark_mag_arcsec2", filters, 10, 25),
        extinction_mag_per_airmass=_per_filter(sky, "extinction_mag_per_airmass", filters, 0, 2),
        psf=psf, moffat_beta=sky.number("moffat_beta", 1, 20, lo_open=True, default=DEFAULT_MOFFAT_BETA),
    ), source, (notes or "").strip(), _proposal(top.sub("proposal", "proposal", False)))


def load_site_profile(path: str | Path, source: str | None = None) -> SiteProfile:
    """Read a site profile (TOML) and validate it; errors name ``source`` (default: ``path`` as given)."""
    name = str(path) if source is None else source
    return parse_site_profile(read_toml(path, name, SiteProfileError, "site profile"), name)


def site_from_text(text: str, source: str, timezone: str | None = None) -> SiteProfile:
    """A profile from its TOML text (as a logbook keeps it); ``timezone`` replaces its zone."""
    import tomllib

    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise error(SiteProfileError, f"the kept copy is not valid TOML ({exc})", source) from None
    profile = parse_site_profile(data, source)
    if timezone is not None:
        if _timezone_problem(timezone):
            raise error(SiteProfileError, f"timezone {_timezone_problem(timezone)}")
        profile = replace(profile, location=replace(profile.location, timezone=timezone))
    return profile


def bundled_site_names() -> list[str]:
    """Stems of the bundled profiles (``demo``, ``generic``, the templates), sorted."""
    folder = site_profiles_dir()
    return sorted(p.stem for p in folder.glob("*.toml")) if folder.is_dir() else []


def mean_solar_zone(longitude_deg: float) -> str:
    """The whole-hour zone nearest the site's mean solar time (longitude / 15 h), as tzdata
    names it ("Etc/GMT+10" is UTC−10: POSIX signs are reversed); "UTC" at 0 h.

    Local noon then falls within 30 min of mean solar noon, so a night counted from
    local noon to local noon holds the whole night at every longitude."""
    hours = int(round(longitude_deg / 15.0))
    return "UTC" if hours == 0 else f"Etc/GMT{'+' if hours < 0 else '-'}{abs(hours)}"


def site_from_coordinates(text: str, timezone: str | None = None) -> SiteProfile:
    """A site at ``"LAT,LON[,ELEV_M]"`` with generic telescope, camera, filters and sky.

    Everything but the location comes from the bundled ``generic.toml`` (a 1 m
    telescope with a CCD and UBVRI filters).  Elevation defaults to 0 m, the
    time zone to the site's mean solar time (:func:`mean_solar_zone`); the name is like
    ``"site at -30.200°, -70.800°"``.
    """
    def fail(message: str) -> SiteProfileError:
        return error(SiteProfileError, f"site {show(text)}: {message}")

    parts = [p.strip() for p in text.replace("\u2212", "-").split(",")]  # allow a typeset minus
    if len(parts) not in (2, 3):
        raise fail(f"expected {_COORDS}")
    values = []
    for label, part, lo, hi in zip(("latitude", "longitude", "elevation"), parts,
                                   (-90, -180, -500), (90, 360, 6000)):
        if not _DECIMAL.fullmatch(part):
            raise fail(f"{label} {show(part)} is not a decimal number (expected {_COORDS})")
        values.append(float(part))
        if not lo <= values[-1] <= hi:
            raise fail(f"{label} must be between {lo} and {hi} (got {show(part)})")
    lat, lon, elev = values[0], values[1], values[2] if len(values) == 3 else 0.0
    lon = lon - 360.0 if lon > 180.0 else lon
    tz = mean_solar_zone(lon) if timezone is None else timezone
    if _timezone_problem(tz):
        raise fail(f"timezone {_timezone_problem(tz)}")
    generic = load_site_profile(site_profiles_dir() / f"{GENERIC_PROFILE}.toml")
    notes = (f"Only the location is this site's; the rest are typical values from the bundled "
             f"{GENERIC_PROFILE}.toml.\n{generic.notes}").strip()
    location = Location(f"site at {lat:.3f}°, {lon:.3f}°", lat, lon, elev, tz)
    return replace(generic, location=location, source=text, notes=notes)


def resolve_site(spec: str, timezone: str | None = None) -> SiteProfile:
    """The site named by ``--site``: a profile path, a bundled stem or ``LAT,LON[,ELEV_M]``.

    A path is anything that is a file, ends in ``.toml`` or contains a folder
    separator; other text with a comma is coordinates; anything else is a
    bundled profile's stem (case ignored).  ``timezone``, when given, replaces
    the profile's zone (a coordinate site's defaults to UTC).
    """
    text = spec.strip()
    if not text:
        raise error(SiteProfileError, f"empty site: give a profile file, a bundled profile or {_COORDS}")
    try:
        # a pipe or a device too (the reader says what it is); not a folder: a folder named
        # like a bundled profile (a copy of the demo's files, say) must not hide it
        is_file = Path(text).exists() and not Path(text).is_dir()
    except (OSError, ValueError):  # a name too long for the file system, a NUL
        is_file = False
    is_path = is_file or text.lower().endswith(".toml") or any(c in text for c in "/\\")
    if "," in text and not is_path:
        return site_from_coordinates(text, timezone)
    if is_path:
        profile = load_site_profile(text)
    else:
        names = bundled_site_names()
        match = [n for n in names if n.lower() == text.lower()]
        if not match:
            guesses = suggest(text, names, n=3, cutoff=0.5)
            raise error(
                SiteProfileError,
                f"unknown site {show(spec)}: not a profile file, a bundled profile or LAT,LON[,ELEV_M]; "
                + (f"did you mean {' or '.join(guesses)}? " if guesses else "")
                + f"(bundled: {', '.join(names) or 'none'})")
        # Bundled profiles are named as users see them in the source tree,
        # not by the install location.
        profile = load_site_profile(site_profiles_dir() / f"{match[0]}.toml", f"site_profiles/{match[0]}.toml")
    if timezone is not None:
        if _timezone_problem(timezone):
            raise error(SiteProfileError, f"timezone {_timezone_problem(timezone)}")
        profile = replace(profile, location=replace(profile.location, timezone=timezone))
    return profile
