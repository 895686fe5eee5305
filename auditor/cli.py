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
    c.add_argument("--no-confirm", action="store_true", help="skip the Gibbs minimisation (counting only)")
    c.add_argument("--report", metavar="PATH", help="write the full audit; the format follows the suffix "
                   "(.html, .md, .json)")
    c.add_argument("--force", action="store_true", help="overwrite an existing report")
    c.add_argument("--jobs", type=int, default=None, metavar="N",
                   help="worker processes for several cases (default: all cores when more than two cases)")
    c.add_argument("--scheduler", metavar="ADDRESS", help="audit several cases on a Dask cluster: tcp://HOST:PORT "
                   "or local:N (needs the cluster extra)")
    c.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS)
    w = sub.add_parser("sweep", help="run the confirmation over a grid of temperature and pressure",
                       epilog=EPILOG_SWEEP, formatter_class=argparse.RawDescriptionHelpFormatter)
    w.add_argument("case", metavar="CASE")
    w.add_argument("--vary", action="append", required=True, metavar="NAME=START:STOP:STEP",
                   help="temperature (K) or pressure (bar); repeat for a two-dimensional grid")
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
    n.add_argument("path", metavar="PATH")
    n.add_argument("--force", action="store_true", help="overwrite an existing file")
    n.add_argument("--quiet", action="store_true")
    n.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS)
    q = sub.add_parser("species", help="search the packaged thermo databases by name or formula",
                       epilog="examples:\n  auditor species CaCO3\n  auditor species 'C(gr)'\n  auditor species methanol"
                              "\n  auditor species H2O --json",
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    q.add_argument("query", metavar="QUERY", help="part of a name, or a formula such as CH4O")
    q.add_argument("--limit", type=int, default=40, metavar="N")
    q.add_argument("--json", action="store_true")
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


def _audit_all(paths, args):
    """(path, AuditResult or InputError) in the order given; several cases go to an executor."""
    from .audit import audit_for_batch
    confirm = not args.no_confirm
    jobs = args.jobs if args.jobs is not None else (1 if len(paths) <= 2 else None)
    if len(paths) == 1 or (jobs == 1 and not args.scheduler) or args.debug:
        for path in paths:
            yield path, audit_for_batch(path, confirm, raise_errors=args.debug)
        return
    from .executors import make_executor
    executor = make_executor(jobs, args.scheduler)
    try:
        done = {}
        for (path, _), result in executor.map_blocks(audit_for_batch, [(p, confirm) for p in paths]):
            done[path] = result
        for path in paths:
            yield path, done[path]
    finally:
        executor.close()


def _cmd_check(args) -> int:
    from importlib import resources
    from .report.document import check_document
    from .report.terminal import audit_text, summary_line
    paths = args.cases or [str(resources.files("auditor") / "data" / "default_case.yaml")]
    if args.report and len(paths) != 1:
        print("auditor: error: --report takes exactly one CASE", file=sys.stderr)
        return EXIT_INPUT
    if args.report:
        from .report.files import check_target
        try:
            check_target(args.report, paths, args.force)
            if Path(args.report).suffix.lower() not in REPORT_FORMATS:
                raise InputError.single(args.report, "report format follows the suffix: .html, .md or .json")
        except InputError as exc:
            print(f"auditor: error: {exc}", file=sys.stderr)
            return EXIT_INPUT
    results, docs, status = [], [], EXIT_OK
    for path, result in _audit_all(paths, args):
        if isinstance(result, InputError):
            if args.debug:
                raise result
            print(f"auditor: error: {result}", file=sys.stderr)
            status = max(status, EXIT_INPUT)
            continue
        if isinstance(result, BaseException):
            raise result
        results.append(result)
        status = max(status, result.exit_status)
    if args.report and results:
        from .report.files import write_atomic
        write_atomic(args.report, render_report(results[0], Path(args.report).suffix.lower()))
        if not args.quiet:
            print(f"report written to {args.report}", file=sys.stderr)
    if args.json and results:
        docs = [check_document(r) for r in results]
        print(json.dumps(docs[0] if len(paths) == 1 else docs, indent=1))
    elif args.report and results and not args.quiet:
        print(summary_line(results[0]))
    elif len(paths) == 1 and results and not args.quiet:
        sys.stdout.write(colourise(audit_text(results[0], explain=args.explain)))
    elif not args.quiet or len(paths) > 1:
        for r in results:
            print(summary_line(r))
    return status


REPORT_FORMATS = (".html", ".htm", ".md", ".json")


def render_report(result, suffix: str) -> str:
    if suffix in (".html", ".htm"):
        from .report.html import render
        return render(result)
    if suffix == ".md":
        from .report.markdown import render
        return render(result)
    from .report.document import check_document
    return json.dumps(check_document(result, with_context=True), indent=1) + "\n"


def colourise(text: str) -> str:
    """Colour the verdict line on a terminal only (NO_COLOR honoured: https://no-color.org)."""
    import os
    if os.environ.get("NO_COLOR") or not sys.stdout.isatty():
        return text
    colours = {"WELL-POSED": "32", "UNDER-SPECIFIED": "33", "OVER-SPECIFIED": "33",
               "INCONSISTENT": "31", "NOT-CONFIRMED": "31"}
    out = []
    for line in text.splitlines(keepends=True):
        if line.startswith("Verdict: "):
            word = line.split()[1]
            line = f"Verdict: \033[1;{colours.get(word, '0')}m{word}\033[0m\n"
        elif line.lstrip().startswith("[error]"):
            line = line.replace("[error]", "\033[31m[error]\033[0m", 1)
        elif line.lstrip().startswith("[warning]"):
            line = line.replace("[warning]", "\033[33m[warning]\033[0m", 1)
        out.append(line)
    return "".join(out)


EPILOG_SWEEP = """examples:
  auditor sweep cases/reformer_design_point.yaml --vary temperature=600:1400:25
  auditor sweep my_case.yaml --vary temperature=500:900:50 --vary pressure=1:40:5 --out envelope
  auditor sweep my_case.yaml --vary "temperature=400:700:10 degC" --jobs 2
Temperature is in K and pressure in bar unless a unit follows STEP. Writes PREFIX.csv and
PREFIX.svg; finished points are journalled in PREFIX.partial.jsonl so that --resume can
continue a run that was stopped."""


def _progress(done: int, total: int) -> None:
    if not sys.stderr.isatty():
        return
    width = 40
    fill = int(width * done / max(total, 1))
    sys.stderr.write(f"\r[{'#' * fill}{'.' * (width - fill)}] {done}/{total}")
    if done == total:
        sys.stderr.write("\n")
    sys.stderr.flush()


def _file_sha256(path) -> str:
    import hashlib
    try:
        return hashlib.sha256(Path(path).read_bytes()).hexdigest()
    except OSError:
        return ""


def _cmd_sweep(args) -> int:
    from .case import load_case
    from .executors import make_executor
    from .report.files import check_target, write_atomic
    from .report.sweep_plot import sweep_svg
    from .sweep import PointResult, csv_text, grid, parse_vary, run_sweep
    axes = [parse_vary(v) for v in args.vary]
    for name in ("jobs", "block_size"):
        value = getattr(args, name)
        if value is not None and value < 1:
            raise InputError.single("--" + name.replace("_", "-"), f"must be at least 1, got {value}")
    case = load_case(args.case)
    if case.feed is None:
        raise InputError.single(args.case, "a sweep runs the Gibbs minimisation, which needs a feed; this case "
                                "has none (it is an intensive problem: use 'auditor check')", "feed")
    prefix = args.out or Path(args.case).stem + "_sweep"
    csv_path, svg_path, journal = Path(f"{prefix}.csv"), Path(f"{prefix}.svg"), Path(f"{prefix}.partial.jsonl")
    if not csv_path.parent.resolve().is_dir():
        raise InputError.single(csv_path.parent, "output directory does not exist")
    for target in (csv_path, svg_path):
        check_target(target, [args.case], args.force or args.resume)
    # the journal's first line says which case and grid it belongs to
    header = json.dumps({"journal": 1, "case_sha256": _file_sha256(args.case),
                         "grid": [[a.name, list(a.values)] for a in axes]}, sort_keys=True)
    done = []
    if args.resume and journal.exists():
        lines = journal.read_text(encoding="utf-8").splitlines()
        if not lines or lines[0] != header:
            raise InputError.single(journal, "this journal belongs to another case file or grid; run without "
                                    "--resume (and with --force) to start again")
        for line in lines[1:]:
            try:
                done.append(PointResult.from_json(line))
            except (ValueError, KeyError, TypeError):
                continue  # a line cut short by the interruption
    elif journal.exists() and not args.force:
        raise InputError.single(journal, "an unfinished sweep left this journal; pass --resume to continue it "
                                "or --force to start again")
    total = len(grid(case, axes))                        # checks the axes before any file is touched
    executor = make_executor(args.jobs, args.scheduler)  # checks --scheduler likewise
    # rewrite the journal with only whole lines, so new results never join a fragment
    try:
        write_atomic(journal, "\n".join([header] + [r.to_json() for r in done]) + "\n")
    except BaseException:
        executor.close()
        raise
    counter = [len(done)]
    try:
        with open(journal, "a", encoding="utf-8") as jf:
            def on_result(r):
                jf.write(r.to_json() + "\n")
                jf.flush()
                counter[0] += 1
                _progress(counter[0], total)
            results = run_sweep(str(Path(args.case)), axes, executor, done=done, on_result=on_result,
                                block_size=args.block_size, workers=executor.workers)
    finally:
        executor.close()
    assumed = case.coexisting or tuple(p for p, _ in case.system.phases)
    write_atomic(csv_path, csv_text(results))
    write_atomic(svg_path, sweep_svg(results, axes, assumed))
    journal.unlink(missing_ok=True)
    failed = [r for r in results if r.verdict == "failed"]
    off = [r for r in results if r.verdict != "well-posed"]
    if not args.quiet:
        print(f"{len(results)} points: {len(results) - len(off)} confirmed, {len(off) - len(failed)} not confirmed, "
              f"{len(failed)} failed; wrote {csv_path} and {svg_path}")
        reasons = sorted({r.message for r in failed})
        for m in reasons[:5]:
            print(f"  failure: {m}")
    return EXIT_OK if not off else EXIT_PROBLEM


def _cmd_new(args) -> int:
    from importlib import resources
    from .report.files import check_target, write_atomic
    target = check_target(args.path, [], args.force)
    write_atomic(target, (resources.files("auditor") / "data" / "starter_case.yaml").read_text(encoding="utf-8"))
    if not args.quiet:
        print(f"wrote {target}; edit it, then run: auditor check {target}")
    return EXIT_OK


def _cmd_species(args) -> int:
    from .system import search_species
    hits = search_species(args.query, limit=args.limit)
    if args.json:
        print(json.dumps(hits, indent=1))
        return EXIT_OK if hits else EXIT_PROBLEM
    if not hits:
        print(f"no species in the packaged databases matches {args.query!r}")
        return EXIT_PROBLEM
    print(f"{'name':<22} {'kind':<10} {'formula':<18} {'charge':>6}  thermo range, K")
    for h in hits:
        print(f"{h['name']:<22} {h['kind']:<10} {h['formula']:<18} {h['charge']:>6}  {h['t_min']:g} - {h['t_max']:g}")
    return EXIT_OK


def _cmd_reactions(args) -> int:
    from .report.reactions import reactions_document, reactions_text
    from .stoichiometry import analyse, from_mechanism as mechanism_reactions
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
        print(f"auditor: error: {exc}", file=sys.stderr)
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
