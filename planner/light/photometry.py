"""Magnitudes into electrons: standard bands, extinction, sky brightness, science levels.

Pure computation on floats and numpy arrays (no files, no printing, no clock).

Conventions and sources
-----------------------
* Vega magnitudes.  Zero-magnitude fluxes: Bessell, Castelli & Plez 1998, A&A 333, 231,
  Table A2 (Johnson–Cousins UBVRI) and Cohen, Wheaton & Megeath 2003, AJ 126, 1090
  (2MASS J H Ks).  Photons = f_λ λ / hc at the band's effective wavelength.
* A filter's electron rate comes either from a measured zero point (the magnitude
  giving 1 e⁻/s above the atmosphere; preferred when the site gives one, since it is
  measured) or from photons × bandwidth × collecting area × total throughput.
* Atmospheric extinction: k (mag per airmass, from the site) × airmass.
* Interstellar extinction: A_band = (A_band/A_V)(R_V) × R_V × E(B−V) with the Cardelli,
  Clayton & Mathis 1989 law (ApJ 345, 245) at the band's effective wavelength,
  A_band/A_V = a(x) + b(x)/R_V (a, b in the band table), R_V = 3.1 unless the target
  gives its own.  At R_V = 3.1, A_V = 3.13 E(B−V): the classical scale on which the
  catalog's Harris E(B−V) is defined.
* Sky: the site's dark zenith sky, brightened off the zenith with Krisciunas &
  Schaefer 1991 (PASP 103, 1033), B0(Z) = B_zen 10^(−0.4 k (X − 1)) X, with their
  scattering air mass X(Z) = (1 − 0.96 sin² Z)^(−1/2) and sin² Z = 1 − 1/airmass²
  (plane-parallel inversion of the airmass given).  Moonlight from the same paper (V).
  Other bands (K&S is V only; our assumption, stated): the same formula with the
  band's own extinction coefficient k (the scattered fraction 1 − 10^(−0.4 k X) grows
  with k) and the Moon's light given the Sun's colours (the Moon taken as a grey
  reflector).  Twilight is not modelled: exposures assume astronomical night, and
  keeping twilight out of the plan is the scheduler's job.
* Science levels: see :func:`absolute_level_mag`.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from planner.errors import InputError
from planner.model.bands import BANDS, C_CM_S, DEFAULT_R_V, H_ERG_S, Band
from planner.model.levels import LEVEL_NAMES, LEVELS, LevelError  # noqa: F401 (this module's API too)


class UnknownFilterError(InputError):
    """A filter (or band) that the site or the band table does not know."""


class ConditionsError(InputError):
    """Observing conditions outside their physical range (airmass, seeing, Moon)."""


# --------------------------------------------------------------------------- bands

def band_info(band: str) -> Band:
    """The standard band ``band`` (one of U B V R I J H Ks)."""
    try:
        return BANDS[band]
    except KeyError:
        raise UnknownFilterError(
            f"unknown band {band!r}; standard bands are {' '.join(BANDS)}") from None


def zero_mag_photon_flux(band: str) -> float:
    """Photons s⁻¹ cm⁻² Å⁻¹ from a 0 mag (Vega system) star above the atmosphere."""
    b = band_info(band)
    wavelength_a = b.wavelength_eff_um * 1e4
    if b.zero_flux_lambda_erg_s_cm2_a is not None:
        # N_λ = f_λ λ / (h c), λ in cm
        return b.zero_flux_lambda_erg_s_cm2_a * wavelength_a * 1e-8 / (H_ERG_S * C_CM_S)
    # N_λ = f_ν / (h λ) with λ in Å gives photons per Å (1 Jy = 1e-23 erg s⁻¹ cm⁻² Hz⁻¹)
    return b.zero_flux_nu_jy * 1e-23 / (H_ERG_S * wavelength_a)


def zero_mag_electron_rate(band: str, *, collecting_area_m2: float, throughput: float | None = None,
                           bandwidth_angstrom: float | None = None,
                           zero_point_mag: float | None = None) -> float:
    """Electrons per second from a 0 mag star above the atmosphere.

    A measured ``zero_point_mag`` (1 e⁻/s) wins; otherwise photons × bandwidth
    (default the band's) × collecting area × ``throughput``.
    """
    if zero_point_mag is not None:
        return 10.0 ** (0.4 * zero_point_mag)
    if throughput is None:
        raise UnknownFilterError(f"band {band}: needs a throughput or a zero point")
    width = band_info(band).bandwidth_angstrom if bandwidth_angstrom is None else bandwidth_angstrom
    return zero_mag_photon_flux(band) * width * collecting_area_m2 * 1e4 * throughput


def electron_rate(magnitude, zero_mag_rate_e_per_s, extinction_mag_per_airmass=0.0, airmass=1.0):
    """Electrons per second from a star of ``magnitude`` after ``airmass`` of atmosphere."""
    m = np.asarray(magnitude, dtype=float)
    return zero_mag_rate_e_per_s * 10.0 ** (-0.4 * (m + extinction_mag_per_airmass * np.asarray(airmass)))


def interstellar_extinction_mag(band: str, ebv_mag, r_v=DEFAULT_R_V):
    """A_band = (a + b / R_V) R_V E(B−V): Cardelli, Clayton & Mathis 1989 at λeff."""
    r = np.asarray(r_v, dtype=float)
    if not np.all(np.isfinite(r) & (r > 0)):
        raise ConditionsError(f"R_V must be a positive number (got {r_v!r})")
    return band_info(band).extinction_per_ebv(r) * np.asarray(ebv_mag, dtype=float)


# ------------------------------------------------------------------ sky brightness

def nanolamberts_to_mag(brightness_nl):
    """Surface brightness in nanolamberts to V mag/arcsec² (Krisciunas & Schaefer 1991).

    B = 34.08 exp(20.7233 − 0.92104 V), i.e. V = 26.3308 − 2.5 log10 B.
    """
    b = np.asarray(brightness_nl, dtype=float)
    return (20.7233 - np.log(b / 34.08)) / 0.92104


def mag_to_nanolamberts(mag_arcsec2):
    """V mag/arcsec² to nanolamberts (inverse of :func:`nanolamberts_to_mag`)."""
    return 34.08 * np.exp(20.7233 - 0.92104 * np.asarray(mag_arcsec2, dtype=float))


def scattering_airmass(sin2_zenith):
    """Krisciunas & Schaefer's air mass for scattering paths, X = (1 − 0.96 sin² Z)^−½."""
    return 1.0 / np.sqrt(1.0 - 0.96 * np.asarray(sin2_zenith, dtype=float))


def moon_phase_angle_deg(illumination):
    """Phase angle α (deg, 0 = full) of an illuminated fraction k = (1 + cos α)/2 (Meeus 48.1)."""
    k = np.asarray(illumination, dtype=float)
    return np.degrees(np.arccos(np.clip(2.0 * k - 1.0, -1.0, 1.0)))


def moon_brightness(phase_angle_deg):
    """K&S 1991: the Moon's illuminance I* = 10^(−0.4 (3.84 + 0.026|α| + 4e−9 α⁴))."""
    a = np.abs(np.asarray(phase_angle_deg, dtype=float))
    return 10.0 ** (-0.4 * (3.84 + 0.026 * a + 4e-9 * a**4))


def scattering_function(separation_deg):
    """K&S 1991 scattering: f(ρ) = 10^5.36 (1.06 + cos² ρ) + 10^(6.15 − ρ/40); 6.2e7 ρ⁻² below 10°."""
    rho = np.asarray(separation_deg, dtype=float)
    rayleigh = 10.0**5.36 * (1.06 + np.cos(np.radians(rho)) ** 2)
    with np.errstate(divide="ignore"):
        mie = np.where(rho >= 10.0, 10.0 ** (6.15 - rho / 40.0), 6.2e7 / np.maximum(rho, 1e-6) ** 2)
    return rayleigh + mie


def moonlight_nanolamberts(phase_angle_deg, separation_deg, moon_zenith_deg, target_zenith_deg, k):
    """K&S 1991: moonlight B_moon = f(ρ) I* 10^(−0.4 k X(Z_moon)) [1 − 10^(−0.4 k X(Z))]."""
    x_moon = scattering_airmass(np.sin(np.radians(moon_zenith_deg)) ** 2)
    x_target = scattering_airmass(np.sin(np.radians(target_zenith_deg)) ** 2)
    return (scattering_function(separation_deg) * moon_brightness(phase_angle_deg)
            * 10.0 ** (-0.4 * k * x_moon) * (1.0 - 10.0 ** (-0.4 * k * x_target)))


def check_conditions(airmass=1.0, seeing_fwhm_arcsec=1.0, moon_illumination=0.0,
                     moon_separation_deg=90.0, moon_altitude_deg=-90.0) -> None:
    """Raise :class:`ConditionsError` for conditions outside their physical range."""
    checks = (
        ("airmass", airmass, lambda v: v >= 1.0, "at least 1 (1 at the zenith)"),
        ("seeing FWHM (arcsec)", seeing_fwhm_arcsec, lambda v: v > 0.0, "positive"),
        ("moon illumination", moon_illumination, lambda v: (v >= 0.0) & (v <= 1.0),
         "within 0..1 (the illuminated fraction: 0 new, 1 full)"),
        ("moon separation (deg)", moon_separation_deg, lambda v: (v >= 0.0) & (v <= 180.0), "within 0..180"),
        ("moon altitude (deg)", moon_altitude_deg, lambda v: (v >= -90.0) & (v <= 90.0), "within -90..90"),
    )
    for label, value, ok, valid in checks:
        if isinstance(value, (int, float)):  # a plain number (most calls): the same test without arrays
            if not (ok(float(value)) and math.isfinite(value)):
                raise ConditionsError(f"{label} must be {valid} (got {float(value):g})")
            continue
        v = np.asarray(value, dtype=float)
        good = ok(v) & np.isfinite(v)
        if not np.all(good):
            bad = v[~good].flat[0] if v.ndim else float(v)
            raise ConditionsError(f"{label} must be {valid} (got {bad:g})")


def sky_brightness_mag_arcsec2(dark_zenith_mag_arcsec2, extinction_mag_per_airmass, airmass=1.0,
                               moon_illumination=0.0, moon_separation_deg=90.0,
                               moon_altitude_deg=-90.0, sun_minus_v_mag=0.0):
    """Sky surface brightness (mag/arcsec²) towards a target at ``airmass``.

    The dark sky is ``dark_zenith_mag_arcsec2`` brightened off the zenith (K&S 1991);
    moonlight (K&S 1991) is added when the Moon is above the horizon.  For a band
    other than V pass its extinction coefficient and ``sun_minus_v_mag`` (the Sun's
    band − V colour): see the module docstring.  All arguments broadcast.
    """
    x = np.asarray(airmass, dtype=float)
    k = np.asarray(extinction_mag_per_airmass, dtype=float)
    sin2_z = 1.0 - 1.0 / x**2
    x_ks = scattering_airmass(sin2_z)
    dark_flux = 10.0 ** (-0.4 * (np.asarray(dark_zenith_mag_arcsec2) + k * (x_ks - 1.0))) * x_ks
    alt = np.asarray(moon_altitude_deg, dtype=float)
    x_moon = scattering_airmass(np.cos(np.radians(alt)) ** 2)  # sin² Z_moon = cos² altitude
    moon_nl = (scattering_function(moon_separation_deg) * moon_brightness(moon_phase_angle_deg(moon_illumination))
               * 10.0 ** (-0.4 * k * x_moon) * (1.0 - 10.0 ** (-0.4 * k * x_ks)))
    # nL -> flux on the magnitude scale: 10^(-0.4 V) = B / (34.08 e^20.7233)
    moon_flux = np.where(alt > 0.0, moon_nl / (34.08 * math.exp(20.7233)), 0.0) * 10.0 ** (-0.4 * sun_minus_v_mag)
    return -2.5 * np.log10(dark_flux + moon_flux)


# ------------------------------------------------------------------ science levels

# LEVELS, LEVEL_NAMES and LevelError live in planner.model.levels (imported above).

# I-band tip: Rizzi et al. 2007 colour term with the Freedman et al. 2020 zero point.
TRGB_I_ZERO_POINT = -4.047  # Freedman et al. 2020, ApJ 891, 57
TRGB_I_COLOUR_SLOPE = 0.217  # Rizzi et al. 2007, ApJ 661, 815: per mag of (V−I)0 − 1.6
TRGB_I_SOURCE = "Freedman et al. 2020 zero point, Rizzi et al. 2007 colour term"
# Tip colour (V−I)0 against [Fe/H]: approximate tip colours of old (12–13 Gyr)
# globular-cluster giant branches, from memory, ±0.15 mag; interpolated linearly,
# held constant outside.
TIP_COLOUR_FEH = (-2.3, -1.8, -1.3, -0.7, -0.3)
TIP_COLOUR_VI = (1.50, 1.65, 1.90, 2.50, 3.10)
# Near-IR tip: Bellazzini et al. 2004 (A&A 424, 199) abstract values at ω Cen
# ([M/H] ≈ −1.5) and 47 Tuc ([M/H] ≈ −0.6), linear in [M/H] between them, extrapolated.
TRGB_NIR_MH = (-1.5, -0.6)
TRGB_NIR_ABS = {"J": (-5.20, -5.47), "H": (-5.94, -6.35), "Ks": (-6.04, -6.56)}
TRGB_NIR_SOURCE = "Bellazzini et al. 2004 (ω Cen and 47 Tuc), linear in [M/H]"
# HB / RR Lyrae mean level in V: M_V = 0.59 + 0.214 ([Fe/H] + 1.5): zero point
# Cacciari & Clementini 2003, slope Clementini et al. 2003 (0.214 from memory).
HB_V_SOURCE = "M_V = 0.59 + 0.214 ([Fe/H] + 1.5): Cacciari & Clementini 2003, Clementini et al. 2003"
# Ks: Muraveva et al. 2015 period–luminosity relation at the mean RRab period of
# cluster variables, <P_ab> = 0.585 d (Clement et al. 2001), unless a period is given.
RRL_MEAN_PERIOD_D = 0.585
HB_KS_SOURCE = "Muraveva et al. 2015 M_Ks = -2.73 log P + 0.03 [Fe/H] - 1.06"
# Turnoff: rule of thumb, about 3.5 mag below the HB in V in old clusters (Buonanno
# et al. 1989 find ΔV(TO−HB) ≈ 3.4–3.6; from memory).
TURNOFF_BELOW_HB_V = 3.5
# Colours (band − V, intrinsic).  RR Lyrae at mean light and turnoff (F8–G0 metal-poor
# dwarfs): typical values from memory, ±0.1 mag.  Tip giants: (V−R) ≈ 0.52 (V−I) and
# B−V = min(0.62 + 0.5 (V−I), 1.65), rules of thumb for cool giants from memory.
HB_COLOURS = {"U": 0.40, "B": 0.30, "V": 0.0, "R": -0.22, "I": -0.45}
HB_J_MINUS_KS, HB_H_MINUS_KS = 0.25, 0.05
TURNOFF_COLOURS = {"U": 0.30, "B": 0.45, "V": 0.0, "R": -0.28, "I": -0.58,
                   "J": -1.05, "H": -1.35, "Ks": -1.40}
COLOUR_SOURCE_MEMORY = "typical colours from memory, ±0.1 mag"
# The brightest stars of the HB level are RR Lyrae at maximum light; used for saturation.
# The largest RRab amplitudes: A_V = 1.21 at P = 0.5 d on the Bailey locus that
# planner.variables.recovery adopts (computed).  Its RRab template puts maximum light
# 0.57 A above the intensity mean, the mean the M_V calibrations use (0.62 A above the
# magnitude mean; computed, tests/test_photometry.py recomputes both).  Amplitude ratios
# A_band / A_V of RRab stars, from memory (±0.1): the amplitude shrinks to the red.
RRAB_LARGEST_AMPLITUDE_V_MAG = 1.21
RRAB_MAX_ABOVE_MEAN_PER_AMPLITUDE = 0.57
RRL_AMPLITUDE_RATIO = {"U": 1.30, "B": 1.25, "V": 1.0, "R": 0.80, "I": 0.63, "J": 0.45, "H": 0.32, "Ks": 0.30}


def rrl_max_above_mean_mag(band: str) -> float:
    """How far the brightest RR Lyrae at maximum rise above the HB's mean level in ``band``."""
    return RRAB_MAX_ABOVE_MEAN_PER_AMPLITUDE * RRAB_LARGEST_AMPLITUDE_V_MAG * RRL_AMPLITUDE_RATIO[band]


@dataclass(frozen=True)
class ScienceLevel:
    """A science level of a cluster in one band: the magnitude to reach and how it was found."""

    level: str  # tip | hb | turnoff | user
    band: str
    magnitude: float  # apparent, with interstellar extinction
    brightest_mag: float  # the level's brightest stars (saturation)
    absolute_mag: float | None
    extinction_mag: float | None  # A_band
    calibration: str
    colour_source: str
    rule_of_thumb: bool
    target: str | None = None
    notes: tuple[str, ...] = ()
    r_v: float | None = None  # R_V used for extinction (None: no extinction applied)
    observed: bool = False  # set by the cluster's observed V_HB, not by a calibration


def metallicity_mh(feh_dex, alpha_fe_dex=0.3):
    """Global metallicity [M/H] = [Fe/H] + log10(0.638 f + 0.362), f = 10^[α/Fe]
    (Salaris, Chieffi & Straniero 1993), α-enhanced by +0.3 dex as in old clusters."""
    return np.asarray(feh_dex, dtype=float) + np.log10(0.638 * 10.0**alpha_fe_dex + 0.362)


def tip_colour_vi(feh_dex):
    """Intrinsic (V−I)0 of the RGB tip at [Fe/H] (table above; approximate)."""
    return np.interp(feh_dex, TIP_COLOUR_FEH, TIP_COLOUR_VI)


def absolute_level_mag(level: str, band: str, feh_dex: float, *, period_d: float | None = None):
    """Absolute magnitude of a science level in ``band``.

    Returns ``(absolute_mag, calibration, colour_source, rule_of_thumb, notes)``.
    ``tip``: I from Freedman et al. 2020 + Rizzi et al. 2007 with the tip colour of
    :func:`tip_colour_vi`; J H Ks from Bellazzini et al. 2004; other optical bands
    from I with giant colours.  ``hb``: V from the M_V–[Fe/H] relation above, Ks from
    the Muraveva et al. 2015 period–luminosity relation, others by colours.
    ``turnoff``: V(HB) + 3.5 (rule of thumb) with dwarf colours.
    """
    band_info(band)
    if level not in LEVELS:
        raise LevelError(f"unknown level {level!r}; levels are {', '.join(LEVELS)} (or give a magnitude)")
    feh = float(feh_dex)
    notes: list[str] = []
    if level == "tip":
        vi = float(tip_colour_vi(feh))
        m_i = TRGB_I_ZERO_POINT + TRGB_I_COLOUR_SLOPE * (vi - 1.6)
        colour = f"tip (V-I)0 = {vi:.2f} at [Fe/H] = {feh:+.2f}, approximate, from memory"
        if band in TRGB_NIR_ABS:
            mh = float(metallicity_mh(feh))
            lo, hi = TRGB_NIR_ABS[band]
            m = lo + (hi - lo) * (mh - TRGB_NIR_MH[0]) / (TRGB_NIR_MH[1] - TRGB_NIR_MH[0])
            if not TRGB_NIR_MH[0] - 0.05 <= mh <= TRGB_NIR_MH[1] + 0.05:
                notes.append(f"[M/H] = {mh:+.2f} lies outside the calibrating clusters' "
                             f"{TRGB_NIR_MH[0]}..{TRGB_NIR_MH[1]}: extrapolated")
            return m, TRGB_NIR_SOURCE, "none needed", False, tuple(notes)
        if band == "U":
            raise LevelError("the tip level has no stated U - V colour: its magnitude must be given instead")
        if vi > 2.2:
            notes.append(f"tip colour {vi:.2f} is redder than the Rizzi et al. colour term's range")
        m_v = m_i + vi
        by_band = {"I": m_i, "V": m_v, "R": m_v - 0.52 * vi, "B": m_v + min(0.62 + 0.5 * vi, 1.65)}
        if band != "I":
            colour += "; B-V, V-R: rules of thumb for cool giants, from memory"
        return by_band[band], TRGB_I_SOURCE, colour, False, tuple(notes)
    m_v_hb = 0.59 + 0.214 * (feh + 1.5)
    if level == "hb":
        if band in ("J", "H", "Ks"):
            p = RRL_MEAN_PERIOD_D if period_d is None else float(period_d)
            m_ks = -2.73 * math.log10(p) + 0.03 * feh - 1.06
            offset = {"J": HB_J_MINUS_KS, "H": HB_H_MINUS_KS, "Ks": 0.0}[band]
            src = (f"period {p:g} d" + (" (mean RRab period, Clement et al. 2001)" if period_d is None else "")
                   + (f"; J-Ks, H-Ks {COLOUR_SOURCE_MEMORY}" if offset else ""))
            return m_ks + offset, HB_KS_SOURCE, src, False, ()
        return m_v_hb + HB_COLOURS[band], HB_V_SOURCE, f"RR Lyrae mean colours, {COLOUR_SOURCE_MEMORY}", False, ()
    m_v = m_v_hb + TURNOFF_BELOW_HB_V
    return (m_v + TURNOFF_COLOURS[band], "rule of thumb: V(turnoff) = V(HB) + 3.5 (Buonanno et al. 1989, from memory)",
            f"turnoff dwarf colours, {COLOUR_SOURCE_MEMORY}", True, ())


def _missing(value) -> bool:
    return value is None or (isinstance(value, float) and math.isnan(value))


def _observed_hb_applies(target, level: str, band: str) -> bool:
    """Whether the target's observed V_HB sets this level: HB in UBVRI (the near-IR HB
    comes from the period-luminosity relation) and the turnoff in every band."""
    if _missing(getattr(target, "v_hb_mag", None)) or level not in ("hb", "turnoff"):
        return False
    return level == "turnoff" or band in HB_COLOURS


def science_level(target, level: str, band: str, *, period_d: float | None = None) -> ScienceLevel:
    """The apparent magnitude of ``level`` of cluster ``target`` in ``band``.

    ``target`` needs ``name``, ``distance_modulus_mag`` (true, dereddened), ``ebv_mag``
    and ``feh_dex`` (any object with those attributes, e.g. ``planner.targets.Target``);
    ``r_v`` (default 3.1) and an observed ``v_hb_mag`` are used when present: the
    observed HB level then sets the HB (UBVRI) and the turnoff, shifted to other bands
    by the colours and the colour excess A_band − A_V.  Raises :class:`LevelError`
    naming the missing quantity.
    """
    name = getattr(target, "name", None)
    observed = _observed_hb_applies(target, level, band)
    needs = (("distance_modulus_mag", "a distance modulus"), ("ebv_mag", "a reddening E(B-V)"),
             ("feh_dex", "a metallicity [Fe/H]"))
    for attr, what in needs[1:] if observed else needs:
        if _missing(getattr(target, attr, None)):
            raise LevelError(f"target {name!r} has no {attr} ({what}); the {level} level needs it: "
                             "add it to the target list, or a magnitude is needed")
    r_v = getattr(target, "r_v", None)
    r_v = DEFAULT_R_V if _missing(r_v) else float(r_v)
    a_band = float(interstellar_extinction_mag(band, target.ebv_mag, r_v))
    modulus = getattr(target, "distance_modulus_mag", None)
    if observed:
        m, calibration, colour, thumb = _from_observed_hb(target, level, band, a_band, r_v)
        absolute, notes = (None if _missing(modulus) else m - float(modulus) - a_band), ()
    else:
        absolute, calibration, colour, thumb, notes = absolute_level_mag(
            level, band, target.feh_dex, period_d=period_d)
        m = absolute + float(modulus) + a_band
    brightest = m - rrl_max_above_mean_mag(band) if level == "hb" else m
    return ScienceLevel(level, band, m, brightest, absolute, a_band, calibration, colour, thumb, name, notes, r_v,
                        observed)


def _from_observed_hb(target, level, band, a_band, r_v):
    """(magnitude, calibration, colour source, rule of thumb) from the observed V_HB."""
    v_hb = float(target.v_hb_mag)
    source = getattr(target, "v_hb_source", None) or "given"
    excess = a_band - float(interstellar_extinction_mag("V", target.ebv_mag, r_v))  # E(band - V)
    calibration = f"observed V_HB = {v_hb:.2f} ({source})"
    if level == "hb":
        colour = "none needed" if band == "V" else f"RR Lyrae mean colours, {COLOUR_SOURCE_MEMORY}"
        return v_hb + HB_COLOURS[band] + excess, calibration, colour, False
    return (v_hb + TURNOFF_BELOW_HB_V + TURNOFF_COLOURS[band] + excess,
            f"rule of thumb: V(turnoff) = V_HB + 3.5 (Buonanno et al. 1989, from memory), {calibration}",
            f"turnoff dwarf colours, {COLOUR_SOURCE_MEMORY}", True)


def user_level(magnitude: float, band: str, target_name: str | None = None) -> ScienceLevel:
    """A magnitude the user gives (as observed, with any extinction already in it)."""
    band_info(band)
    m = float(magnitude)
    if not math.isfinite(m):
        raise LevelError(f"magnitude must be a finite number (got {magnitude!r})")
    return ScienceLevel("user", band, m, m, None, None, "given by the user", "none needed", False, target_name)
