"""Writing outputs without losing work: temp file, then rename; never over an input."""
from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import Iterable

from ..errors import InputError, Problem


def check_target(path: str | Path, inputs: Iterable[str | Path], force: bool) -> Path:
    """Refuse a report path that is an input file, or an existing file without ``force``."""
    target = Path(path)
    resolved = target.resolve()
    for i in inputs:
        try:
            if Path(i).resolve() == resolved:
                raise InputError(Problem(str(target), "refusing to write the report over an input file"))
        except OSError:
            continue
    if target.is_dir():
        raise InputError(Problem(str(target), "is a directory, not a file"))
    if target.exists() and not force:
        raise InputError(Problem(str(target), "the file exists; pass --force to overwrite it"))
    return target


def write_atomic(path: str | Path, text: str) -> None:
    """Write ``text`` to a temporary file beside ``path`` and rename it into place.

    An interruption or a write failure leaves no partial file behind.
    """
    target = Path(path)
    directory = target.parent if str(target.parent) else Path(".")
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=directory)
    except OSError as exc:
        raise InputError(Problem(str(target), f"cannot write here: {exc.strerror or exc}")) from None
    try:
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes 0600; a report is an ordinary file
        with os.fdopen(fd, "w", encoding="utf-8", newline="\n") as fh:
            fh.write(text)
            fh.flush()
            os.fsync(fh.fileno())
        os.replace(tmp, target)
    except BaseException as exc:
        try:
            os.unlink(tmp)
        except OSError:
            pass
        if isinstance(exc, OSError):
            raise InputError(Problem(str(target), f"cannot write the file: {exc.strerror or exc}")) from None
        raise
