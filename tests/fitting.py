"""Small synthetic campaigns for the fitting tests (invented stars and instruments)."""

import copy

from analyser.campaign import load_campaign
from analyser.simulate import simulate, write_campaign

BASE = {
    "scenario": {"name": "test cluster", "seed": 11, "reference_epoch": 2018.0,
                 "dynamics": "analytic-1pn", "season_start_day": 60, "season_length_days": 160},
    "truth": {"mass_msun": 3.2e6, "distance_pc": 7100.0, "x0_mas": 0.2, "y0_mas": -0.1,
              "vx0_mas_yr": 0.02, "vy0_mas_yr": -0.01, "vz0_km_s": 4.0, "f_sp": 1.0, "f_z": 1.0},
    "stars": {
        "TC-1": {"period_yr": 7.5, "e": 0.88, "i_deg": 48.0, "Omega_deg": 110.0,
                 "omega_deg": 250.0, "t_p_yr": 2016.2},
        "TC-2": {"period_yr": 16.0, "e": 0.45, "i_deg": 123.0, "Omega_deg": 300.0,
                 "omega_deg": 40.0, "t_p_yr": 2010.5},
        "TC-3": {"period_yr": 24.0, "e": 0.6, "i_deg": 70.0, "Omega_deg": 25.0,
                 "omega_deg": 170.0, "t_p_yr": 2021.0},
    },
    "observing": {
        "KITE": {"kind": "astrometry", "first_year": 2008, "last_year": 2025,
                 "nights_per_season": 3, "error_mas": 0.3, "error_spread": 0.2},
        "HERON": {"kind": "velocity", "first_year": 2009, "last_year": 2025,
                  "nights_per_season": 2, "error_km_s": 15.0},
    },
    "campaign": {
        "instruments": {"KITE": {"kind": "astrometry", "reference": True},
                        "HERON": {"kind": "velocity", "reference": True}},
        "priors": {"mass_msun": {"log-uniform": [1e6, 1e7]},
                   "distance_pc": {"uniform": [4000, 12000]},
                   "x0_mas": {"gaussian": [0, 1]}, "y0_mas": {"gaussian": [0, 1]},
                   "vx0_mas_yr": {"gaussian": [0, 0.1]}, "vy0_mas_yr": {"gaussian": [0, 0.1]},
                   "vz0_km_s": {"gaussian": [0, 20]}},
        "star_priors": {"default": {"period_yr": {"log-uniform": [2, 500]}}},
        "variants": {"reference": "gr",
                     "newtonian": {"f_sp": {"fixed": 0}, "f_z": {"fixed": 0}},
                     "gr": {"f_sp": {"fixed": 1}, "f_z": {"fixed": 1}}},
        "sampler": {"live_points": 80, "dlogz": 0.2, "checkpoint_seconds": 5},
    },
}


def scenario(stars=("TC-1", "TC-2"), **changes):
    """A copy of the base scenario with the chosen stars; `changes` maps
    'section.key' to a value (e.g. truth.f_sp=0.0, campaign.sampler={...})."""
    sc = copy.deepcopy(BASE)
    sc["stars"] = {name: sc["stars"][name] for name in stars}
    for key, value in changes.items():
        section, name = key.split(".", 1)
        target = sc[section]
        while "." in name:
            head, name = name.split(".", 1)
            target = target[head]
        target[name] = value
    return sc


def make_campaign(folder, sc):
    """Simulate the scenario into `folder`; returns (campaign, truth)."""
    doc, astro, vel, truth = simulate(sc)
    write_campaign(folder, doc, astro, vel, truth)
    return load_campaign(folder / "campaign.toml"), truth
