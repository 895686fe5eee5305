"""What a sweep writes: its point records, the journal a stopped sweep resumes from, and the CSV.

The journal (``<prefix>.partial.jsonl``) has a header line naming the case file (by SHA-256)
and the grid, then one ``PointResult`` per line as each finishes.  ``points_done`` applies the
resume rules: the journalled points with ``resume``, none without; a journal of another case or
grid, or an unfinished one without ``resume`` or ``force``, is refused (exit 2).
"""
from __future__ import annotations

import hashlib
import json
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
        return json.dumps({"index": self.index, "temperature_K": self.temperature_K, "pressure_Pa": self.pressure_Pa,
                           "verdict": self.verdict, "phases_present": list(self.phases_present),
                           "mole_fractions": [list(x) for x in self.mole_fractions],
                           "phase_moles": [list(x) for x in self.phase_moles], "message": self.message,
                           "coordinates": [list(x) for x in self.coordinates], "certified": self.certified,
                           "route": self.route, "fallback": self.fallback},
                          sort_keys=True)

    @classmethod
    def from_json(cls, text: str) -> "PointResult":
        d = json.loads(text)
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


def journal_header(case_path, axes) -> str:
    """The journal's first line: which case file and grid it belongs to."""
    return json.dumps({"journal": 1, "case_sha256": _sha256(case_path),
                       "grid": [[a.name + (":" + ",".join(a.elements) if a.elements else ""), list(a.values)]
                                for a in axes]}, sort_keys=True)


def points_done(journal: Path, header: str, resume: bool, force: bool) -> list[PointResult]:
    """The points a stopped sweep journalled (with ``resume``), else none; refuses a journal of
    another case or grid, and an unfinished one without ``resume`` or ``force``."""
    done = []
    if resume and journal.exists():
        lines = journal.read_text(encoding="utf-8").splitlines()
        if not lines or lines[0] != header:
            raise InputError.single(journal, "this journal belongs to another case file or grid; run without "
                                    "--resume (and with --force) to start again")
        for line in lines[1:]:
            try:
                done.append(PointResult.from_json(line))
            except (ValueError, KeyError, TypeError):
                continue  # a line cut short by the interruption
    elif journal.exists() and not force:
        raise InputError.single(journal, "an unfinished sweep left this journal; pass --resume to continue it "
                                "or --force to start again")
    return done
