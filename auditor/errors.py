"""One error hierarchy for the whole tool.

Exceptions mean *unusable input*; problems found in usable input are findings
(``auditor.findings``), never exceptions.  Each error stores its fields and
composes its sentence in ``__str__`` so that the CLI prints one clear line.
"""
from __future__ import annotations

import re
from dataclasses import dataclass

from . import settings

# a quoted value inside a message: 'text' or "text" (what the input said, echoed)
_QUOTED = re.compile("'([^'\\n]*)'|\"([^\"\\n]*)\"")


def cut_long(text: str) -> str:
    """``text`` with every quoted value longer than ``settings.MAX_QUOTED_CHARS`` cut, its
    length stated, and the whole kept under ``settings.MAX_MESSAGE_CHARS``."""
    limit = settings.MAX_QUOTED_CHARS

    def cut(m: re.Match) -> str:
        value = m.group(1) if m.group(1) is not None else m.group(2)
        if len(value) <= limit:
            return m.group(0)
        q = m.group(0)[0]
        return f"{q}{value[:limit - 20]}...{q} ({len(value)} characters)"

    text = _QUOTED.sub(cut, text)
    if len(text) > settings.MAX_MESSAGE_CHARS:
        text = f"{text[:settings.MAX_MESSAGE_CHARS - 40]}... (cut: {len(text)} characters)"
    return text


def _kind(problem: "Problem") -> tuple[str, str]:
    """Problems of one kind: the same file and message once the echoed values are left out."""
    return problem.file, _QUOTED.sub("'_'", problem.message)


class AuditorError(Exception):
    """Base class of every error the tool raises on purpose."""


@dataclass(frozen=True)
class Problem:
    """One thing wrong with an input: where it is and what was expected."""

    file: str
    message: str
    key_path: str = ""
    line: int | None = None
    column: int | None = None

    def __str__(self) -> str:
        where = self.file
        if self.line is not None:
            where += f":{self.line}"
            if self.column is not None:
                where += f":{self.column}"
        key = f" {cut_long(self.key_path)}:" if self.key_path else ""
        return cut_long(f"{where}:{key} {self.message}")


class InputError(AuditorError, ValueError):
    """An input file cannot be used; holds every problem found in it."""

    def __init__(self, problems: list[Problem] | Problem):
        self.problems = [problems] if isinstance(problems, Problem) else list(problems)
        super().__init__(str(self))

    def __reduce__(self):
        """Pickled with its problems (an error crosses from a worker process to the CLI)."""
        return self.__class__, (self.problems,)

    def __str__(self) -> str:
        """One line per problem; after ``settings.MAX_PROBLEMS_OF_A_KIND`` problems of one kind,
        one line counting the rest."""
        shown, counts = [], {}
        for p in self.problems:
            kind = _kind(p)
            counts[kind] = counts.get(kind, 0) + 1
            if counts[kind] <= settings.MAX_PROBLEMS_OF_A_KIND:
                shown.append(str(p))
        for (file, message), n in counts.items():
            more = n - settings.MAX_PROBLEMS_OF_A_KIND
            if more > 0:
                shown.append(f"{file}: ... and {more} more of the same kind ({cut_long(message)})")
        return "\n".join(shown)

    @classmethod
    def single(cls, file, message, key_path="", line=None, column=None):
        return cls(Problem(str(file), message, key_path, line, column))


class CaseError(InputError):
    """A case file is unreadable or invalid."""


class MechanismError(InputError):
    """A mechanism file, phase or species cannot be used."""


class EquationError(InputError):
    """A reaction equation does not parse or names unknown species."""


class LimitError(CaseError):
    """An input exceeds a named safety limit."""


class CoefficientError(MechanismError):
    """A stoichiometric coefficient is not close to a simple fraction."""


def one_line(text: object, limit: int) -> str:
    """An error's (or any) text on one line, whitespace runs joined, cut to ``limit`` characters:
    how a library's message is quoted inside one of ours."""
    return " ".join(str(text).split())[:limit]
