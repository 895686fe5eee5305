"""One error hierarchy for the whole tool.

Exceptions mean *unusable input*; problems found in usable input are findings
(``auditor.findings``), never exceptions.  Each error stores its fields and
composes its sentence in ``__str__`` so that the CLI prints one clear line.
"""
from __future__ import annotations

from dataclasses import dataclass


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
        key = f" {self.key_path}:" if self.key_path else ""
        return f"{where}:{key} {self.message}"


class InputError(AuditorError, ValueError):
    """An input file cannot be used; holds every problem found in it."""

    def __init__(self, problems: list[Problem] | Problem):
        self.problems = [problems] if isinstance(problems, Problem) else list(problems)
        super().__init__(str(self))

    def __str__(self) -> str:
        return "\n".join(str(p) for p in self.problems)

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
