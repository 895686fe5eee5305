"""Command line: argument parsing and dispatch only."""
from __future__ import annotations

import argparse
import gc
import json
import sys
import warnings
from pathlib import Path

from . import __version__
from .errors import InputError
from .verdicts import Verdict

EXIT_OK, EXIT_PROBLEM, EXIT_INPUT, EXIT_INTERNAL, EXIT_INTERRUPTED = 0, 1, 2, 3, 130

EPILOG_REACTIONS = """example:
  auditor reactions gri30.yaml
  auditor reactions ptcombust.yaml --phase Pt_surf --json
  auditor reactions h2o2.yaml --phase ohmech-RK      choose one of two models of a mixture
A bare file name is also looked up among the data files that ship with cantera. Without
--phase every phase is used except a later alternative model of a mixture already used
(the output names it). Reactions are numbered from 1; JSON indices count from 0."""


def _parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="auditor",
        description="Audit the setup of a chemical-equilibrium problem: balances, independent "
                    "reactions, phase rule, specifications, and a confirming Gibbs minimisation.",
        epilog="examples:\n  auditor check                      audit the packaged demo case\n"
               "  auditor new my_case.yaml           write a commented starter case\n"
               "  auditor check my_case.yaml --report audit.html\n"
               "  auditor reactions gri30.yaml       stoichiometry of a mechanism\n"
               "  auditor species CaCO3              find species names\n"
               "  auditor sweep my_case.yaml --vary temperature=600:1400:25\n"
               "run 'auditor COMMAND --help' for each command's options.",
        formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--version", action="version", version=f"auditor {__version__}")
    p.add_argument("--debug", action="store_true", help="show a traceback on errors")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    c = sub.add_parser("check", help="audit case files (default: the packaged demo case)",
                       epilog=EPILOG_CHECK, formatter_class=argparse.RawDescriptionHelpFormatter)
    c.add_argument("cases", nargs="*", metavar="CASE", help="case file(s) in YAML")
    c.add_argument("--json", action="store_true", help="print the audit as JSON")
    c.add_argument("--explain", action="store_true", help="print each verdict rule as it was applied")
    c.add_argument("--quiet", action="store_true", help="no output for a single case; exit status only")
    c.add_argument("--basis", action="append", choices=("dry", "ppm", "mass"), metavar="BASIS",
                   help="also show the equilibrium composition on a basis: dry (water left out), ppm (minor "
                        "species, ppm by volume), mass (mass fractions and masses); repeatable")
    c.add_argument("--no-confirm", action="store_true", help="skip the Gibbs minimisation (counting only)")
    c.add_argument("--margins", action="store_true", help="also find how far the confirmed state is from every "
                   "phase boundary in T, P and the case's 'margins:' feed axes, and its sensitivities (computed "
                   "anyway when the case has a 'margins:' key)")
    c.add_argument("--report", metavar="PATH", help="write the full audit; the format follows the suffix "
                   "(.html, .md, .json); several cases give one report, a comparison table first")
    c.add_argument("--force", action="store_true", help="overwrite an existing report")
    c.add_argument("--jobs", type=int, default=None, metavar="N",
                   help="worker processes for several cases (default: all cores when more than two cases)")
    c.add_argument("--scheduler", metavar="ADDRESS", help="audit several cases on a Dask cluster: tcp://HOST:PORT "
                   "or local:N (needs the cluster extra)")
    c.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS)
    w = sub.add_parser("sweep", help="run the confirmation over a grid of temperature, pressure or feed composition",
                       epilog=EPILOG_SWEEP, formatter_class=argparse.RawDescriptionHelpFormatter)
    w.add_argument("case", metavar="CASE", help="the case file to sweep (YAML, with a feed)")
    w.add_argument("--vary", action="append", metavar="NAME=START:STOP:STEP",
                   help="temperature (K), pressure (bar), feed.SPECIES (mol of a feed species) or ratio.X/Y "
                        "(atoms of element X per atom of Y in the feed); repeat for a two-dimensional grid")
    w.add_argument("--ternary", metavar="X,Y,Z", help="map three elements' feed composition at the case's T and P "
                   "(each fed as the case's single-element feed species, e.g. C(gr), H2, O2)")
    w.add_argument("--divisions", type=int, default=20, metavar="N",
                   help="ternary: atom ratios i:j:k with i + j + k = N (default 20)")
    w.add_argument("--edges", action="store_true", help="ternary: include the sides of the triangle "
                   "(compositions lacking an element)")
    w.add_argument("--out", metavar="PREFIX", help="output prefix (default: CASE name + _sweep)")
    w.add_argument("--jobs", type=int, default=None, metavar="N", help="worker processes (default: all cores)")
    w.add_argument("--scheduler", metavar="ADDRESS", help="a Dask scheduler tcp://HOST:PORT, or local:N "
                   "(needs the cluster extra)")
    w.add_argument("--block-size", type=int, default=None, metavar="N", help="grid points per unit of work")
    w.add_argument("--resume", action="store_true", help="continue a stopped sweep from its journal")
    w.add_argument("--force", action="store_true", help="overwrite existing outputs")
    w.add_argument("--quiet", action="store_true", help="no summary line")
    w.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS)
    n = sub.add_parser("new", help="write a commented starter case file",
                       epilog="example:\n  auditor new my_case.yaml && auditor check my_case.yaml",
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    n.add_argument("path", metavar="PATH", help="where to write the starter case (a .yaml file)")
    n.add_argument("--force", action="store_true", help="overwrite an existing file")
    n.add_argument("--quiet", action="store_true", help="write the file without printing what to do next")
    n.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS)
    q = sub.add_parser("species", help="search the packaged thermo databases by name or formula",
                       epilog="examples:\n  auditor species CaCO3\n  auditor species 'C(gr)'\n  auditor species methanol"
                              "\n  auditor species steam\n  auditor species graphite\n  auditor species H2O --json\n"
                              "A QUERY is a common name (methanol, steam, lime), part of a database name, or a formula.",
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    q.add_argument("query", metavar="QUERY", help="a common name (methanol, steam, graphite), part of a "
                   "database name, or a formula such as CH4O")
    q.add_argument("--limit", type=int, default=40, metavar="N", help="show at most N matching species (default 40)")
    q.add_argument("--json", action="store_true", help="print the matches as a JSON list (name, kind, formula, ...)")
    q.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS)
    r = sub.add_parser("reactions", help="stoichiometric analysis of a mechanism's own reactions",
                       epilog=EPILOG_REACTIONS, formatter_class=argparse.RawDescriptionHelpFormatter)
    r.add_argument("mechanism", metavar="MECHANISM", help="Cantera-format YAML file")
    r.add_argument("--phase", action="append", metavar="NAME", help="analyse only this phase (repeatable)")
    r.add_argument("--json", action="store_true", help="print one JSON document (compact unless on a terminal)")
    r.add_argument("--pretty", action="store_true", help="indent the JSON document even when not on a terminal")
    r.add_argument("--limit", type=int, default=50, metavar="N",
                   help="list at most N items per section in the text output (default 50; 0 = all)")
    r.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS)
    return p


EPILOG_CHECK = """examples:
  auditor check                      audit the packaged demo case
  auditor check cases/*.yaml         one summary line per case, worst exit status
  auditor check my_case.yaml --json  one JSON document (a list for several cases)
exit status: 0 well posed and every claim holds, 1 the audit found a problem,
2 an input could not be read or is invalid."""


def _audit_all(paths, args, tick=lambda: None):
    """(path, AuditResult or InputError) in the order given; several cases go to an executor.
    ``tick`` is called once per finished case (the progress bar)."""
    from .audit import audit_for_batch
    confirm = not args.no_confirm
    jobs = args.jobs if args.jobs is not None else (1 if len(paths) <= 2 else None)
    if len(paths) == 1 or (jobs == 1 and not args.scheduler) or args.debug:
        for path in paths:
            result = audit_for_batch(path, confirm, raise_errors=args.debug, margins=args.margins)
            tick()
            yield path, result
        return
    from .executors import make_executor
    executor = make_executor(jobs, args.scheduler)
    try:
        done = {}
        for (path, *_), result in executor.map_blocks(audit_for_batch, [(p, confirm, False, args.margins)
                                                                              for p in paths]):
            done[path] = result
            tick()
        for path in paths:
            yield path, done[path]
    finally:
        executor.close()


def _cmd_check(args) -> int:
    from importlib import resources
    from .report.console import colourise, progress_bar, terminal_safe
    from .report.document import check_document
    from .report.terminal import audit_text, summary_line
    paths = args.cases or [str(resources.files("auditor") / "data" / "default_case.yaml")]
    if args.report:
        from .report.files import REPORT_FORMATS, check_target
        try:
            check_target(args.report, paths, args.force)
            if Path(args.report).suffix.lower() not in REPORT_FORMATS:
                raise InputError.single(args.report, "report format follows the suffix: .html, .md or .json")
        except InputError as exc:
            print(terminal_safe(f"auditor: error: {exc}"), file=sys.stderr)
            return EXIT_INPUT
    results, docs, status = [], [], EXIT_OK
    with progress_bar(len(paths), "case", args.quiet or len(paths) == 1, every_update=True) as bar:
        for path, result in _audit_all(paths, args, tick=lambda: bar.update(1)):
            if isinstance(result, InputError):
                if args.debug:
                    raise result
                bar.clear()
                print(terminal_safe(f"auditor: error: {result}"), file=sys.stderr)
                status = max(status, EXIT_INPUT)
                continue
            if isinstance(result, BaseException):
                raise result
            results.append(result)
            status = max(status, result.exit_status)
    if args.report and results:
        from .report.files import render_report, write_atomic
        suffix = Path(args.report).suffix.lower()
        if len(paths) > 1:       # several operating cases: one document, the comparison first
            from .report.comparison import render_cases
            write_atomic(args.report, render_cases(results, suffix))
        else:
            write_atomic(args.report, render_report(results[0], suffix))
        if not args.quiet:
            print(f"report written to {args.report}", file=sys.stderr)
    if args.json and results:
        docs = [check_document(r) for r in results]
        print(json.dumps(docs[0] if len(paths) == 1 else docs, indent=1))
    elif args.report and results and not args.quiet and len(paths) == 1:
        print(summary_line(results[0]))
    elif len(paths) == 1 and results and not args.quiet:
        sys.stdout.write(colourise(audit_text(results[0], explain=args.explain)))
        if args.basis:
            from .report.bases import basis_lines
            print("\n".join(basis_lines(results[0], args.basis)))
    elif not args.quiet or len(paths) > 1:
        for r in results:
            print(terminal_safe(summary_line(r)))
    return status


EPILOG_SWEEP = """examples:
  auditor sweep cases/reformer_design_point.yaml --vary temperature=600:1400:25
  auditor sweep my_case.yaml --vary temperature=500:900:50 --vary pressure=1:40:5 --out envelope
  auditor sweep my_case.yaml --vary "temperature=400:700:10 degC" --jobs 2
  auditor sweep my_case.yaml --vary feed.H2O=1:5:0.5         mol of H2O in the feed
  auditor sweep my_case.yaml --vary ratio.O/C=0.5:3:0.25 --vary ratio.H/C=2:4:0.5
  auditor sweep chem.yaml --ternary C,H,O --divisions 20     a C-H-O map at the case's T, P
Temperature is in K, pressure in bar and feed amounts in mol unless a unit follows STEP.
A ratio axis leaves the feed species holding neither element as they are and changes the
others as little as possible (least squares, in mol) with their total amount kept.
A ternary point feeds each element as the case's single-element feed species (e.g.
C(gr), H2, O2) with the case's total atoms; without --edges every element is present:
(N-1)(N-2)/2 points, else (N+1)(N+2)/2.
Writes PREFIX.csv and PREFIX.svg (for --ternary: a labelled triangle marking the phases
present and their boundaries); a map (two axes, or --ternary) also gets its phase boundaries
traced between grid points, drawn on the picture with the case's design point, and listed in
PREFIX_boundaries.csv; finished points are journalled in PREFIX.partial.jsonl so
that --resume can continue a run that was stopped."""


def _sweep_axes(args) -> list:
    """The axes of the grid from --vary or --ternary, with the counts checked."""
    from .sweep import parse_ternary, parse_vary
    if bool(args.vary) == bool(args.ternary):
        raise InputError.single("--vary", "give --vary (one or two axes) or --ternary, not both and not neither")
    axes = [parse_vary(v) for v in args.vary] if args.vary else [parse_ternary(args.ternary, args.divisions, args.edges)]
    for name in ("jobs", "block_size"):
        value = getattr(args, name)
        if value is not None and value < 1:
            raise InputError.single("--" + name.replace("_", "-"), f"must be at least 1, got {value}")
    return axes


def _run_points(args, case, axes, journal: Path, header: str, done: list) -> list:
    """Every point of the grid, each journalled as it finishes, with a progress bar."""
    from .executors import make_executor
    from .report.console import progress_bar
    from .report.files import write_atomic
    from .sweep import grid, run_sweep
    total = len(grid(case, axes))                        # checks the axes before any file is touched
    executor = make_executor(args.jobs, args.scheduler)  # checks --scheduler likewise
    # rewrite the journal with only whole lines, so new results never join a fragment
    try:
        write_atomic(journal, "\n".join([header] + [r.to_json() for r in done]) + "\n")
    except BaseException:
        executor.close()
        raise
    try:
        with open(journal, "a", encoding="utf-8") as jf, \
                progress_bar(total, "point", args.quiet, initial=len(done)) as bar:
            def on_result(r):
                jf.write(r.to_json() + "\n")
                jf.flush()
                bar.update(1)
            return run_sweep(str(Path(args.case)), axes, executor, done=done, on_result=on_result,
                             block_size=args.block_size, workers=executor.workers)
    finally:
        executor.close()


def _sweep_picture(args, case, axes, results, boundaries=None) -> str:
    """The ternary map, or the plot of the swept axes (a map with its traced ``boundaries``)."""
    if args.ternary:
        from .report.sweep_plot import picture_stamp
        from .report.ternary import ternary_svg
        s, written = case.specified, case.as_written       # T and P as the case file writes them
        return ternary_svg(results, axes[0].elements, args.divisions,
                           f"T = {written.get('specified.temperature', f'{s.temperature_K:g} K')}, "
                           f"P = {written.get('specified.pressure', f'{s.pressure_Pa / 1e5:g} bar')}", case.title,
                           picture_stamp(case), boundaries=boundaries)
    from .report.sweep_plot import sweep_svg, unit_of
    assumed = case.coexisting or tuple(p for p, _ in case.system.phases)
    return sweep_svg(results, axes, assumed, case=case, units=[unit_of(v) for v in args.vary], boundaries=boundaries)


def _cmd_sweep(args) -> int:
    from .case import load_case
    from .report.console import sweep_summary
    from .report.files import check_target, write_atomic
    from .sweep_files import csv_text, journal_header, points_done
    axes = _sweep_axes(args)
    case = load_case(args.case)
    if case.feed is None:
        raise InputError.single(args.case, "a sweep runs the Gibbs minimisation, which needs a feed; this case "
                                "has none (it is an intensive problem: use 'auditor check')", "feed")
    prefix = args.out or Path(args.case).stem + "_sweep"
    csv_path, svg_path, journal = Path(f"{prefix}.csv"), Path(f"{prefix}.svg"), Path(f"{prefix}.partial.jsonl")
    lines_path = Path(f"{prefix}_boundaries.csv") if len(axes) == 2 or args.ternary else None
    if not csv_path.parent.resolve().is_dir():
        raise InputError.single(csv_path.parent, "output directory does not exist")
    for target in filter(None, (csv_path, svg_path, lines_path)):
        check_target(target, [args.case], args.force or args.resume)
    header = journal_header(args.case, axes)
    results = _run_points(args, case, axes, journal, header, points_done(journal, header, args.resume, args.force))
    write_atomic(csv_path, csv_text(results))
    boundaries = note = None
    if lines_path is not None:     # a map: its phase boundaries traced between grid points
        from .report.boundary_lines import traced
        boundaries, note = traced(str(Path(args.case)), axes, results, case, lines_path)
    write_atomic(svg_path, _sweep_picture(args, case, axes, results, boundaries))
    journal.unlink(missing_ok=True)
    if not args.quiet:
        print("\n".join(sweep_summary(results, bool(args.ternary), csv_path, svg_path)))
        if note:
            print(note)
    if args.ternary:
        return EXIT_OK if all(r.certified for r in results) else EXIT_PROBLEM
    return EXIT_OK if all(r.verdict == Verdict.WELL_POSED for r in results) else EXIT_PROBLEM


def _cmd_new(args) -> int:
    from importlib import resources
    from .report.files import check_target, write_atomic
    target = check_target(args.path, [], args.force)
    write_atomic(target, (resources.files("auditor") / "data" / "starter_case.yaml").read_text(encoding="utf-8"))
    if not args.quiet:
        print(f"wrote {target}; edit it, then run: auditor check {target}")
    return EXIT_OK


def _cmd_species(args) -> int:
    from .system import find_species
    hits = find_species(args.query, args.limit)
    if args.json:
        print(json.dumps(hits, indent=1))
        return EXIT_OK if hits else EXIT_PROBLEM
    if not hits:
        from .system import species_suggestions
        close = species_suggestions(args.query)
        print(f"no species in the packaged databases matches {args.query!r}"
              + (f"; did you mean {close[0]}? (other close names: {', '.join(close[1:])})" if len(close) > 1
                 else f"; did you mean {close[0]}?" if close else ""))
        return EXIT_PROBLEM
    from .report.console import species_table
    print("\n".join(species_table(hits)))
    return EXIT_OK


def _cmd_reactions(args) -> int:
    from .report.reactions import reactions_document, reactions_text
    from .stoichiometry import analyse, mechanism_reactions
    from .system import from_mechanism, shipped_data_file
    path = args.mechanism if Path(args.mechanism).exists() else str(shipped_data_file(args.mechanism) or args.mechanism)
    # The exact analysis of a large mechanism allocates a few hundred thousand small objects
    # and builds no reference cycles; the cyclic collector's passes over them cost a fifth of
    # the run, so it is paused for this bounded piece of work (reference counting still frees).
    gc.disable()
    try:
        system = from_mechanism(path, args.phase)
        analysis = analyse(system, mechanism_reactions(system))
        doc = reactions_document(analysis, system.library_warnings, system) if args.json else None
    finally:
        gc.enable()
    if args.json:
        # indented for a person at a terminal; compact (and several times faster) for a program
        if args.pretty or sys.stdout.isatty():
            print(json.dumps(doc, indent=1))
        else:
            print(json.dumps(doc, separators=(",", ":")))
    else:
        sys.stdout.write(reactions_text(analysis, path, None if args.limit == 0 else args.limit,
                                        system.library_warnings, system))
    return EXIT_PROBLEM if analysis.unbalanced else EXIT_OK


def main(argv: list[str] | None = None) -> int:
    parser = _parser()
    args = parser.parse_args(argv)
    if args.command is None:
        parser.print_help()
        return EXIT_INPUT
    handler = {"check": _cmd_check, "reactions": _cmd_reactions, "sweep": _cmd_sweep, "new": _cmd_new,
               "species": _cmd_species}[args.command]
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return handler(args)
    except InputError as exc:
        if args.debug:
            raise
        from .report.console import terminal_safe
        print(terminal_safe(f"auditor: error: {exc}"), file=sys.stderr)
        return EXIT_INPUT
    except KeyboardInterrupt:
        print("auditor: interrupted", file=sys.stderr)
        return EXIT_INTERRUPTED
    except BrokenPipeError:
        # the reader went away (e.g. piped into head): not an error of ours
        import os
        devnull = os.open(os.devnull, os.O_WRONLY)
        os.dup2(devnull, sys.stdout.fileno())
        return EXIT_OK
    except Exception as exc:  # a bug: say so plainly, without a traceback unless asked
        if args.debug:
            raise
        print(f"auditor: internal error: {type(exc).__name__}: {exc} (run with --debug for details)",
              file=sys.stderr)
        return EXIT_INTERNAL
