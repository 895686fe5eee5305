"""A YAML syntax error in the tool's own words, at the line where the mistake is.

The parser reports where it gave up, which is often the line after the mistake: a key
written without its colon (``pressure 25 bar``) is only noticed when the next key arrives.
:func:`syntax_problem` looks at the text around the parser's marks, names the likely
mistake on its own line with a fix, guesses the key path from the indentation, and quotes
the parser's words after ours.
"""
from __future__ import annotations

import re

from .errors import Problem, one_line

_KEY = re.compile(r"^(\s*)(?:-\s+)?([^\s:#'\"{}\[\],][^:#]*?)\s*:(\s|$)")
_FLOW_CLOSE = {"flow mapping": "}", "flow sequence": "]"}


def _indent(line: str) -> int:
    return len(line) - len(line.lstrip(" "))


def _content(lines: list[str], i: int) -> bool:
    return 0 <= i < len(lines) and bool(lines[i].strip()) and not lines[i].lstrip().startswith("#")


def _previous(lines: list[str], i: int) -> int | None:
    """The nearest line above ``i`` that holds something other than a comment."""
    j = i - 1
    while j >= 0 and not _content(lines, j):
        j -= 1
    return j if j >= 0 else None


def key_path_at(lines: list[str], i: int, own: bool = True) -> str:
    """The key path of line ``i`` (0-based) guessed from the keys above it that open a block
    with less indentation; ``own=False`` leaves out the line's own key (a list item's)."""
    if not 0 <= i < len(lines):
        return ""
    here = lines[i]
    m = _KEY.match(here)
    first = here.split()[0].split(":")[0] if here.strip() else ""
    parts = [m.group(2).strip()] if m else ([first] if re.fullmatch(r"[A-Za-z][\w-]*", first) else [])
    parts = parts if own else []
    level = _indent(here)
    for j in range(i - 1, -1, -1):
        if not _content(lines, j):
            continue
        m = _KEY.match(lines[j])
        opens = m is not None and not lines[j][m.end():].strip().split("#")[0].strip()
        if opens and _indent(lines[j]) < level and not lines[j].lstrip().startswith("-"):
            parts.insert(0, m.group(2).strip())
            level = _indent(lines[j])
            if level == 0:
                break
    return ".".join(parts)


def _spaces(n: int) -> str:
    return f"{n} space" + ("" if n == 1 else "s")


def _no_colon(line: str) -> str:
    """The fix for a key: value line that has no ': '."""
    body = line.strip()
    if ":" in body:
        key, value = body.split(":", 1)
        return f"put a space after the colon: write '{key}: {value.strip()}'"
    if " " in body:
        key, value = body.split(None, 1)
        return f"a colon is missing after {key!r}: write '{key}: {value}'"
    return f"a colon is missing: write '{body}: VALUE'"


def _explain(problem: str, context: str, lines: list[str], line: int, col: int,
             ctx_line: int | None, ctx_col: int | None) -> tuple[str, int, int]:
    """(our sentence, 0-based line, 0-based column) of the likely mistake."""
    text = lines[line] if 0 <= line < len(lines) else ""
    if "simple key" in context and ctx_line is not None:
        bad = lines[ctx_line] if ctx_line < len(lines) else ""
        prev = _previous(lines, ctx_line)
        if prev is not None and lines[prev].lstrip().startswith("- ") and _indent(lines[prev]) == _indent(bad):
            return ("this line sits among list items but does not start with '- ': write "
                    f"'- {bad.strip()}'", ctx_line, _indent(bad))
        return _no_colon(bad), ctx_line, _indent(bad)
    if problem.startswith("mapping values are not allowed"):
        prev = _previous(lines, line)
        if prev is not None and _indent(lines[prev]) == _indent(text) and not _KEY.match(lines[prev]):
            return _no_colon(lines[prev]), prev, _indent(lines[prev])
        if prev is not None and _indent(text) > _indent(lines[prev]) and _KEY.match(lines[prev]):
            return (f"this line is indented more than the line above; a key of the same mapping starts in the "
                    f"same column ({_indent(lines[prev]) + 1})", line, _indent(text))
        return ("a value that holds ': ' must be quoted: write the value in quotes, e.g. "
                f"'title: \"{text.split(':', 1)[-1].strip()}\"'", line, col)
    if context.startswith("while parsing a flow") and ctx_line is not None:
        close = _FLOW_CLOSE.get(context.removeprefix("while parsing a "), "}")
        opener = "{" if close == "}" else "["
        got = problem.rsplit("but got ", 1)[-1]
        if got == "':'" and ctx_line == line:
            return "a comma is missing between two entries here: write 'A: 1, B: 2'", line, col
        if got in ("'}'", "']'"):
            return (f"the '{opener}' opened in column {(ctx_col or 0) + 1} is closed here with {got}: close it with "
                    f"'{close}'", line, col)
        return (f"the '{opener}' opened here is not closed: end it with '{close}' on this line",
                ctx_line, ctx_col or 0)
    if "cannot start any token" in problem and "\\t" in problem:
        return "a tab character: YAML indents with spaces only; replace the tab with spaces", line, col
    if "quoted scalar" in context and ctx_line is not None:
        return "the quote opened here is not closed: add the closing quote on this line", ctx_line, ctx_col or 0
    if problem.startswith("expected <block end>"):
        if "'-'" in problem:
            return "a list item ('- ...') where a 'key: value' line was expected", line, col
        if "'}'" in problem or "']'" in problem:
            return "a closing bracket that closes nothing: remove it, or open it earlier on this line", line, col
        prev = _previous(lines, line)
        width = _indent(lines[prev]) if prev is not None else 0
        return (f"this line's indentation ({_spaces(_indent(text))}) matches no key above; the line above uses "
                f"{_spaces(width)}: indent the keys of one mapping alike", line, _indent(text))
    if "undefined alias" in problem:
        return "'*' starts a YAML alias here: quote the value if it is text", line, col
    return "check the indentation (spaces only) and the ': ' after each key on this line or the one above", line, col


def syntax_problem(file: str, text: str, exc) -> Problem:
    """One located problem for a YAML syntax error ``exc`` (a ``yaml.MarkedYAMLError``)."""
    mark, cmark = getattr(exc, "problem_mark", None), getattr(exc, "context_mark", None)
    problem = str(getattr(exc, "problem", None) or exc)
    context = str(getattr(exc, "context", None) or "")
    if mark is None:
        return Problem(file, f"YAML syntax error: {one_line(problem, 200)}")
    lines = text.splitlines()
    ours, line, col = _explain(problem, context, lines, mark.line, mark.column,
                               cmark.line if cmark else None, cmark.column if cmark else None)
    item = ours.startswith(("this line sits among list items", "a list item"))
    return Problem(file, f"YAML syntax error: {ours} (the YAML parser says: {one_line(problem, 120)})",
                   key_path_at(lines, line, own=not item), line + 1, col + 1)
