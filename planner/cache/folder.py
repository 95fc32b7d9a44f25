"""Where gcplan keeps its caches between runs: one root for all of them."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import IO, Callable


def cache_root() -> Path | None:
    """``$GCPLAN_CACHE_DIR`` if set, else the platform's user cache folder (platformdirs);
    None when ``GCPLAN_NO_CACHE`` is set to anything but ``0`` (every cache switched off:
    everything is computed, nothing is read or written)."""
    if os.environ.get("GCPLAN_NO_CACHE", "").strip() not in ("", "0"):
        return None
    root = os.environ.get("GCPLAN_CACHE_DIR", "").strip()
    if root:
        return Path(root)
    from platformdirs import user_cache_dir

    return Path(user_cache_dir("gcplan", appauthor=False))


def save_whole(path: Path, write: Callable[[IO[bytes]], None]) -> bool:
    """Write a cache file whole or not at all: ``write`` fills a temporary file in the same
    folder, which then replaces ``path`` (``os.replace`` is atomic, so a reader or a second
    writer never sees half a file).  A folder that cannot be made or written, or a full
    disk, is no error: False, and the run goes on without saving (a cache is an
    optimisation)."""
    tmp = None
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=f".{path.stem}-", suffix=".tmp", dir=path.parent)
        with os.fdopen(fd, "wb") as f:
            write(f)
        os.replace(tmp, path)
        tmp = None
        return True
    except OSError:
        return False
    finally:
        if tmp is not None:
            try:
                os.unlink(tmp)
            except OSError:
                pass
