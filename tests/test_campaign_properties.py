"""Property-based tests: whatever is wrong with a campaign's files, loading raises one
CampaignError whose problems point at the right file, line and column, never another
exception, and `check` exits 2, writes nothing and prints only the problems."""

import contextlib
import io
import math
import tempfile
from pathlib import Path

import astropy.units as u
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from analyser.campaign import GLOBAL_PARAMETERS, Campaign, CampaignError, load_campaign
from analyser.data.summary import check_command

from .data.campaigns import MJD_OFFSET, Inline, good_campaign, jyear_to_jd

SETTINGS = settings(max_examples=40, deadline=None,
                    suppress_health_check=[HealthCheck.too_slow])

TABLES = ("astrometry.ecsv", "pike.csv", "velocities.csv", "newt.ecsv")


@contextlib.contextmanager
def fresh_campaign():
    with tempfile.TemporaryDirectory() as folder:
        yield good_campaign(Path(folder))


def load_problems(files) -> list:
    """Write the campaign, load it expecting a CampaignError, return its problems."""
    path = files.write()
    try:
        load_campaign(path)
    except CampaignError as err:
        return list(err.problems)
    raise AssertionError("the campaign loaded although it is not valid")


def assert_check_fails_quietly(files, problems) -> None:
    """`check` exits 2, prints each problem on its own line to stderr, nothing to stdout,
    and leaves the folder as it was."""
    before = sorted(p.name for p in files.folder.iterdir())
    out, err = io.StringIO(), io.StringIO()
    with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
        status = check_command(str(files.path))
    assert status == 2
    assert out.getvalue() == ""
    lines = err.getvalue().splitlines()
    assert lines[:-1] == [str(p) for p in problems]
    assert lines[-1].endswith("the campaign is not valid")
    assert "Traceback" not in err.getvalue()
    assert sorted(p.name for p in files.folder.iterdir()) == before


def year_outside_range():
    return st.one_of(st.floats(min_value=-1e6, max_value=1899.9),
                     st.floats(min_value=2200.1, max_value=1e6))


# Text with a letter other than e/E never reads as a finite number ("nan" and "inf"
# read, but are not finite); the empty cell is a missing value.
not_a_number = st.one_of(
    st.from_regex(r"[0-9.+-]{0,3}[a-df-zA-DF-Z][0-9a-zA-Z.+-]{0,4}", fullmatch=True),
    st.sampled_from(["nan", "NaN", "inf", "-inf", "+Infinity", "", "1..2", "--1", "1e", "."]),
)
finite = dict(allow_nan=False, allow_infinity=False)


@st.composite
def bad_cell(draw, file, column):
    """A value that is wrong for `column` of the table `file`."""
    if column in ("x", "y", "v"):
        return draw(not_a_number)
    if column in ("x_err", "y_err", "v_err"):
        return draw(st.one_of(not_a_number, st.floats(max_value=0, **finite).map(repr)))
    if column == "rho":
        return draw(st.one_of(not_a_number, st.floats(min_value=1, **finite).map(repr),
                              st.floats(max_value=-1, **finite).map(repr)))
    if column == "epoch":
        if file == "pike.csv":     # iso
            return draw(st.one_of(
                not_a_number,
                st.sampled_from(["2016-13-01", "2016-02-30", "2016-01-32T00:00:00",
                                 "1850-06-01", "2250-01-01", "2016/01/01", "16-1-1"])))
        year = draw(year_outside_range())
        written = {"astrometry.ecsv": year, "velocities.csv": jyear_to_jd(year) - MJD_OFFSET,
                   "newt.ecsv": jyear_to_jd(year)}[file]
        return draw(st.one_of(not_a_number, st.just(repr(written))))
    if column == "instrument":
        wrong_kind = "MOTH" if file == "astrometry.ecsv" else "ORCA"
        return draw(st.one_of(st.just(wrong_kind), st.from_regex(r"[A-Z]{2,6}", fullmatch=True)
                              .filter(lambda s: s not in ("ORCA", "PIKE", "MOTH", "NEWT")),
                              st.just("")))
    assert column == "star"
    return ""


@st.composite
def bad_cells(draw):
    """Several distinct cells of the good campaign's tables, each with a wrong value."""
    with fresh_campaign() as files:
        shapes = {t.file: (len(t.rows), list(t.names)) for t in files.tables}
    picks = draw(st.lists(st.tuples(st.sampled_from(TABLES), st.integers(0, 7),
                                    st.integers(0, 7)), min_size=1, max_size=6))
    cells = {}
    for file, row, column in picks:
        rows, names = shapes[file]
        key = (file, row % rows, names[column % len(names)])
        if key not in cells:
            cells[key] = draw(bad_cell(file, key[2]))
    return cells


@SETTINGS
@given(bad_cells())
def test_every_bad_cell_is_reported_at_its_file_line_and_column(cells):
    with fresh_campaign() as files:
        for (file, row, column), value in cells.items():
            files.table(file).set_cell(row, column, value)
        problems = load_problems(files)
        expected = {(files.display(file), files.table(file).row_line(files.written[file], row),
                     column) for file, row, column in cells}
        tables = {files.display(f) for f in TABLES}
        found = {(p.file, p.line, p.column) for p in problems if p.file in tables}
        assert found == expected
        assert_check_fails_quietly(files, problems)


def unknown_unit():
    return st.one_of(st.sampled_from(["furlongs", "parsnips", "kmps", "mas per yr", "Mpc/Gyr?"]),
                     st.from_regex(r"x[a-z]{4,8}", fullmatch=True)).filter(
        lambda s: isinstance(u.Unit(s, parse_strict="silent"), u.UnrecognizedUnit))


@SETTINGS
@given(st.sampled_from([("astrometry.ecsv", "x"), ("astrometry.ecsv", "y_err"),
                        ("newt.ecsv", "v"), ("pike.csv", "y"), ("pike.csv", "x_err"),
                        ("velocities.csv", "v_err")]),
       st.data())
def test_unknown_or_wrong_kind_unit_is_reported_where_it_is_written(table_column, data):
    file, column = table_column
    wrong_kind = ["kg", "s", "K", "pc", "erg", "Jy"] + (["km/s", "m/s"] if column[0] != "v"
                                                        else ["mas", "deg", "rad/s", "yr"])
    unit = data.draw(st.one_of(unknown_unit(), st.sampled_from(wrong_kind)))
    with fresh_campaign() as files:
        files.table(file).units[column] = unit
        problems = load_problems(files)
        if file.endswith(".ecsv"):
            text = files.written[file]
            line = next(n for n, t in enumerate(text.splitlines(), 1) if f"name: {column}," in t)
            where = (files.display(file), line, column)
        else:
            line = files.campaign_line(f"units = {{ {files.table(file).names[2]} = ")
            where = (str(files.path), line, "")
        matching = [p for p in problems if (p.file, p.line, p.column) == where]
        assert len(matching) == 1
        # an ECSV header's unit is quoted as astropy writes it ('km/s' as 'km / s')
        known = u.Unit(unit, parse_strict="silent")
        assert f"'{unit}'" in matching[0].message or f"'{known}'" in matching[0].message
        assert column in str(matching[0])
        assert_check_fails_quietly(files, problems)


@SETTINGS
@given(st.sampled_from(TABLES), st.data())
def test_missing_columns_are_reported_at_the_names_line(file, data):
    with fresh_campaign() as files:
        table = files.table(file)
        required = [c for c in table.names if c != "rho"]
        dropped = data.draw(st.lists(st.sampled_from(required), min_size=1, unique=True,
                                     max_size=len(required) - 1))
        for column in dropped:
            table.drop_column(column)
        problems = load_problems(files)
        line = table.names_line(files.written[file])
        found = {(p.line, p.column) for p in problems if p.file == files.display(file)}
        assert found == {(line, c) for c in dropped}
        assert all("missing column" in p.message for p in problems
                   if p.file == files.display(file))
        assert_check_fails_quietly(files, problems)


@SETTINGS
@given(st.lists(st.tuples(st.sampled_from(TABLES), st.integers(0, 7)), min_size=1, max_size=4))
def test_duplicate_rows_name_both_lines(picks):
    with fresh_campaign() as files:
        copies = []                      # (file, original row, row of its copy)
        for file, row in dict.fromkeys((f, r % len(files.table(f).rows)) for f, r in picks):
            table = files.table(file)
            copies.append((file, row, len(table.rows)))
            table.rows.append(list(table.rows[row]))
        problems = load_problems(files)
        assert len(problems) == len(copies)
        for file, row, copy_row in copies:
            text = files.written[file]
            first = files.table(file).row_line(text, row)
            second = files.table(file).row_line(text, copy_row)
            assert any(p.file == files.display(file) and p.line == second
                       and "duplicate" in p.message and f"line {first}" in p.message
                       for p in problems)
        assert_check_fails_quietly(files, problems)


@st.composite
def bad_prior(draw):
    """(section, parameter, prior spec) with exactly one thing wrong."""
    kind = draw(st.sampled_from(["order", "sigma", "log", "kind", "range", "unknown", "unit"]))
    number = st.floats(min_value=-1e12, max_value=1e12, **finite)
    if kind == "unknown":
        name = draw(st.from_regex(r"[a-z]{2,8}(_[a-z]{1,4})?", fullmatch=True)
                    .filter(lambda n: n not in GLOBAL_PARAMETERS))
        return "priors", name, {"uniform": [0, 1]}
    if kind == "range":
        name, values = draw(st.sampled_from([
            ("e", st.one_of(st.floats(min_value=0.999, max_value=1e6),
                            st.floats(max_value=-1e-9, min_value=-1e6))),
            ("cos_i", st.one_of(st.floats(min_value=1.000001, max_value=1e6),
                                st.floats(max_value=-1.000001, min_value=-1e6))),
            ("period_yr", st.floats(max_value=0, min_value=-1e6)),
            ("mass_msun", st.floats(max_value=0, min_value=-1e12)),
            ("distance_pc", st.floats(max_value=0, min_value=-1e12)),
        ]))
        section = "priors" if name in GLOBAL_PARAMETERS else "default"
        return section, name, {"fixed": draw(values)}
    section, name = draw(st.sampled_from([("priors", "x0_mas"), ("priors", "vz0_km_s"),
                                          ("priors", "mass_msun"), ("default", "period_yr"),
                                          ("QV-1", "period_yr"), ("priors", "NEWT.jitter_km_s")]))
    if kind == "order":
        a = draw(number)
        return section, name, {"uniform": [a, a - draw(st.floats(0, 1e6))]}
    if kind == "sigma":
        return section, name, {"gaussian": [0.0, draw(st.floats(max_value=0, min_value=-1e6))]}
    if kind == "log":
        return section, name, {"log-uniform": [draw(st.floats(max_value=0, min_value=-1e6)), 10]}
    if kind == "unit":
        return section, name, {"uniform": [1, 2], "unit": draw(st.sampled_from(["erg", "Jy"]))}
    other = draw(st.from_regex(r"[a-z][a-z-]{1,10}", fullmatch=True).filter(
        lambda k: k not in ("uniform", "log-uniform", "gaussian", "fixed", "unit")))
    return section, name, {other: [1, 2]}


@SETTINGS
@given(bad_prior())
def test_a_bad_prior_is_reported_at_its_line(prior):
    section, name, spec = prior
    with fresh_campaign() as files:
        if section == "priors":
            files.config["priors"][name] = Inline(spec)
            header = "[priors]"
        else:
            files.config["star_priors"].setdefault(section, {})[name] = Inline(spec)
            header = f"[star_priors.{section}]"
        problems = load_problems(files)
        key = f'"{name}"' if "." in name else name
        assert [(p.file, p.line) for p in problems] == \
            [(str(files.path), files.campaign_line(f"{key} = ", after=header))]
        assert_check_fails_quietly(files, problems)


@SETTINGS
# (An unclosed 'literal string is not here: Python 3.11's parser reports it "at end of
# document", without a line.)
@given(st.sampled_from(["= 3", "key = ", "[unclosed", 'y = "a', "z = tru", "[[tables]",
                        "k = 1 2", "w = {a = 1", '"open = 1']),
       st.integers(min_value=0))
def test_malformed_toml_is_reported_at_the_parsers_line(garbage, position):
    with fresh_campaign() as files:
        path = files.write()
        lines = path.read_text().splitlines()
        position %= len(lines) + 1
        lines.insert(position, garbage)
        path.write_text("\n".join(lines) + "\n")
        problems = load_problems_from(path)
        assert len(problems) == 1
        assert problems[0].line == position + 1
        assert problems[0].message.startswith("not valid TOML")
        assert_check_fails_quietly(files, problems)


def load_problems_from(path):
    try:
        load_campaign(path)
    except CampaignError as err:
        return list(err.problems)
    raise AssertionError("loaded")


# ------------------------------------------------------------------ robustness

cell_text = st.text(alphabet="0123456789.,-+eE \"#\tnaifQV-ORCAPIKE", max_size=12)


@SETTINGS
@given(st.sampled_from(["pike.csv", "velocities.csv", "newt.ecsv"]),
       st.lists(cell_text, max_size=6), st.booleans())
def test_arbitrary_table_text_never_raises_anything_but_campaign_error(file, lines, keep_header):
    with fresh_campaign() as files:
        files.write()
        path = files.folder / file
        header = path.read_text().splitlines()
        names_at = files.table(file).names_line(files.written[file])
        kept = header[:names_at] if keep_header else []
        path.write_text("\n".join(kept + lines) + "\n")
        try:
            campaign = load_campaign(files.path)
        except CampaignError as err:
            assert err.problems
            assert all(isinstance(p.line, int) and p.line >= 0 for p in err.problems)
        else:
            assert isinstance(campaign, Campaign)


toml_scalar = st.one_of(st.integers(-10**6, 10**6), st.floats(), st.booleans(),
                        st.text(alphabet="abcdefghijklmnopqrstuvwxyz0123456789 .-_/:", max_size=12))
toml_value = st.recursive(toml_scalar, lambda inner: st.one_of(
    st.lists(inner, max_size=3),
    st.dictionaries(st.sampled_from(["uniform", "fixed", "gaussian", "unit", "a", "kind"]),
                    inner, max_size=3).map(Inline)), max_leaves=6)


def _value_paths(config) -> list:
    paths = [(section,) for section in config] + [("tables",)]
    for section, table in config.items():
        for key, value in table.items():
            if isinstance(value, dict) and not isinstance(value, Inline):
                paths += [(section, key, k) for k in value]
            paths.append((section, key))
    return paths


@SETTINGS
@given(st.data())
def test_arbitrary_values_in_the_campaign_file_never_raise_anything_else(data):
    with fresh_campaign() as files:
        files.config["sampler"] = {"live_points": 100}
        files.config["gates"] = [{"name": "g", "kind": "shift", "parameter": "mass_msun",
                                  "limit": 3}]
        paths = _value_paths({k: v for k, v in files.config.items() if k != "gates"})
        paths.append(("gates",))
        paths += [("tables", k) for k in ("file", "kind", "epoch_format", "units", "instrument")]
        paths += [("gates", k) for k in ("name", "kind", "parameter", "limit")]
        for path in data.draw(st.lists(st.sampled_from(paths), min_size=1, max_size=3)):
            value = data.draw(toml_value)
            if path == ("tables",):
                files.tables, files.config["tables"] = [], value
            elif path[0] == "tables":
                if files.tables:
                    k = data.draw(st.integers(0, len(files.tables) - 1))
                    files.tables[k].entry[path[1]] = value
            elif path[0] == "gates" and len(path) == 2:
                gates = files.config["gates"]
                if isinstance(gates, list) and gates and isinstance(gates[0], dict):
                    gates[0][path[1]] = value
            else:
                target = files.config
                for key in path[:-1]:
                    target = target.get(key) if isinstance(target, dict) else None
                if isinstance(target, dict):     # not replaced by an earlier draw
                    target[path[-1]] = value
        path = files.write()
        try:
            campaign = load_campaign(path)
        except CampaignError as err:
            assert all(isinstance(p.line, int) and p.line >= 0 for p in err.problems)
            assert all(not math.isnan(p.line) for p in err.problems)
        else:
            assert isinstance(campaign, Campaign)
