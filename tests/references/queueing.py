"""Check values for the Erlang loss and delay formulas and ward staffing ratios.

Sources:
- Erlang B, B(c, a) = (a^c / c!) / sum_{k<=c} a^k / k! (A. K. Erlang, 1917); stable recursion
  as in D. L. Jagerman, Bell System Tech. J. 53 (1974) 525-551. B(15, 8.108) = 0.0099996 is the
  standard Erlang table entry (15 servers carry 8.108 erlangs at 1% blocking); the others are
  exact fractions or computed from the published formula and cross-checked (project
  REFERENCES.md, "Queueing results for the ward model").
- Erlang C, C(c, a) = B / (1 - (a/c)(1 - B)), M/M/c probability of waiting; values computed from
  the formula and cross-checked (project REFERENCES.md).
- Staffing: Queensland Hospital and Health Boards Regulation 2012 (from 2016): 1 nurse to 4
  patients on day shifts, 1 to 7 at night on medical-surgical wards; NICE SG1 (2014): fewer than
  2 registered nurses on a ward in any shift is a red flag (project REFERENCES.md).
"""

from __future__ import annotations

#: (servers, load in erlangs, B(c, a))
ERLANG_B = (
    (15, 8.108, 0.0099996),
    (5, 3.0, 81 / 736),
    (4, 2.0, 2 / 21),
    (10, 5.0, 0.0183846),
    (30, 27.0, 0.0818798),
)

#: (servers, load in erlangs, C(c, a))
ERLANG_C = (
    (6, 2.5, 0.0474448),
    (5, 2.5, 0.1303713),
    (2, 1.5, 9 / 14),
    (3, 2.0, 4 / 9),
)

#: (occupied beds, patients per nurse, minimum nurses, nurses required)
STAFFING_EXAMPLES = (
    (28, 4.0, 2, 7),  # day shift at 1:4 (Queensland)
    (28, 7.0, 2, 4),  # night shift at 1:7 (Queensland)
    (5, 7.0, 2, 2),  # few patients: NICE SG1 minimum of 2 registered nurses
)

#: Erlang B inverse: (load in erlangs, share of patients turned away, fewest beds c with
#: B(c, a) <= share, B at c beds, B at c - 1 beds, occupancy carried a (1 - B) / c).
#: Source: computed with the recursion above; project REFERENCES.md, "Sizing, pooling and the
#: ward's operations" (the last two rows computed here the same way and cross-checked with
#: the truncated Poisson of scipy.stats).
ERLANG_B_INVERSE = (
    (5.0, 0.05, 9, 0.0374578, 0.0700479, 0.53),
    (10.0, 0.05, 15, 0.0364969, 0.0568191, 0.64),
    (20.0, 0.05, 26, 0.0371952, 0.0502218, 0.74),
    (20.0, 0.01, 30, 0.0084575, 0.0127945, 0.66),
    (50.0, 0.05, 56, 0.0457924, 0.0537488, 0.85),
    (3.0, 0.10, 6, 0.0521571, 0.1100543, 0.47),
)

#: Occupancy reachable at 5% of patients turned away, by ward size: (beds, occupancy).
#: Source: de Bruin, Bekker, van Zanten & Koole, Ann. Oper. Res. 178 (2010) 23-43, "about 59%
#: for 10 beds ... 90.5% for 100" (as quoted in REFERENCES.md; the values there were computed
#: from Erlang B).
DE_BRUIN_OCCUPANCY_AT_5_PERCENT = ((10, 0.59), (20, 0.72), (50, 0.85), (100, 0.905))
