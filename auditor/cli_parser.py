"""The command line's arguments: the parser of every command, with its help and examples.
``auditor.cli`` dispatches what it parses."""
from __future__ import annotations

import argparse

from . import __version__

EPILOG_CHECK = """examples:
  auditor check                      audit the packaged demo case
  auditor check cases/*.yaml         one summary line per case, worst exit status
  auditor check my_case.yaml --json  one JSON document (a list for several cases)
exit status: 0 well posed and every claim holds, 1 the audit found a problem,
2 an input could not be read or is invalid."""


EPILOG_SWEEP = """examples:
  auditor sweep cases/reformer_design_point.yaml --vary temperature=600:1400:25
  auditor sweep my_case.yaml --vary temperature=500:900:50 --vary pressure=1:40:5 --out envelope
  auditor sweep my_case.yaml --vary "temperature=400:700:10 degC" --jobs 2
  auditor sweep my_case.yaml --vary feed.H2O=1:5:0.5         mol of H2O in the feed
  auditor sweep my_case.yaml --vary ratio.O/C=0.5:3:0.25 --vary ratio.H/C=2:4:0.5
  auditor sweep chem.yaml --ternary C,H,O --divisions 20     a C-H-O map at the case's T, P
  auditor sweep cases/combustor_adiabatic.yaml --vary feed-temperature=300:700:50
  auditor sweep cases/vessel_rigid_adiabatic.yaml --vary fill-pressure=1:10:1
Temperature is in K, pressure in bar and feed amounts in mol unless a unit follows STEP.
An adiabatic, heat-added, isentropic or rigid-vessel case solves its temperature (and a
vessel its pressure): an axis on a solved variable is refused; vary the feed, the pressure
it fixes, feed-temperature (the feed temperature of its adiabatic or heat-added balance; a
vessel filled with the feed at that temperature is filled at the new one) or fill-pressure
(the pressure a vessel is filled at, volume: {feed-at: ...}). The picture adds the solved
temperature and pressure as curves.
A ratio axis leaves the feed species holding neither element as they are and changes the
others as little as possible (least squares, in mol) with their total amount kept.
A ternary point feeds each element as the case's single-element feed species (e.g.
C(gr), H2, O2) with the case's total atoms; without --edges every element is present:
(N-1)(N-2)/2 points, else (N+1)(N+2)/2.
Writes PREFIX.csv and PREFIX.svg (for --ternary: a labelled triangle marking the phases
present and their boundaries); a map (two axes, or --ternary) also gets its phase boundaries
traced between grid points, drawn on the picture with the case's design point, and listed in
PREFIX_boundaries.csv; finished points are journalled in PREFIX.partial.jsonl so
that --resume can continue a run that was stopped."""


EPILOG_REACTIONS = """example:
  auditor reactions gri30.yaml
  auditor reactions ptcombust.yaml --phase Pt_surf --json
  auditor reactions h2o2.yaml --phase ohmech-RK      choose one of two models of a mixture
A bare file name is also looked up among the data files that ship with cantera. Without
--phase every phase is used except a later alternative model of a mixture already used
(the output names it). Reactions are numbered from 1; JSON indices count from 0."""


def build_parser() -> argparse.ArgumentParser:
    p = argparse.ArgumentParser(
        prog="auditor",
        description="Audit the setup of a chemical-equilibrium problem: balances, independent "
                    "reactions, phase rule, specifications, and a confirming Gibbs minimisation.",
        epilog="examples:\n  auditor check                      audit the packaged demo case\n"
               "  auditor new my_case.yaml           write a commented starter case\n"
               "  auditor check my_case.yaml --report audit.html\n"
               "  auditor reactions gri30.yaml       stoichiometry of a mechanism\n"
               "  auditor species CaCO3              find species names\n"
               "  auditor sweep my_case.yaml --vary temperature=600:1400:25\n"
               "run 'auditor COMMAND --help' for each command's options.",
        formatter_class=argparse.RawDescriptionHelpFormatter)
    p.add_argument("--version", action="version", version=f"auditor {__version__}")
    p.add_argument("--debug", action="store_true", help="show a traceback on errors")
    sub = p.add_subparsers(dest="command", metavar="COMMAND")
    _check_command(sub)
    _sweep_command(sub)
    _other_commands(sub)
    return p


def _check_command(sub) -> None:
    """`auditor check`: its arguments and help."""
    c = sub.add_parser("check", help="audit case files (default: the packaged demo case)",
                       epilog=EPILOG_CHECK, formatter_class=argparse.RawDescriptionHelpFormatter)
    c.add_argument("cases", nargs="*", metavar="CASE", help="case file(s) in YAML")
    c.add_argument("--json", action="store_true", help="print the audit as JSON")
    c.add_argument("--explain", action="store_true", help="print each verdict rule as it was applied")
    c.add_argument("--quiet", action="store_true", help="no output for a single case; exit status only")
    c.add_argument("--basis", action="append", choices=("dry", "ppm", "mass"), metavar="BASIS",
                   help="also show the equilibrium composition on a basis: dry (water left out), ppm (minor "
                        "species, ppm by volume), mass (mass fractions and masses); repeatable")
    c.add_argument("--no-confirm", action="store_true", help="skip the Gibbs minimisation (counting only)")
    c.add_argument("--margins", action="store_true", help="also find how far the confirmed state is from every "
                   "phase boundary in T, P and the case's 'margins:' feed axes, and its sensitivities (computed "
                   "anyway when the case has a 'margins:' key)")
    c.add_argument("--report", metavar="PATH", help="write the full audit; the format follows the suffix "
                   "(.html, .md, .json); several cases give one report, a comparison table first")
    c.add_argument("--force", action="store_true", help="overwrite an existing report")
    c.add_argument("--jobs", type=int, default=None, metavar="N",
                   help="worker processes for several cases (default: all cores when more than two cases)")
    c.add_argument("--scheduler", metavar="ADDRESS", help="audit several cases on a Dask cluster: tcp://HOST:PORT "
                   "or local:N (needs the cluster extra)")
    c.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS)


def _sweep_command(sub) -> None:
    """`auditor sweep`: its arguments and help."""
    w = sub.add_parser("sweep", help="run the confirmation over a grid of temperature, pressure or feed composition",
                       epilog=EPILOG_SWEEP, formatter_class=argparse.RawDescriptionHelpFormatter)
    w.add_argument("case", metavar="CASE", help="the case file to sweep (YAML, with a feed)")
    w.add_argument("--vary", action="append", metavar="NAME=START:STOP:STEP",
                   help="temperature (K), pressure (bar), feed-temperature (K), fill-pressure (bar), feed.SPECIES "
                        "(mol of a feed species) or ratio.X/Y "
                        "(atoms of element X per atom of Y in the feed); repeat for a two-dimensional grid")
    w.add_argument("--ternary", metavar="X,Y,Z", help="map three elements' feed composition at the case's T and P "
                   "(each fed as the case's single-element feed species, e.g. C(gr), H2, O2)")
    w.add_argument("--divisions", type=int, default=20, metavar="N",
                   help="ternary: atom ratios i:j:k with i + j + k = N (default 20)")
    w.add_argument("--edges", action="store_true", help="ternary: include the sides of the triangle "
                   "(compositions lacking an element)")
    w.add_argument("--out", metavar="PREFIX", help="output prefix (default: CASE name + _sweep)")
    w.add_argument("--jobs", type=int, default=None, metavar="N", help="worker processes (default: all cores)")
    w.add_argument("--scheduler", metavar="ADDRESS", help="a Dask scheduler tcp://HOST:PORT, or local:N "
                   "(needs the cluster extra)")
    w.add_argument("--block-size", type=int, default=None, metavar="N", help="grid points per unit of work")
    w.add_argument("--resume", action="store_true", help="continue a stopped sweep from its journal")
    w.add_argument("--force", action="store_true", help="overwrite existing outputs")
    w.add_argument("--quiet", action="store_true", help="no summary line")
    w.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS)


def _other_commands(sub) -> None:
    """`auditor new`, `species` and `reactions`: their arguments and help."""
    n = sub.add_parser("new", help="write a commented starter case file",
                       epilog="example:\n  auditor new my_case.yaml && auditor check my_case.yaml",
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    n.add_argument("path", metavar="PATH", help="where to write the starter case (a .yaml file)")
    n.add_argument("--force", action="store_true", help="overwrite an existing file")
    n.add_argument("--quiet", action="store_true", help="write the file without printing what to do next")
    n.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS)
    q = sub.add_parser("species", help="search the packaged thermo databases by name or formula",
                       epilog="examples:\n  auditor species CaCO3\n  auditor species 'C(gr)'\n  auditor species methanol"
                              "\n  auditor species steam\n  auditor species graphite\n  auditor species H2O --json\n"
                              "A QUERY is a common name (methanol, steam, lime), part of a database name, or a formula.",
                       formatter_class=argparse.RawDescriptionHelpFormatter)
    q.add_argument("query", metavar="QUERY", help="a common name (methanol, steam, graphite), part of a "
                   "database name, or a formula such as CH4O")
    q.add_argument("--limit", type=int, default=40, metavar="N", help="show at most N matching species (default 40)")
    q.add_argument("--json", action="store_true", help="print the matches as a JSON list (name, kind, formula, ...)")
    q.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS)
    r = sub.add_parser("reactions", help="stoichiometric analysis of a mechanism's own reactions",
                       epilog=EPILOG_REACTIONS, formatter_class=argparse.RawDescriptionHelpFormatter)
    r.add_argument("mechanism", metavar="MECHANISM", help="Cantera-format YAML file")
    r.add_argument("--phase", action="append", metavar="NAME", help="analyse only this phase (repeatable)")
    r.add_argument("--json", action="store_true", help="print one JSON document (compact unless on a terminal)")
    r.add_argument("--pretty", action="store_true", help="indent the JSON document even when not on a terminal")
    r.add_argument("--limit", type=int, default=50, metavar="N",
                   help="list at most N items per section in the text output (default 50; 0 = all)")
    r.add_argument("--debug", action="store_true", default=argparse.SUPPRESS, help=argparse.SUPPRESS)
