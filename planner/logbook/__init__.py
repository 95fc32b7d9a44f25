"""The observing log: the SQLite store and FITS header ingest; the campaign nights' cache on disk.

A storage shell: it may import the core and the inputs (the catalog, for names),
never the commands, reports or the app.
"""

from __future__ import annotations

from pathlib import Path

#: Name of the default logbook file (in the user's data folder, or beside a campaign file).
DEFAULT_LOGBOOK_NAME = "logbook.sqlite"


def default_logbook_path(campaign_file: str | Path | None = None) -> Path:
    """Beside the campaign file if one is given, else in the user's data folder (platformdirs)."""
    if campaign_file is not None:
        return Path(campaign_file).with_name(DEFAULT_LOGBOOK_NAME)
    from platformdirs import user_data_path

    return user_data_path("gcplan", appauthor=False) / DEFAULT_LOGBOOK_NAME
