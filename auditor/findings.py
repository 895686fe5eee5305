"""Findings are data: what an audit found in usable input (exceptions are for unusable input)."""
from __future__ import annotations

from dataclasses import dataclass

SEVERITIES = ("error", "warning", "note")


@dataclass(frozen=True)
class Finding:
    severity: str                 # error, warning, note
    topic: str                    # reactions, phase-rule, specification, equilibrium, claims, data, safety
    message: str
    involved: tuple[str, ...] = ()  # species, elements, phases or specifications named

    def __post_init__(self):
        if self.severity not in SEVERITIES:
            raise ValueError(f"severity must be one of {SEVERITIES}, got {self.severity!r}")
