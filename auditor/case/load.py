"""Reading a case file: the top-level keys title, system, reactions, feed and coexisting here,
the conditions (specified, restrictions, claims) in :mod:`.conditions`."""
from __future__ import annotations

from fractions import Fraction
from pathlib import Path

from .. import settings
from ..errors import CaseError, InputError
from ..system import shipped_data_file
from ..yaml_nodes import NodeMapping, NodeReader, kind_of, load_nodes, suggest
from .conditions import read_approach, read_claims, read_restrictions, read_specified
from .quantities import feed_quantities, rate_time, read_units
from .records import Case, SystemSpec, _exact

TOP_KEYS = ("title", "system", "reactions", "feed", "coexisting", "specified", "restrictions", "claims", "units",
            "margins", "approach")
SYSTEM_KEYS = ("source", "mechanism", "phases", "gas-model")
GAS_MODELS = ("ideal-gas", "peng-robinson")   # system.gas-model: the model of a packaged gas phase


def load_case(path: str | Path, text: str | None = None) -> Case:
    """Read and validate a case file's structure and units.  ``text``: the case's YAML held in
    memory instead of read from ``path`` (relative mechanism paths then start at ``path``'s folder).

    Raises
    ------
    CaseError
        With every problem found in the file (key path and line each).
    """
    from ..system import build_system, check_names
    path = Path(path)
    root = load_nodes(path, text)
    rd = NodeReader(str(path))
    top = rd.plain(root, "")
    rd.check_keys(top, TOP_KEYS, "")
    # read in the order of the keys above (problems on one line keep that order)
    title = _read_title(rd, top, path)
    declared = read_units(rd, rd.get(top, "units"))
    system_spec = _read_system(rd, top, root, path)
    reactions = _read_reactions(rd, rd.get(top, "reactions"), system_spec)
    feed, feed_mass, rate_per = _read_feed(rd, rd.get(top, "feed"), declared)
    coexisting = _read_coexisting(rd, rd.get(top, "coexisting"))
    specified = read_specified(rd, rd.get(top, "specified"), declared)
    restrictions = read_restrictions(rd, rd.get(top, "restrictions"))
    claims = read_claims(rd, rd.get(top, "claims"))
    margin_axes = _read_margins(rd, rd.get(top, "margins"))
    approach = read_approach(rd, rd.get(top, "approach"))
    case = Case(path=path, title=title, system=system_spec, reactions=reactions, feed=feed, coexisting=coexisting,
                specified=specified, restrictions=restrictions, claims=claims, lines=dict(rd.lines),
                feed_mass=feed_mass, text=text, rate_per=rate_per, margins=margin_axes, approach=approach,
                as_written={kp: t for kp, t in rd.texts.items() if kp.startswith(("feed.", "specified."))})
    if rd.problems:
        # report the names that do not exist together with the structural problems, when the
        # system part itself is usable
        if system_spec is not None and not any(p.key_path.startswith("system") for p in rd.problems):
            try:
                check_names(case, build_system(case))
            except InputError as exc:
                rd.problems.extend(exc.problems)
        raise CaseError(sorted(rd.problems, key=lambda p: (p.line or 0, p.column or 0)))
    return case


def _read_title(rd: NodeReader, top: NodeMapping, path: Path) -> str:
    if "title" in top:
        return rd.want_str(rd.get(top, "title"), "title", "a title text") or path.stem
    return path.stem


def _read_source(rd: NodeReader, sm: NodeMapping, snode, path: Path) -> tuple[str, Path | None]:
    """Where the species come from: ("packaged", None) or ("mechanism", the file)."""
    mech = None
    source = "packaged"
    if "mechanism" in sm:
        m = rd.want_str(rd.get(sm, "mechanism"), "system.mechanism", "a mechanism file path")
        if m:
            try:
                mech = (path.parent / m).resolve()
                if not mech.is_file():
                    mech = shipped_data_file(m) or mech
                found = mech.is_file()
            except (ValueError, OSError):   # a NUL byte, a name too long for the system
                mech, found = None, False
            if not found:
                rd.problem(rd.get(sm, "mechanism"), "system.mechanism", f"mechanism file {kind_of(m)} not found "
                           "(looked beside the case file and among cantera's data files)")
            source = "mechanism"
        if "source" in sm:
            rd.problem(rd.get(sm, "source"), "system.source", "give either 'source: packaged' or 'mechanism:', not both")
    elif "source" in sm:
        s = rd.value_of(rd.get(sm, "source"), "system.source")
        if s != "packaged":
            rd.problem(rd.get(sm, "source"), "system.source",
                       f"expected 'packaged' (the thermo databases that ship with cantera), got {kind_of(s)}; "
                       "for a mechanism file write 'mechanism: FILE'")
    else:
        rd.problem(snode, "system", "say where species come from: 'source: packaged' or 'mechanism: FILE'")
    return source, mech


def _read_phase_species(rd: NodeReader, name: str, vn, source: str) -> tuple[str, tuple[str, ...] | None] | None:
    """One entry ``phase: [species, ...]`` (or ``phase: all`` in a mechanism)."""
    kp = f"system.phases.{name}"
    v = rd.plain(vn, kp, names=True)
    if v == "all" and source == "mechanism":
        return name, None
    if isinstance(v, list) and v:
        names = []
        for i, (n, s) in enumerate(v):
            if isinstance(s, str) and s.strip():
                names.append(s.strip())
            else:
                rd.problem(n, f"{kp}[{i}]", f"expected a species name, got {kind_of(s)}")
        dup = {s for s in names if names.count(s) > 1}
        if dup:
            rd.problem(vn, kp, f"species listed twice in phase {name!r}: {', '.join(sorted(dup))}")
        return name, tuple(names)
    rd.problem(vn, kp, "expected a list of species names"
               + (" or 'all'" if source == "mechanism" else "") + f", got {kind_of(v)}")
    return None


def _read_phases(rd: NodeReader, pnode, source: str) -> list[tuple[str, tuple[str, ...] | None]]:
    phases: list[tuple[str, tuple[str, ...] | None]] = []
    pv = rd.value_of(pnode, "system.phases")
    if isinstance(pv, list) and source == "mechanism":
        for i, (n, v) in enumerate(rd.plain(pnode, "system.phases", names=True)):
            if isinstance(v, str):
                phases.append((v, None))
            else:
                rd.problem(n, f"system.phases[{i}]", f"expected a phase name, got {kind_of(v)}")
    elif isinstance(pv, NodeMapping):
        for name, (kn, vn) in pv.items():
            entry = _read_phase_species(rd, name, vn, source)
            if entry is not None:
                phases.append(entry)
    else:
        rd.problem(pnode, "system.phases", "expected phase name: [species, ...]"
                   + (" or a list of phase names" if source == "mechanism" else ""))
    return phases


def _read_system(rd: NodeReader, top: NodeMapping, root, path: Path) -> SystemSpec | None:
    snode = rd.get(top, "system")
    if snode is None:
        rd.problem(root, "system", "missing key 'system' (source: packaged with phases, or mechanism: FILE)")
        return None
    sm = rd.want_mapping(snode, "system")
    if sm is None:
        return None
    rd.check_keys(sm, SYSTEM_KEYS, "system")
    source, mech = _read_source(rd, sm, snode, path)
    phases: list[tuple[str, tuple[str, ...] | None]] = []
    pnode = rd.get(sm, "phases")
    if pnode is None:
        if source == "packaged":
            rd.problem(snode, "system.phases", "missing key 'phases' (phase name: [species, ...])")
    else:
        phases = _read_phases(rd, pnode, source)
    if len(phases) > settings.MAX_CASE_PHASES:
        rd.problem(pnode, "system.phases", f"{len(phases)} phases is more than the limit of {settings.MAX_CASE_PHASES}")
    n_sp = sum(len(s or ()) for _, s in phases)
    if n_sp > settings.MAX_CASE_SPECIES:
        rd.problem(pnode, "system.phases", f"{n_sp} species is more than the limit of {settings.MAX_CASE_SPECIES}")
    return SystemSpec(source, mech, tuple(phases), _read_gas_model(rd, sm, source))


def _read_gas_model(rd: NodeReader, sm: NodeMapping, source: str) -> str:
    """``system.gas-model``: ideal-gas (the default) or peng-robinson, for a packaged gas phase."""
    node = rd.get(sm, "gas-model")
    if node is None:
        return "ideal-gas"
    v = rd.value_of(node, "system.gas-model")
    if source != "packaged":
        rd.problem(node, "system.gas-model", "'gas-model' applies to packaged species; a mechanism file sets each "
                   "phase's model itself (thermo: Peng-Robinson)")
    elif v not in GAS_MODELS:
        rd.problem(node, "system.gas-model", f"expected one of {', '.join(GAS_MODELS)}, got {kind_of(v)}"
                   + (suggest(v, GAS_MODELS) if isinstance(v, str) else ""))
    else:
        return v
    return "ideal-gas"


def _read_reactions(rd: NodeReader, rnode, system_spec: SystemSpec | None) -> str | tuple[tuple[str, str], ...]:
    if rnode is None:
        return "complete"
    rv = rd.value_of(rnode, "reactions")
    if isinstance(rv, str):
        if rv not in ("complete", "from-mechanism"):
            rd.problem(rnode, "reactions", f"expected 'complete', 'from-mechanism' or a list of equations, got {rv!r}"
                       + suggest(rv, ("complete", "from-mechanism")))
        elif rv == "from-mechanism" and system_spec is not None and system_spec.source != "mechanism":
            rd.problem(rnode, "reactions", "'from-mechanism' needs 'system: mechanism: FILE'")
        else:
            return rv
        return "complete"
    if isinstance(rv, list):
        eqs = []
        for i, (n, e) in enumerate(rv):
            if isinstance(e, str) and e.strip():
                eqs.append((e, f"reactions[{i}]"))
            else:
                rd.problem(n, f"reactions[{i}]", f"expected an equation such as 'CO + H2O <=> CO2 + H2', got {kind_of(e)}")
        if len(eqs) > settings.MAX_CASE_REACTIONS:
            rd.problem(rnode, "reactions", f"{len(eqs)} reactions is more than the limit of {settings.MAX_CASE_REACTIONS}")
        return tuple(eqs)
    rd.problem(rnode, "reactions", f"expected 'complete', 'from-mechanism' or a list of equations, got {kind_of(rv)}")
    return "complete"


def _read_feed(rd: NodeReader, fnode, declared: dict[str, str]
               ) -> tuple[tuple[tuple[str, Fraction], ...] | None, frozenset[str], str | None]:
    """The feed amounts, exact as written (mol, or kg for the species given in a mass unit),
    the species given in a mass unit, and the time unit of a feed written as rates (the
    amounts are then those fed in one time unit)."""
    if fnode is None:
        return None, frozenset(), None
    fm = rd.want_mapping(fnode, "feed")
    if fm is None:
        return None, frozenset(), None
    items, feed_mass = [], set()
    quantities = feed_quantities(rd, fm, declared)
    for sp, q in quantities:
        items.append((sp, _exact(q)))
        if q.kind == "mass":
            feed_mass.add(sp)
    if fm and items and all(a == 0 for _, a in items):
        rd.problem(fnode, "feed", "the feed is empty (every amount is zero)")
    return tuple(items), frozenset(feed_mass), rate_time(quantities)


def _read_coexisting(rd: NodeReader, cnode) -> tuple[str, ...] | None:
    if cnode is None:
        return None
    cl = rd.plain(cnode, "coexisting", names=True)
    if not isinstance(cl, list):
        rd.problem(cnode, "coexisting", f"expected a list of phase names, got {kind_of(cl)}")
        return None
    names = []
    for i, (n, v) in enumerate(cl):
        if isinstance(v, str) and v in names:
            rd.problem(n, f"coexisting[{i}]", f"phase {v!r} is listed twice; keep one")
        elif isinstance(v, str):
            names.append(v)
        else:
            rd.problem(n, f"coexisting[{i}]", f"expected a phase name, got {kind_of(v)}")
    if not names and not cl:
        rd.problem(cnode, "coexisting", "at least one phase must be assumed present")
    return tuple(names)


def _read_margins(rd: NodeReader, mnode) -> tuple[str, ...] | None:
    """``margins: [feed.H2O, ratio.O/C]``: feed axes probed for phase boundaries, written like
    sweep axes (temperature and pressure are always probed; naming them changes nothing)."""
    if mnode is None:
        return None
    ml = rd.plain(mnode, "margins", names=True)
    if not isinstance(ml, list):
        rd.problem(mnode, "margins", f"expected a list of axes such as [feed.H2O, ratio.O/C], got {kind_of(ml)}")
        return None
    axes: list[str] = []
    for i, (n, v) in enumerate(ml):
        pair = v[len("ratio."):].split("/") if isinstance(v, str) and v.startswith("ratio.") else []
        ok = isinstance(v, str) and (v in ("temperature", "pressure") or (v.startswith("feed.") and v[5:].strip())
                                     or (len(pair) == 2 and all(t.strip() for t in pair)
                                         and pair[0].strip() != pair[1].strip()))
        if not ok:
            rd.problem(n, f"margins[{i}]", "expected temperature, pressure, feed.SPECIES (mol of a feed species) or "
                       f"ratio.X/Y (atoms of element X per atom of Y in the feed), got {v!r}")
        elif v in axes:
            rd.problem(n, f"margins[{i}]", f"axis {v!r} is listed twice; keep one")
        else:
            axes.append(v)
    return tuple(axes)
