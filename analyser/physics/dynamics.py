"""One switch over the dynamics, so compiled callers stay cacheable.

KEPLER and ANALYTIC_1PN both evaluate a packed closed-form orbit (orbits.py;
the Newtonian one is packed with eps = 0); NUMERICAL_1PN evaluates
integration nodes (integrator.py).  Callers pass both kinds of data and the
kind selects which is read; the unused one may be an empty array.

A star is followed through a "phase", six floats: for closed-form orbits the
anomalies and their sines and cosines (orbits.py), for integrated ones the
state itself.  `start_phase` evaluates from scratch, `advance_phase` moves a
phase by a small time step cheaply, `phase_to_state` gives position and
velocity.
"""

from numba import njit

from .integrator import nodes_state
from .orbits import orbit_phase, phase_state, shift_phase

KEPLER, ANALYTIC_1PN, NUMERICAL_1PN = 0, 1, 2
KIND_BY_NAME = {"kepler": KEPLER, "analytic-1pn": ANALYTIC_1PN, "numerical-1pn": NUMERICAL_1PN}


@njit(cache=True)
def start_phase(kind, orbit, nodes, par, t):
    """Phase at coordinate time t (par = (ds, mu, eps) of the nodes)."""
    if kind == NUMERICAL_1PN:
        return nodes_state(nodes, par[0], par[1], par[2], t)
    return orbit_phase(orbit, t)


@njit(cache=True)
def advance_phase(kind, orbit, nodes, par, phase, dt, t_new):
    """Phase at t_new = t + dt from the phase at t."""
    if kind == NUMERICAL_1PN:
        return nodes_state(nodes, par[0], par[1], par[2], t_new)
    return shift_phase(orbit, phase, dt, t_new)


@njit(cache=True)
def phase_to_state(kind, orbit, phase):
    """(x, y, z, vx, vy, vz) in AU and AU/yr."""
    if kind == NUMERICAL_1PN:
        return phase
    return phase_state(orbit, phase)


@njit(cache=True)
def star_state(kind, orbit, nodes, par, t):
    """(x, y, z, vx, vy, vz) at coordinate time t."""
    return phase_to_state(kind, orbit, start_phase(kind, orbit, nodes, par, t))
