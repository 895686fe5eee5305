"""What a sweep writes: its point records, the journal a stopped sweep resumes from, and the CSV.

The journal (``<prefix>.partial.jsonl``) has a header line naming every input by SHA-256 (the
case file, the mechanism file and the files it names, or the packaged thermo databases; the
tool's and cantera's versions) and the grid, then one ``PointResult`` per line as each
finishes, each line carrying the SHA-256 of its own content.  ``points_done`` applies the
resume rules: the journalled points with ``resume``, none without; a journal of another grid
or of inputs that changed since (named), a damaged line, or an unfinished journal without
``resume`` or ``force`` is refused (exit 2).  ``OutputLock`` keeps a second sweep off a prefix
in use (``<prefix>.lock``, held with ``flock`` so that a killed sweep leaves no lock behind).
"""
from __future__ import annotations

import hashlib
import json
import re
from dataclasses import dataclass
from pathlib import Path
from typing import Sequence

from .errors import InputError
from .sentences import yes_no


def _sha256(path) -> str:
    """The SHA-256 of a file's bytes, or "" when it cannot be read."""
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except OSError:
        return ""


@dataclass(frozen=True)
class PointResult:
    index: int
    temperature_K: float | None
    pressure_Pa: float | None
    verdict: str
    phases_present: tuple[str, ...]
    mole_fractions: tuple[tuple[str, float], ...]   # phase:species -> x
    phase_moles: tuple[tuple[str, float], ...]
    message: str = ""
    coordinates: tuple[tuple[str, float], ...] = ()  # feed-axis values
    certified: bool = False      # the certificate holds (whatever the phases assumed)
    route: str = ""              # the solve route that produced the certified state
    fallback: bool = False       # the first route failed and a later one was needed

    def to_json(self) -> str:
        """One journal line: the fields and the SHA-256 of their canonical text (``row_sha256``)."""
        body = self._body()
        return body[:-1] + f', "row_sha256": "{hashlib.sha256(body.encode("utf-8")).hexdigest()}"}}'

    def _body(self) -> str:
        return json.dumps({"index": self.index, "temperature_K": self.temperature_K, "pressure_Pa": self.pressure_Pa,
                           "verdict": self.verdict, "phases_present": list(self.phases_present),
                           "mole_fractions": [list(x) for x in self.mole_fractions],
                           "phase_moles": [list(x) for x in self.phase_moles], "message": self.message,
                           "coordinates": [list(x) for x in self.coordinates], "certified": self.certified,
                           "route": self.route, "fallback": self.fallback},
                          sort_keys=True)

    @classmethod
    def from_json(cls, text: str, verify: bool = False) -> "PointResult":
        """The record of a journal line; with ``verify``, ValueError unless its hash matches."""
        d = json.loads(text)
        if not isinstance(d, dict):
            raise ValueError("not a record")
        out = cls._from_dict(d)
        if verify:
            body = out._body()
            if d.get("row_sha256") != hashlib.sha256(body.encode("utf-8")).hexdigest() or \
                    json.loads(body) != {k: v for k, v in d.items() if k != "row_sha256"}:
                raise ValueError("its hash does not match its content")
        return out

    @classmethod
    def _from_dict(cls, d: dict) -> "PointResult":
        return cls(d["index"], d["temperature_K"], d["pressure_Pa"], d["verdict"], tuple(d["phases_present"]),
                   tuple((a, b) for a, b in d["mole_fractions"]), tuple((a, b) for a, b in d["phase_moles"]),
                   d.get("message", ""), tuple((a, b) for a, b in d.get("coordinates", ())),
                   bool(d.get("certified", False)), d.get("route", ""), bool(d.get("fallback", False)))


def csv_text(results: Sequence[PointResult]) -> str:
    """CSV of the sweep in grid order (deterministic: fixed columns, repr of floats)."""
    import csv
    import io
    x_cols: list[str] = []
    p_cols: list[str] = []
    for r in results:
        for k, _ in r.mole_fractions:
            if k not in x_cols:
                x_cols.append(k)
        for k, _ in r.phase_moles:
            if k not in p_cols:
                p_cols.append(k)
    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    coord_cols: list[str] = []
    for r in results:
        for k, _ in r.coordinates:
            if k not in coord_cols:
                coord_cols.append(k)
    w.writerow(["index"] + coord_cols + ["temperature_K", "pressure_Pa", "verdict", "phases_present"]
               + [f"x[{c}]" for c in x_cols] + [f"moles[{c}]" for c in p_cols] + ["certified", "route", "message"])
    for r in sorted(results, key=lambda r: r.index):
        xs, ps, cs = dict(r.mole_fractions), dict(r.phase_moles), dict(r.coordinates)
        w.writerow([r.index] + [_num(cs.get(c)) for c in coord_cols]
                   + [_num(r.temperature_K), _num(r.pressure_Pa), r.verdict, " ".join(r.phases_present)]
                   + [_num(xs.get(c)) for c in x_cols] + [_num(ps.get(c)) for c in p_cols]
                   + [yes_no(r.certified), r.route, r.message])
    return buf.getvalue()


def _num(v) -> str:
    return "" if v is None else repr(float(v))


def input_hashes(case) -> dict[str, str]:
    """What a sweep's results depend on, each by SHA-256 or version: the case file, the
    mechanism file and the YAML files it names beside it (or, for packaged species, cantera's
    thermo databases), the tool and cantera."""
    from . import __version__
    out = {f"case file {case.path}": _sha256(case.path)}
    if case.system.mechanism is not None:
        mech = Path(case.system.mechanism)
        out[f"mechanism file {mech}"] = _sha256(mech)
        try:
            text = mech.read_text(encoding="utf-8", errors="replace")
        except OSError:
            text = ""
        for name in sorted(set(re.findall(r"[\w./-]+\.ya?ml", text))):
            other = mech.parent / name
            if other.is_file() and other != mech:
                out[f"thermo file {other}"] = _sha256(other)
    else:
        from .system.mechanism_file import shipped_data_file
        for name in ("nasa_gas.yaml", "nasa_condensed.yaml"):
            found = shipped_data_file(name)
            if found is not None:
                out[f"thermo file {name}"] = _sha256(found)
    import cantera
    out["auditor version"] = __version__
    out["cantera version"] = cantera.__version__
    return out


def journal_header(case, axes) -> str:
    """The journal's first line: the inputs (by hash) and the grid it belongs to."""
    return json.dumps({"journal": 2, "inputs": input_hashes(case),
                       "grid": [[a.name + (":" + ",".join(a.elements) if a.elements else ""), list(a.values)]
                                for a in axes]}, sort_keys=True)


def _header_changes(found: str, header: str) -> str:
    """What differs between a journal's header and this run's, in words ("" when nothing)."""
    try:
        old = json.loads(found)
        if not isinstance(old, dict) or old.get("journal") != 2:
            raise ValueError
    except ValueError:
        return "its first line is not a journal header this version writes"
    new = json.loads(header)
    if old.get("grid") != new["grid"]:
        return "it belongs to another grid (--vary or --ternary differ)"
    before, now = old.get("inputs") or {}, new["inputs"]
    changed = [k for k in now if k in before and before[k] != now[k]]
    changed += [f"{k} (new)" for k in now if k not in before] + [f"{k} (gone)" for k in before if k not in now]
    return f"changed since it was written: {'; '.join(changed)}" if changed else ""


def points_done(journal: Path, header: str, resume: bool, force: bool) -> list[PointResult]:
    """The points a stopped sweep journalled (with ``resume``), else none; refuses a journal of
    another grid or of changed inputs, a damaged line, and an unfinished journal without
    ``resume`` or ``force``."""
    done = []
    again = "; run without --resume (and with --force) to start again"
    if resume and journal.exists():
        text = journal.read_text(encoding="utf-8", errors="replace")
        lines = text.splitlines()
        changes = _header_changes(lines[0], header) if lines else "it is empty"
        if changes:
            raise InputError.single(journal, f"this journal cannot be resumed: {changes}{again}")
        for number, line in enumerate(lines[1:], start=2):
            try:
                done.append(PointResult.from_json(line, verify=True))
            except (ValueError, KeyError, TypeError):
                if number == len(lines) and not text.endswith("\n"):
                    continue  # the last line, cut short by the interruption
                raise InputError.single(journal, f"line {number} of this journal is damaged (not a point record "
                                        f"whose hash matches its content){again}") from None
    elif journal.exists() and not force:
        raise InputError.single(journal, "an unfinished sweep left this journal; pass --resume to continue it "
                                "or --force to start again")
    return done


_HELD: set[str] = set()     # the prefixes this process holds (POSIX locks do not conflict within a process)


class OutputLock:
    """``<prefix>.lock``, held for a sweep's whole run: a second sweep on the prefix is refused.
    A POSIX record lock (``lockf``) belongs to this process alone (worker processes forked from
    it do not inherit it) and the system releases it when the process dies, however it died."""

    def __init__(self, prefix: str | Path):
        self.path = Path(f"{prefix}.lock")
        self._fd: int | None = None

    def _refuse(self, fd: int):
        import os
        holder = os.pread(fd, 64, 0).decode("ascii", "replace").strip()
        os.close(fd)
        raise InputError.single(self.path, "another sweep is writing to this output prefix"
                                + (f" (process {holder})" if holder.isdigit() else "")
                                + "; wait for it to finish or choose another --out")

    def __enter__(self) -> "OutputLock":
        import fcntl
        import os
        while True:
            try:
                fd = os.open(self.path, os.O_RDWR | os.O_CREAT | os.O_NOFOLLOW | os.O_CLOEXEC, 0o644)
            except OSError as exc:
                raise InputError.single(self.path, f"cannot create the sweep's lock file: {exc.strerror or exc}") \
                    from None
            key = str(self.path.resolve())
            if key in _HELD:
                self._refuse(fd)
            try:
                fcntl.lockf(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except OSError:
                self._refuse(fd)
            try:
                same = os.fstat(fd).st_ino == os.stat(self.path).st_ino
            except OSError:
                same = False
            if same:    # not a file its last holder removed while this one waited for it
                break
            os.close(fd)
        os.ftruncate(fd, 0)
        os.pwrite(fd, str(os.getpid()).encode(), 0)
        self._fd, self._key = fd, key
        _HELD.add(key)
        return self

    def __exit__(self, *exc) -> None:
        import os
        if self._fd is not None:
            try:
                self.path.unlink()
            except OSError:
                pass
            _HELD.discard(self._key)
            os.close(self._fd)
            self._fd = None
