"""A target: one cluster with the published facts the plans need.

Built by :mod:`planner.inputs.targets` from a target list or the bundled catalog.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class Target:
    name: str
    ra_deg: float  # ICRS
    dec_deg: float
    distance_modulus_mag: float | None = None  # true, (m-M)_0
    distance_kpc: float | None = None
    ebv_mag: float | None = None  # E(B-V)
    feh_dex: float | None = None  # [Fe/H]
    half_light_radius_arcmin: float | None = None
    v_mag: float | None = None  # integrated V
    v_hb_mag: float | None = None  # observed V of the horizontal branch, if measured
    v_hb_source: str | None = None  # where v_hb_mag comes from
    central_sb_v_mag_arcsec2: float | None = None  # King (1962) profile: observed central mu_V,
    core_radius_arcmin: float | None = None  # core radius r_c
    king_concentration: float | None = None  # and c = log10(r_t / r_c)
    integrated_colours: tuple[tuple[str, float], ...] = ()  # (band, band - V) of the cluster's light
    r_v: float | None = None  # A_V / E(B-V) towards it; None: the law's mean 3.1
    priority: float = 1.0  # > 0, larger is more important
    catalog_name: str | None = None  # primary name in the bundled catalog, if it is there
