"""Helpers the CLI tests share: the real CLI run in this process, the CLI run on a real
pseudo-terminal, and reading its CSV files.

pytest's default import mode puts this folder on ``sys.path``, so test modules import it as
``clitools``.
"""

from __future__ import annotations

import contextlib
import csv
import fcntl
import io
import os
import pty
import select
import struct
import subprocess
import sys
import termios
from pathlib import Path

import pytest

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


def on_terminal(args, env: dict, cwd: Path, columns: int | None = None, silence_s: float = 300) -> tuple[int, str]:
    """``python -m auditor ARGS`` with stdout and stderr on a pseudo-terminal (``columns``
    wide when given); returns (exit status, all it wrote).  Fails the test when the process
    writes nothing for ``silence_s`` seconds."""
    master, slave = pty.openpty()
    if columns is not None:
        fcntl.ioctl(slave, termios.TIOCSWINSZ, struct.pack("HHHH", 40, columns, 0, 0))
    proc = subprocess.Popen([sys.executable, "-m", "auditor", *map(str, args)], stdin=subprocess.DEVNULL,
                            stdout=slave, stderr=slave, env=env, cwd=cwd)
    os.close(slave)
    chunks = []
    while True:
        ready, _, _ = select.select([master], [], [], silence_s)
        if not ready:
            proc.kill()
            pytest.fail(f"no output from the subprocess for {silence_s:g} s")
        try:
            data = os.read(master, 65536)
        except OSError:          # EIO: the other end closed
            break
        if not data:
            break
        chunks.append(data)
    os.close(master)
    return proc.wait(timeout=60), b"".join(chunks).decode("utf-8", "replace")
