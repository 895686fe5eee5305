"""Products that practitioners usually treat as kinetically hindered.

An equilibrium over ``reactions: complete`` lets every element-balanced product form. Some
products are thermodynamically favoured yet form only slowly over the catalysts and at the
temperatures where they are met, so a study that lets them form answers another question
(methane swamps the equilibrium of a methanol loop, which a copper catalyst keeps far from
methanation). The table is deliberately small; each entry says where the practice applies.
Source: common practice (process-design habit; no single reference), stated from memory.
"""
from __future__ import annotations

# species name in the packaged database -> (common name, where it is usually kept out)
HINDERED = {
    "CH4": ("methane", "methanation is slow without a nickel catalyst, so methanol loops, shift converters "
                       "and syngas units below about 500 degC usually keep it out (common practice)"),
    "C2H6": ("ethane", "higher hydrocarbons hardly form from syngas without a Fischer-Tropsch catalyst "
                       "(common practice)"),
    "C2H4": ("ethylene", "higher hydrocarbons hardly form from syngas without a Fischer-Tropsch catalyst "
                         "(common practice)"),
    "C3H8": ("propane", "higher hydrocarbons hardly form from syngas without a Fischer-Tropsch catalyst "
                        "(common practice)"),
    "C6H6": ("benzene", "aromatics hardly form from syngas or light gases outside dedicated catalysts "
                        "(common practice)"),
    "CH3OCH3": ("dimethyl ether", "a copper methanol catalyst forms it only where acid sites are added "
                                  "(common practice)"),
    "C2H5OH": ("ethanol", "higher alcohols form only in traces over methanol catalysts (common practice)"),
    "HCOOH": ("formic acid", "forms only in traces in syngas and shift service (common practice)"),
}
