"""Reading a user's input file: a regular file, of a size an input file can have.

A FIFO, a terminal or a device (``/dev/zero``) given as an input would block forever
or never end; they are refused before they are opened, in one line.
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

from planner.errors import InputError
from planner.inputs.tomlcheck import error as _error

#: Hand-written files (site profiles, campaigns): far above any real one.
TEXT_LIMIT_BYTES = 16 * 2**20
#: Tables (targets, variables, observation times): a million rows of a wide table.
TABLE_LIMIT_BYTES = 512 * 2**20


def read_input(path: str | Path, source: str, error_type: type[InputError], what: str,
               limit: int = TEXT_LIMIT_BYTES, missing: str = "no such file") -> bytes:
    """The bytes of the input file at ``path``; errors name ``source`` and say what is wrong."""
    try:
        info = os.stat(path)
    except FileNotFoundError:
        raise _error(error_type, missing, source) from None
    except (OSError, ValueError) as exc:  # ValueError: a NUL in the path
        raise _error(error_type, f"cannot be read ({getattr(exc, 'strerror', None) or exc})", source) from None
    if stat.S_ISDIR(info.st_mode):
        raise _error(error_type, f"is a folder, not a {what} file", source)
    if not stat.S_ISREG(info.st_mode):
        raise _error(error_type, f"not a regular file (a pipe or a device); give the {what} as a file", source)
    if info.st_size > limit:
        raise _error(error_type, f"is {info.st_size / 2**20:.0f} MiB, more than a {what} file can be "
                         f"(at most {limit // 2**20} MiB)", source)
    try:
        with open(path, "rb") as f:
            data = f.read(limit + 1)
    except OSError as exc:
        raise _error(error_type, f"cannot be read ({exc.strerror or exc})", source) from None
    if len(data) > limit:  # it grew while we read
        raise _error(error_type, f"is more than a {what} file can be (at most {limit // 2**20} MiB)", source)
    return data
