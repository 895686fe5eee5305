"""Equilibrium-problem setup and degrees-of-freedom auditor.

Python interface (see the README): ``auditor.check(case)`` audits a case file, a mapping with
a case file's keys, or a cantera ``Solution``/``Mixture``; ``auditor.sweep_records(case, vary=[...])``
runs a grid and ``auditor.write_csv(records, path)`` writes it.  The names are imported on
first use, so that ``import auditor`` (and the CLI's cold start) stays cheap.
"""
__version__ = "0.1.0"

__all__ = ["check", "sweep_records", "write_csv", "Audit", "case_from_cantera", "InputError", "CaseError"]


def __getattr__(name):
    if name in ("check", "sweep_records", "write_csv", "Audit", "case_from_cantera"):
        from . import api
        return getattr(api, name)
    if name in ("InputError", "CaseError"):
        from . import errors
        return getattr(errors, name)
    raise AttributeError(f"module 'auditor' has no attribute {name!r}")


def __dir__():
    return sorted(list(globals()) + __all__)
