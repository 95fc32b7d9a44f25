"""Where gcplan keeps its caches between runs: one root for all of them."""

from __future__ import annotations

import os
from pathlib import Path


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
