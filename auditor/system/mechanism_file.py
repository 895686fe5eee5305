"""What a mechanism file declares, read as YAML without cantera: its phases' entries, the
phases that are alternative models of one mixture (an ideal gas and its real-gas twin),
and the data files that ship with cantera."""
from __future__ import annotations

import functools
import re
from pathlib import Path
from typing import Sequence

from ..errors import MechanismError
from .file_guard import check_text, checked_stat

def shipped_data_file(name: str) -> Path | None:
    """A data file shipped with cantera (``gri30.yaml``, ``example_data/...``), for a name not
    found where the user said; never looked up in the current directory."""
    if Path(name).is_absolute() or ".." in Path(name).parts:
        return None
    try:
        import cantera as ct
    except ImportError:
        return None
    for d in ct.get_data_directories():
        if not Path(d).is_absolute():
            continue  # '.' is the current directory: a case must not depend on where it is run
        for candidate in (Path(d) / name, Path(d) / "example_data" / name):
            if candidate.is_file():
                return candidate.resolve()
    return None


def shipped_name(path: str | Path) -> str | None:
    """The name a file shipped with cantera goes by (``h2o2.yaml``, ``example_data/x.yaml``):
    its path inside cantera's data directory; None for any other file.  Output names shipped
    files this way, so that nothing depends on where the library is installed."""
    if path in (None, "", "packaged"):
        return None
    try:
        import cantera as ct
        p = Path(path).resolve()
    except (ImportError, OSError, ValueError):
        return None
    for d in ct.get_data_directories():
        if not Path(d).is_absolute():
            continue
        try:
            return p.relative_to(Path(d).resolve()).as_posix()
        except ValueError:
            continue
    return None


def display_source(path: str | Path) -> str:
    """A mechanism path for output: a shipped file by its name, any other file as given."""
    return shipped_name(path) or str(path)


def shipped_by() -> str:
    """Which library ships the data files named by :func:`shipped_name`, with its version."""
    try:
        import cantera as ct
        return f"cantera {ct.__version__}"
    except ImportError:
        return "cantera"


_TOP_KEY = re.compile(r"^[A-Za-z_][\w-]*\s*:")
_TOP_KEY_ML = re.compile(r"^[A-Za-z_][\w-]*\s*:", re.M)


def mechanism_phase_names(path: str | Path) -> list[str]:
    """Names of the phases a Cantera-format YAML file defines, in file order."""
    return [str(p["name"]) for p in mechanism_phase_entries(path)]


def mechanism_phase_entries(path: str | Path) -> list[dict]:
    """The entries of a Cantera-format YAML file's ``phases:`` list, without parsing the whole file.

    Full YAML parsing of a large mechanism takes seconds, so only the top-level
    ``phases:`` block is cut out and parsed.
    """
    return list(_phase_entries(*_file_key(Path(path))))


def _file_key(path: Path) -> tuple[str, int, int]:
    st = checked_stat(path)
    return str(path), st.st_mtime_ns, st.st_size


@functools.lru_cache(maxsize=16)
def _phase_entries(path_text: str, _mtime: int, _size: int) -> tuple[dict, ...]:
    import yaml
    path = Path(path_text)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise MechanismError.single(path, f"cannot read mechanism file: {exc}") from None
    check_text(path, text)      # before any parser expands it (cantera reads the same file next)
    # the block runs from a line starting 'phases:' to the next top-level key (found by
    # searching the text: splitting an 8 MB file into lines costs more than the parse)
    at = 0 if text.startswith("phases:") else text.find("\nphases:") + 1
    if at == 0 and not text.startswith("phases:"):
        raise MechanismError.single(path, "no top-level 'phases:' section: not a Cantera-format mechanism")
    nl = text.find("\n", at)
    nxt = _TOP_KEY_ML.search(text, nl + 1 if nl >= 0 else len(text))
    block_text = text[at:nxt.start() if nxt else len(text)]
    start = text.count("\n", 0, at)    # 0-based line of 'phases:'
    try:
        try:   # libyaml when present (same result, faster); errors are worded by the Python parser
            block = yaml.load(block_text, Loader=getattr(yaml, "CSafeLoader", yaml.SafeLoader))
        except yaml.YAMLError:
            block = yaml.safe_load(block_text)
        entries = tuple(dict(p) for p in block["phases"])
        for p in entries:
            p["name"] = str(p["name"])
    except yaml.YAMLError as exc:
        mark = getattr(exc, "problem_mark", None)
        line = start + 1 + mark.line if mark else start + 1
        what = getattr(exc, "problem", None) or "cannot be parsed"
        raise MechanismError.single(path, f"malformed 'phases:' section: {what}", "phases", line) from None
    except (TypeError, KeyError, AttributeError, ValueError):
        raise MechanismError.single(path, "malformed 'phases:' section: expected a list of phases, each with a "
                                    "'name'", "phases", start + 1) from None
    return entries


def _canonical(value) -> str:
    """A comparable text of a ``species:`` or ``reactions:`` entry (lists of names as sets)."""
    import json

    def norm(v):
        if isinstance(v, dict):
            return {str(k): norm(x) for k, x in v.items()}
        if isinstance(v, list):
            items = [norm(x) for x in v]
            if all(isinstance(x, str) for x in items):
                return sorted(items)
            return items
        return v
    return json.dumps(norm(value), sort_keys=True, default=str)


GAS_MODELS = ("ideal-gas", "Redlich-Kwong", "Peng-Robinson", "plasma")


def _alternative_key(entry: dict) -> tuple[str, str, bool, str]:
    species = _canonical(entry.get("species", "all"))
    kinetics = entry.get("kinetics")
    reactions = "none" if kinetics in (None, "none") else _canonical(entry.get("reactions", "all"))
    return species, reactions, entry.get("thermo") in GAS_MODELS, str(entry.get("thermo"))


def are_alternatives(a: dict, b: dict) -> bool:
    """Two phase entries model one mixture when they list the same species and either both
    are gases (a gas mixture never splits into two gas phases) or they hold the same
    reactions under different thermo models (an ideal and a real-fluid model).  Two
    condensed phases defined alike may be the two liquids of a split, so they are not."""
    ka, kb = _alternative_key(a), _alternative_key(b)
    return ka[0] == kb[0] and ((ka[2] and kb[2]) or (ka[1] == kb[1] and ka[3] != kb[3]))


def default_phases(path: str | Path) -> tuple[list[str], list[tuple[str, str]]]:
    """The phases used when none are named: every phase of the file except a later
    alternative model of one already used (cantera itself loads the first phase of a file).

    Returns (phases used, [(phase set aside, the alternative used instead)]).
    """
    entries = mechanism_phase_entries(path)
    used: list[dict] = []
    aside: list[tuple[str, str]] = []
    for e in entries:
        twin = next((u for u in used if are_alternatives(u, e)), None)
        if twin is None:
            used.append(e)
        else:
            aside.append((e["name"], twin["name"]))
    return [u["name"] for u in used], aside


def alternative_pairs(path: str | Path, names: Sequence[str]) -> list[tuple[str, str]]:
    """Pairs among ``names`` that are alternative models of one mixture (see :func:`are_alternatives`)."""
    by_name = {e["name"]: e for e in mechanism_phase_entries(path)}
    chosen = [by_name[n] for n in dict.fromkeys(names) if n in by_name]
    return [(a["name"], b["name"]) for i, a in enumerate(chosen) for b in chosen[i + 1:] if are_alternatives(a, b)]


def alternatives_message(path: str | Path, a: str, b: str) -> str:
    return (f"phases {a!r} and {b!r} of {Path(path).name} list the same species and "
            f"{'reactions' if _alternative_key(_entry(path, a))[1] == _alternative_key(_entry(path, b))[1] else 'are both gases'}"
            f": they are alternative models of one mixture, not two phases that coexist; name only one of them")


def _entry(path, name: str) -> dict:
    return next(e for e in mechanism_phase_entries(path) if e["name"] == name)
