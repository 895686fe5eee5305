"""Writing outputs without losing work: temp file, then rename; never over an input.  Also the
report format a suffix picks, and the hash of an input file."""
from __future__ import annotations

import hashlib
import json
import os
import tempfile
from pathlib import Path
from typing import Iterable

from ..errors import InputError, Problem


def resolved_or_refused(target: Path) -> Path:
    """``target`` with its symbolic links followed; a link that leads nowhere (a loop, or a
    missing target) or a folder in a loop is refused, so nothing is written through it."""
    try:
        if target.is_symlink():
            target.resolve(strict=True)
        return target.resolve()
    except (OSError, RuntimeError):      # RuntimeError: Python before 3.13 on a symlink loop
        raise InputError(Problem(str(target), "is a symbolic link that leads nowhere (a loop of links or a "
                                 "missing target); remove it or choose another path")) from None


def check_target(path: str | Path, inputs: Iterable[str | Path], force: bool) -> Path:
    """Refuse a report path that is an input file, or an existing file without ``force``."""
    target = Path(path)
    resolved = resolved_or_refused(target)
    for i in inputs:
        try:
            if Path(i).resolve() == resolved:
                raise InputError(Problem(str(target), "refusing to write the report over an input file"))
        except (OSError, RuntimeError):
            continue
    if target.is_dir():
        raise InputError(Problem(str(target), "is a directory, not a file"))
    if target.exists() and not force:
        raise InputError(Problem(str(target), "the file exists; pass --force to overwrite it"))
    return target


def write_atomic(path: str | Path, text: str) -> None:
    """Write ``text`` to a file beside ``path`` and rename it into place.

    An interruption or a write failure leaves no partial file behind.  Where the system
    allows it (Linux ``O_TMPFILE``) the text is written to a file without a name, named only
    once complete, so that even a process killed outright (SIGKILL) mid-write leaves no part
    file; elsewhere a hidden ``.NAME.*.part`` file is removed on any failure Python sees.
    """
    target = Path(path)
    directory = target.parent if str(target.parent) else Path(".")
    data = text.encode("utf-8")
    if _write_unnamed(directory, target, data):
        return
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{target.name}.", suffix=".part", dir=directory)
    except OSError as exc:
        raise InputError(Problem(str(target), f"cannot write here: {exc.strerror or exc}")) from None
    try:
        umask = os.umask(0)
        os.umask(umask)
        os.chmod(tmp, 0o666 & ~umask)  # mkstemp makes 0600; a report is an ordinary file
        with os.fdopen(fd, "wb") as fh:
            fh.write(data)
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


def _write_unnamed(directory: Path, target: Path, data: bytes) -> bool:
    """``data`` written to an unnamed file in ``directory``, then linked and renamed onto
    ``target``; False when the system or file system has no unnamed files (nothing done)."""
    flag = getattr(os, "O_TMPFILE", 0)
    if not flag or not os.path.isdir("/proc/self/fd"):
        return False
    try:
        fd = os.open(directory, flag | os.O_WRONLY | os.O_CLOEXEC, 0o666)   # the umask applies
    except OSError:
        return False          # e.g. a file system without O_TMPFILE: the named route
    tmp = None
    try:
        view = memoryview(data)
        while view:
            view = view[os.write(fd, view):]
        os.fsync(fd)
        tmp = directory / f".{target.name}.{os.getpid()}.{id(data):x}.part"
        dir_fd = os.open(directory, os.O_RDONLY | os.O_DIRECTORY | os.O_CLOEXEC)
        try:      # a directory descriptor makes Python call linkat, which follows the /proc link
            os.link(f"/proc/self/fd/{fd}", tmp.name, dst_dir_fd=dir_fd, follow_symlinks=True)
        finally:
            os.close(dir_fd)
        os.replace(tmp, target)       # named only when complete; renamed at once
        tmp = None
        return True
    except OSError as exc:
        raise InputError(Problem(str(target), f"cannot write the file: {exc.strerror or exc}")) from None
    finally:
        os.close(fd)
        if tmp is not None:
            try:
                os.unlink(tmp)
            except OSError:
                pass


REPORT_FORMATS = (".html", ".htm", ".md", ".json")


def render_report(result, suffix: str) -> str:
    """The full audit in the format that the report path's suffix (one of REPORT_FORMATS) picks."""
    if suffix in (".html", ".htm"):
        from .html import render
        return render(result)
    if suffix == ".md":
        from .markdown import render
        return render(result)
    from .document import check_document
    return json.dumps(check_document(result, with_context=True), indent=1) + "\n"


def file_sha256(path) -> str:
    """The SHA-256 of a file's bytes, or "" when it cannot be read."""
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except OSError:
        return ""
