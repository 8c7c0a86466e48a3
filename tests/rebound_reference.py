"""Independent reference observables from REBOUND + REBOUNDx (PyPI).

The star is a massless particle around the central mass, integrated with
IAS15 and REBOUNDx's "gr_full" force, which for a massless body is exactly
the 1PN harmonic-coordinate equation of DESIGN.md section 4 ("gr" is only an
approximation and is not used).  The Roemer delay and the redshift are
added here from their definitions, without calling the package's own code.
"""

import math

import numpy as np
import rebound
import reboundx

from analyser.physics.constants import C_AU_YR, GM_SUN, KM_S_PER_AU_YR


class ReboundStar:
    def __init__(self, position_au, velocity_au_yr, t_p, mass_msun, relativity=True):
        sim = rebound.Simulation()
        sim.G = GM_SUN
        sim.integrator = "ias15"
        sim.add(m=mass_msun)
        sim.add(m=0.0, x=position_au[0], y=position_au[1], z=position_au[2],
                vx=velocity_au_yr[0], vy=velocity_au_yr[1], vz=velocity_au_yr[2])
        sim.t = t_p
        self.extras = None
        if relativity:
            self.extras = reboundx.Extras(sim)
            force = self.extras.load_force("gr_full")
            self.extras.add_force(force)
            force.params["c"] = C_AU_YR
        self.sim = sim
        self.mu = GM_SUN * mass_msun

    def state(self, t):
        self.sim.integrate(t, exact_finish_time=1)
        p = self.sim.particles
        return np.array([p[1].x - p[0].x, p[1].y - p[0].y, p[1].z - p[0].z,
                         p[1].vx - p[0].vx, p[1].vy - p[0].vy, p[1].vz - p[0].vz])

    def observe(self, t_obs, distance_pc, f_z=1.0, roemer=True):
        """x, y (mas), v (km/s) at arrival epochs, frame terms zero."""
        out = np.empty((len(t_obs), 3))
        for k, t in enumerate(t_obs):
            t_em = t
            for _ in range(50):  # plain fixed-point iteration t_em = t_obs - z/c
                s = self.state(t_em)
                new = t - s[2] / C_AU_YR if roemer else t
                if abs(new - t_em) < 1e-12:
                    break
                t_em = new
            s = self.state(t_em)
            r = math.sqrt(s[0]**2 + s[1]**2 + s[2]**2)
            v2 = s[3]**2 + s[4]**2 + s[5]**2
            one_plus_z = ((1 + s[5] / C_AU_YR) / math.sqrt(1 - v2 / C_AU_YR**2)
                          / math.sqrt(1 - 2 * self.mu / (r * C_AU_YR**2)))
            v = s[5] + f_z * (C_AU_YR * (one_plus_z - 1) - s[5])
            out[k] = (s[0] * 1000 / distance_pc, s[1] * 1000 / distance_pc, v * KM_S_PER_AU_YR)
        return out
