"""Equilibrium-problem setup and degrees-of-freedom auditor."""
__version__ = "0.1.0"
