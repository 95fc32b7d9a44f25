"""The cluster's own unresolved light at a field radius: a King (1962) profile.

Pure computation.  Inside the half-light radius of a concentrated cluster, the light
of its unresolved stars outshines the night sky; an exposure for one star there must
count it as background.

The model
---------
* King 1962 (AJ 67, 471), eq. 14: I(r) = k [1/√(1 + (r/r_c)²) − 1/√(1 + (r_t/r_c)²)]²
  for r < r_t, zero beyond, with the tidal radius r_t = r_c 10^c.
* Normalised to the observed central surface brightness μ_V(0):
  μ_V(r) = μ_V(0) − 2.5 log10(I(r) / I(0)).
* μ_V(0), r_c and c are Harris 1996 (2010 edition) Part III's, as the bundled catalog
  carries them.  Harris's μ_V is as observed (with the foreground extinction in it), so
  other bands follow from the observed integrated colours: μ_band = μ_V + (band − V).
  The near-IR has no integrated colour in the catalog.
* Core-collapsed clusters carry a nominal c = 2.5 and no King core: their profile is
  flagged as uncertain.  The cluster light is smooth: crowding (the resolved neighbours
  inside the aperture) is not included.
"""

from __future__ import annotations

import math

import numpy as np

from planner.errors import InputError

KING_SOURCE = "King (1962) profile, Harris 2010 mu_V, r_c, c"
# King's concentration is 2.5 only where Harris marks a collapsed core (the nominal value).
NOMINAL_COLLAPSED_C = 2.5


class ClusterLightError(InputError):
    """A cluster without the structural numbers or colour the cluster light needs."""


def king_relative_intensity(radius_arcmin, core_radius_arcmin: float, concentration: float):
    """I(r) / I(0) of a King (1962) profile; 0 at and beyond the tidal radius."""
    r = np.asarray(radius_arcmin, dtype=float)
    rc = float(core_radius_arcmin)
    edge = 1.0 / math.sqrt(1.0 + 10.0 ** (2.0 * concentration))  # r_t / r_c = 10^c
    inner = np.clip(1.0 / np.sqrt(1.0 + (r / rc) ** 2) - edge, 0.0, None)
    return inner**2 / (1.0 - edge) ** 2


def king_surface_brightness(radius_arcmin, central_mag_arcsec2: float, core_radius_arcmin: float,
                            concentration: float):
    """μ(r) = μ(0) − 2.5 log10(I(r)/I(0)), mag/arcsec²; +inf beyond the tidal radius."""
    rel = king_relative_intensity(radius_arcmin, core_radius_arcmin, concentration)
    with np.errstate(divide="ignore"):
        return central_mag_arcsec2 - 2.5 * np.log10(rel)


def cluster_surface_brightness(target, band: str, radius_arcmin: float) -> tuple[float, tuple[str, ...]]:
    """The cluster's surface brightness in ``band`` at ``radius_arcmin`` from its centre.

    Returns ``(mag_arcsec2, notes)``; ``inf`` beyond the tidal radius.  ``target`` needs
    ``central_sb_v_mag_arcsec2``, ``core_radius_arcmin``, ``king_concentration`` and, out
    of V, ``integrated_colours`` (band, band − V) (e.g. a catalog
    :class:`planner.model.target.Target`).
    """
    name = getattr(target, "name", None)
    r = float(radius_arcmin)
    if not (math.isfinite(r) and r >= 0.0):
        raise ClusterLightError(f"field radius must be a number of arcmin >= 0 (got {radius_arcmin!r})")
    mu0, rc, c = (getattr(target, a, None) for a in ("central_sb_v_mag_arcsec2", "core_radius_arcmin",
                                                      "king_concentration"))
    if any(v is None or (isinstance(v, float) and math.isnan(v)) for v in (mu0, rc, c)):
        raise ClusterLightError(f"target {name!r} has no King profile (central mu_V, core radius and "
                                "concentration, Harris 2010 Part III): its cluster light cannot be estimated")
    colour = dict(getattr(target, "integrated_colours", ()) or ()).get(band)
    if colour is None:
        raise ClusterLightError(f"target {name!r} has no integrated {band} - V colour: its cluster light "
                                f"cannot be put in {band}")
    notes = []
    if c >= NOMINAL_COLLAPSED_C:
        notes.append("core-collapsed cluster: its King profile (c = 2.5) is nominal, the cluster light uncertain")
    mu = float(king_surface_brightness(r, mu0, rc, c)) + colour
    if not math.isfinite(mu):
        notes.append(f"{r:g} arcmin lies beyond the tidal radius ({rc * 10.0**c:.1f} arcmin): no cluster light")
    return mu, tuple(notes)
