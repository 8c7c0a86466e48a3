"""Speed of the forward model: nanoseconds per observation.

Prints, side by side in one run, the compiled kernel (observe_stars, one
call from element rows: analytic 1PN orbit, Roemer delay, redshift on the velocity
epochs) and the plain-numpy implementation of the same model
(analyser.physics.reference), for 2, 10 and 30 stars with 50 astrometric
and 15 velocity epochs each.  Usage:  python benchmarks/forward_model.py
"""

import time

import numpy as np

from analyser.physics import constants as const
from analyser.physics import reference
from analyser.physics.observables import observe_stars

N_ASTRO, N_VEL = 50, 15


def campaign(n_stars, rng):
    el = np.column_stack([
        rng.uniform(5, 100, n_stars), rng.uniform(0.1, 0.95, n_stars),
        np.radians(rng.uniform(10, 170, n_stars)), np.radians(rng.uniform(0, 360, n_stars)),
        np.radians(rng.uniform(0, 360, n_stars)), rng.uniform(1990, 2020, n_stars)])
    t = np.concatenate([np.sort(rng.uniform(1995, 2025, N_ASTRO + N_VEL)) for _ in range(n_stars)])
    need_v = np.concatenate([rng.permutation(np.r_[np.zeros(N_ASTRO, bool), np.ones(N_VEL, bool)])
                             for _ in range(n_stars)])
    first = np.arange(n_stars + 1) * (N_ASTRO + N_VEL)
    return el, t, need_v, first


def best_time(fn, min_seconds=1.0):
    fn()
    best, spent, reps = np.inf, 0.0, 0
    while spent < min_seconds or reps < 5:
        t0 = time.perf_counter()
        fn()
        dt = time.perf_counter() - t0
        best, spent, reps = min(best, dt), spent + dt, reps + 1
    return best


def main():
    rng = np.random.default_rng(42)
    mu = const.GM_SUN * 4.0e6
    eps = 1.0 / const.C_AU_YR**2
    frame = np.array([0.1, -0.2, 0.01, 0.02, 3.0, 2010.0])
    mas_per_au = 1000.0 / 8000.0
    print(f"{'stars':>5} {'obs':>6} {'compiled ns/obs':>16} {'numpy ns/obs':>13} {'ratio':>7}"
          f" {'max |dx| mas':>13} {'max |dv| km/s':>14}")
    for n_stars in (2, 10, 30):
        el, t, need_v, first = campaign(n_stars, rng)
        n_obs = t.size
        out = np.empty((4, n_obs))

        def compiled():
            observe_stars(el, first, t, need_v, mu, eps, const.C_AU_YR, 1.0, mas_per_au, frame,
                          out)

        star = np.repeat(np.arange(n_stars), N_ASTRO + N_VEL)

        def plain():
            return reference.observe(el, star, t, mu, eps, 1.0, mas_per_au, frame)

        tc, tn = best_time(compiled), best_time(plain)
        x, y, v = plain()
        compiled()
        dx = np.max(np.abs(np.r_[x - out[0], y - out[1]]))
        dv = np.max(np.abs((v - out[2])[need_v]))
        print(f"{n_stars:5d} {n_obs:6d} {tc / n_obs * 1e9:16.1f} {tn / n_obs * 1e9:13.1f}"
              f" {tn / tc:7.1f} {dx:13.2e} {dv:14.2e}")


if __name__ == "__main__":
    main()
