"""What the CLI shows on a terminal besides the audit itself: the progress bar, the verdict's
colours, the summary lines of a sweep and the species search's table.  Heavy imports stay inside the functions (cold start)."""
from __future__ import annotations

import os
import re
import sys
from collections import Counter

from ..verdicts import Verdict


def progress_bar(total: int, unit: str, quiet: bool, initial: int = 0, every_update: bool = False):
    """A progress bar (points done, rate, time left) on stderr, drawn only when stdout and stderr are
    both terminals and --quiet is off; otherwise a bar that draws nothing (tqdm, whose import
    costs a few tens of milliseconds, is then not imported)."""
    show = not quiet and sys.stdout.isatty() and sys.stderr.isatty()
    if not show:
        return _NoBar()
    from tqdm import tqdm
    # a few slow cases: draw each one; many fast sweep points: at most ten redraws a second
    return tqdm(total=total, initial=initial, unit=unit, file=sys.stderr, disable=not show, leave=False,
                mininterval=0 if every_update else 0.1,
                dynamic_ncols=True, bar_format="{desc}{percentage:3.0f}% |{bar}| {n_fmt}/{total_fmt} {unit}s "
                                              "[{elapsed} elapsed, {remaining} left, {rate_fmt}]")


class _NoBar:
    """The progress bar that draws nothing: the calls a caller makes, doing nothing."""

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        return False

    def update(self, n: int = 1) -> None:
        pass

    def clear(self) -> None:
        pass


_CONTROL = re.compile(r"[\x00-\x08\x0b-\x1f\x7f-\x9f\ud800-\udfff]")


def terminal_safe(text: str) -> str:
    """Untrusted text (a title, a name, a file name) as it may be printed: control characters
    (a clear-screen or set-window-title sequence) and lone surrogates shown as escapes."""
    return _CONTROL.sub(lambda m: m.group().encode("unicode_escape", "backslashreplace").decode("ascii")
                        if ord(m.group()) < 0xd800 else f"\\u{ord(m.group()):04x}", text)


def colourise(text: str) -> str:
    """The rendered text made safe for a terminal (``terminal_safe``), then the verdict line
    coloured on a terminal only (NO_COLOR honoured: https://no-color.org)."""
    text = terminal_safe(text)
    if os.environ.get("NO_COLOR") or not sys.stdout.isatty():
        return text
    from .style import TERMINAL_SEVERITY, TERMINAL_VERDICT
    out = []
    for line in text.splitlines(keepends=True):
        if line.startswith("Verdict: "):
            word = line.split()[1]
            line = f"Verdict: \033[{TERMINAL_VERDICT.get(word, '1')}m{word}\033[0m\n"
        elif line.lstrip().startswith("[error]"):
            line = line.replace("[error]", f"\033[{TERMINAL_SEVERITY['error']}m[error]\033[0m", 1)
        elif line.lstrip().startswith("[warning]"):
            line = line.replace("[warning]", f"\033[{TERMINAL_SEVERITY['warning']}m[warning]\033[0m", 1)
        out.append(line)
    return "".join(out)


def _route_counts(results):
    return sorted(Counter(r.route for r in results if r.fallback).items())


def sweep_summary(results, ternary: bool, csv_path, svg_path) -> list[str]:
    """The lines printed after a sweep: the counts of its points, the certificate and up to
    five distinct failure messages."""
    failed = [r for r in results if r.verdict == Verdict.FAILED]
    off = [r for r in results if r.verdict != Verdict.WELL_POSED]
    certified = [r for r in results if r.certified]
    if ternary:   # a map asks which phases are present, not whether the assumed ones are
        sets = Counter(" + ".join(r.phases_present) or "none" for r in results if r.verdict != Verdict.FAILED)
        lines = [f"{len(results)} points: " + ", ".join(f"{n} with {k}" for k, n in sets.most_common())
                 + f", {len(failed)} failed; wrote {csv_path} and {svg_path}"]
    else:
        lines = [f"{len(results)} points: {len(results) - len(off)} confirmed, {len(off) - len(failed)} not confirmed, "
                 f"{len(failed)} failed; wrote {csv_path} and {svg_path}"]
    lines.append(f"  certificate holds at {len(certified)} of {len(results)} points; "
                 f"{sum(r.fallback for r in certified)} needed a fallback route"
                 + "".join(f"; {n} by {route}" for route, n in _route_counts(certified)))
    lines += [f"  failure: {m}" for m in sorted({r.message for r in failed})[:5]]
    return lines


def species_table(hits: list[dict]) -> list[str]:
    """The lines of the species search's table: a header and one line per species found."""
    lines = [f"{'name':<22} {'kind':<10} {'formula':<18} {'charge':>6}  {'thermo range, K':<18} common name"]
    for h in hits:
        span = f"{h['t_min']:g} - {h['t_max']:g}"
        lines.append(f"{h['name']:<22} {h['kind']:<10} {h['formula']:<18} {h['charge']:>6}  {span:<18} "
                     f"{h.get('common_name', '')}".rstrip())
    return lines
