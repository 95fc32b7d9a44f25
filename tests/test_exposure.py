"""Checks of planner.light.exposure: the CCD equation, the Gaussian aperture, saturation, frames.

Sources are named beside each check; the synthetic sites below are invented.
"""

from __future__ import annotations

import math
from dataclasses import replace
from types import MappingProxyType, SimpleNamespace

import numpy as np
import pytest
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from planner.errors import InputError
from planner.light import ccd
from planner.light import exposure as ex
from planner.light.exposure_table import exposure_table
from planner.light.photometry import ConditionsError, UnknownFilterError
from planner.model.site import (
    Camera,
    Filter,
    Limits,
    Location,
    SiteProfile,
    Sky,
    Telescope,
)


def make_site(*, read_noise_e=5.0, dark_e_per_s=0.002, dark_sky=21.5, k=0.15, pixel_scale=0.4,
              linearity=60000.0, min_exposure_s=0.1, zero_point_mag=None, gain=2.0, psf="gaussian",
              moffat_beta=4.765) -> SiteProfile:
    """An invented 1 m telescope with one V filter (values typical, from memory); a
    Gaussian PSF unless asked, so the CCD equation can be written out by hand."""
    return SiteProfile(
        Location("Invented test site", -30.0, -70.0, 2000.0, "UTC"),
        Limits(20.0, 2.9, 45.0, 30.0, "astronomical"),
        Telescope("invented 1 m", 1.0, 0.3, 2.0, 5.0, 30.0, 10.0),
        Camera("invented CCD", pixel_scale, read_noise_e, gain, dark_e_per_s, 65000.0, linearity, 20.0,
               min_exposure_s, (2048, 2048)),
        MappingProxyType({"V": Filter("V", "V", 0.4, None, zero_point_mag)}),
        Sky(1.2, MappingProxyType({"V": dark_sky}), MappingProxyType({"V": k}), psf, moffat_beta),
        source="invented.toml",
    )


SITE = make_site()
# Bessell et al. 1998 Table A2, V: f_λ = 363.1e-11 erg s⁻¹ cm⁻² Å⁻¹ at 0.545 µm → photons per Å
V_PHOTONS = 363.1e-11 * 0.545e-4 / (6.62607015e-27 * 2.99792458e10)


# ------------------------------------------------------------------ Gaussian PSF


def test_enclosed_fraction_against_scipy_rayleigh():
    # A circular Gaussian's enclosed light is the Rayleigh distribution's CDF (scipy.stats).
    from scipy.stats import rayleigh

    fwhm = 1.7
    r = np.linspace(0.05, 4.0, 40)
    sigma = fwhm / (2 * math.sqrt(2 * math.log(2)))
    assert np.allclose(ccd.enclosed_fraction(r, fwhm), rayleigh.cdf(r, scale=sigma), rtol=1e-12, atol=1e-14)


def test_optimal_radius_background_limited():
    # Computed (tests/REFERENCES.md, "Signal-to-noise"): the background-limited optimum
    # r = 0.673 FWHM encloses 0.715;
    # it maximises enclosed(r)/r (S/N ∝ f(r)/sqrt(n_pix)), found here with scipy.
    from scipy.optimize import minimize_scalar

    best = minimize_scalar(lambda r: -ccd.enclosed_fraction(r, 1.0) / r, bounds=(0.1, 3.0), method="bounded")
    assert best.x == pytest.approx(ccd.OPTIMAL_RADIUS_FWHM, abs=1e-3)
    assert float(ccd.enclosed_fraction(0.673, 1.0)) == pytest.approx(0.715, abs=5e-4)


@pytest.mark.parametrize("fwhm_px, expected", [(1.0, 0.579), (2.0, 0.197), (3.0, 0.0932)])
def test_peak_pixel_fraction_references(fwhm_px, expected):
    # Computed (tests/REFERENCES.md, "Signal-to-noise"): [erf(p / (2√2 σ))]² for FWHM 1, 2, 3 px
    assert float(ccd.peak_pixel_fraction(fwhm_px)) == pytest.approx(expected, rel=2e-3)


def test_peak_pixel_fraction_against_scipy_norm():
    # The same integral with the normal CDF (scipy.stats): (Φ(½/σ) − Φ(−½/σ))²
    from scipy.stats import norm

    fwhm = np.array([0.8, 1.5, 2.5, 4.0, 7.0])
    sigma = fwhm / (2 * math.sqrt(2 * math.log(2)))
    assert np.allclose(ccd.peak_pixel_fraction(fwhm), (norm.cdf(0.5 / sigma) - norm.cdf(-0.5 / sigma)) ** 2)


# ------------------------------------------------------------------ Moffat PSF

MOFFAT = ccd.Psf("moffat", 4.765)


def _moffat_profile(r, fwhm, beta):
    # Moffat 1969 (A&A 3, 455; from memory): I(r) = (β − 1)/(π α²) [1 + (r/α)²]^−β, unit flux,
    # with α from the FWHM written out here rather than taken from the code
    alpha = fwhm / (2.0 * math.sqrt(2.0 ** (1.0 / beta) - 1.0))
    return (beta - 1.0) / (math.pi * alpha**2) * (1.0 + (r / alpha) ** 2) ** (-beta)


@pytest.mark.parametrize("beta", [2.5, 3.5, 4.765])
def test_moffat_enclosed_fraction_against_numerical_integration(beta):
    # The light within r is ∫ 2π r' I(r') dr' (scipy.integrate.quad of the profile above);
    # half the peak at r = FWHM/2 checks the FWHM–α relation.
    from scipy.integrate import quad

    psf, fwhm = ccd.Psf("moffat", beta), 1.3
    assert _moffat_profile(fwhm / 2, fwhm, beta) == pytest.approx(0.5 * _moffat_profile(0.0, fwhm, beta))
    for r in (0.2, 0.6, 0.87, 1.5, 4.0):
        direct = quad(lambda x: 2 * math.pi * x * _moffat_profile(x, fwhm, beta), 0.0, r)[0]
        assert float(ccd.enclosed_fraction(r, fwhm, psf)) == pytest.approx(direct, rel=1e-9)


@pytest.mark.parametrize("beta", [2.5, 4.765])
def test_moffat_enclosed_fraction_published_formula(beta):
    # Trujillo et al. 2001 (MNRAS 328, 977; quoted): L(R)/L_total = 1 − [1 + (R/α)²]^(1−β).
    # Values at the Gaussian's 0.673 FWHM (computed, tests/REFERENCES.md): 0.496 at β 2.5,
    # 0.609 at β 4.765, against the Gaussian's 0.715.
    alpha = 1.0 / (2.0 * math.sqrt(2.0 ** (1.0 / beta) - 1.0))
    psf = ccd.Psf("moffat", beta)
    r = np.linspace(0.05, 3.0, 30)
    assert np.allclose(ccd.enclosed_fraction(r, 1.0, psf), 1.0 - (1.0 + (r / alpha) ** 2) ** (1.0 - beta), rtol=1e-12)
    expected = {2.5: 0.496, 4.765: 0.609}[beta]
    assert float(ccd.enclosed_fraction(0.673, 1.0, psf)) == pytest.approx(expected, abs=5e-4)


@pytest.mark.parametrize("beta, radius, enclosed", [(2.5, 0.751, 0.557), (3.5, 0.725, 0.612), (4.765, 0.709, 0.643)])
def test_moffat_optimal_aperture(beta, radius, enclosed):
    # The background-limited optimum maximises f(r)/r (scipy's minimize_scalar finds it on
    # the profile's own formula); radius and enclosed light computed, tests/REFERENCES.md.
    from scipy.optimize import minimize_scalar

    psf = ccd.Psf("moffat", beta)
    best = minimize_scalar(lambda r: -float(ccd.enclosed_fraction(r, 1.0, psf)) / r, bounds=(0.1, 3.0),
                           method="bounded", options={"xatol": 1e-8})
    assert ccd.optimal_radius_fwhm(psf) == pytest.approx(best.x, abs=1e-5)
    assert ccd.optimal_radius_fwhm(psf) == pytest.approx(radius, abs=5e-4)
    assert float(ccd.enclosed_fraction(radius, 1.0, psf)) == pytest.approx(enclosed, abs=5e-4)
    assert ccd.optimal_radius_fwhm(ccd.GAUSSIAN) == ccd.OPTIMAL_RADIUS_FWHM


@pytest.mark.parametrize("beta", [2.5, 4.765])
@pytest.mark.parametrize("fwhm_px", [0.5, 1.0, 2.0, 3.0, 6.0])
def test_moffat_peak_pixel_against_scipy_dblquad(beta, fwhm_px):
    # The centred pixel's share of the light: the profile integrated over −½..½ in x and y.
    from scipy.integrate import dblquad

    direct = dblquad(lambda y, x: _moffat_profile(math.hypot(x, y), fwhm_px, beta), -0.5, 0.5, -0.5, 0.5,
                     epsabs=1e-12, epsrel=1e-10)[0]
    assert float(ccd.peak_pixel_fraction(fwhm_px, ccd.Psf("moffat", beta))) == pytest.approx(direct, rel=1e-6)


def test_moffat_makes_sky_limited_exposures_longer():
    # Sky-limited, t ∝ n_pix / f² at the optimum aperture of each profile: a Moffat
    # (β 4.765) star needs (0.715/0.643)² × (0.709/0.673)² ≈ 1.37 × the Gaussian's time
    # (computed); at the same FWHM more light sits in its wings, so its peak pixel holds
    # less (0.079 against 0.093 at 3 px, computed) and saturation comes later.
    gauss, moffat = make_site(dark_sky=19.0), make_site(dark_sky=19.0, psf="moffat")
    tg = ex.exposure_for_snr(gauss, "V", 22.0, 10.0, round_frames=False)
    tm = ex.exposure_for_snr(moffat, "V", 22.0, 10.0, round_frames=False)
    assert tm.exposure_s / tg.exposure_s == pytest.approx((0.7153 / 0.6433) ** 2 * (0.7092 / 0.6732) ** 2, rel=0.03)
    assert tm.psf == "Moffat, beta = 4.765" and tg.psf == "Gaussian"
    assert tm.peak_fraction < tg.peak_fraction and tm.saturation_s > tg.saturation_s


# ------------------------------------------------------------------ the CCD equation


def _plain_snr(site, magnitude, t, airmass, seeing, illumination, separation, moon_alt):
    """The CCD equation written out per star with math only (the slow, obvious path)."""
    from planner.light.photometry import sky_brightness_mag_arcsec2

    f = site.filters["V"]
    k = site.sky.extinction_mag_per_airmass["V"]
    e0 = V_PHOTONS * 890.0 * site.telescope.collecting_area_m2 * 1e4 * f.throughput  # Bessell V, 890 Å
    star = e0 * 10 ** (-0.4 * (magnitude + k * airmass))
    mu = float(sky_brightness_mag_arcsec2(site.sky.dark_mag_arcsec2["V"], k, airmass, illumination,
                                          separation, moon_alt))
    p = site.camera.pixel_scale_arcsec
    sky = e0 * 10 ** (-0.4 * mu) * p * p
    r = max(0.673 * seeing, p)
    n_pix = math.pi * (r / p) ** 2
    n_star = star * (1 - 2 ** (-4 * (r / seeing) ** 2)) * t
    cam = site.camera
    noise = n_star + n_pix * (sky * t + cam.dark_e_per_s * t + cam.read_noise_e**2
                              + (cam.gain_e_per_adu * 0.289) ** 2)
    return n_star / math.sqrt(noise)


def test_vectorised_snr_matches_plain_ccd_equation():
    rng = np.random.default_rng(7)
    m, t, x = rng.uniform(10, 22, 50), rng.uniform(0.5, 900, 50), rng.uniform(1, 2.5, 50)
    see, ill = rng.uniform(0.5, 3, 50), rng.uniform(0, 1, 50)
    sep, alt = rng.uniform(2, 180, 50), rng.uniform(-20, 80, 50)
    fast = ex.snr_of_exposure(SITE, "V", m, t, airmass=x, seeing_fwhm_arcsec=see, moon_illumination=ill,
                              moon_separation_deg=sep, moon_altitude_deg=alt)
    slow = [_plain_snr(SITE, *args) for args in zip(m, t, x, see, ill, sep, alt)]
    assert np.allclose(fast, slow, rtol=1e-10)
    assert isinstance(ex.snr_of_exposure(SITE, "V", 15.0, 10.0), float)


def test_ccd_snr_howell_form():
    # Howell, Handbook of CCD Astronomy, ch. 4: with n_B sky pixels the background term is
    # weighted by (1 + n_pix/n_B); with no noise but the star's, S/N = √N*.
    assert float(ccd.ccd_snr(10000.0, 0.0, 0.0, 0.0, 20.0, gain_e_per_adu=0.0)) == pytest.approx(100.0)
    plain = float(ccd.ccd_snr(5000.0, 300.0, 10.0, 5.0, 20.0, 1.0))
    annulus = float(ccd.ccd_snr(5000.0, 300.0, 10.0, 5.0, 20.0, 1.0, sky_annulus_pixels=20.0))
    assert annulus == pytest.approx(5000.0 / math.sqrt(5000.0 + 40.0 * (310.0 + 25.0 + 0.289**2)))
    assert annulus < plain


def test_source_limited_snr_grows_as_sqrt_t():
    # Source-limited (no sky, dark, read noise): S/N = √N* ∝ √t (Howell ch. 4 limits).
    quiet = make_site(read_noise_e=0.0, dark_e_per_s=0.0, dark_sky=40.0, gain=1e-9)
    s1, s4 = ex.snr_of_exposure(quiet, "V", [12.0, 12.0], [10.0, 40.0])
    assert s4 / s1 == pytest.approx(2.0, rel=1e-6)
    n_star = s1**2  # and S/N² is the count of electrons in the aperture
    e0 = V_PHOTONS * 890.0 * quiet.telescope.collecting_area_m2 * 1e4 * 0.4
    assert n_star == pytest.approx(e0 * 10 ** (-0.4 * (12.0 + 0.15 * 1.2)) * 0.7151 * 10.0, rel=1e-3)


def test_sky_limited_snr_grows_as_sqrt_t_with_sky_term():
    # Sky-limited (faint star, bright sky, no read noise): S/N → N* / sqrt(n_pix N_S) ∝ √t.
    bright_sky = make_site(read_noise_e=0.0, dark_e_per_s=0.0, dark_sky=16.0, gain=1e-9)
    s1, s4 = ex.snr_of_exposure(bright_sky, "V", [24.0, 24.0], [100.0, 400.0])
    assert s4 / s1 == pytest.approx(2.0, rel=1e-4)


def test_read_noise_limited_snr_grows_as_t():
    # Read-noise-limited (short frame, faint star, dark sky): S/N ∝ t.
    noisy = make_site(read_noise_e=500.0, dark_e_per_s=0.0, dark_sky=24.0)
    s1, s2 = ex.snr_of_exposure(noisy, "V", [20.0, 20.0], [0.1, 0.2])
    assert s2 / s1 == pytest.approx(2.0, rel=1e-3)


# ------------------------------------------------------------------ exposure plans


def test_exposure_inverts_snr():
    g = ex.exposure_grid(SITE, "V", np.array([12.0, 16.0, 19.0, 21.0]), 50.0, round_frames=False)
    assert np.allclose(ex.snr_of_exposure(SITE, "V", [12.0, 16.0, 19.0, 21.0], g.single_frame_s), 50.0)
    assert np.all(g.snr_reached >= 50.0 * (1 - 1e-9))


def test_plan_fields_and_rounding():
    plan = ex.exposure_for_snr(SITE, "V", 18.0, 100.0)
    assert plan.snr_reached >= 100.0
    assert plan.exposure_s == pytest.approx(plan.frames * plan.frame_s)
    assert plan.elapsed_s == pytest.approx(plan.frames * (plan.frame_s + 20.0))
    assert plan.frame_s == float(ccd.round_up_frame(plan.frame_s))
    assert plan.snr_reached == pytest.approx(
        math.sqrt(plan.frames) * ex.snr_of_exposure(SITE, "V", 18.0, plan.frame_s))
    assert plan.inputs.rate_from == "throughput" and plan.inputs.zero_point_mag is None


def test_bright_star_is_split_below_the_linearity_limit():
    plan = ex.exposure_for_snr(SITE, "V", 11.0, 1500.0)
    assert plan.frames > 1 and plan.frame_s <= plan.saturation_s
    assert plan.single_frame_s > plan.saturation_s
    assert any("split into" in w for w in plan.warnings)
    # hand-made saturation time: linearity / (star × peak fraction + sky + dark)
    e0 = V_PHOTONS * 890.0 * SITE.telescope.collecting_area_m2 * 1e4 * 0.4
    star = e0 * 10 ** (-0.4 * (11.0 + 0.15 * 1.2))
    peak = float(ccd.peak_pixel_fraction(1.2 / 0.4))
    assert plan.saturation_s == pytest.approx(60000.0 / (star * peak + plan.sky_e_per_s_per_pixel + 0.002))


def test_saturation_set_by_a_brighter_star_and_by_the_shortest_exposure():
    protected = ex.exposure_for_snr(SITE, "V", 16.0, 300.0, saturation_magnitude=10.0)
    assert protected.frame_s <= protected.saturation_s and protected.frames > 1
    # so bright that even the camera's shortest exposure saturates
    blinding = ex.exposure_for_snr(SITE, "V", 3.0, 100.0)
    assert blinding.frame_s == SITE.camera.min_exposure_s
    assert any("shortest exposure" in w for w in blinding.warnings)


def test_minimum_exposure_lengthens_short_frames():
    plan = ex.exposure_for_snr(make_site(min_exposure_s=5.0), "V", 12.0, 20.0)
    assert plan.frame_s == 5.0 and plan.snr_reached > 20.0
    assert any("lengthened" in w for w in plan.warnings)


def test_zero_point_filter():
    zp = make_site(zero_point_mag=25.0)
    plan = ex.exposure_for_snr(zp, "V", 20.0, 10.0)
    assert plan.source_e_per_s == pytest.approx(100.0 * 10 ** (-0.4 * 0.15 * 1.2))
    assert plan.inputs.rate_from == "zero point" and plan.inputs.zero_point_mag == 25.0


def test_phase_smearing_flag():
    # 1 % of a 0.2 d period (the shortest RR Lyrae, Catelan & Cortés 2008) is 172.8 s
    faint = ex.exposure_for_snr(SITE, "V", 20.5, 100.0, shortest_period_d=0.2)
    assert faint.frame_s > 172.8 and any("phase smearing" in w for w in faint.warnings)
    bright = ex.exposure_for_snr(SITE, "V", 15.0, 100.0, shortest_period_d=0.2)
    assert not any("phase smearing" in w for w in bright.warnings)


def test_exposure_for_level_uses_brightest_stars_and_notes():
    from planner.light.photometry import science_level

    target = SimpleNamespace(name="Invented 1", distance_modulus_mag=15.0, ebv_mag=0.05, feh_dex=-1.6)
    hb = science_level(target, "hb", "V")
    plan = ex.exposure_for_level(SITE, "V", hb, 100.0)
    assert plan.saturation_magnitude == hb.brightest_mag < plan.magnitude
    assert plan.level == "hb" and plan.target == "Invented 1"
    turnoff = ex.exposure_for_level(SITE, "V", science_level(target, "turnoff", "V"), 30.0)
    assert any("rule of thumb" in w for w in turnoff.warnings)


def test_exposure_table_rows():
    targets = [SimpleNamespace(name="Invented 1", distance_modulus_mag=15.0, ebv_mag=0.05, feh_dex=-1.6),
               SimpleNamespace(name="Invented 2", distance_modulus_mag=None, ebv_mag=0.3, feh_dex=-1.0)]
    rows = exposure_table(SITE, targets, ["tip", "hb"], ["V"], {"tip": 200.0, "hb": 100.0})
    assert [(r.target, r.level) for r in rows] == [("Invented 1", "tip"), ("Invented 1", "hb"),
                                                   ("Invented 2", "tip"), ("Invented 2", "hb")]
    from planner.light.photometry import science_level
    single = ex.exposure_for_level(SITE, "V", science_level(
        targets[0], "hb", "V"), 100.0)
    assert rows[1].frames == single.frames and rows[1].frame_s == pytest.approx(single.frame_s)
    assert rows[2].exposure_s is None and "distance_modulus_mag" in rows[2].note


# ------------------------------------------------------------------ monotonic behaviour

MAGS = st.floats(9.0, 23.0)
SNR = st.floats(3.0, 500.0)


def _total(round_frames=False, **kw):
    g = ex.exposure_grid(SITE, "V", kw.pop("magnitude"), kw.pop("snr"), round_frames=round_frames, **kw)
    return float(g.exposure_s), int(g.frames), float(g.frame_s)


@settings(max_examples=150, deadline=None)
@given(MAGS, SNR, st.floats(0.0, 1.0), st.floats(0.0, 1.0), st.floats(0.0, 90.0), st.floats(1.0, 3.0))
def test_more_moonlight_never_shortens(magnitude, snr, k1, k2, sep, airmass):
    lo, hi = sorted((k1, k2))
    common = dict(magnitude=magnitude, snr=snr, airmass=airmass, moon_separation_deg=sep, moon_altitude_deg=40.0)
    assert _total(moon_illumination=hi, **common)[0] >= _total(moon_illumination=lo, **common)[0] * (1 - 1e-12)


@settings(max_examples=150, deadline=None)
@given(MAGS, SNR, st.floats(-90.0, 90.0), st.floats(-90.0, 90.0), st.floats(0.0, 1.0))
def test_higher_moon_never_shortens(magnitude, snr, a1, a2, illumination):
    lo, hi = sorted((a1, a2))
    common = dict(magnitude=magnitude, snr=snr, moon_illumination=illumination, moon_separation_deg=45.0)
    assert _total(moon_altitude_deg=hi, **common)[0] >= _total(moon_altitude_deg=lo, **common)[0] * (1 - 1e-12)


@settings(max_examples=150, deadline=None)
@given(MAGS, SNR, st.floats(0.5, 90.0), st.floats(0.5, 90.0), st.floats(0.0, 1.0))
def test_closer_moon_never_shortens_within_90_deg(magnitude, snr, s1, s2, illumination):
    # K&S's Rayleigh term (1.06 + cos² ρ) rises again beyond 90° (back-scattering), so the
    # claim holds for separations up to 90°.  And their f(ρ) is piecewise: below 10° the
    # aerosol term is 6.2e7 ρ⁻², which at 10° is 22 % under 10^(6.15 − ρ/40) — the published
    # formula steps down there (found by hypothesis in CI: 9° vs 10°), so both separations
    # are taken on the same side of 10°.
    assume((s1 < 10.0) == (s2 < 10.0))
    near, far = sorted((s1, s2))
    common = dict(magnitude=magnitude, snr=snr, moon_illumination=illumination, moon_altitude_deg=50.0)
    assert _total(moon_separation_deg=near, **common)[0] >= _total(moon_separation_deg=far, **common)[0] * (1 - 1e-12)


@settings(max_examples=150, deadline=None)
@given(MAGS, SNR, st.floats(1.0, 4.0), st.floats(1.0, 4.0), st.floats(0.0, 1.0), st.booleans())
def test_more_airmass_never_shortens(magnitude, snr, x1, x2, illumination, round_frames):
    lo, hi = sorted((x1, x2))
    common = dict(magnitude=magnitude, snr=snr, moon_illumination=illumination, moon_altitude_deg=30.0,
                  moon_separation_deg=60.0, round_frames=round_frames)
    t_hi, _, _ = _total(airmass=hi, **common)
    t_lo, n_lo, _ = _total(airmass=lo, **common)
    # exact plans are monotonic; rounded frame times may lose at most one rounding step per frame
    slack = 0.0 if not round_frames else (n_lo + 1) * float(ccd._step(t_lo / n_lo))
    assert t_hi >= t_lo * (1 - 1e-12) - slack


# ------------------------------------------------------------------ bad input


def _one_line(exc):
    assert isinstance(exc, InputError) and "\n" not in str(exc)


@pytest.mark.parametrize("snr", [0.0, -5.0, float("nan")])
def test_snr_goal_must_be_positive(snr):
    with pytest.raises(ex.SnrGoalError) as err:
        ex.exposure_for_snr(SITE, "V", 15.0, snr)
    assert "S/N goal" in str(err.value)
    _one_line(err.value)


def test_exposure_time_must_be_positive():
    with pytest.raises(ex.SnrGoalError):
        ex.snr_of_exposure(SITE, "V", 15.0, [10.0, 0.0])


def test_unknown_filter_names_the_site_and_its_filters():
    with pytest.raises(UnknownFilterError) as err:
        ex.exposure_for_snr(SITE, "Vj", 15.0, 10.0)
    assert "invented.toml" in str(err.value) and "V" in str(err.value) and "did you mean V" in str(err.value)
    _one_line(err.value)


def test_illumination_outside_0_1():
    with pytest.raises(ConditionsError) as err:
        ex.exposure_for_snr(SITE, "V", 15.0, 10.0, moon_illumination=1.2, moon_altitude_deg=30.0)
    assert "1.2" in str(err.value)
    _one_line(err.value)


def test_site_warnings_for_airmass_and_moon():
    plan = ex.exposure_for_snr(replace(SITE), "V", 15.0, 10.0, airmass=3.2, moon_illumination=0.5,
                               moon_altitude_deg=20.0, moon_separation_deg=10.0)
    assert any("airmass 3.2" in w for w in plan.warnings)
    assert any("closer than the site's" in w for w in plan.warnings)


def test_goal_out_of_reach_with_the_moon_on_the_target():
    # 0.5° from a full Moon (K&S ρ⁻² term) the sky fills a pixel faster than the shortest
    # exposure: no number of frames will do, and the plan says so instead of looping.
    kw = dict(moon_illumination=1.0, moon_altitude_deg=60.0, moon_separation_deg=0.5)
    grid = ex.exposure_grid(SITE, "V", [22.0, 14.0], 100.0, **kw)
    assert not grid.reachable[0] and np.isinf(grid.exposure_s[0]) and grid.frames[0] == 0
    with pytest.raises(ex.SnrGoalError, match="out of reach") as err:
        ex.exposure_for_snr(SITE, "V", 22.0, 100.0, **kw)
    _one_line(err.value)


def test_longest_frame_asked_for_caps_frames():
    plan = ex.exposure_for_snr(SITE, "V", 21.0, 100.0, max_frame_s=300.0)
    assert plan.frames > 1 and plan.frame_s <= 300.0 and plan.snr_reached >= 100.0
    assert any("at most 300 s" in w for w in plan.warnings)


def test_opposition_brightening_is_stated_near_full_moon():
    # Krisciunas & Schaefer 1991 exclude the opposition effect within about 7° of full
    # phase (from memory): illuminated fraction (1 + cos 7°)/2 = 0.99627 (Meeus 48.1; computed).
    def notes(illumination, altitude=30.0):
        plan = ex.exposure_for_snr(SITE, "V", 19.0, 30.0, moon_illumination=illumination,
                                   moon_separation_deg=60.0, moon_altitude_deg=altitude)
        return [w for w in plan.warnings if "opposition" in w]

    assert (1 + math.cos(math.radians(7.0))) / 2 == pytest.approx(0.99627, abs=1e-5)
    assert notes(0.997) and not notes(0.996) and not notes(0.997, altitude=-5.0)
