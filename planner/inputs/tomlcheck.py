"""Checked reading of TOML input files, shared by every TOML input.

Site profiles use it now; target lists and, later, campaign files are meant to
use it too, so that all of them word their complaints alike.  A complaint names
file, table, key and bad value and says what would be valid, on one printable
line, and is raised as the :class:`~planner.errors.InputError` subclass the
caller chooses.  Nothing here knows about any one kind of file: the keys each
table accepts come in a :class:`Schema`.
"""

from __future__ import annotations

import difflib
import math
import re
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Iterable, Mapping, NoReturn

from planner.errors import InputError

_TOML_AT = re.compile(r"\s*\(at (line \d+, column \d+|end of document)\)\s*$")


@dataclass(frozen=True)
class Schema:
    """What one kind of TOML file may hold, and what it raises.

    ``keys`` maps a kind of table to the keys it accepts, in the order messages
    list them; ``""`` is the top level.  A kind that is also a top-level key
    names a table of its own, so a stray key that belongs there can be pointed
    at it; other kinds (say, the template for every ``[filters.NAME]``) cannot.
    """

    keys: Mapping[str, tuple[str, ...]]
    error_type: type[InputError]


def show(value: Any) -> str:
    """A value as it would be written in TOML, shortened."""
    if isinstance(value, bool):
        text = "true" if value else "false"
    elif isinstance(value, str):
        text = '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    elif isinstance(value, (list, tuple)):
        text = "[" + ", ".join(show(v) for v in value) + "]"
    elif isinstance(value, Mapping):
        text = "a table"
    else:
        text = value.isoformat() if hasattr(value, "isoformat") else str(value)
    return text if len(text) <= 60 else text[:57] + "..."


def toml_key(key: str) -> str:
    """A key as TOML spells it: bare if it can be, else quoted."""
    return key if re.fullmatch(r"[A-Za-z0-9_-]+", key) else show(key)


def error(error_type: type[InputError], message: str, source: str | None = None) -> InputError:
    """The error, on one printable line: keys, values and paths may hold anything."""
    def printable(text: str) -> str:
        return "".join(c if c.isprintable() else repr(c)[1:-1] for c in text)

    return error_type(printable(message), None if source is None else printable(source))


def bound(x: float) -> str:
    """A limit as a message shows it: ``20``, not ``20.0``."""
    return str(int(x)) if float(x).is_integer() and abs(x) < 1e15 else repr(float(x))


def suggest(word: str, choices: Iterable[str], n: int = 1, cutoff: float = 0.6) -> list[str]:
    """The choices closest to ``word``, ignoring case (an exact case-blind match first)."""
    lowered = {c.lower(): c for c in choices}
    if word.lower() in lowered:
        return [lowered[word.lower()]]
    starting = [c for low, c in lowered.items() if len(word) >= 3 and low.startswith(word.lower())]
    if len(starting) == 1:  # "extinction" for "extinction_mag_per_airmass"
        return starting
    return [lowered[c] for c in difflib.get_close_matches(word.lower(), list(lowered), n, cutoff)]


class Table:
    """Typed reads from one TOML table; each failure names file, table, key and value.

    Parameters
    ----------
    table : Any
        The table as tomllib gave it (``None`` if absent); anything else fails.
    where : str
        How messages name it, e.g. ``"[camera]"``; ``""`` for the top level.
    kind : str or None
        The ``schema.keys`` entry of valid keys; None for tables keyed by names
        the caller checks (filter names, FITS keywords).
    source : str
        The file, as the user gave it; starts every message.
    schema : Schema
    required : bool
        Whether a missing table fails.
    """

    def __init__(self, table: Any, where: str, kind: str | None, source: str, schema: Schema,
                 required: bool = True):
        self.where, self.source, self.schema = where, source, schema
        self.keys = schema.keys[kind] if kind is not None else ()
        if table is None and required:
            self.fail(f"missing required table {where}", bare=True)
        if table is not None and not isinstance(table, Mapping):
            self.fail(f"{where} must be a table (got {show(table)})", bare=True)
        self.table: Mapping = table or {}
        for key, value in self.table.items():
            if kind is not None and key not in self.keys:
                self._unknown(key, value)

    def fail(self, message: str, bare: bool = False) -> NoReturn:
        prefix = f"{self.where} " if self.where and not bare else ""
        raise error(self.schema.error_type, prefix + message, source=self.source)

    def path(self, key: str) -> str:
        return f"{self.where[:-1]}.{toml_key(key)}]" if self.where else f"[{toml_key(key)}]"

    def _unknown(self, key: str, value: Any) -> NoReturn:
        table = isinstance(value, Mapping)
        guess = suggest(key, self.keys)
        kinds = self.schema.keys
        homes = [f"[{t}]" for t, keys in kinds.items() if key in keys and t in kinds.get("", ())]
        hint = (f"; did you mean {self.path(guess[0]) if table else guess[0]}?" if guess
                else f"; {key} belongs in {' or '.join(homes)}" if homes else "")
        what = f"table {self.path(key)}" if table else f"key {toml_key(key)}"
        self.fail(f"unknown {what}{hint} (valid here: {', '.join(self.keys)})")

    def get(self, key: str, required: bool) -> Any:
        if required and key not in self.table:
            self.fail(f"{key} is required but missing")
        return self.table.get(key)

    def sub(self, key: str, kind: str | None, required: bool) -> Table:
        return Table(self.table.get(key), self.path(key), kind, self.source, self.schema, required)

    def number(self, key: str, lo=None, hi=None, lo_open=False, hi_open=False,
               hi_name="", default: float | None = None, required=True) -> Any:
        """The number at ``key`` (``default`` if absent and not required)."""
        value = self.get(key, required and default is None)
        if value is None:
            return default
        return self.check(value, key, lo, hi, lo_open, hi_open, hi_name)

    def whole(self, key: str, lo=None, hi=None, default: int | None = None, required=True) -> Any:
        """The whole number at ``key`` (a count: ``1.5`` is refused, not truncated)."""
        value = self.get(key, required and default is None)
        if value is None:
            return default
        if isinstance(value, float) and not isinstance(value, bool):
            self.fail(f"{key} must be a whole number (got {show(value)})")
        return int(self.check(value, key, lo, hi))

    def check(self, value: Any, label: str, lo=None, hi=None, lo_open=False,
              hi_open=False, hi_name="") -> float:
        """``value`` as a float within the bounds, or fail naming ``label``."""
        if isinstance(value, bool):
            self.fail(f"{label} must be a number, not a boolean (got {show(value)})")
        if not isinstance(value, (int, float)):
            self.fail(f"{label} must be a number (got {show(value)})")
        x = float(value) if abs(value) < 1e308 else math.inf  # huge TOML integers
        if not math.isfinite(x):
            self.fail(f"{label} must be a finite number (got {show(value)})")
        if (lo is not None and (x <= lo if lo_open else x < lo)) or (
                hi is not None and (x >= hi if hi_open else x > hi)):
            if lo is not None and hi is not None and not (lo_open or hi_open or hi_name):
                rule = f"between {bound(lo)} and {bound(hi)}"
            else:
                top = f"{hi_name} ({bound(hi)})" if hi_name else bound(hi) if hi is not None else ""
                rule = " and ".join(
                    ([f"{'>' if lo_open else '≥'} {bound(lo)}"] if lo is not None else [])
                    + ([f"{'<' if hi_open else '≤'} {top}"] if hi is not None else []))
            self.fail(f"{label} must be {rule} (got {show(value)})")
        return x

    def string(self, key: str, default: str | None = None, choices: tuple[str, ...] = ()) -> str:
        value = self.get(key, default is None)
        if value is None:
            return default  # type: ignore[return-value]
        if not isinstance(value, str):
            self.fail(f"{key} must be a string (got {show(value)})")
        if choices and value not in choices:
            guess = suggest(value, choices)
            hint = f"; did you mean {show(guess[0])}?" if guess else ""
            self.fail(f"{key} must be one of {', '.join(map(show, choices))} (got {show(value)}){hint}")
        if not value.strip():
            self.fail(f"{key} must not be empty")
        return value


def read_toml(path: str | Path, source: str, error_type: type[InputError], what: str) -> dict:
    """The TOML document in the file at ``path``.

    ``source`` (the path as the user gave it) starts every message; ``what``
    names the kind of file, e.g. ``"site profile"``.  A missing, unreadable or
    non-UTF-8 file, or invalid TOML, raises ``error_type``.
    """
    from planner.inputs.files import read_input

    raw = read_input(path, source, error_type, f"{what} (.toml)")
    try:
        text = raw.decode("utf-8").removeprefix("\ufeff")  # some editors add a byte-order mark
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise error(error_type, f"invalid TOML at line {line}: not UTF-8 text (byte 0x{raw[exc.start]:02x}); "
                    "save the file as UTF-8", source) from None
    try:
        return tomllib.loads(text)
    except (tomllib.TOMLDecodeError, RecursionError) as exc:
        raise error(error_type, _toml_problem(text, exc), source) from None


def _parses(text: str) -> bool:
    try:
        tomllib.loads(text)
        return True
    except (tomllib.TOMLDecodeError, RecursionError):
        return False


def _toml_problem(text: str, exc: Exception) -> str:
    """tomllib's complaint, with the line it is on, quoted.

    tomllib reports where it stopped reading: lines later for an unclosed array,
    "end of document" for an unclosed string.  The line that breaks the file is
    the one after the longest start of the file that still parses (a failing
    parse stops at its error, so the search is cheap).
    """
    message = _TOML_AT.sub("", str(exc)) if isinstance(exc, tomllib.TOMLDecodeError) else (
        "arrays or tables nested too deeply")
    lines = text.split("\n")  # TOML's newlines are \n and \r\n only
    if len(lines) > 5000:  # longer than any hand-written input file; do not search
        return f"invalid TOML: {message}"
    k = len(lines) - 1
    while k > 0 and not _parses("\n".join(lines[:k])):
        k -= 1
    quoted = lines[k].strip()  # error() makes it printable
    quoted = quoted if len(quoted) <= 60 else quoted[:57] + "..."
    return f"invalid TOML at line {k + 1}: {message}" + (f" (the line reads: {quoted})" if quoted else "")
