"""A small invented mechanism the tests write to disk: three isomers A, B, C and one reaction.

pytest's default import mode puts this folder on ``sys.path``, so test modules import it as
``isomers``.
"""

from __future__ import annotations

# the H2 NASA7 fit (two ranges), given to each isomer
NASA7_H2 = """    model: NASA7
    temperature-ranges: [200.0, 1000.0, 3500.0]
    data:
    - [2.34433112, 7.98052075e-03, -1.9478151e-05, 2.01572094e-08, -7.37611761e-12, -917.935173, 0.683010238]
    - [3.3372792, -4.94024731e-05, 4.99456778e-07, -1.79566394e-10, 2.00255376e-14, -950.158922, -3.20502331]
"""


def isomer_mechanism(equation: str, species_line: str = "species: [A, B, C]") -> str:
    """Three isomers A, B, C (composition H2 each, the H2 NASA7 fit) and one reaction;
    ``species_line`` is the gas phase's species entry."""
    species = "".join(f"- name: {n}\n  composition: {{H: 2}}\n  thermo:\n{NASA7_H2}" for n in "ABC")
    return f"""units: {{length: cm, quantity: mol, activation-energy: cal/mol}}
phases:
- name: gas
  thermo: ideal-gas
  elements: [H]
  {species_line}
  kinetics: gas
  reactions: all
  state: {{T: 300.0, P: 1 atm}}
species:
{species}reactions:
- equation: {equation}
  rate-constant: {{A: 1.0e+13, b: 0.0, Ea: 0.0}}
"""
