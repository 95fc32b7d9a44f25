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
    ccm_a: float  # CCM89 a(x) at λeff: A_band / A_V = a + b / R_V
    ccm_b: float  # CCM89 b(x) at λeff
    sun_minus_v_mag: float  # (band − V) of the Sun, for the colour of moonlight
    source: str

    def extinction_per_ebv(self, r_v: float = 3.1) -> float:
        """A_band / E(B−V) = (A_band / A_V)(R_V) × R_V = a R_V + b (Cardelli et al. 1989)."""
        return self.ccm_a * r_v + self.ccm_b


DEFAULT_R_V = 3.1  # the diffuse interstellar medium's mean, as the catalog's reddening scale assumes
EXTINCTION_LAW = "Cardelli, Clayton & Mathis 1989 at each band's effective wavelength"

_BESSELL = "Bessell, Castelli & Plez 1998 Table A2"
_COHEN = "Cohen, Wheaton & Megeath 2003 (2MASS)"
# λeff and f_λ (1e-11 erg s⁻¹ cm⁻² Å⁻¹): Bessell et al. 1998 Table A2.  UBVRI widths
# (FWHM, Å) are from memory (Bessell 1990 passbands) - only used with a throughput.
# 2MASS λ, Δλ and f_ν: Cohen et al. 2003.
# Extinction: Cardelli, Clayton & Mathis 1989 (ApJ 345, 245) eqs. 2-3, a(x) and b(x)
# computed from their polynomials at x = 1/λeff (µm⁻¹; optical 1.1-3.3, infrared 0.3-1.1),
# so A/E(B−V) = a R_V + b: V 3.129, I 1.861, Ks 0.363 at R_V = 3.1.  This law is on
# the classical reddening scale of the catalog (Harris: (m−M)_V − 3.1 E(B−V) = (m−M)_0);
# Schlafly & Finkbeiner's (2011) coefficients are for SFD-map reddening and are not.
# Single-wavelength values: broad-band averages over a stellar spectrum differ by a few %.
# Solar colours (from memory): U−B 0.166, B−V 0.653, V−Rc 0.352, V−Ic 0.702
# (Ramírez et al. 2012); V−J 1.198, V−H 1.484, V−Ks 1.560 (Casagrande et al. 2012).
BANDS: dict[str, Band] = {
    "U": Band("U", 0.366, 680.0, 417.5e-11, None, 0.9616, 1.8384, 0.819, _BESSELL),
    "B": Band("B", 0.438, 980.0, 632.0e-11, None, 0.9988, 1.0325, 0.653, _BESSELL),
    "V": Band("V", 0.545, 890.0, 363.1e-11, None, 1.0025, 0.0215, 0.0, _BESSELL),
    "R": Band("R", 0.641, 1380.0, 217.7e-11, None, 0.9233, -0.2540, -0.352, _BESSELL),
    "I": Band("I", 0.798, 1490.0, 112.6e-11, None, 0.7833, -0.5672, -0.702, _BESSELL),
    "J": Band("J", 1.235, 1620.0, None, 1594.0, 0.4086, -0.3752, -1.198, _COHEN),
    "H": Band("H", 1.662, 2510.0, None, 1024.0, 0.2533, -0.2326, -1.484, _COHEN),
    "Ks": Band("Ks", 2.159, 2620.0, None, 666.7, 0.1663, -0.1526, -1.560, _COHEN),
}
