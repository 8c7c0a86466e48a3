"""`analyser predict`: against the physics core, astropy.time, and the
published periapsis epochs of the best-measured Galactic-Centre star."""

import json

import numpy as np
import pytest
from astropy.table import Table
from astropy.time import Time

from analyser.cli import main
from analyser.forecast import parse_date, predict
from analyser.physics import periapsis_passage, predict_observables, with_radial_period

from .conftest import S2_LIKE_ELEMENTS, S2_LIKE_GLOBALS

GLOBAL_NAMES = ("mass_msun", "distance_pc", "x0_mas", "y0_mas", "vx0_mas_yr", "vy0_mas_yr",
                "vz0_km_s", "f_sp", "f_z")


def _bundle(folder, elements, n=40, scatter=0.0, seed=0):
    """A minimal bundle with posterior samples of one star, 'S2-like'."""
    rng = np.random.default_rng(seed)
    g = S2_LIKE_GLOBALS
    cols = {k: np.full(n, g[k]) for k in GLOBAL_NAMES}
    star = "S2-like"
    _, radial = periapsis_passage(g, elements, 0)
    for k in ("period_yr", "e", "i_deg", "Omega_deg", "omega_deg", "t_p_yr"):
        cols[f"{star}.{k}"] = np.full(n, elements[k])
    cols[f"{star}.t_p_yr"] = elements["t_p_yr"] + scatter * rng.standard_normal(n)
    cols[f"{star}.radial_period_yr"] = np.full(n, radial)
    folder.mkdir(parents=True, exist_ok=True)
    (folder / "samples").mkdir(exist_ok=True)
    Table(cols).write(folder / "samples" / "gr.ecsv", format="ascii.ecsv", overwrite=True)
    doc = {"model_comparison": {"reference": "gr"}, "reference_epoch_yr": g["t_ref_yr"],
           "campaign": {"dynamics": "analytic-1pn", "stars": [{"name": star}]},
           "variants": {"gr": {"samples_file": "samples/gr.ecsv"}}}
    (folder / "results.json").write_text(json.dumps(doc))
    return star


def test_dates_are_parsed_with_astropy_time():
    assert parse_date("2027-06-01") == pytest.approx(Time("2027-06-01", scale="tt").jyear)
    assert parse_date("J2027.5") == pytest.approx(2027.5)
    assert parse_date("mjd:61000") == pytest.approx(Time(61000, format="mjd", scale="tt").jyear)
    assert parse_date("2030.25") == pytest.approx(2030.25)


def test_ephemerides_equal_the_physics_core(tmp_path):
    star = _bundle(tmp_path, dict(S2_LIKE_ELEMENTS))
    predict(tmp_path, 2026.0, 2027.0, step_days=30.0)
    eph = Table.read(tmp_path / "predictions" / "ephemerides.ecsv")
    t = np.asarray(eph["epoch"])
    direct = predict_observables(S2_LIKE_GLOBALS, S2_LIKE_ELEMENTS, t)
    assert np.allclose(eph["x_median"], direct.x_mas, atol=1e-9)
    assert np.allclose(eph["v_median"], direct.v_km_s, atol=1e-7)
    assert np.all(eph["x_lo68"] <= eph["x_median"]) and np.all(eph["x_median"] <= eph["x_hi68"])
    assert list(eph["date"][:1]) == [Time(t[0], format="jyear", scale="tt").iso[:10]]


def test_published_periapsis_epochs_of_the_best_measured_star(tmp_path):
    """Periapsis passages 2002.3 and 2018.4 (published; from memory).  The
    published period is the repeat period, so it is first converted to the
    osculating period of our convention (physics.with_radial_period)."""
    elements = with_radial_period(S2_LIKE_GLOBALS, S2_LIKE_ELEMENTS)
    elements, _ = periapsis_passage(S2_LIKE_GLOBALS, elements, -1)   # start from 2002
    _bundle(tmp_path, elements, scatter=0.002)
    events = predict(tmp_path, 2018.0, 2019.0, step_days=20.0)
    (p,) = events["periapsis"]
    assert p["epoch_yr"] == pytest.approx(2018.4, abs=0.05)
    assert p["lo68"] < p["epoch_yr"] < p["hi68"]
    assert elements["t_p_yr"] == pytest.approx(2002.3, abs=0.05)
    # the relativistic redshift signal peaks at periapsis, at ~200 km/s
    (peak,) = events["redshift_peaks"]
    assert peak["epoch_yr"] == pytest.approx(p["epoch_yr"], abs=0.01)
    # (~200 km/s published, from memory; our conversion of the period makes the
    # osculating orbit a little tighter, hence the looser bound)
    assert peak["signal_km_s"] == pytest.approx(200.0, rel=0.1)


def test_cli_predict_writes_table_events_and_figure(tmp_path, capsys):
    _bundle(tmp_path, dict(S2_LIKE_ELEMENTS))
    assert main(["predict", str(tmp_path), "--from", "2034-06-01", "--to", "2036-01-01"]) == 0
    out = capsys.readouterr().out
    assert "periapsis S2-like" in out
    for name in ("ephemerides.ecsv", "events.json", "predictions.svg"):
        assert (tmp_path / "predictions" / name).stat().st_size > 0
    assert main(["predict", str(tmp_path), "--from", "2035", "--to", "2034"]) == 2
    assert main(["predict", str(tmp_path / "nothing"), "--from", "2035", "--to", "2036"]) == 2
