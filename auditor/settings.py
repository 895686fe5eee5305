"""Named tolerances and limits, defined once; every report prints them.

Counts and combinations are exact and need no tolerance; these apply only to
floating-point thermodynamic values and to reading floats from mechanism files.
"""
from __future__ import annotations

# A mechanism stores coefficients as floats: 0.5 and 1.5 are common, 0.333333333 is not
# exact.  A float within this distance of a fraction with a denominator at most this
# large is taken as that fraction; anything else is an input error.
COEFFICIENT_MAX_DENOMINATOR = 1000
COEFFICIENT_TOLERANCE = 1e-9

# Relative element-balance residual accepted from a Gibbs minimisation (double
# precision solvers reach ~1e-12; 1e-8 leaves room for ill-conditioned cases).
ELEMENT_BALANCE_TOLERANCE = 1e-8
# Largest reaction affinity, in units of RT, accepted among present species
# (an affinity of 1e-6 RT changes an equilibrium constant by one part per million).
AFFINITY_TOLERANCE_RT = 1e-6
# A phase is present when it holds at least this fraction of all moles.
PHASE_PRESENCE_FRACTION = 1e-10
# An incipient phase (a phase fraction fixed at 0: bubble, dew or onset point) is certified
# when, absent, its driving force to form is within this of zero (RT), or, present, it holds
# at most this fraction of all moles.
INCIPIENT_DRIVING_FORCE_TOLERANCE_RT = AFFINITY_TOLERANCE_RT
INCIPIENT_FRACTION_TOLERANCE = 1e-6
# Two solutions from different starting estimates are the same state when every mole
# fraction agrees to this.
UNIQUENESS_TOLERANCE = 1e-6
# The present phases' amounts are called indeterminate (material can shift between them
# at fixed compositions) when the smallest singular value of their conserved-quantity
# vectors, over the largest, is below this.
PHASE_AMOUNT_RCOND_TOLERANCE = 1e-9
# ln K additivity of a dependent reaction is checked to this absolute tolerance
# (rounding in sums of ~10 terms of magnitude ~100).
LNK_ADDITIVITY_TOLERANCE = 1e-9
# A condensed species is used only inside its thermo data's temperature range, a closed
# interval widened by this much at each end: the packaged data give range ends to 0.01 K,
# and two fits meeting at a transition cross a few mK away from the tabulated end (ice and
# liquid water of nasa_condensed.yaml, both ending at 273.15 K, have equal G at 273.144 K).
THERMO_RANGE_TOLERANCE_K = 0.01
# Smallest singular value over largest of the Jacobian below which a structurally
# square system is called numerically singular.
JACOBIAN_RANK_TOLERANCE = 1e-10

# A product the feed does not hold and that practice treats as kinetically hindered is
# reported when it holds more than this share of an element at equilibrium ("most of it").
HINDERED_ELEMENT_SHARE = 0.5

# Values no physical case holds, refused as input errors (a slipped unit or exponent):
# temperatures outside 1 K to 1e5 K, pressures above 1e4 bar, feed amounts outside 1e-30 to
# 1e30 in the unit written (0 is allowed: "not fed").  Values inside these ranges but outside
# the species' thermo data are findings, not errors.
MIN_TEMPERATURE_K = 1.0
MAX_TEMPERATURE_K = 1e5
MAX_PRESSURE_PA = 1e9          # 1e4 bar
MIN_FEED_AMOUNT = 1e-30
MAX_FEED_AMOUNT = 1e30

# Bounded waits on pools and clusters (sweeps and multi-case checks).
SCHEDULER_CONNECT_S = 5.0          # a Dask scheduler must answer within this
SCHEDULER_WORKERS_WAIT_S = 20.0    # ... and have a worker within this
MAX_LOCAL_WORKERS = 256            # local:N
WORKER_PARENT_POLL_S = 0.5         # a worker process checks that its parent lives this often

# Messages: an echoed value longer than this is cut (its length stated); a message longer than
# MAX_MESSAGE_CHARS likewise; after MAX_PROBLEMS_OF_A_KIND problems of one kind one line counts the rest.
MAX_QUOTED_CHARS = 80
MAX_MESSAGE_CHARS = 600
MAX_PROBLEMS_OF_A_KIND = 5

# Limits against hostile input.
MAX_CASE_FILE_BYTES = 1_000_000
MAX_YAML_DEPTH = 20
MAX_YAML_NODES = 20_000
MAX_CASE_SPECIES = 2_000
MAX_CASE_PHASES = 50
MAX_CASE_REACTIONS = 10_000
MINIMISATION_WALL_SECONDS = 60.0
# Mechanism and thermo files are checked before any parser expands them (system/file_guard.py).
# The largest mechanism shipped with cantera has 1268 species, 5336 reactions and 1.3 MB.
MAX_MECHANISM_FILE_BYTES = 40_000_000
MAX_MECHANISM_SPECIES = 10_000            # "- name:" entries (species and phases)
MAX_MECHANISM_REACTIONS = 100_000
MAX_MECHANISM_DEPTH = 64                  # nesting levels
MAX_MECHANISM_INDENT = 256                # spaces before a key or list entry
MAX_MECHANISM_NODES = 5_000_000           # YAML nodes once aliases are followed
MAX_ALIASED_MECHANISM_BYTES = 2_000_000   # a file with aliases is composed (slowly) to count them

# Dulmage-Mendelsohn of a pattern with at most this many entries runs in plain Python (a
# case's incidence has tens); larger ones use scipy's compiled matching, whose import costs
# more than a whole small decomposition (auditor/dm.py; tests/test_dm.py checks both agree)
DM_PLAIN_PYTHON_MAX_ENTRIES = 50_000

TOLERANCES = {
    "coefficient_tolerance": COEFFICIENT_TOLERANCE,
    "coefficient_max_denominator": COEFFICIENT_MAX_DENOMINATOR,
    "element_balance_tolerance": ELEMENT_BALANCE_TOLERANCE,
    "affinity_tolerance_RT": AFFINITY_TOLERANCE_RT,
    "phase_presence_fraction": PHASE_PRESENCE_FRACTION,
    "uniqueness_tolerance": UNIQUENESS_TOLERANCE,
    "phase_amount_rcond_tolerance": PHASE_AMOUNT_RCOND_TOLERANCE,
    "lnK_additivity_tolerance": LNK_ADDITIVITY_TOLERANCE,
    "jacobian_rank_tolerance": JACOBIAN_RANK_TOLERANCE,
    "hindered_element_share": HINDERED_ELEMENT_SHARE,
    "thermo_range_tolerance_K": THERMO_RANGE_TOLERANCE_K,
}

# The ideal-gas assumption (auditor/equilibrium/real_gas.py).  At or above this pressure a
# certified state with an ideal gas phase is re-solved with Peng-Robinson fugacity
# coefficients (below it the fugacity coefficients of the common permanent gases are within
# about 1 % of one; common practice).
REAL_GAS_AUDIT_PRESSURE_PA = 10e5
# The assumption matters when a major mole fraction (at least REAL_GAS_MAJOR_FRACTION in
# either answer) moves by more than this, absolute ...
REAL_GAS_MOLE_FRACTION_TOLERANCE = 0.01
REAL_GAS_MAJOR_FRACTION = 0.01
# ... or ln K in mole fractions of an independent reaction by more than this (5 % in K).
REAL_GAS_LNK_TOLERANCE = 0.05
# The re-solve stops when ln phi changes by less than this between iterations.
REAL_GAS_FIXED_POINT_TOLERANCE = 1e-9
# A Peng-Robinson gas root with a compressibility below this is liquid-like (a gas has Z near 1;
# a liquid 0.01-0.2): the check then says the mixture may not be a gas at the state.
REAL_GAS_LIQUID_LIKE_Z = 0.3
# Above this pressure a gas treated as ideal gets a caution in the terminal and the report.
HIGH_PRESSURE_CAUTION_PA = 50e5

# (these five are printed in the JSON's real_gas block, not in 'tolerances', which every case carries)

# Margins (auditor/equilibrium/margins.py): each probed variable is moved from the design
# point with the present phases held, in steps that start at these sizes and grow by
# MARGIN_STEP_GROWTH up to MARGIN_STEP_MAX_MULTIPLE times the first (a window narrower than
# a step can be stepped over), inside these stated bounds and the present species' data ranges.
MARGIN_TEMPERATURE_SPAN_K = 1000.0        # searched: design T +- this
MARGIN_PRESSURE_FACTOR = 100.0            # searched: design P / this to design P * this
MARGIN_FEED_FACTOR = 10.0                 # searched: zero to this times the design value of a feed axis
MARGIN_TEMPERATURE_STEP_K = 10.0
MARGIN_RELATIVE_STEP = 0.05               # pressure: in ln P; a feed axis: of its design value
MARGIN_STEP_GROWTH = 1.5
MARGIN_STEP_MAX_MULTIPLE = 10.0
MARGIN_STEP_MIN_MULTIPLE = 1e-3         # where the state cannot be followed, steps shrink to this before giving up
MARGIN_TEMPERATURE_XTOL_K = 1e-6          # a boundary is located to this (bracketed false position) ...
MARGIN_RELATIVE_XTOL = 1e-9               # ... or this relative to the design value
# A boundary nearer than this to the design point is named in the verdict box and becomes a
# finding (common practice for a design review; a stated choice, not a physical limit).
MARGIN_NEAR_TEMPERATURE_K = 25.0
MARGIN_NEAR_RELATIVE = 0.10               # pressure and feed axes: of the design value
