"""The Python interface: ``auditor.check`` and ``auditor.sweep_records`` (re-exported by ``auditor``).

``check`` audits a case given three ways, all read by the same loader as the CLI:

* a case file path (``str`` or ``os.PathLike``);
* a mapping with the keys of a case file (``title``, ``system``, ``feed``, ``specified``, ...),
  written to YAML text in memory and validated exactly as a file (a problem is the same
  located ``CaseError``; its line numbers refer to that generated text, its name is
  ``<mapping>`` and relative mechanism paths start in the current folder);
* a cantera ``Solution`` or ``Mixture`` read from a mechanism file, with ``feed`` and
  ``specified`` given as keyword arguments (defaults: the object's own composition, 1 mol of
  a ``Solution`` or the ``Mixture``'s species amounts, and its temperature and pressure).

It returns an :class:`Audit`, the frozen audit result with ``to_dict()`` (the CLI's JSON
document) and a rich display in notebooks.
"""
from __future__ import annotations

import os
from dataclasses import dataclass, fields
from pathlib import Path
from typing import Any, Mapping, Sequence

from .audit import AuditResult
from .errors import InputError

MAPPING_NAME = "<mapping>"    # the name a case given as a mapping has in messages and documents


@dataclass(frozen=True, repr=False)
class Audit(AuditResult):
    """The audit of one case: ``verdict``, ``reason``, ``counts``, ``equilibrium``,
    ``certificate``, ``findings``, ``claims``; ``to_dict()`` is the JSON of ``auditor check --json``."""

    @classmethod
    def of(cls, r: AuditResult) -> "Audit":
        return cls(**{f.name: getattr(r, f.name) for f in fields(AuditResult)})

    @property
    def counts(self) -> dict:
        """The phase-rule count: species N, phases pi, reactions R, restrictions r, components C, F."""
        pr = self.phase_rule
        return {"species": pr.n_present, "phases": pr.n_phases, "independent_reactions": pr.independent_reactions,
                "restrictions": pr.restrictions, "components": pr.components,
                "degrees_of_freedom": pr.degrees_of_freedom}

    @property
    def certificate(self) -> dict | None:
        """The equilibrium certificate (balances, affinities, uniqueness), or None without a minimisation."""
        eq = self.to_dict()["equilibrium"]
        if eq is None:
            return None
        keys = ("converged", "confirmed", "unique", "unique_basis", "element_balance_error", "max_affinity_RT",
                "potential_residual_RT", "absent_phase_driving_force_RT", "lnK_additivity_error", "jacobian_rcond")
        return {k: eq[k] for k in keys}

    def to_dict(self) -> dict:
        """The audit as the JSON document of ``auditor check --json``."""
        from .report.document import check_document
        return check_document(self)

    def report(self, path: str | os.PathLike, force: bool = False) -> Path:
        """Write the full report; the format follows the suffix (.html, .md, .json)."""
        from .report.files import REPORT_FORMATS, check_target, render_report, write_atomic
        target = check_target(path, [self.case.path], force)
        if target.suffix.lower() not in REPORT_FORMATS:
            raise InputError.single(target, "report format follows the suffix: .html, .md or .json")
        write_atomic(target, render_report(self, target.suffix.lower()))
        return target

    def _repr_html_(self) -> str:
        from .report.html import fragment
        return fragment(self)

    def __repr__(self) -> str:
        from .report.terminal import summary_line
        return f"<Audit {summary_line(self)}>"

    def __str__(self) -> str:
        from .report.terminal import audit_text
        return audit_text(self)


def check(case: Any = None, *, feed: Mapping[str, Any] | None = None, specified: Mapping[str, Any] | None = None,
          confirm: bool = True, **case_keys) -> Audit:
    """Audit one case and return its :class:`Audit`.

    ``case``: a case file path, a mapping with a case file's keys, or a cantera ``Solution``
    or ``Mixture`` (then ``feed`` and ``specified`` apply, and any other case key such as
    ``reactions``, ``coexisting``, ``restrictions``, ``claims`` or ``title`` may be given).
    ``None`` audits the packaged demo case.  ``confirm=False`` skips the Gibbs minimisation.

    Raises ``auditor.errors.InputError`` (a ``CaseError`` for a case) with every problem
    located by key path, as the CLI prints them.
    """
    from .audit import run
    from .case import load_case
    if case is None:
        from importlib import resources
        case = resources.files("auditor") / "data" / "default_case.yaml"
    if isinstance(case, (str, os.PathLike)):
        if feed is not None or specified is not None or case_keys:
            raise TypeError("feed, specified and other case keys apply to a mapping or a cantera object; "
                            "a case file holds its own")
        loaded = load_case(case)
    else:
        if not isinstance(case, Mapping):
            case = case_from_cantera(case, feed=feed, specified=specified, **case_keys)
        elif feed is not None or specified is not None or case_keys:
            case = {**case, **case_keys, **({"feed": feed} if feed is not None else {}),
                    **({"specified": specified} if specified is not None else {})}
        loaded = load_case(Path(MAPPING_NAME), text=mapping_text(case))
    return Audit.of(run(loaded, confirm=confirm))


def mapping_text(case: Mapping) -> str:
    """A case mapping as the YAML text the loader reads (keys in the order given)."""
    import yaml
    try:
        return yaml.safe_dump(_plain(case), sort_keys=False, allow_unicode=True, default_flow_style=False)
    except yaml.YAMLError as exc:
        raise InputError.single(MAPPING_NAME, f"the case mapping holds a value that is not text, a number, "
                                f"a list or a mapping ({str(exc).splitlines()[0]})") from None


def _plain(v):
    """Mappings, lists, strings and numbers as YAML can write them (Paths as text, numpy numbers as floats)."""
    if isinstance(v, Mapping):
        return {str(k): _plain(x) for k, x in v.items()}
    if isinstance(v, (list, tuple)):
        return [_plain(x) for x in v]
    if isinstance(v, os.PathLike):
        return os.fspath(v)
    if isinstance(v, (str, bool, int, float)) or v is None:
        return v
    if hasattr(v, "item"):          # a numpy scalar
        return v.item()
    return v


def _mechanism_of(phases) -> str:
    """The one mechanism file the cantera phases were read from."""
    sources = {p.source for p in phases}
    if len(sources) != 1:
        raise InputError.single(MAPPING_NAME, "the phases come from different files (" + ", ".join(sorted(sources))
                                + "); a case reads one mechanism file: put the phases in one file", "system.mechanism")
    source = sources.pop()
    if not source or not (Path(source).is_file() or _shipped(source)):
        raise InputError.single(MAPPING_NAME, f"this cantera object was not read from a mechanism file that can be "
                                f"found ({source or 'built in memory'}); save it with write_yaml('my_mech.yaml') "
                                "and pass the file name", "system.mechanism")
    return str(Path(source).resolve()) if Path(source).is_file() else source


def _shipped(name: str) -> bool:
    from .system import shipped_data_file
    return shipped_data_file(name) is not None


def case_from_cantera(obj, *, feed: Mapping[str, Any] | None = None, specified: Mapping[str, Any] | None = None,
                      **case_keys) -> dict:
    """The case mapping of a cantera ``Solution`` or ``Mixture`` read from a mechanism file:
    every phase with all its species; the feed (in mol) and T, P from the object unless given."""
    if hasattr(obj, "phase_names") and hasattr(obj, "species_moles"):     # a Mixture
        phases = [obj.phase(i) for i in range(obj.n_phases)]
        own_feed = {name: n * 1000.0 for name, n in zip(obj.species_names, obj.species_moles)}  # kmol -> mol
        names = list(obj.phase_names)
    elif hasattr(obj, "species_names") and hasattr(obj, "X"):             # a Solution
        phases, names = [obj], [obj.name]
        own_feed = dict(zip(obj.species_names, obj.X))                     # 1 mol of the mixture
    else:
        raise TypeError(f"expected a case file path, a mapping, or a cantera Solution or Mixture; got {type(obj).__name__}")
    mapping = {"title": case_keys.pop("title", f"{', '.join(names)} from {phases[0].source}"),
               "system": {"mechanism": _mechanism_of(phases), "phases": {n: "all" for n in names}},
               "reactions": case_keys.pop("reactions", "complete")}
    mapping["feed"] = dict(feed) if feed is not None else \
        {k: f"{float(v)!r} mol" for k, v in own_feed.items() if float(v) > 0}
    mapping["specified"] = dict(specified) if specified is not None else \
        {"temperature": f"{float(obj.T)!r} K", "pressure": f"{float(obj.P)!r} Pa"}
    mapping.update(case_keys)
    return mapping


def sweep_records(case: str | os.PathLike, vary: Sequence[str] = (), *, ternary: str | None = None, divisions: int = 20,
          edges: bool = False, jobs: int = 1, scheduler: str | None = None) -> list:
    """Run the confirmation over a grid (``vary=["temperature=600:1400:25"]``, as ``auditor sweep
    --vary``, or ``ternary="C,H,O"``) and return one record per point in grid order
    (``auditor.sweep_files.PointResult``: index, T, P, verdict, phases, mole fractions, moles,
    message, coordinates, certified); ``write_csv`` writes them as the CLI's CSV."""
    from .executors import make_executor
    from .sweep import parse_ternary, parse_vary, run_sweep
    if bool(vary) == bool(ternary):
        raise InputError.single("vary", "give vary (one or two axes) or ternary, not both and not neither")
    axes = [parse_ternary(ternary, divisions, edges)] if ternary else [parse_vary(v) for v in vary]
    executor = make_executor(jobs, scheduler)
    try:
        return run_sweep(str(Path(case)), axes, executor, workers=executor.workers)
    finally:
        executor.close()


def write_csv(records: Sequence, path: str | os.PathLike, force: bool = False) -> Path:
    """Write sweep records as the CSV of ``auditor sweep``."""
    from .report.files import check_target, write_atomic
    from .sweep_files import csv_text
    target = check_target(path, [], force)
    write_atomic(target, csv_text(records))
    return target
