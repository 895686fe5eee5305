"""A small hand-written Cantera-format mechanism (H2, O2, H2O with constant-cp data; invented
values close to the NIST-JANAF 298.15 K entries) and a case that uses it: the shared input of
the tests that build faulty or hostile files around a valid one."""

MECHANISM = """\
phases:
- name: gas
  thermo: ideal-gas
  elements: [H, O]
  species: [H2, O2, H2O]
  state: {T: 300, P: 1 atm}
species:
- name: H2
  composition: {H: 2}
  thermo: {model: constant-cp, T0: 298.15 K, h0: 0, s0: 130.68 J/mol/K, cp0: 28.8 J/mol/K}
- name: O2
  composition: {O: 2}
  thermo: {model: constant-cp, T0: 298.15 K, h0: 0, s0: 205.1 J/mol/K, cp0: 29.4 J/mol/K}
- name: H2O
  composition: {H: 2, O: 1}
  thermo: {model: constant-cp, T0: 298.15 K, h0: -241.8 kJ/mol, s0: 188.8 J/mol/K, cp0: 33.6 J/mol/K}
"""
MECHANISM_CASE = """\
title: mechanism case
system:
  mechanism: mech.yaml
reactions: from-mechanism
feed: {H2: 2, O2: 1}
specified: {temperature: 1000 K, pressure: 1 bar}
"""
