"""Each kind of bad input is rejected with a problem at the right file, line and column."""

import pytest

from analyser.campaign import CampaignError, load_campaign

from .data.campaigns import Inline, good_campaign

CAMPAIGN = "campaign.toml"


def problems_of(files) -> list:
    path = files.write()
    with pytest.raises(CampaignError) as raised:
        load_campaign(path)
    problems = list(raised.value.problems)
    assert str(raised.value) == "\n".join(str(p) for p in problems)
    return problems


def assert_reported(problems, file, line, column="", text=""):
    """One problem matches file, line, column and contains `text`."""
    matches = [p for p in problems
               if p.file == file and p.line == line and p.column == column and text in p.message]
    assert matches, f"no problem at {file}:{line} [{column}] with {text!r} among:\n" + \
        "\n".join(str(p) for p in problems)


@pytest.fixture
def files(tmp_path):
    return good_campaign(tmp_path)


# ------------------------------------------------------------------ cells of the data tables

CELL_CASES = [
    # table, row, column, written value, expected words
    ("astrometry.ecsv", 1, "x", "abc", "not a number"),
    ("astrometry.ecsv", 2, "y", "nan", "not a finite number"),
    ("astrometry.ecsv", 3, "x_err", "inf", "not a finite number"),
    ("astrometry.ecsv", 0, "y_err", "0", "must be positive"),
    ("astrometry.ecsv", 4, "x_err", "-0.5", "must be positive"),
    ("astrometry.ecsv", 5, "rho", "1.0", "strictly between -1 and 1"),
    ("astrometry.ecsv", 6, "rho", "-1.5", "strictly between -1 and 1"),
    ("astrometry.ecsv", 1, "x", "", "missing value"),
    ("astrometry.ecsv", 1, "star", "", "missing value"),
    ("astrometry.ecsv", 2, "epoch", "20x6", "not a number"),
    ("astrometry.ecsv", 2, "epoch", "1850.0", "outside 1900-2200"),
    ("astrometry.ecsv", 2, "epoch", "2250.5", "outside 1900-2200"),
    ("astrometry.ecsv", 3, "instrument", "NOBODY", "unknown instrument 'NOBODY'"),
    ("astrometry.ecsv", 3, "instrument", "MOTH", "is a velocity instrument"),
    ("pike.csv", 0, "epoch", "2016-02-30", "not an ISO date"),
    ("pike.csv", 1, "epoch", "yesterday", "not an ISO date"),
    ("pike.csv", 2, "y", "1,5", "not a number: '1,5'"),   # quoted, so one cell
    ("velocities.csv", 0, "epoch", "2457000.5", "outside 1900-2200"),   # a JD read as MJD
    ("velocities.csv", 1, "v", "fast", "not a number"),
    ("velocities.csv", 2, "v_err", "-3", "must be positive"),
    ("velocities.csv", 3, "instrument", "ORCA", "is an astrometry instrument"),
    ("newt.ecsv", 0, "v", "-inf", "not a finite number"),
    ("newt.ecsv", 1, "epoch", "1e30", "outside 1900-2200"),
]


@pytest.mark.parametrize("file, row, column, value, words", CELL_CASES)
def test_bad_cell_is_reported_at_its_line_and_column(files, file, row, column, value, words):
    files.table(file).set_cell(row, column, value)
    problems = problems_of(files)
    table = files.table(file)
    line = table.row_line(files.written[file], row)
    assert_reported(problems, files.display(file), line, column, words)


def test_every_bad_cell_is_reported_not_only_the_first(files):
    bad = [("astrometry.ecsv", 0, "x", "?"), ("astrometry.ecsv", 3, "y_err", "0"),
           ("astrometry.ecsv", 7, "epoch", "nan"), ("pike.csv", 1, "x_err", "-1"),
           ("velocities.csv", 2, "v", "inf"), ("newt.ecsv", 0, "v_err", "abc")]
    for file, row, column, value in bad:
        files.table(file).set_cell(row, column, value)
    problems = problems_of(files)
    for file, row, column, _ in bad:
        line = files.table(file).row_line(files.written[file], row)
        assert_reported(problems, files.display(file), line, column)
    assert len(problems) == len(bad)


def test_unquoted_delimiter_gives_a_row_too_many_cells(files):
    files.write()
    path = files.folder / "pike.csv"
    lines = path.read_text().splitlines()
    assert lines[3].startswith("QV-1,2016-01-01T12:00:00,50.0,")
    lines[3] = lines[3].replace(",50.0,", ",50,0,")
    path.write_text("\n".join(lines) + "\n")
    with pytest.raises(CampaignError) as raised:
        load_campaign(files.path)
    assert_reported(raised.value.problems, files.display("pike.csv"), 4, "",
                    "has 7 values, but the table has 6 columns")


def test_row_with_too_few_cells(files):
    table = files.table("velocities.csv")
    table.rows[1] = table.rows[1][:3]
    problems = problems_of(files)
    assert_reported(problems, files.display("velocities.csv"),
                    table.row_line(files.written["velocities.csv"], 1), "", "has 3 values")


# ------------------------------------------------------------------ columns and units

@pytest.mark.parametrize("file, column", [("astrometry.ecsv", "x_err"), ("pike.csv", "y"),
                                          ("velocities.csv", "instrument"),
                                          ("newt.ecsv", "star"), ("newt.ecsv", "epoch")])
def test_missing_column(files, file, column):
    files.table(file).drop_column(column)
    problems = problems_of(files)
    line = files.table(file).names_line(files.written[file])
    assert_reported(problems, files.display(file), line, column, f"missing column '{column}'")


def test_unknown_column(files):
    table = files.table("pike.csv")
    table.names.append("seeing")
    for row in table.rows:
        row.append("0.5")
    problems = problems_of(files)
    line = table.names_line(files.written["pike.csv"])
    assert_reported(problems, files.display("pike.csv"), line, "seeing", "unknown column 'seeing'")


def test_instrument_column_and_table_instrument_together(files):
    table = files.table("pike.csv")
    table.names.append("instrument")
    for row in table.rows:
        row.append("PIKE")
    problems = problems_of(files)
    assert_reported(problems, files.display("pike.csv"),
                    table.names_line(files.written["pike.csv"]), "instrument", "keep one")


@pytest.mark.parametrize("unit, words", [("furlongs", "unknown unit 'furlongs'"),
                                         ("kg", "wrong kind"), ("km / s", "wrong kind")])
def test_bad_unit_in_an_ecsv_header(files, unit, words):
    files.table("astrometry.ecsv").units["y"] = unit
    problems = problems_of(files)
    text = files.written["astrometry.ecsv"]
    line = next(n for n, t in enumerate(text.splitlines(), 1) if "name: y," in t)
    assert_reported(problems, files.display("astrometry.ecsv"), line, "y", words)


def test_quantity_column_without_unit_in_an_ecsv_header(files):
    del files.table("newt.ecsv").units["v_err"]
    problems = problems_of(files)
    text = files.written["newt.ecsv"]
    line = next(n for n, t in enumerate(text.splitlines(), 1) if "name: v_err," in t)
    assert_reported(problems, files.display("newt.ecsv"), line, "v_err", "has no unit")


@pytest.mark.parametrize("unit, words", [("parsecs per fortnight", "unknown unit"),
                                         ("mas", "wrong kind")])
def test_bad_unit_of_a_csv_table(files, unit, words):
    files.table("velocities.csv").units["v"] = unit
    problems = problems_of(files)
    line = files.campaign_line("units = { v = ")
    assert_reported(problems, str(files.path), line, "", words)


def test_csv_table_without_a_unit(files):
    del files.table("pike.csv").units["x_err"]
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line('units = { x = "mas"'),
                    "", "no unit given for column 'x_err'")


# ------------------------------------------------------------------ files

def test_missing_table_file(files):
    files.config["tables"] = [{"file": "season2.csv", "kind": "velocity",
                               "units": Inline({"v": "km/s", "v_err": "km/s"})}]
    problems = problems_of(files)
    assert_reported(problems, files.display("season2.csv"), 0, "", "file not found")
    # its stars are unknown, so no star may be called unknown for lack of rows
    assert not any("unknown star" in p.message for p in problems)


def test_missing_campaign_file(tmp_path):
    with pytest.raises(CampaignError) as raised:
        load_campaign(tmp_path / "nowhere.toml")
    assert [p.message for p in raised.value.problems] == ["file not found"]


def test_table_that_is_not_utf8(files):
    files.write()
    (files.folder / "pike.csv").write_bytes(b"star,epoch\n\xff\xfe,1\n")
    with pytest.raises(CampaignError) as raised:
        load_campaign(files.path)
    assert_reported(raised.value.problems, files.display("pike.csv"), 2, "", "not UTF-8")


def test_ecsv_without_its_signature_line(files):
    files.write()
    path = files.folder / "newt.ecsv"
    path.write_text(path.read_text().replace("# %ECSV 1.0\n", "", 1))
    with pytest.raises(CampaignError) as raised:
        load_campaign(files.path)
    assert_reported(raised.value.problems, files.display("newt.ecsv"), 1, "", "not an ECSV")


def test_table_listed_twice(files):
    files.config["tables"] = [{"file": "newt.ecsv", "kind": "velocity", "epoch_format": "jd",
                               "instrument": "NEWT"}]
    problems = problems_of(files)
    second = [n for n, t in enumerate(files.written[CAMPAIGN].splitlines(), 1)
              if t == 'file = "newt.ecsv"'][1]
    assert_reported(problems, str(files.path), second, "", "already listed")


# ------------------------------------------------------------------ duplicates

def test_duplicate_row_names_both_lines(files):
    table = files.table("astrometry.ecsv")
    table.rows.append(list(table.rows[2]))
    problems = problems_of(files)
    text = files.written["astrometry.ecsv"]
    first, second = table.row_line(text, 2), table.row_line(text, len(table.rows) - 1)
    assert_reported(problems, files.display("astrometry.ecsv"), second, "",
                    f"already in line {first}")


def test_duplicate_across_tables_names_the_other_file(files):
    # NEWT's first epoch (QV-1, J2017.0) written again in velocities.csv as an MJD
    files.table("velocities.csv").rows.append(["QV-1", repr(57753.75), "-600000", "15000", "NEWT"])
    problems = problems_of(files)
    dup = [p for p in problems if "duplicate" in p.message]
    assert len(dup) == 1
    assert {dup[0].file, dup[0].message.split("already in ")[1].split(",")[0]} == \
        {files.display("velocities.csv"), files.display("newt.ecsv")}


def test_same_epoch_with_another_instrument_is_not_a_duplicate(files):
    table = files.table("astrometry.ecsv")
    table.rows.append(list(table.rows[2]))
    files.config["instruments"]["ORCA-B"] = {"kind": "astrometry", "offset": True}
    table.rows[-1][-1] = "ORCA-B"
    assert len(load_campaign(files.write()).astrometry) == 12


# ------------------------------------------------------------------ stars and instruments

def test_selected_star_without_data(files):
    files.config["campaign"]["stars"].append("QV-77")
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line("stars = "), "",
                    "unknown star 'QV-77'")


def test_priors_for_a_star_without_data(files):
    files.config["star_priors"]["QV-78"] = {"e": Inline({"uniform": [0, 0.5]})}
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line("[star_priors.QV-78]"),
                    "", "unknown star 'QV-78'")


def test_star_listed_twice(files):
    files.config["campaign"]["stars"].append("QV-1")
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line("stars = "), "",
                    "listed more than once")


def test_table_instrument_unknown_or_of_the_wrong_kind(files):
    files.table("newt.ecsv").entry["instrument"] = "NOWHERE"
    files.table("pike.csv").entry["instrument"] = "MOTH"
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line('instrument = "NOWHERE"'),
                    "", "unknown instrument 'NOWHERE'")
    assert_reported(problems, str(files.path), files.campaign_line('instrument = "MOTH"'),
                    "", "is a velocity instrument, but this is an astrometry table")


def test_no_reference_instrument(files):
    files.config["instruments"]["MOTH"]["reference"] = False
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line("[instruments.MOTH]"),
                    "", "no velocity instrument is the reference")


def test_several_reference_instruments(files):
    files.config["instruments"]["PIKE"] = {"kind": "astrometry", "reference": True}
    del files.config["priors"]["PIKE.offset_x_mas"]
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line("[instruments.PIKE]"),
                    "", "several astrometry instruments are marked reference (ORCA, PIKE)")


def test_instrument_settings_are_checked(files):
    files.config["instruments"]["NEWT"].update(kind="radio", error_model="wild")
    files.config["instruments"]["ORCA"]["offset"] = True
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line('kind = "radio"'), "",
                    "'radio' is not one of astrometry, velocity")
    assert_reported(problems, str(files.path), files.campaign_line('error_model = "wild"'),
                    "", "not one of none, scale, jitter")
    assert_reported(problems, str(files.path),
                    files.campaign_line("offset = true", after="[instruments.ORCA]"), "",
                    "has no offset")
    # NEWT's rows are not reported again as rows of an unknown instrument
    assert not any("unknown instrument 'NEWT'" in p.message for p in problems)


# ------------------------------------------------------------------ priors

PRIOR_CASES = [
    # section key, parameter, written prior, expected words
    ("priors", "mass_msun", {"uniform": [1e7, 1e6]}, "must be less than max"),
    ("priors", "distance_pc", {"uniform": [8, 8], "unit": "kpc"}, "must be less than max"),
    ("priors", "x0_mas", {"gaussian": [0, 0]}, "sigma must be positive"),
    ("priors", "vz0_km_s", {"gaussian": [0, -5]}, "sigma must be positive"),
    ("priors", "mass_msun", {"log-uniform": [0, 1e7]}, "positive bounds"),
    ("priors", "mass_msun", {"log-uniform": [-1, 1e7]}, "positive bounds"),
    ("priors", "mass_msun", {"normal": [4e6, 1e5]}, "unknown prior kind 'normal'"),
    ("priors", "mass_msun", {"fixed": 0}, "outside the allowed range"),
    ("priors", "mass_msun", {"fixed": -4e6}, "outside the allowed range"),
    ("priors", "distance_pc", {"gaussian": [-8000, 100]}, "outside the allowed range"),
    ("priors", "mass_msun", {"fixed": 4e6, "uniform": [1, 2]}, "exactly one prior kind"),
    ("priors", "mass_msun", {"uniform": [1e6]}, "two finite numbers"),
    ("priors", "mass_msun", {"fixed": "heavy"}, "finite number"),
    ("priors", "vx0_mas_yr", {"gaussian": [0, 1], "unit": "km/s"}, "wrong kind"),
    ("priors", "mass", {"fixed": 4e6}, "unknown parameter 'mass'; did you mean 'mass_msun'"),
    ("priors", "ORCA.offset_x_mas", {"gaussian": [0, 1]}, "instrument 'ORCA' has no parameter"),
    ("priors", "GHOST.error_scale", {"fixed": 1}, "unknown star or instrument 'GHOST'"),
    ("priors", "QV-1.e", {"fixed": 0.5}, "star priors go under"),
    ("priors", "NEWT.jitter_km_s", {"uniform": [-1, 10]}, "outside the allowed range"),
    ("priors", "NEWT.outlier_fraction", {"fixed": 1.0}, "outside the allowed range"),
    ("default", "e", {"fixed": 1.0}, "outside the allowed range [0, 0.999)"),
    ("default", "e", {"uniform": [-0.1, 0.5]}, "outside the allowed range"),
    ("default", "cos_i", {"fixed": 1.5}, "outside the allowed range [-1, 1]"),
    ("default", "cos_i", {"uniform": [-2, 1]}, "outside the allowed range"),
    ("default", "period_yr", {"log-uniform": [0, 10]}, "positive bounds"),
    ("default", "Omega_deg", {"log-uniform": [1, 360]}, "is periodic"),
    ("default", "omega_deg", {"uniform": [-10, 400]}, "at most one period"),
    ("default", "phase", {"uniform": [0, 2]}, "at most one period"),
    ("default", "inclination", {"uniform": [0, 1]}, "unknown star parameter 'inclination'"),
    ("QV-2", "period_yr", {"uniform": [30, 10]}, "must be less than max"),
]


def _prior_header(section: str) -> str:
    return "[priors]" if section == "priors" else f"[star_priors.{section}]"


@pytest.mark.parametrize("section, name, spec, words", PRIOR_CASES)
def test_bad_prior(files, section, name, spec, words):
    if section == "priors":
        files.config["priors"][name] = Inline(spec)
    else:
        files.config["star_priors"].setdefault(section, {})[name] = Inline(spec)
    problems = problems_of(files)
    key = f'"{name}"' if "." in name else name
    line = files.campaign_line(f"{key} = ", after=_prior_header(section))
    assert_reported(problems, str(files.path), line, "", words)
    assert len(problems) == 1


def test_prior_that_is_not_a_table(files):
    files.config["priors"]["vz0_km_s"] = 5
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line("vz0_km_s = 5"), "",
                    "a prior is written like")


def test_fixed_value_outside_a_range_given_elsewhere(files):
    files.config["variants"] = {
        "reference": "free",
        "free": {"f_sp": Inline({"uniform": [-2, 4]})},
        "strong": {"f_sp": Inline({"fixed": 5})},
    }
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line("f_sp = { fixed = 5"),
                    "", "outside the range [-2, 4] it has in variant 'free'")


def test_fixed_value_outside_the_campaigns_range(files):
    files.config["variants"] = {"reference": "fitted",
                                "fitted": {"description": "mass from [priors]"},
                                "heavy": {"mass_msun": Inline({"fixed": 2e7})}}
    problems = problems_of(files)
    assert len(problems) == 1
    assert_reported(problems, str(files.path), files.campaign_line("mass_msun = { fixed"), "",
                    "outside the range [1e+06, 1e+07] it has in [priors]")


def test_a_star_prior_may_fix_what_the_default_ranges(files):
    files.config["star_priors"]["default"]["e"] = Inline({"uniform": [0, 0.5]})
    files.config["star_priors"]["QV-1"]["e"] = Inline({"fixed": 0.7})
    campaign = load_campaign(files.write())
    assert campaign.star_priors["QV-1"]["e"].a == 0.7
    assert campaign.star_priors["QV-2"]["e"].b == 0.5


# ------------------------------------------------------------------ settings and gates

def test_unknown_dynamics(files):
    files.config["campaign"]["dynamics"] = "post-newtonian"
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line("dynamics = "), "",
                    "'post-newtonian' is not one of kepler, analytic-1pn, numerical-1pn")


def test_missing_or_bad_reference_epoch(files):
    del files.config["campaign"]["reference_epoch"]
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line("[campaign]"), "",
                    "reference_epoch: is missing")
    files.config["campaign"]["reference_epoch"] = "next spring"
    assert_reported(problems_of(files), str(files.path),
                    files.campaign_line("reference_epoch = "), "", "not an ISO date")


def test_reference_variant_that_does_not_exist(files):
    files.config["variants"] = {"reference": "einstein",
                                "newtonian": {"f_sp": Inline({"fixed": 0})},
                                "gr": {"f_sp": Inline({"fixed": 1})}}
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line('reference = "einstein"'),
                    "", "reference variant 'einstein' is not defined")


def test_several_variants_need_a_reference(files):
    files.config["variants"] = {"a": {"f_sp": Inline({"fixed": 0})},
                                "b": {"f_sp": Inline({"fixed": 1})}}
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line("[variants]"), "",
                    "say which variant is the reference")


def test_variant_overriding_an_unknown_parameter(files):
    files.config["variants"] = {"only": {"QV-1.eccentricity": Inline({"fixed": 0})}}
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line('"QV-1.eccentricity"'),
                    "", "unknown star parameter 'eccentricity'")


def test_unknown_keys_and_sections(files):
    files.config["campaign"]["epoch"] = 2016.0
    files.config["plots"] = {"dpi": 300}
    problems = problems_of(files)
    assert_reported(problems, str(files.path), files.campaign_line("epoch = 2016.0"), "",
                    "campaign.epoch: unknown key")
    assert_reported(problems, str(files.path), files.campaign_line("[plots]"), "",
                    "plots: unknown key")


def test_sampler_values_are_checked(files):
    files.config["sampler"] = {"live_points": 5, "dlogz": -1.0, "engine": "turbo",
                               "max_calls": 1.5}
    problems = problems_of(files)
    for needle, words in [("live_points", "at least 10"), ("dlogz", "positive"),
                          ("engine", "blocked or stock"), ("max_calls", "an integer")]:
        assert_reported(problems, str(files.path), files.campaign_line(f"{needle} = "), "",
                        words)
    assert len(problems) == 4


def test_gates_are_checked(files):
    files.config["gates"] = [
        {"name": "a", "kind": "shift", "parameter": "QV-5.*", "limit": 3},
        {"name": "b", "kind": "reduced_chi2", "instrument": "GHOST", "limit": 2},
        {"name": "c", "kind": "drift", "limit": 1},
        {"name": "a", "kind": "log_z_err", "limit": 0, "instrument": "ORCA"},
        {"name": "e", "kind": "shift", "limit": 3},
    ]
    problems = problems_of(files)
    expected = [('parameter = "QV-5.*"', "matches no parameter"),
                ('instrument = "GHOST"', "unknown instrument 'GHOST'"),
                ('kind = "drift"', "is not one of shift"),
                ("limit = 0", "must be positive"),
                ('instrument = "ORCA"', "takes no instrument")]
    for needle, words in expected:
        assert_reported(problems, str(files.path), files.campaign_line(needle), "", words)
    assert any("already named 'a'" in p.message for p in problems)
    assert any("gates[5].parameter: is missing" in p.message for p in problems)


def test_malformed_toml_reports_the_parsers_line(files):
    path = files.write()
    lines = path.read_text().splitlines()
    lines.insert(4, "seed = = 3")
    path.write_text("\n".join(lines))
    with pytest.raises(CampaignError) as raised:
        load_campaign(path)
    (problem,) = raised.value.problems
    assert problem.line == 5
    assert problem.message.startswith("not valid TOML")


def test_a_campaign_without_astrometry(files):
    files.tables = [t for t in files.tables if t.kind == "velocity"]
    problems = problems_of(files)
    assert any("there is no astrometry table" in p.message for p in problems)


def test_problems_of_the_campaign_file_come_first_then_by_line(files):
    files.config["campaign"]["dynamics"] = "warp"
    files.config["priors"]["mass_msun"] = Inline({"fixed": -1})
    files.table("astrometry.ecsv").set_cell(5, "x", "?")
    files.table("astrometry.ecsv").set_cell(1, "y", "?")
    problems = problems_of(files)
    assert [p.file for p in problems] == [str(files.path)] * 2 + \
        [files.display("astrometry.ecsv")] * 2
    assert problems[0].line < problems[1].line and problems[2].line < problems[3].line
