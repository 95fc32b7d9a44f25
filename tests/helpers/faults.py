"""Running the command line in a fresh process for the fault-injection tests.

A command that could hang runs with a timeout, so a hang fails its test instead of
blocking the suite.  What counts as "one line, no traceback" is gcplan's own rule for
bad input (common practice, no source).
"""

from __future__ import annotations

import hashlib
import os
import subprocess
import sys
from pathlib import Path

import pytest


def gcplan(*args, timeout=60.0, env=None, stdin=subprocess.DEVNULL, stdout=subprocess.PIPE, preexec=None,
           cwd=None):
    """Run the command line in a fresh process; a hang past ``timeout`` fails the test."""
    try:
        return subprocess.run([sys.executable, "-m", "planner", *map(str, args)], stdin=stdin, stdout=stdout,
                              stderr=subprocess.PIPE, text=True, timeout=timeout, env=env,
                              preexec_fn=preexec, cwd=cwd)
    except subprocess.TimeoutExpired:
        pytest.fail(f"gcplan {' '.join(map(str, args))} still running after {timeout:g} s")


def one_line_error(result, *words):
    """Exit 2 with exactly one line on stderr, ``gcplan: error: …``, holding ``words``."""
    lines = result.stderr.strip().splitlines()
    assert result.returncode == 2, (result.returncode, result.stderr[-2000:])
    assert len(lines) == 1 and lines[0].startswith("gcplan: error: "), result.stderr[-2000:]
    for w in words:
        assert w in lines[0], (w, lines[0])
    return lines[0]


def one_line_warning(result, *words):
    """Exit 0 with exactly one line on stderr, ``gcplan: warning: …``, holding ``words``."""
    lines = result.stderr.strip().splitlines()
    assert result.returncode == 0, (result.returncode, result.stderr[-2000:])
    assert len(lines) == 1 and lines[0].startswith("gcplan: warning: "), result.stderr[-2000:]
    for w in words:
        assert w in lines[0], (w, lines[0])
    return lines[0]


def digest(path) -> str:
    return hashlib.sha256(Path(path).read_bytes()).hexdigest()
