"""The standard photometric bands a site's filters stand for, and their constants.

A table of published numbers (each with its source beside it), read by the site
profile reader (which band names exist) and by the photometry core (zero points,
extinction, the Sun's colours).
"""

from __future__ import annotations

from dataclasses import dataclass

H_ERG_S = 6.62607015e-27  # Planck constant (SI exact), erg s
C_CM_S = 2.99792458e10  # speed of light, cm/s


@dataclass(frozen=True)
class Band:
    """A standard photometric band and the numbers gcplan needs about it."""

    name: str
    wavelength_eff_um: float
    bandwidth_angstrom: float
    zero_flux_lambda_erg_s_cm2_a: float | None  # f_λ of a Vega-system 0 mag star
    zero_flux_nu_jy: float | None  # or f_ν (2MASS, Cohen et al. 2003)
    r_ebv: float  # A_band / E(B−V), Schlafly & Finkbeiner 2011 Table 6
    sun_minus_v_mag: float  # (band − V) of the Sun, for the colour of moonlight
    source: str


_BESSELL = "Bessell, Castelli & Plez 1998 Table A2"
_COHEN = "Cohen, Wheaton & Megeath 2003 (2MASS)"
# λeff and f_λ (1e-11 erg s⁻¹ cm⁻² Å⁻¹): Bessell et al. 1998 Table A2.  UBVRI widths
# (FWHM, Å) are from memory (Bessell 1990 passbands) - only used with a throughput.
# 2MASS λ, Δλ and f_ν: Cohen et al. 2003.  R_band: Schlafly & Finkbeiner 2011 Table 6.
# Solar colours (from memory): U−B 0.166, B−V 0.653, V−Rc 0.352, V−Ic 0.702
# (Ramírez et al. 2012); V−J 1.198, V−H 1.484, V−Ks 1.560 (Casagrande et al. 2012).
BANDS: dict[str, Band] = {
    "U": Band("U", 0.366, 680.0, 417.5e-11, None, 4.334, 0.819, _BESSELL),
    "B": Band("B", 0.438, 980.0, 632.0e-11, None, 3.626, 0.653, _BESSELL),
    "V": Band("V", 0.545, 890.0, 363.1e-11, None, 2.742, 0.0, _BESSELL),
    "R": Band("R", 0.641, 1380.0, 217.7e-11, None, 2.169, -0.352, _BESSELL),
    "I": Band("I", 0.798, 1490.0, 112.6e-11, None, 1.505, -0.702, _BESSELL),
    "J": Band("J", 1.235, 1620.0, None, 1594.0, 0.709, -1.198, _COHEN),
    "H": Band("H", 1.662, 2510.0, None, 1024.0, 0.449, -1.484, _COHEN),
    "Ks": Band("Ks", 2.159, 2620.0, None, 666.7, 0.302, -1.560, _COHEN),
}
