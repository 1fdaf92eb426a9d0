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
