"""A campaign's exposure table: every target × level × filter at one set of conditions.

One vectorised :func:`~planner.light.exposure.exposure_grid` per filter; a level
a target cannot give becomes a row that says why.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from planner.light.photometry import LEVEL_NAMES, LevelError, ScienceLevel, science_level


@dataclass(frozen=True)
class ExposureRow:
    """One line of a campaign's exposure table (``None`` where the level is unavailable)."""

    target: str
    level: str
    filter: str
    band: str
    snr_goal: float
    magnitude: float | None
    frames: int | None
    frame_s: float | None
    exposure_s: float | None
    elapsed_s: float | None
    snr_reached: float | None
    saturation_s: float | None
    note: str = ""


def exposure_table(site, targets, levels, filters, snr, **conditions) -> list[ExposureRow]:
    """Exposures for every target × level × filter at one set of conditions.

    ``snr`` is one goal or a mapping level → goal; ``conditions`` are those of
    :func:`exposure_grid` (airmass, seeing, Moon).  A level a target cannot give (no
    distance, say) becomes a row with ``None`` values and the reason in ``note``.
    One vectorised evaluation per filter; rows come target by target, then level,
    then filter, in the order given.
    """
    # Imported here: planner.light.exposure offers this table under its own name too.
    from planner.light.exposure import MAX_FRAMES, band_setup, exposure_grid

    goals = snr if isinstance(snr, dict) else {lv: snr for lv in levels}
    cells: dict[tuple[int, int, int], ExposureRow] = {}
    for fi, filter_name in enumerate(filters):
        setup = band_setup(site, filter_name)
        found = []  # (target index, level index, ScienceLevel or the reason it is unavailable)
        for ti, target in enumerate(targets):
            for li, lv in enumerate(levels):
                try:
                    found.append((ti, li, science_level(target, lv, setup.band)))
                except LevelError as exc:
                    found.append((ti, li, exc.detail))
        ok = [sl for _, _, sl in found if isinstance(sl, ScienceLevel)]
        if ok:
            grid = exposure_grid(site, filter_name, np.array([sl.magnitude for sl in ok]),
                                 np.array([goals[sl.level] for sl in ok], dtype=float),
                                 saturation_magnitude=np.array([sl.brightest_mag for sl in ok]), **conditions)
        j = 0
        for ti, li, result in found:
            name, lv = getattr(targets[ti], "name", str(targets[ti])), levels[li]
            if not isinstance(result, ScienceLevel):
                cells[ti, li, fi] = ExposureRow(name, lv, filter_name, setup.band, float(goals[lv]), None, None,
                                                None, None, None, None, None, result)
                continue
            if not grid.reachable[j]:
                cells[ti, li, fi] = ExposureRow(
                    name, lv, filter_name, setup.band, float(goals[lv]), result.magnitude, None, None, None, None,
                    None, float(grid.saturation_s[j]), f"S/N out of reach (over {MAX_FRAMES:,} frames needed)")
                j += 1
                continue
            n, frame = int(grid.frames[j]), float(grid.frame_s[j])
            notes = [f"{LEVEL_NAMES[lv]}: {result.calibration}"]
            if grid.split[j]:
                notes.append("split at the saturation limit")
            if grid.saturated_at_shortest[j]:
                notes.append("saturates at the shortest exposure")
            cells[ti, li, fi] = ExposureRow(
                name, lv, filter_name, setup.band, float(goals[lv]), result.magnitude, n, frame, n * frame,
                n * (frame + setup.readout_s), float(grid.snr_reached[j]), float(grid.saturation_s[j]),
                "; ".join(notes))
            j += 1
    return [cells[key] for key in sorted(cells)]
