"""Where the bundled data lives: the site profiles and the targets folder.

In a wheel they are force-included under ``planner/_data``; in a source
checkout (editable install, tests) they sit at the repository root.
"""

from __future__ import annotations

from pathlib import Path

# This file is planner/inputs/resources.py: the package is two levels up.
_PACKAGE_DIR = Path(__file__).resolve().parent.parent


def data_dir(name: str) -> Path:
    """Folder of bundled data ``name`` (``"site_profiles"`` or ``"targets"``)."""
    installed = _PACKAGE_DIR / "_data" / name
    if installed.is_dir():
        return installed
    return _PACKAGE_DIR.parent / name


def site_profiles_dir() -> Path:
    return data_dir("site_profiles")


def targets_dir() -> Path:
    return data_dir("targets")


def catalog_path() -> Path:
    """The bundled Milky Way globular cluster catalog (ECSV)."""
    return targets_dir() / "globular_clusters.ecsv"
