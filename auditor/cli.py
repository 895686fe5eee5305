"""Command line: argument parsing and dispatch only."""
from __future__ import annotations

import gc
import json
import sys
import warnings
from pathlib import Path

from .errors import InputError
from .cli_parser import build_parser
from .verdicts import Verdict

EXIT_OK, EXIT_PROBLEM, EXIT_INPUT, EXIT_INTERNAL, EXIT_INTERRUPTED = 0, 1, 2, 3, 130

def _check_scheduler(args) -> None:
    """--scheduler refused at parse time when it is no address (local:0, a port of 0, ...)."""
    if args.scheduler is not None:
        from .executors import parse_scheduler
        parse_scheduler(args.scheduler)


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
    _check_scheduler(args)
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


def _sweep_axes(args) -> list:
    """The axes of the grid from --vary or --ternary, with the counts checked."""
    from .sweep import parse_ternary, parse_vary
    if bool(args.vary) == bool(args.ternary):
        raise InputError.single("--vary", "give --vary (one or two axes) or --ternary, not both and not neither")
    axes = [parse_vary(v) for v in args.vary] if args.vary else [parse_ternary(args.ternary, args.divisions, args.edges)]
    _check_scheduler(args)
    for name in ("jobs", "block_size"):
        value = getattr(args, name)
        if value is not None and value < 1:
            raise InputError.single("--" + name.replace("_", "-"), f"must be at least 1, got {value}")
    return axes


def _run_points(args, axes, total: int, journal: Path, header: str, done: list) -> list:
    """Every point of the grid, each journalled as it finishes, with a progress bar."""
    from .executors import make_executor
    from .report.console import progress_bar
    from .report.files import write_atomic
    from .sweep import run_sweep
    existed = journal.exists()
    executor = make_executor(args.jobs, args.scheduler)  # bounded: no workers in time is an InputError
    # rewrite the journal with only whole lines, so new results never join a fragment
    try:
        write_atomic(journal, "\n".join([header] + [r.to_json() for r in done]) + "\n")
    except BaseException:
        executor.close()
        raise
    journalled = len(done)
    started = False
    try:
        # unbuffered: a line is on disk when written, and closing has nothing left to fail on
        with open(journal, "ab", buffering=0) as jf, \
                progress_bar(total, "point", args.quiet, initial=len(done)) as bar:
            def on_result(r):
                nonlocal started, journalled
                line = memoryview((r.to_json() + "\n").encode("utf-8"))
                try:
                    while line:
                        line = line[jf.write(line):]
                except OSError as exc:     # a full disk, a file-size limit: the lines written are kept
                    raise InputError.single(journal, f"cannot write the sweep's journal: {exc.strerror or exc}; "
                                            f"{journalled} of {total} points are kept in it (free space, then run "
                                            "the same command with --resume)") from None
                started, journalled = True, journalled + 1
                bar.update(1)
            return run_sweep(str(Path(args.case)), axes, executor, done=done, on_result=on_result,
                             block_size=args.block_size, workers=executor.workers)
    except KeyboardInterrupt:
        print(f"auditor: {journalled} of {total} points are kept in {journal}; run the same command with "
              "--resume to continue", file=sys.stderr)
        raise
    except InputError:
        if not started and not existed:        # a sweep that never started leaves no journal
            journal.unlink(missing_ok=True)
        raise
    finally:
        executor.close()


def _cmd_sweep(args) -> int:
    from .case import load_case
    from .report.console import sweep_summary
    from .report.files import check_target, resolved_or_refused, write_atomic
    from .report.sweep_plot import sweep_picture
    from .sweep import validate
    from .sweep_files import OutputLock, csv_text, journal_header, points_done
    axes = _sweep_axes(args)
    case = load_case(args.case)
    if case.feed is None:
        raise InputError.single(args.case, "a sweep runs the Gibbs minimisation, which needs a feed; this case "
                                "has none (it is an intensive problem: use 'auditor check')", "feed")
    prefix = args.out or Path(args.case).stem + "_sweep"
    csv_path, svg_path, journal = Path(f"{prefix}.csv"), Path(f"{prefix}.svg"), Path(f"{prefix}.partial.jsonl")
    lines_path = Path(f"{prefix}_boundaries.csv") if len(axes) == 2 or args.ternary else None
    if not resolved_or_refused(csv_path.parent).is_dir():
        raise InputError.single(csv_path.parent, "output directory does not exist")
    for target in filter(None, (csv_path, svg_path, lines_path)):
        check_target(target, [args.case], args.force or args.resume)
    resolved_or_refused(journal)
    total = len(validate(args.case, axes))     # bad input is exit 2 here, before any file is created
    note = None
    with OutputLock(prefix):
        header = journal_header(case, axes)
        results = _run_points(args, axes, total, journal, header,
                              points_done(journal, header, args.resume, args.force))
        write_atomic(csv_path, csv_text(results))
        boundaries = None
        if lines_path is not None:     # a map: its phase boundaries traced between grid points
            from .report.boundary_lines import traced
            boundaries, note = traced(str(Path(args.case)), axes, results, case, lines_path)
        write_atomic(svg_path, sweep_picture(case, axes, results, args.ternary and args.divisions, args.vary,
                                             boundaries))
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
    parser = build_parser()
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
