"""Checks of planner.light.cluster_light: the King (1962) profile and the cluster light
in exposures.  Sources beside each check; see tests/REFERENCES.md, "Cluster light"."""

from __future__ import annotations

import json
import math
from types import SimpleNamespace

import numpy as np
import pytest

from planner.cli import main
from planner.inputs.catalog import load_catalog
from planner.inputs.sites import resolve_site
from planner.inputs.targets import targets_from_names
from planner.light import cluster_light as cl
from planner.light.exposure import exposure_for_snr


def _king_1962(r, rc, rt):
    # King 1962 (AJ 67, 471) eq. 14, written out: f = k [1/√(1 + (r/r_c)²) − 1/√(1 + (r_t/r_c)²)]²
    return (1 / math.sqrt(1 + (r / rc) ** 2) - 1 / math.sqrt(1 + (rt / rc) ** 2)) ** 2 if r < rt else 0.0


def test_king_profile_as_king_wrote_it():
    rc, c, mu0 = 0.36, 2.07, 14.38  # 47 Tuc, Harris 2010 Part III (read)
    rt = rc * 10**c
    for r in (0.0, 0.1, 0.36, 1.0, 3.17, 20.0, 42.0):
        expected = mu0 - 2.5 * math.log10(_king_1962(r, rc, rt) / _king_1962(0.0, rc, rt))
        assert float(cl.king_surface_brightness(r, mu0, rc, c)) == pytest.approx(expected, abs=1e-9)
    assert math.isinf(float(cl.king_surface_brightness(rt * 1.01, mu0, rc, c)))
    # 47 Tuc at its half-light radius (3.17'): 19.27 mag/arcsec² (computed); the mean
    # within r_h from Harris V_t = 3.95 is 17.34 (computed), brighter as it must be.
    mean_inside = 3.95 + 2.5 * math.log10(2 * math.pi * (3.17 * 60) ** 2)
    assert mean_inside == pytest.approx(17.34, abs=0.01)
    assert float(cl.king_surface_brightness(3.17, mu0, rc, c)) == pytest.approx(19.27, abs=0.01)


def _profile_totals():
    from scipy.integrate import quad
    from scipy.optimize import brentq

    rows = []
    for e in load_catalog().entries:
        values = (e.central_sb_v_mag_arcsec2, e.core_radius_arcmin, e.king_concentration, e.v_mag,
                  e.half_light_radius_arcmin)
        if None in values or e.king_concentration >= cl.NOMINAL_COLLAPSED_C:
            continue
        rc, c = e.core_radius_arcmin, e.king_concentration
        rt = rc * 10**c

        def light(radius, rc=rc, c=c):  # arcsec² × I/I(0), r in arcmin
            return quad(lambda r: 2 * math.pi * r * 3600 * cl.king_relative_intensity(r, rc, c), 0, radius,
                        limit=200, points=[rc])[0]

        total = light(rt)
        r_half = brentq(lambda radius: light(radius) - total / 2, 1e-4, rt)
        rows.append((e.central_sb_v_mag_arcsec2 - 2.5 * math.log10(total) - e.v_mag,
                     r_half / e.half_light_radius_arcmin))
    return np.array(rows)


def test_king_profile_reproduces_harris_total_light_and_half_light_radius():
    # Harris 2010's V_t and r_h are measured apart from μ_V, r_c and c: integrating the
    # profile must give them back.  Over the 118 clusters not core-collapsed (computed):
    # median ΔV +0.15 mag, quartiles −0.06..+0.37; median r_h ratio 1.00, quartiles
    # 0.86..1.05.
    rows = _profile_totals()
    assert len(rows) > 100
    dv, ratio = rows.T
    assert abs(np.median(dv)) < 0.25 and np.percentile(dv, 75) - np.percentile(dv, 25) < 0.6
    assert np.median(ratio) == pytest.approx(1.0, abs=0.1)


def test_cluster_surface_brightness_other_bands_and_missing_values():
    (m13,) = targets_from_names(["M 13"], load_catalog())
    v, _ = cl.cluster_surface_brightness(m13, "V", 1.0)
    i, _ = cl.cluster_surface_brightness(m13, "I", 1.0)
    assert i == pytest.approx(v - 0.86)  # Harris 2010 integrated V−I = 0.86 (read)
    with pytest.raises(cl.ClusterLightError, match="no integrated Ks - V colour"):
        cl.cluster_surface_brightness(m13, "Ks", 1.0)
    with pytest.raises(cl.ClusterLightError, match="no King profile"):
        cl.cluster_surface_brightness(SimpleNamespace(name="X"), "V", 1.0)
    (m30,) = targets_from_names(["M 30"], load_catalog())  # core-collapsed in Harris (flag c)
    assert "core-collapsed" in cl.cluster_surface_brightness(m30, "V", 1.0)[1][0]


def test_cluster_light_lengthens_a_faint_star_near_the_centre():
    # Sky-limited, the background rises by the cluster's light: at 47 Tuc's r_h in V
    # (19.27 against a 21.4 sky) a V = 21 star needs several times longer.
    site = resolve_site("demo")
    plain = exposure_for_snr(site, "V", 21.0, 30.0, round_frames=False)
    lit = exposure_for_snr(site, "V", 21.0, 30.0, round_frames=False, cluster_sb_mag_arcsec2=19.27)
    assert lit.cluster_surface_brightness_mag_arcsec2 == 19.27
    assert lit.cluster_e_per_s_per_pixel / plain.sky_e_per_s_per_pixel == pytest.approx(
        10 ** (-0.4 * (19.27 + site.sky.extinction_mag_per_airmass["V"] * 1.2 - plain.sky_mag_arcsec2)), rel=1e-9)
    assert lit.exposure_s > 3 * plain.exposure_s
    assert lit.saturation_s < plain.saturation_s


def _run(argv, capsys):
    status = main(argv)
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def test_expose_field_radius_json_and_text(capsys):
    base = ["expose", "--site", "demo", "--filter", "V", "--target", "47 Tuc", "--level", "turnoff", "--snr", "100"]
    status, out, _ = _run(base + ["--json"], capsys)
    data = json.loads(out)
    assert status == 0 and data["cluster_surface_brightness_mag_arcsec2"] is None
    assert "not included" in data["cluster_light"]
    status, out, _ = _run(base + ["--json", "--field-radius", "3.17"], capsys)
    lit = json.loads(out)
    assert lit["cluster_surface_brightness_mag_arcsec2"] == pytest.approx(19.27, abs=0.01)
    assert lit["exposure_s"] > data["exposure_s"] and "King (1962)" in lit["cluster_light"]
    status, out, _ = _run(base, capsys)
    assert "crowding and the cluster's own light are not included" in " ".join(out.split())
    status, _, err = _run(["expose", "--site", "demo", "--filter", "V", "--mag", "20", "--snr", "10",
                           "--field-radius", "2"], capsys)
    assert status == 2 and err.startswith("gcplan: error:") and "--field-radius needs --target" in err
