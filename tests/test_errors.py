"""The error hierarchy: exact messages (file:line:col: key path: message), several problems
one per line, and errors that survive pickling (a process pool or a Dask worker sends them
back to the parent)."""
from __future__ import annotations

import pickle

import pytest

from auditor.errors import (AuditorError, CaseError, CoefficientError, EquationError, InputError, LimitError,
                            MechanismError, Problem, one_line)


def test_a_problem_names_file_line_column_and_key_path():
    assert str(Problem("case.yaml", "expected a name", "system.phases.gas[1]", 4, 9)) == \
        "case.yaml:4:9: system.phases.gas[1]: expected a name"
    assert str(Problem("case.yaml", "no feed", "feed", 7)) == "case.yaml:7: feed: no feed"
    assert str(Problem("mech.yaml", "mechanism file not found")) == "mech.yaml: mechanism file not found"


def test_several_problems_one_per_line():
    err = CaseError([Problem("a.yaml", "first", "x", 1), Problem("a.yaml", "second", "y", 2)])
    assert str(err) == "a.yaml:1: x: first\na.yaml:2: y: second"
    assert len(err.problems) == 2


def test_single_builds_one_problem():
    err = MechanismError.single("m.yaml", "is a directory, not a file", "phases", 3, 1)
    assert str(err) == "m.yaml:3:1: phases: is a directory, not a file"


@pytest.mark.parametrize("kind", [InputError, CaseError, MechanismError, EquationError, LimitError,
                                  CoefficientError])
def test_errors_pickle_with_their_problems(kind):
    err = kind([Problem("f.yaml", "bad value", "specified.pressure", 5, 13)])
    back = pickle.loads(pickle.dumps(err))
    assert type(back) is kind and str(back) == str(err) and back.problems == err.problems
    assert isinstance(back, AuditorError) and isinstance(back, ValueError)


def test_hierarchy():
    assert issubclass(LimitError, CaseError) and issubclass(CoefficientError, MechanismError)
    assert issubclass(CaseError, InputError) and issubclass(EquationError, InputError)


def test_one_line_joins_and_cuts():
    assert one_line("  cantera\n  said\tthis  ", 100) == "cantera said this"
    assert one_line("x" * 500, 20) == "x" * 20
