"""The ``gcplan`` command line: argument parsing, dispatch and error reporting.

Each sub-command lives in its own module under :mod:`planner.commands` and
exposes ``register(subparsers)``; the module's ``run(args)`` returns the exit
status.  Bad input of any kind (:class:`planner.errors.InputError`) becomes one
line on stderr and exit status 2 — never a traceback.
"""

from __future__ import annotations

import argparse
import importlib
import os
import sys

from planner import __version__
from planner.errors import InputError

# Sub-command modules, in the order ``gcplan --help`` lists them.
COMMAND_MODULES = (
    "planner.commands.night",
    "planner.commands.observability",
    "planner.commands.expose",
    "planner.commands.phases",
    "planner.commands.recover",
    "planner.commands.demo",
    "planner.commands.log",
    "planner.commands.schedule",
    "planner.commands.campaign",
    "planner.commands.proposal",
    "planner.commands.replan",
    "planner.commands.app",
)

#: The sub-commands' names: each module registers the command named as it is.
COMMAND_NAMES = tuple(m.rpartition(".")[2] for m in COMMAND_MODULES)

# Options whose values may start with "-" (a southern latitude, a western
# longitude): "--site -30.2,-70.8,2200" must work as well as "--site=...".
DASH_VALUE_OPTIONS = ("--site",)

class _Parser(argparse.ArgumentParser):
    """argparse, but usage errors follow gcplan's one-line form (exit 2)."""

    def error(self, message: str):  # noqa: D401 - argparse API
        self.exit(2, f"gcplan: error: {message} (see '{self.prog} --help')\n")

def build_parser(command: str | None = None) -> argparse.ArgumentParser:
    """gcplan's parser: with ``command`` (a sub-command's name), that sub-command's alone —
    building every sub-command's parser costs more than some commands' work — else all of
    them (``gcplan --help`` lists them, an unknown word is told the choices)."""
    parser = _Parser(
        prog="gcplan",
        description=(
            "Plan photometric campaigns on Galactic globular clusters (RGB tip, RR Lyrae): "
            "the night's almanac and each cluster's window, hours over a semester, exposure "
            "times to an S/N, RR Lyrae phase coverage and period recovery, timed night plans "
            "and whole campaigns re-planned after weather, an observing log filled from FITS "
            "headers, a demo on invented data and a terminal app."
        ),
        epilog=(
            "Times are UTC internally; text output shows the site's local time and UTC. "
            "A night is named by its local evening date. The telescope's and the "
            "observatory's own limits and rules always come before any plan."
        ),
    )
    parser.add_argument("--version", action="version", version=f"gcplan {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND", parser_class=_Parser)
    chosen = [m for m in COMMAND_MODULES if m.rpartition(".")[2] == command] or COMMAND_MODULES
    for name in chosen:
        importlib.import_module(name).register(sub)
    return parser


def chosen_command(argv: list[str]) -> str | None:
    """The sub-command ``argv`` runs, when its first word names one (None otherwise:
    ``--help``, ``--version``, nothing, an unknown word)."""
    return argv[0] if argv and argv[0] in COMMAND_NAMES else None

def one_blas_thread() -> None:
    """OpenBLAS (numpy's and scipy's) on one thread unless the user chose otherwise.

    Read once, when numpy loads: so set before any command imports it.  OpenBLAS starts
    a thread per core whose spinning costs about 0.1 s of CPU a process — a third of a
    ``night`` — while gcplan's products are (…, 3) × (3, …): too thin for threads to pay.
    Each product's elements are summed as before, so the results are the same.
    """
    if "numpy" not in sys.modules:
        os.environ.setdefault("OPENBLAS_NUM_THREADS", "1")


def join_dash_values(argv: list[str]) -> list[str]:
    """Glue ``--site -30,-70`` into ``--site=-30,-70`` so argparse keeps the value."""
    out: list[str] = []
    i = 0
    while i < len(argv):
        token = argv[i]
        if token in DASH_VALUE_OPTIONS and i + 1 < len(argv) and argv[i + 1].startswith("-"):
            out.append(f"{token}={argv[i + 1]}")
            i += 2
            continue
        out.append(token)
        i += 1
    return out

def main(argv: list[str] | None = None) -> int:
    argv = list(sys.argv[1:] if argv is None else argv)
    one_blas_thread()
    parser = build_parser(chosen_command(argv))
    args = parser.parse_args(join_dash_values(argv))
    if args.command is None:
        if not (sys.stdout.isatty() and sys.stdin.isatty()):
            parser.print_help()
            return 0
        # A terminal and no command: open the app on the demo campaign.
        args = build_parser("app").parse_args(["app"])
    from planner.config import configure_runtime

    configure_runtime()
    import warnings

    try:
        # Library warnings (ERFA, numpy) are said once each in gcplan's words, after the
        # output; with an error, the error line alone is said.
        with warnings.catch_warnings(record=True) as caught:
            code = int(args.run(args) or 0)
        sys.stdout.flush()  # a full disk under `> file` shows here, not at exit
        for line in library_warnings(caught):
            print(f"gcplan: warning: {line}", file=sys.stderr)
        return code
    except InputError as exc:
        print(f"gcplan: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("gcplan: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:  # e.g. `gcplan night ... | head`
        _drop_stdout()
        return 0
    except OSError as exc:
        # Output files go through commands.common.output_file and inputs have their own
        # messages; what is left is stdout itself (a full disk, /dev/full) or a stray fault.
        if getattr(exc, "filename", None) is None:  # no file named: the write to stdout
            _drop_stdout()
            print(f"gcplan: error: cannot write the output ({exc.strerror or exc})", file=sys.stderr)
        else:
            print(f"gcplan: error: {exc.filename}: {exc.strerror or exc}", file=sys.stderr)
        return 2


def library_warnings(caught) -> list[str]:
    """One line per kind of library warning: ERFA's dates outside its series, numpy's
    arithmetic (a division by zero, an overflow) in gcplan's words; others as they read."""
    out: list[str] = []
    for w in caught:
        text = str(w.message)
        kind = type(w.message).__name__
        if kind == "ErfaWarning" and "date outside" in text:
            line = ("a date outside 1900–2100, the years of ERFA's Earth and Sun series: positions "
                    "there are extrapolated")
        elif issubclass(w.category, RuntimeWarning):
            line = (f"a numerical problem in the computation ({text}); values it touched are left out "
                    "or shown as not available")
        else:
            line = f"{text} ({kind})"
        if line not in out:
            out.append(line)
    return out


def _drop_stdout() -> None:
    try:
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
    except (OSError, ValueError):  # not a real file (a test's capture)
        pass
