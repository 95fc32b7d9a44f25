"""Arguments and output helpers shared by the sub-commands (shell code).

The only module one command may import of another: the options several
commands take (site, targets, constraints, seeing, a campaign file) are
parsed here, once, and the JSON of every command is written by
:func:`print_json` / :func:`json_text`.
"""

from __future__ import annotations

import argparse
import contextlib
import datetime as dt
import json
import math
import os
import re
import sys
from pathlib import Path
from typing import Any

from planner.errors import CampaignError, DateError, InputError, OutputError


class OptionError(InputError):
    """Command-line options that do not go together or hold an impossible value."""


def add_site_arguments(parser: argparse.ArgumentParser, required: bool = True) -> None:
    parser.add_argument(
        "--site",
        required=required,
        metavar="SITE",
        help="site profile: a .toml path, a bundled profile's name (e.g. demo), "
        "or LAT,LON[,ELEV_M] in degrees, east-positive longitude",
    )
    parser.add_argument(
        "--timezone",
        metavar="ZONE",
        help="IANA time zone for a LAT,LON site, e.g. America/Santiago (default: the whole-hour zone nearest the site's mean solar time)",
    )


def site_from_args(args: argparse.Namespace):
    from planner.inputs.sites import resolve_site

    return resolve_site(args.site, getattr(args, "timezone", None))


def add_target_arguments(parser: argparse.ArgumentParser, required: bool = True) -> None:
    parser.add_argument(
        "--targets",
        metavar="FILE|all",
        help="target list (ECSV, CSV or TOML) or 'all' for the bundled cluster catalog",
    )
    parser.add_argument(
        "--target",
        action="append",
        default=[],
        metavar="NAME",
        help="a cluster by catalog name or alias (repeatable; case and spaces ignored)",
    )


def targets_from_args(args: argparse.Namespace):
    from planner.inputs.catalog import load_catalog
    from planner.inputs.targets import resolve_targets

    return resolve_targets(args.targets, args.target, load_catalog())


def add_constraint_arguments(p: argparse.ArgumentParser) -> None:
    p.add_argument(
        "--twilight",
        choices=("civil", "nautical", "astronomical"),
        help="which twilight bounds the usable night (default: the site profile's)",
    )
    p.add_argument("--max-airmass", type=float, metavar="X", help="airmass limit (≥ 1)")
    p.add_argument("--min-altitude", type=float, metavar="DEG", help="altitude limit, degrees")
    p.add_argument("--min-moon-separation", type=float, metavar="DEG", help="closest approach to the Moon, degrees")
    p.add_argument("--max-altitude", type=float, metavar="DEG",
                   help="upper altitude limit (zenith avoidance), degrees (default: the site profile's, if any)")


def constraints_from_args(site, args):
    from planner.errors import ConstraintError
    from planner.model.constraints import constraints_for_site

    if args.max_airmass is not None and not (args.max_airmass >= 1.0):
        raise ConstraintError(f"--max-airmass must be ≥ 1 (got {args.max_airmass:g})")
    if args.min_altitude is not None and not (-5.0 <= args.min_altitude < 90.0):
        raise ConstraintError(f"--min-altitude must be between -5 and 90 degrees (got {args.min_altitude:g})")
    if args.min_moon_separation is not None and not (0.0 <= args.min_moon_separation <= 180.0):
        raise ConstraintError(f"--min-moon-separation must be 0..180 degrees (got {args.min_moon_separation:g})")
    c = constraints_for_site(
        site,
        twilight=args.twilight,
        max_airmass=args.max_airmass,
        min_altitude_deg=args.min_altitude,
        min_moon_separation_deg=args.min_moon_separation,
        max_altitude_deg=args.max_altitude,
    )
    if c.max_altitude_deg is not None and not (c.altitude_limit_deg < c.max_altitude_deg <= 90.0):
        given = "--max-altitude" if args.max_altitude is not None else f"{site.source}: [limits] max_altitude_deg"
        raise ConstraintError(f"{given} must be above the lower altitude limit {c.altitude_limit_deg:.1f}° "
                              f"and at most 90° (got {c.max_altitude_deg:g})")
    return c


def check_seeing(value, option: str = "--seeing") -> None:
    """A seeing option, if given, must be a FWHM the planner can use."""
    from planner.model.constraints import seeing_problem

    problem = seeing_problem(value)
    if problem:
        raise OptionError(f"{option} {problem}")


#: Magnitudes a star can have here: from Sirius, the brightest star of the night sky
#: (V = −1.46), to beyond the faintest stars any image has reached (about 31–32); both
#: from memory, with margin.
MAGNITUDE_RANGE = (-2.0, 35.0)


def check_magnitude(value, option: str) -> None:
    lo, hi = MAGNITUDE_RANGE
    if value is not None and not lo <= value <= hi:
        raise OptionError(f"{option} must be between {lo:g} and {hi:g}: from brighter than Sirius (−1.5) to "
                          f"fainter than any image has reached (about 32) (got {value:g})")


def campaign_from_args(args, catalog=None):
    from planner.inputs.campaign_file import read_campaign_file

    return read_campaign_file(args.campaign, catalog)


def check_campaign_night(campaign, night: dt.date, option: str = "--date") -> int:
    """The index of ``night`` among the campaign's nights; the option named if it is not one."""
    from planner.scheduling.campaign import night_index

    try:
        return night_index(campaign, night)
    except CampaignError as exc:
        raise OptionError(f"{option} {exc.detail}", exc.source) from None


def add_json_argument(parser: argparse.ArgumentParser) -> None:
    parser.add_argument("--json", action="store_true", help="machine-readable JSON on stdout")


def parse_night_date(text: str, option: str = "--date") -> dt.date:
    """A night's local evening date, YYYY-MM-DD."""
    from planner.sky.nights import night_out_of_range

    try:
        night = dt.date.fromisoformat(text.strip())
    except (ValueError, AttributeError):
        raise DateError(f"{option} must be a date YYYY-MM-DD (got {text!r})") from None
    problem = night_out_of_range(night)
    if problem:
        raise DateError(f"{option}: {problem}")
    return night


def check_night_exists(night: dt.date, site, option: str = "--date") -> None:
    """A night named by a local date the site's calendar skipped is an error, not an empty night."""
    from planner.sky.nights import date_skipped

    zone = site.location.timezone
    if date_skipped(night, zone):
        before, after = night - dt.timedelta(days=1), night + dt.timedelta(days=1)
        raise DateError(f"{option} {night} does not exist in {zone}: the local clocks skipped that date; "
                        f"the night of {before} runs into the morning of {after}")


def parse_utc_time(text: str, option: str, expected: str) -> dt.datetime:
    """An ISO 8601 time (``Z`` or an offset allowed; UTC without one), aware.
    ``expected`` says, in the error, what the option takes."""
    try:
        moment = dt.datetime.fromisoformat(text.strip().replace("Z", "+00:00"))
    except (ValueError, AttributeError):
        raise DateError(f"{option} must be {expected} (got {text!r})") from None
    from planner.sky.nights import FIRST_YEAR, LAST_YEAR

    if not FIRST_YEAR <= moment.year <= LAST_YEAR:  # the years the Sun and Moon are known for
        raise DateError(f"{option} must be within {FIRST_YEAR}–{LAST_YEAR}, the years astropy's built-in "
                        f"Sun and Moon ephemeris covers (got {text!r})")
    return moment if moment.tzinfo else moment.replace(tzinfo=dt.timezone.utc)


def date_range(start: dt.date, end: dt.date, start_option="--start", end_option="--end") -> list[dt.date]:
    if end < start:
        raise DateError(f"{end_option} {end} is before {start_option} {start}")
    n = (end - start).days + 1
    if n > 3700:
        raise DateError(f"{start_option}..{end_option} spans {n} nights; at most ten years (3700) at a time")
    return [start + dt.timedelta(days=i) for i in range(n)]


def to_jsonable(obj: Any) -> Any:
    """Turn core results into JSON: NaN and None become null, numpy scalars plain numbers."""
    t = type(obj)
    if t is float:
        return obj if math.isfinite(obj) else None
    if obj is None or t in (str, int, bool):
        return obj
    if t is dict:
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    if t in (list, tuple):
        return [to_jsonable(v) for v in obj]
    np = sys.modules.get("numpy")  # no numpy loaded: no numpy values to convert
    if np is not None and isinstance(obj, np.ndarray):
        return [to_jsonable(v) for v in obj.tolist()]
    if isinstance(obj, float) or (np is not None and isinstance(obj, np.floating)):
        value = float(obj)
        return value if math.isfinite(value) else None
    if np is not None and isinstance(obj, np.integer):
        return int(obj)
    if np is not None and isinstance(obj, np.bool_):
        return bool(obj)
    if isinstance(obj, (dt.date, dt.datetime)):
        return obj.isoformat()
    if isinstance(obj, dict):
        return {str(k): to_jsonable(v) for k, v in obj.items()}
    return obj


def _json_default(obj: Any) -> Any:
    """What :func:`json.dumps` cannot write itself, as :func:`to_jsonable` would write it
    (NaN and infinities are left to :func:`_nulls_for_nonfinite`)."""
    np = sys.modules.get("numpy")
    if np is not None:
        if isinstance(obj, np.ndarray):
            return obj.tolist()
        if isinstance(obj, np.floating):
            return float(obj)
        if isinstance(obj, np.integer):
            return int(obj)
        if isinstance(obj, np.bool_):
            return bool(obj)
    if isinstance(obj, (dt.date, dt.datetime)):
        return obj.isoformat()
    raise TypeError(f"{type(obj).__name__} is not JSON serialisable")


# A JSON string (skipped as it is) or a non-finite number json.dumps wrote as a bare word.
_STRING_OR_NONFINITE = re.compile(r'("(?:[^"\\]|\\.)*")|-?Infinity|NaN')


def _nulls_for_nonfinite(text: str) -> str:
    """``NaN``/``Infinity`` words outside strings made ``null`` (what :func:`to_jsonable` gives)."""
    if "NaN" not in text and "Infinity" not in text:
        return text
    return _STRING_OR_NONFINITE.sub(lambda m: m.group(1) or "null", text)


def _dumps(obj: Any, indent: int | None) -> str:
    """json.dumps straight from the core's results (C speed for compact output), with the
    same text as through :func:`to_jsonable`: numpy values by ``default``, non-finite
    numbers as null afterwards.  Keys json would write differently from ``str(key)``
    (numpy integers, booleans, None) take the slow road through :func:`to_jsonable`."""
    separators = (",", ":") if indent is None else (",", ": ")
    try:
        text = json.dumps(obj, indent=indent, ensure_ascii=False, allow_nan=True, default=_json_default,
                          separators=separators, check_circular=False)
    except TypeError:  # a key json.dumps refuses (a numpy integer, a date)
        text = None
    if text is None or '"true"' in text or '"false"' in text or '"null"' in text:
        # json writes True/None keys as "true"/"null" where str() gives "True"/"None";
        # such text (rare) is made the careful way
        return json.dumps(to_jsonable(obj), indent=indent, ensure_ascii=False, allow_nan=False,
                          separators=separators)
    return _nulls_for_nonfinite(text)


#: Above this size JSON is written without indentation: the indenting encoder is
#: pure Python and takes half a second for a semester of the whole catalog
#: (2.7 MB), while the compact one runs in C.  Such output is for programs.
_INDENT_LIMIT_CHARS = 200_000


def json_text(obj: Any, compact_above: int | None = None) -> str:
    """JSON of core results (see :func:`to_jsonable`), indented for reading; compact
    when the text is longer than ``compact_above`` characters."""
    if compact_above is not None:
        text = _dumps(obj, None)
        if len(text) > compact_above:
            return text
    return _dumps(obj, 2)


def print_json(obj: Any) -> None:
    """JSON on stdout: indented for reading, compact when it is large."""
    sys.stdout.write(json_text(obj, _INDENT_LIMIT_CHARS))
    sys.stdout.write("\n")


def compact_json(obj: Any) -> str:
    """Compact JSON of core results (see :func:`to_jsonable`): what large output is made of."""
    return json.dumps(to_jsonable(obj), ensure_ascii=False, allow_nan=False, separators=(",", ":"))


def print_json_pieces(pieces, whole) -> None:
    """Large JSON on stdout piece by piece: the same text :func:`print_json` gives.

    ``pieces`` yields the compact text in order; ``whole()`` builds the object,
    and is called only when the text turns out short enough to be indented.
    """
    it = iter(pieces)
    head, size = [], 0
    for piece in it:
        head.append(piece)
        size += len(piece)
        if size > _INDENT_LIMIT_CHARS:
            break
    else:
        print_json(whole())
        return
    write = sys.stdout.write
    write("".join(head))
    for piece in it:
        write(piece)
    write("\n")


def write_json(path: Path, obj: Any, option: str = "--out") -> Path:
    """JSON written to a file, indented, with a final newline."""
    with output_file(path, option) as tmp:
        tmp.write_text(json_text(obj) + "\n", encoding="utf-8")
    return Path(path)


@contextlib.contextmanager
def output_file(path, option: str):
    """Every output file of every command is written through this: the writer gets a new
    file beside ``path`` (same suffix), renamed over ``path`` once complete, so a full disk or
    a failure part-way leaves no partial file.  Any OSError becomes one line naming ``option``.
    A path that is a device or a pipe (``/dev/null``) is written in place."""
    p = Path(path)
    real = Path(os.path.realpath(p))
    try:
        if real.exists() and not real.is_file():
            yield p
            return
    except OSError as exc:
        raise OutputError(f"{option} {str(p)!r}: cannot write ({exc.strerror or exc})") from None
    import secrets  # only where a file is written (with hmac and random, a few ms of every command)

    tmp = real.with_name(f".{real.stem}.{os.getpid()}-{secrets.token_hex(3)}.partial{real.suffix}")
    try:
        os.close(os.open(tmp, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666))  # umask applies
        yield tmp
        os.replace(tmp, real)
    except OSError as exc:
        raise OutputError(f"{option} {str(p)!r}: cannot write ({exc.strerror or exc})") from None
    finally:
        with contextlib.suppress(OSError):
            tmp.unlink()


def check_output_path(path: str, suffixes: tuple[str, ...], option: str) -> Path:
    """An output file we can write, with one of the given suffixes."""
    p = Path(path)
    if p.suffix.lower() not in suffixes:
        raise OutputError(f"{option} {path!r} must end in one of {', '.join(suffixes)}")
    parent = p.parent if str(p.parent) else Path(".")
    if not parent.is_dir():
        raise OutputError(f"{option} {path!r}: folder {str(parent)!r} does not exist")
    return p


def warn_all(messages) -> None:
    """Warnings for the user: one line each on stderr (stdout stays clean for --json)."""
    for message in messages:
        print(f"gcplan: warning: {message}", file=sys.stderr)
