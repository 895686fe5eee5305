"""Helpers the CLI tests share: the real CLI run in this process, and reading its CSV files.

pytest's default import mode puts this folder on ``sys.path``, so test modules import it as
``clitools``.
"""

from __future__ import annotations

import contextlib
import csv
import io
import os
from pathlib import Path

from auditor.cli import main


def run(argv, cwd: Path | None = None) -> tuple[int, str, str]:
    """The real CLI in this process; returns (exit status, stdout, stderr)."""
    out, err = io.StringIO(), io.StringIO()
    old = os.getcwd()
    try:
        if cwd is not None:
            os.chdir(cwd)
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            rc = main([str(a) for a in argv])
    finally:
        os.chdir(old)
    return rc, out.getvalue(), err.getvalue()


def read_csv(path: Path) -> list[dict[str, str]]:
    """The rows of a CSV file the CLI wrote, as dicts keyed by the header."""
    with open(path, newline="", encoding="utf-8") as fh:
        return list(csv.DictReader(fh))
