"""The suite's shared helpers (clitools.py, isomers.py) live in this folder; tests in the
subfolders grouped by room (equilibrium/, report/) import them by name."""
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))
