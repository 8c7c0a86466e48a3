"""Loading a valid campaign: units, epochs, order, sources, priors, variants, hashes."""

import dataclasses
import hashlib
import math

import numpy as np
import pytest

from analyser.campaign import (GLOBAL_PARAMETERS, STAR_PARAMETERS, Campaign, CampaignError, Prior,
                               SamplerSettings, load_campaign)
from analyser.data.parameters import DEFAULT_NUISANCE_PRIORS, DEFAULT_STAR_PRIORS
from analyser.data.settings import SAMPLER_RULES

from .data.campaigns import ISO_EPOCHS, Inline, good_campaign

# One millisecond: the float64 resolution of a JD near 2.46e6 is ~50 microseconds.
EPOCH_TOLERANCE_YR = 1e-3 / (365.25 * 86400)


@pytest.fixture
def files(tmp_path):
    return good_campaign(tmp_path)


@pytest.fixture
def campaign(files) -> Campaign:
    return load_campaign(files.write())


def test_astrometry_rows_in_internal_units_sorted_by_star_and_epoch(files, campaign):
    expected = [row for row in files.truth["astrometry"] if row[0] != "QV-9"]
    a = campaign.astrometry
    assert len(a) == len(expected)
    assert a.star.tolist() == [r[0] for r in expected]
    np.testing.assert_allclose(a.epoch_yr, [r[1] for r in expected], atol=EPOCH_TOLERANCE_YR)
    # arcsec -> mas for ORCA, uas -> mas for PIKE's errors
    np.testing.assert_allclose(a.x_mas, [r[2] for r in expected], rtol=1e-12)
    np.testing.assert_allclose(a.y_mas, [r[3] for r in expected], rtol=1e-12)
    np.testing.assert_allclose(a.x_err_mas, [r[4] for r in expected], rtol=1e-12)
    np.testing.assert_allclose(a.y_err_mas, [r[5] for r in expected], rtol=1e-12)
    np.testing.assert_allclose(a.rho, [r[6] for r in expected])     # 0 where no column
    assert a.instrument.tolist() == [r[7] for r in expected]
    order = list(zip(a.star.tolist(), a.epoch_yr.tolist()))
    assert order == sorted(order)


def test_velocity_rows_in_km_s(files, campaign):
    expected = [row for row in files.truth["velocity"] if row[0] != "QV-9"]
    v = campaign.velocities
    assert v.star.tolist() == [r[0] for r in expected]
    np.testing.assert_allclose(v.epoch_yr, [r[1] for r in expected], atol=EPOCH_TOLERANCE_YR)
    np.testing.assert_allclose(v.v_km_s, [r[2] for r in expected], rtol=1e-12)   # from m/s
    np.testing.assert_allclose(v.v_err_km_s, [r[3] for r in expected], rtol=1e-12)
    assert v.instrument.tolist() == [r[4] for r in expected]


def test_epoch_formats_agree_after_conversion(campaign):
    """The same instants written as jyear, iso, mjd and jd land on the same Julian year
    (J2016.0 = 2016-01-01 12:00 TT = JD 2457389.0 = MJD 57388.5; IAU Julian epoch)."""
    a, v = campaign.astrometry, campaign.velocities
    def epochs(data, star, instrument):
        mask = (data.star == star) & (data.instrument == instrument)
        return data.epoch_yr[mask]
    assert epochs(a, "QV-1", "PIKE")[0] == pytest.approx(2016.0, abs=EPOCH_TOLERANCE_YR)  # iso
    assert epochs(v, "QV-1", "NEWT")[0] == pytest.approx(2016.0, abs=EPOCH_TOLERANCE_YR)  # mjd
    assert epochs(v, "QV-1", "NEWT")[1] == pytest.approx(2017.0, abs=EPOCH_TOLERANCE_YR)  # jd
    assert epochs(a, "QV-1", "PIKE")[1] == pytest.approx(2017.0, abs=EPOCH_TOLERANCE_YR)  # iso
    assert epochs(v, "QV-1", "MOTH")[0] == pytest.approx(2012.5, abs=EPOCH_TOLERANCE_YR)  # mjd
    assert 2012.5 in epochs(a, "QV-1", "ORCA").tolist()                                  # jyear
    # the date-only ISO form: 2018-01-01 00:00 TT is J2018.0
    assert epochs(a, "QV-2", "PIKE")[0] == pytest.approx(2018.0, abs=EPOCH_TOLERANCE_YR)
    assert set(ISO_EPOCHS) == {2016.0, 2017.0, 2018.0, 2020.0}


def test_each_row_points_at_its_own_line(files, campaign):
    """RowSource.line is the line of the file holding that row, header lines counted."""
    for data in (campaign.astrometry, campaign.velocities):
        for k, source in enumerate(data.source):
            name = source.file.rsplit("/", 1)[-1]
            text_line = files.written[name].splitlines()[source.line - 1]
            assert text_line.split("," if name.endswith(".csv") else " ")[0] == data.star[k]
    # by hand: 12 header lines, the names on line 13, so the 8th row (QV-1, 2011.0) is line 21
    a = campaign.astrometry
    k = [i for i in range(len(a)) if a.star[i] == "QV-1" and a.epoch_yr[i] == 2011.0][0]
    assert a.source[k].file == files.display("astrometry.ecsv")
    assert a.source[k].line == 21


def test_rows_of_unselected_stars_are_excluded_with_a_reason(files, campaign):
    excluded = campaign.excluded
    assert len(excluded) == 2
    assert {e.reason for e in excluded} == {"star 'QV-9' is not selected"}
    for e in excluded:
        name = e.source.file.rsplit("/", 1)[-1]
        assert files.written[name].splitlines()[e.source.line - 1].startswith("QV-9")
    assert "QV-9" not in campaign.astrometry.star.tolist()
    assert campaign.stars == ("QV-1", "QV-2", "QV-3")


def test_all_stars_are_selected_by_default(files):
    del files.config["campaign"]["stars"]
    campaign = load_campaign(files.write())
    assert campaign.stars == ("QV-1", "QV-2", "QV-3", "QV-9")
    assert campaign.excluded == ()


def test_input_files_hold_the_sha256_of_every_file(files, campaign):
    assert set(campaign.input_files) == {"campaign.toml", "astrometry.ecsv", "pike.csv",
                                         "velocities.csv", "newt.ecsv"}
    for name, digest in campaign.input_files.items():
        assert digest == hashlib.sha256((files.folder / name).read_bytes()).hexdigest()


def test_campaign_settings(campaign, files):
    assert campaign.name == "Test field, season one"
    assert campaign.seed == 7
    assert campaign.dynamics == "kepler"
    assert campaign.reference_epoch_yr == 2016.0
    assert campaign.path == files.path
    assert campaign.stars_without_velocities() == ("QV-3",)
    assert campaign.instruments["NEWT"].nuisance_names() == (
        "NEWT.zero_point_km_s", "NEWT.jitter_km_s", "NEWT.outlier_fraction")


def test_priors_are_converted_to_the_parameters_units(campaign):
    assert campaign.global_priors["distance_pc"] == Prior("uniform", 5000.0, 12000.0)
    assert campaign.global_priors["mass_msun"] == Prior("log-uniform", 1e6, 1e7)
    qv1 = campaign.star_priors["QV-1"]
    assert qv1["period_yr"].kind == "log-uniform"                       # days -> Julian years
    assert (qv1["period_yr"].a, qv1["period_yr"].b) == pytest.approx((10.0, 100.0))
    assert qv1["Omega_deg"].period == 360.0                             # [0, 2 pi] rad
    assert qv1["Omega_deg"].b == pytest.approx(360.0)


def test_defaults_fill_every_prior_not_given(campaign):
    assert set(campaign.global_priors) == set(GLOBAL_PARAMETERS)
    assert campaign.global_priors["f_sp"] == Prior("fixed", 1.0)
    qv2 = campaign.star_priors["QV-2"]
    assert set(qv2) == set(STAR_PARAMETERS)
    assert qv2["period_yr"] == Prior("log-uniform", 2.0, 2000.0)       # [star_priors.default]
    assert qv2["e"] == DEFAULT_STAR_PRIORS["e"] == Prior("uniform", 0.0, 0.98)
    assert qv2["phase"] == Prior("uniform", 0.0, 1.0, period=1.0)
    assert set(campaign.star_priors) == {"QV-1", "QV-2", "QV-3"}
    expected = {n for i in campaign.instruments.values() for n in i.nuisance_names()}
    assert set(campaign.nuisance_priors) == expected
    assert campaign.nuisance_priors["PIKE.offset_x_mas"] == Prior("gaussian", 0.0, 0.5)
    assert campaign.nuisance_priors["PIKE.offset_y_mas"] == DEFAULT_NUISANCE_PRIORS["offset_y_mas"]
    assert campaign.nuisance_priors["NEWT.jitter_km_s"] == Prior("uniform", 0.0, 50.0)


def test_default_variants(campaign):
    assert [v.name for v in campaign.variants] == ["newtonian", "gr", "free"]
    assert campaign.reference_variant == "gr"
    newtonian, gr, free = campaign.variants
    assert newtonian.priors["f_sp"] == newtonian.priors["f_z"] == Prior("fixed", 0.0)
    assert gr.priors["f_sp"] == gr.priors["f_z"] == Prior("fixed", 1.0)
    assert free.priors["f_sp"] == free.priors["f_z"] == Prior("uniform", -2.0, 4.0)
    # every variant carries the complete set of priors
    n = len(GLOBAL_PARAMETERS) + 3 * len(STAR_PARAMETERS) + len(campaign.nuisance_priors)
    assert all(len(v.priors) == n for v in campaign.variants)
    assert free.priors["QV-1.period_yr"] == campaign.star_priors["QV-1"]["period_yr"]


def test_variants_from_the_file_replace_priors(files):
    files.config["variants"] = {
        "reference": "circular",
        "circular": {"description": "QV-1 on a circle", "QV-1.e": Inline({"fixed": 0}),
                     "ORCA.error_scale": Inline({"fixed": 1})},
        "eccentric": {"QV-1.e": Inline({"uniform": [0, 0.9]})},
    }
    campaign = load_campaign(files.write())
    circular = campaign.variant("circular")
    assert campaign.reference_variant == "circular"
    assert circular.description == "QV-1 on a circle"
    assert circular.priors["QV-1.e"] == Prior("fixed", 0.0)
    assert circular.priors["ORCA.error_scale"] == Prior("fixed", 1.0)
    assert circular.priors["QV-2.e"] == campaign.star_priors["QV-2"]["e"]
    assert campaign.variant("eccentric").priors["QV-1.e"] == Prior("uniform", 0.0, 0.9)
    assert campaign.variant("eccentric").priors["f_sp"] == Prior("fixed", 1.0)
    with pytest.raises(KeyError):
        campaign.variant("gr")


def test_a_single_variant_is_its_own_reference(files):
    files.config["variants"] = {"only": {"f_sp": Inline({"fixed": 1})}}
    assert load_campaign(files.write()).reference_variant == "only"


@pytest.mark.parametrize("written, bare, expected", [
    ("2016-01-01T12:00:00", False, 2016.0),
    (2016, False, 2016.0),
    ("2016-01-01", True, 2016.0 - 0.5 / 365.25),   # a TOML date: midnight, half a day early
])
def test_reference_epoch_as_year_or_date(files, written, bare, expected):
    files.config["campaign"]["reference_epoch"] = written
    path = files.write()
    if bare:
        path.write_text(path.read_text().replace(f'"{written}"', written))
    assert load_campaign(path).reference_epoch_yr == pytest.approx(expected, abs=1e-9)


def test_sampler_settings_and_gates(files):
    files.config["sampler"] = {"live_points": 800, "dlogz": 0.05, "engine": "stock"}
    files.config["gates"] = [
        {"name": "mass", "kind": "shift", "parameter": "mass_msun", "limit": 3},
        {"name": "QV-1 elements", "kind": "shift", "parameter": "QV-1.*", "limit": 2.5},
        {"name": "ORCA quality", "kind": "reduced_chi2", "instrument": "ORCA", "limit": 2.0},
        {"name": "enough samples", "kind": "min_ess", "limit": 400},
    ]
    campaign = load_campaign(files.write())
    assert campaign.sampler.live_points == 800
    assert campaign.sampler.dlogz == 0.05
    assert campaign.sampler.engine == "stock"
    assert campaign.sampler.prefit_starts == 12          # untouched default
    assert [g.kind for g in campaign.gates] == ["shift", "shift", "reduced_chi2", "min_ess"]
    assert campaign.gates[1].parameter == "QV-1.*"
    assert campaign.gates[2].instrument == "ORCA"
    assert campaign.gates[3].limit == 400.0


def test_data_arrays_are_read_only(campaign):
    with pytest.raises(ValueError):
        campaign.astrometry.x_mas[0] = 0.0
    with pytest.raises(ValueError):
        campaign.velocities.v_km_s[0] = 0.0


def test_a_campaign_without_velocities(files):
    files.tables = [t for t in files.tables if t.kind == "astrometry"]
    del files.config["instruments"]["MOTH"], files.config["instruments"]["NEWT"]
    campaign = load_campaign(files.write())
    assert len(campaign.velocities) == 0
    assert campaign.velocities.v_km_s.shape == (0,)
    assert campaign.stars_without_velocities() == campaign.stars


def test_periodic_prior_narrower_than_a_period_does_not_wrap(files):
    files.config["star_priors"]["QV-3"] = {"Omega_deg": Inline({"uniform": [0, 180]})}
    campaign = load_campaign(files.write())
    assert campaign.star_priors["QV-3"]["Omega_deg"] == Prior("uniform", 0.0, 180.0, period=0.0)
    assert campaign.star_priors["QV-2"]["Omega_deg"].period == 360.0


def test_campaign_path_may_be_a_string(files):
    campaign = load_campaign(str(files.write()))
    assert isinstance(campaign, Campaign)
    assert math.isfinite(campaign.reference_epoch_yr)


def test_priors_of_a_star_left_out_are_checked_but_not_used(files):
    files.config["star_priors"]["QV-9"] = {"e": Inline({"uniform": [0, 0.5]})}
    files.config["variants"] = {"only": {"QV-9.cos_i": Inline({"fixed": 0.5})}}
    campaign = load_campaign(files.write())
    assert "QV-9" not in campaign.star_priors
    assert not any(name.startswith("QV-9.") for name in campaign.variant("only").priors)
    files.config["star_priors"]["QV-9"] = {"e": Inline({"uniform": [0.5, 0]})}
    with pytest.raises(CampaignError, match="must be less than max"):
        load_campaign(files.write())


def test_every_sampler_setting_can_be_written():
    assert set(SAMPLER_RULES) == {f.name for f in dataclasses.fields(SamplerSettings)}
