"""The three dynamics by name, and the codes compiled callers pass.

KEPLER and ANALYTIC_1PN both evaluate a packed closed-form orbit (orbits.py;
the Newtonian one is packed with eps = 0); NUMERICAL_1PN evaluates
integration nodes (integrator.py).
"""

KEPLER, ANALYTIC_1PN, NUMERICAL_1PN = 0, 1, 2
KIND_BY_NAME = {"kepler": KEPLER, "analytic-1pn": ANALYTIC_1PN, "numerical-1pn": NUMERICAL_1PN}
