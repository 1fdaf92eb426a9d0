"""Kaplan-Meier reference: the Freireich et al. (1963) 6-mercaptopurine (6-MP) trial of
remission in acute leukaemia, the textbook example of the product-limit estimate.

Source: E. J. Freireich et al., Blood 21 (1963) 699-716; the 6-MP arm as tabulated in
J. P. Klein & M. L. Moeschberger, Survival Analysis, 2nd ed. (Springer, 2003), Table 4.1A
(also D. Collett, Modelling Survival Data in Medical Research). Values from memory.
Remission times in weeks; ``observed`` False = still in remission (censored).
"""

from __future__ import annotations

import numpy as np

WEEKS = np.array(
    [6, 6, 6, 6, 7, 9, 10, 10, 11, 13, 16, 17, 19, 20, 22, 23, 25, 32, 32, 34, 35], dtype=float
)
OBSERVED = np.array([1, 1, 1, 0, 1, 0, 1, 0, 0, 1, 1, 0, 0, 0, 1, 1, 0, 0, 0, 0, 0], dtype=bool)

# Table 4.1A (from memory): event time, number at risk, relapses, S(t) to 3 decimals.
TABLE = {
    "time": np.array([6, 7, 10, 13, 16, 22, 23], dtype=float),
    "at_risk": np.array([21, 17, 15, 12, 11, 7, 6]),
    "events": np.array([3, 1, 1, 1, 1, 1, 1]),
    "survival": np.array([0.857, 0.807, 0.753, 0.690, 0.627, 0.538, 0.448]),
}
