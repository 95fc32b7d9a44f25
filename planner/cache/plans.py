"""The campaign nights' cache on disk (:mod:`planner.scheduling.plan_cache` is the core's side).

One folder per campaign file, under gcplan's cache root (:func:`planner.cache.folder.cache_root`:
``GCPLAN_CACHE_DIR`` when set, tests and benchmarks use it for a clean one; else the user's
cache folder; ``GCPLAN_NO_CACHE=1`` keeps the nights in memory only), named by a hash of the file's full path; in it one JSON
file per night, ``night-NNN.json``, holding the core's entry with

* the campaign key it was made under (the hash of everything that shaped the night),
* this store's format and a stamp of the code that made it (gcplan's modules, by
  path, size and modification time, and the versions of the libraries whose numbers
  enter a plan).

A file with another key, format or stamp, or one that cannot be read (cut short,
damaged, not JSON) is ignored: the night is planned again and the file replaced.
Files are written whole to a temporary file in the same folder and moved into
place (``os.replace``), so a reader never sees half a file and two processes
writing at once leave one whole file.  Failing to write (read-only disk) only
loses the saving.  Entries are JSON and rebuilt only into gcplan's own data
classes, so a file put there by someone else cannot run code.
"""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

#: Layout of a night's file.
STORE_FORMAT = 1
#: Libraries whose versions enter the code stamp (their numbers shape a plan): module, distribution.
_LIBRARIES = (("numpy", "numpy"), ("scipy", "scipy"), ("astropy", "astropy"), ("erfa", "pyerfa"),
              ("astropy_iers_data", "astropy_iers_data"))
_stamp: str | None = None


def code_stamp() -> str:
    """A stamp of the code that plans: gcplan's modules and the libraries' versions."""
    global _stamp  # once per process: the code does not change under it
    if _stamp is None:
        from importlib.util import find_spec

        h = hashlib.sha256()
        # os.walk and os.stat rather than Path.rglob: the same lines in the same order, in a
        # third of the time (this runs before a process's first plan, the app's first screen).
        package = os.path.dirname(os.path.dirname(os.path.realpath(__file__)))
        found = []
        for folder, dirs, files in os.walk(package):
            dirs[:] = [d for d in dirs if d != "__pycache__"]  # compiled files: no .py in them
            rel = os.path.relpath(folder, package)
            parts = () if rel == "." else tuple(rel.split(os.sep))
            found += [(parts + (name,), os.path.join(folder, name)) for name in files if name.endswith(".py")]
        for parts, path in sorted(found):
            st = os.stat(path)
            h.update(f"{'/'.join(parts)} {st.st_size} {st.st_mtime_ns}\n".encode())
        # The libraries' installed versions, from their dist-info folders' names (without
        # importing them, and faster than importlib.metadata).
        listed: dict = {}
        for module, dist in _LIBRARIES:
            spec = find_spec(module)
            where = os.path.dirname(os.path.dirname(spec.origin)) if spec is not None and spec.origin else None
            if where is not None and where not in listed:
                listed[where] = sorted(os.listdir(where)) if os.path.isdir(where) else []
            names = [d for d in listed[where] if d.startswith(f"{dist}-") and d.endswith(".dist-info")
                     and len(d) >= len(dist) + 11] if where is not None else []  # "{dist}-*.dist-info"
            h.update(f"{module} {names}\n".encode())
        _stamp = h.hexdigest()
    return _stamp


class FilePlanCache:
    """The core's cache protocol (``get(key, index)``, ``put(key, index, data)``) over one
    folder of JSON files; what it read or wrote is kept in memory too."""

    def __init__(self, folder: Path | None):
        self.folder = None if folder is None else Path(folder)  # None: in memory only
        self._memory: dict = {}

    def _path(self, index: int) -> Path:
        return self.folder / f"night-{int(index):03d}.json"

    def get(self, key: str, index: int):
        if (key, index) in self._memory:
            return self._memory[(key, index)]
        if self.folder is None:
            return None
        try:
            data = json.loads(self._path(index).read_text(encoding="utf-8"))
        except (OSError, ValueError):  # missing, unreadable, cut short, not JSON
            return None
        if not isinstance(data, dict) or data.get("format") != STORE_FORMAT or data.get("code") != code_stamp() \
                or data.get("key") != key:
            return None
        self._memory[(key, index)] = data.get("entry")
        return data.get("entry")

    def put(self, key: str, index: int, data: dict) -> None:
        self._memory[(key, index)] = data
        if self.folder is None:
            return
        text = json.dumps({"format": STORE_FORMAT, "code": code_stamp(), "key": key, "entry": data},
                          separators=(",", ":"))
        from planner.cache.folder import save_whole

        save_whole(self._path(index), lambda f: f.write(text.encode("utf-8")))  # unsaved: the same plan


def plan_cache_for(campaign_source: str | os.PathLike) -> FilePlanCache:
    """The store of the campaign file ``campaign_source``."""
    from planner.cache.folder import cache_root

    root = cache_root()
    if root is None:
        return FilePlanCache(None)
    where = str(Path(campaign_source).expanduser().resolve())
    return FilePlanCache(root / "plans" / hashlib.sha256(where.encode()).hexdigest()[:20])
