"""The Sun and Moon samples of each calendar year, kept in the user's cache folder.

:func:`planner.sky.ephemeris.build_ephemeris` makes the Sun, the Moon and the
equation of the equinoxes with astropy on every run (about a quarter of a
second for a semester); they depend on time alone, not on the site, so a
year's samples are saved here once and read back by every later run, at any
site.  The core stays pure: it is handed a :class:`SunMoonStore` and calls its
``load``/``save``; it never knows where the files are.

* Where: ``$GCPLAN_CACHE_DIR`` if set, else the platform's user cache folder
  (platformdirs), ``…/gcplan/sun-moon/``.  ``GCPLAN_NO_CACHE=1`` switches the
  cache off (everything is computed, nothing written).
* One ``.npz`` file a year (about 50 kB), named by year and sample step.
* Written to a temporary file in the same folder, then renamed over the final
  name (``os.replace`` is atomic): two processes writing the same year at once
  leave one whole file, never a mixed or half-written one.
* A file that does not load, lacks a field, holds the wrong number of samples
  or non-finite values, or was made by another gcplan, astropy, pyerfa or file
  format version is ignored, and the year is made again and saved over it.
* A folder that cannot be made or written is no error: the year is computed
  as if there were no cache, silently (a cache is an optimisation).
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np

#: Bumped whenever what the files hold, or how it is computed, changes.
FORMAT_VERSION = 1

#: The fields of a year (planner.sky.ephemeris.SAMPLE_FIELDS), listed here too so that
#: reading a file needs nothing of the core.
FIELDS = ("sun_ra_deg", "sun_dec_deg", "sun_distance_km", "moon_ra_deg", "moon_dec_deg",
          "moon_distance_km", "eqeq_deg")


def versions() -> dict[str, object]:
    """What the samples were made with: a file made with anything else is not used."""
    from planner import __version__

    return {"format": FORMAT_VERSION, "gcplan": __version__, "astropy": package_version("astropy"),
            "pyerfa": package_version("erfa")}


def package_version(name: str) -> str:
    """An installed package's version, read from its generated ``_version.py`` without importing
    the package: ``import astropy`` alone costs about 50 ms, a sixth of a warm ``gcplan night``
    that otherwise never needs it.  Falls back on importing it."""
    import importlib.util
    import re

    try:
        spec = importlib.util.find_spec(name)
        folder = Path(spec.submodule_search_locations[0])
        text = (folder / "_version.py").read_text(encoding="utf-8")
        found = re.search(r"^(?:__version__\s*=\s*)?version\s*=\s*['\"]([^'\"]+)['\"]", text, re.M)
        if found:
            return found[1]
    except (AttributeError, ImportError, OSError, TypeError, IndexError, ValueError):
        pass
    import importlib

    return str(importlib.import_module(name).__version__)


def cache_folder() -> Path | None:
    """The folder of the Sun and Moon samples, or None when the cache is switched off."""
    from planner.cache.folder import cache_root

    root = cache_root()
    return None if root is None else root / "sun-moon"


class SunMoonStore:
    """Years of samples as files in ``folder`` (see the module's notes)."""

    def __init__(self, folder: Path, stamp: dict[str, object] | None = None):
        self.folder = Path(folder)
        self._stamp = stamp
        # Years this store has read, kept with their file's size and time stamp: a process that
        # plans many nights (the app, a benchmark) reads each file once, and again only when
        # the file changed (another process, another version wrote it).
        self._held: dict[tuple[int, float], tuple[tuple[int, int], dict[str, np.ndarray]]] = {}

    @property
    def stamp(self) -> dict[str, object]:
        if self._stamp is None:
            self._stamp = versions()
        return self._stamp

    def path(self, year: int, step_d: float) -> Path:
        return self.folder / f"{year:04d}-step{step_d * 1440.0:g}min.npz"

    def load(self, year: int, step_d: float) -> dict[str, np.ndarray] | None:
        """The year's samples, or None when there is no usable file."""
        try:
            st = os.stat(self.path(year, step_d))
        except OSError:
            return None
        seen = (st.st_size, st.st_mtime_ns)
        held = self._held.get((year, step_d))
        if held is None or held[0] != seen:
            samples = self._read(year, step_d)
            if samples is None:
                return None
            held = self._held[(year, step_d)] = (seen, samples)
        return {name: a.copy() for name, a in held[1].items()}

    def _read(self, year: int, step_d: float) -> dict[str, np.ndarray] | None:
        try:
            # Opened here, not by np.load: it leaves the file open when it is no zip.
            with open(self.path(year, step_d), "rb") as f, np.load(f, allow_pickle=False) as data:
                meta = json.loads(str(data["meta"]))
                if meta != {**self.stamp, "year": year, "step_d": step_d}:
                    return None
                samples = {name: np.array(data[name], dtype=float) for name in FIELDS}
        except Exception:  # missing, unreadable, truncated, not an npz, a field missing: make it again
            return None
        sizes = {a.shape for a in samples.values()}
        if len(sizes) != 1 or len(next(iter(sizes))) != 1:
            return None
        if not all(np.isfinite(a).all() for a in samples.values()):
            return None
        return samples

    def save(self, year: int, step_d: float, samples: dict[str, np.ndarray]) -> None:
        """Write the year's file whole, or not at all."""
        meta = json.dumps({**self.stamp, "year": year, "step_d": step_d})
        from planner.cache.folder import save_whole

        # unsaved (a read-only or full disk): the run goes on with the samples it computed
        save_whole(self.path(year, step_d), lambda f: np.savez(
            f, meta=np.array(meta), **{k: np.asarray(samples[k], dtype=float) for k in FIELDS}))


def default_store() -> SunMoonStore | None:
    """The store the commands use: None when the cache is switched off."""
    folder = cache_folder()
    return None if folder is None else SunMoonStore(folder)
