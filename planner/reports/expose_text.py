"""The exposure note of ``gcplan expose``: the level, the sky, the frames to take and
what to watch, as the observer reads it."""

from __future__ import annotations

import textwrap

from planner.light.photometry import LEVEL_NAMES


def duration(seconds: float) -> str:
    """45 s, 2.5 s, 4 min 07 s, 1 h 12 min."""
    if seconds < 10:
        return f"{seconds:.3g} s"
    if seconds < 60:
        return f"{seconds:.0f} s"
    if seconds < 3600:
        m, s = divmod(int(round(seconds)), 60)
        return f"{m} min {s:02d} s"
    h, m = divmod(int(round(seconds / 60)), 60)
    return f"{h} h {m:02d} min"


def _moon_words(c) -> str:
    if c.moon_altitude_deg <= 0:
        return "Moon below the horizon"
    if c.moon_illumination == 0:
        return "new Moon"
    return (f"Moon {c.moon_illumination:.0%} lit, {c.moon_altitude_deg:.0f} deg up, "
            f"{c.moon_separation_deg:.0f} deg away")


def expose_text(plan, level, target, site, width: int = 78, cluster_light: str | None = None) -> str:
    """The observer's note: the level, the sky, the frames to take, what to watch."""
    c, f = plan.inputs, plan.filter
    paragraphs = []
    if level.level == "user":
        paragraphs.append(f"{plan.target + ': ' if plan.target else ''}a star of {f} = {plan.magnitude:.2f} "
                          "(as given).")
    else:
        thumb = " (rule of thumb)" if level.rule_of_thumb else ""
        extinction = (f"E(B-V) = {target.ebv_mag:.2f}, A_{plan.band} = {level.extinction_mag:.2f} "
                      f"(Cardelli et al. 1989, R_V = {level.r_v:.2f})")
        colours = "" if level.colour_source == "none needed" else f"; {level.colour_source}"
        if level.observed:
            implied = ("" if level.absolute_mag is None else
                       f", so M_{plan.band} = {level.absolute_mag:+.2f} at (m-M)0 = {target.distance_modulus_mag:.2f}")
            paragraphs.append(
                f"{plan.target}, {LEVEL_NAMES[level.level]} in {f}: {f} = {plan.magnitude:.2f}{thumb}, from the "
                f"{level.calibration}{colours}; {extinction}{implied}.")
        else:
            paragraphs.append(
                f"{plan.target}, {LEVEL_NAMES[level.level]} in {f}: {f} = {plan.magnitude:.2f}{thumb}. "
                f"M_{plan.band} = {level.absolute_mag:+.2f} ({level.calibration}{colours}); "
                f"(m-M)0 = {target.distance_modulus_mag:.2f}, {extinction}.")
    paragraphs.append(
        f"Sky: {f} = {plan.sky_mag_arcsec2:.2f} mag/arcsec2 at airmass {c.airmass:.2f} ({_moon_words(c)}; "
        f"dark zenith sky {c.dark_sky_mag_arcsec2:.2f}); seeing {c.seeing_fwhm_arcsec:.2f}\".")
    if plan.cluster_surface_brightness_mag_arcsec2 is not None:
        paragraphs.append(
            f"Cluster light: {f} = {plan.cluster_surface_brightness_mag_arcsec2:.2f} mag/arcsec2 at the star "
            f"({plan.cluster_e_per_s_per_pixel:.3g} e-/s per pixel), {cluster_light}.")
    elif cluster_light:
        paragraphs.append(f"Cluster light: {cluster_light}.")
    paragraphs.append(
        f"Take {plan.frames} x {plan.frame_s:g} s in {f}: {duration(plan.exposure_s)} on the star, "
        f"{duration(plan.elapsed_s)} with readout; S/N {plan.snr_reached:.0f} (goal {plan.snr_goal:g}).")
    if plan.saturation_s is not None:
        who = "the star" if level.level == "user" else "the level's brightest stars"
        if plan.saturation_magnitude != plan.magnitude:
            who += f" ({f} = {plan.saturation_magnitude:.2f})"
        paragraphs.append(f"Saturation: the peak pixel of {who} reaches the linearity limit "
                          f"({c.linearity_limit_e:.0f} e-) after {duration(plan.saturation_s)}.")
    paragraphs.append(
        f"Aperture radius {plan.aperture_radius_arcsec:.2f}\" "
        f"({plan.aperture_radius_arcsec / c.pixel_scale_arcsec:.1f} px) holds {plan.enclosed_fraction:.0%} "
        f"of the light ({plan.psf} profile); star {plan.source_e_per_s:.3g} e-/s, "
        f"sky {plan.sky_e_per_s_per_pixel:.3g} e-/s "
        f"per pixel, peak pixel {plan.peak_fraction:.1%} of the star.")
    paragraphs += [f"Note: {w}." for w in plan.warnings]
    paragraphs.append(f"Site {site.name}; twilight is not included (astronomical night assumed).")
    return "\n".join(_fill(p, width) for p in paragraphs)


def _fill(paragraph: str, width: int) -> str:
    # keep "E(B-V) = 0.04" and "goal 300" on one line: join them with no-break spaces while wrapping
    glued = paragraph.replace(" = ", "\xa0=\xa0").replace("(goal ", "(goal\xa0")
    return textwrap.fill(glued, width=width, subsequent_indent="  ").replace("\xa0", " ")
