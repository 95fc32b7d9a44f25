"""Error types for bad input.

Every kind of bad input has its own exception, all subclasses of
:class:`InputError` (itself a ``ValueError``), so the command line can turn any
of them into one line on stderr and exit status 2.  Messages name the file, the
field and the bad value, and say what would be valid.
"""

from __future__ import annotations


class InputError(ValueError):
    """Bad input from a user: a file, a field or a command-line value.

    Parameters
    ----------
    message : str
        What is wrong and what would be valid.
    source : str, optional
        The file (or option) the bad value came from; prefixed to the message.
    """

    def __init__(self, message: str, source: str | None = None):
        self.source = source
        self.detail = message
        super().__init__(f"{source}: {message}" if source else message)


class SiteProfileError(InputError):
    """A site profile that is missing, unreadable or invalid."""


class TargetListError(InputError):
    """A target list (or a target name) that cannot be used."""


class CatalogError(InputError):
    """A problem with the bundled cluster catalog or a lookup in it."""


class DateError(InputError):
    """A date, time or date range that cannot be parsed or is out of order."""


class ConstraintError(InputError):
    """An observing constraint with an impossible value."""


class CampaignError(InputError):
    """A campaign file that is missing, unreadable or invalid, or goals that cannot be met."""


class OutputError(InputError):
    """An output path that cannot be written."""
