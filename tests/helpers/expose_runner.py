"""``gcplan expose`` run in the test's own process (its output read through pytest's capsys)."""

from __future__ import annotations

import argparse
import sys

from planner.commands import expose
from planner.errors import InputError


def run_expose(argv, capsys):
    """(exit status, stdout, stderr) of ``gcplan`` with ``argv`` (``["expose", …]``); a bad
    input is the one-line error and status 2, as ``planner.cli.main`` gives it."""
    parser = argparse.ArgumentParser(prog="gcplan")
    expose.register(parser.add_subparsers(dest="command"))
    args = parser.parse_args(argv)
    try:
        status = args.run(args)
    except InputError as exc:
        print(f"gcplan: error: {exc}", file=sys.stderr)
        status = 2
    out, err = capsys.readouterr()
    return status, out, err
