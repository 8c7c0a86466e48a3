"""`analyser check`: the summary as data and as text, exit codes, and the command itself."""

import json
import re
import subprocess
import sys

import pytest

from analyser.campaign import STAR_PARAMETERS, load_campaign
from analyser.data import summary as summary_module
from analyser.data.summary import campaign_summary, check_command, format_summary

from .data.campaigns import Inline, good_campaign

# "file, line N, column 'c': message" with the line and column parts optional
PROBLEM_LINE = re.compile(r"^[^,:]+(, line \d+)?(, column '[^']*')?: .+$")


@pytest.fixture
def files(tmp_path):
    return good_campaign(tmp_path)


@pytest.fixture
def summary(files):
    return campaign_summary(load_campaign(files.write()))


def _star(summary, name):
    return next(s for s in summary["stars"] if s["name"] == name)


def test_epochs_per_star_and_instrument(summary):
    assert _star(summary, "QV-1")["epochs"] == {"ORCA": 4, "PIKE": 2, "MOTH": 1, "NEWT": 2}
    assert _star(summary, "QV-2")["epochs"] == {"ORCA": 1, "PIKE": 1, "MOTH": 1, "NEWT": 1}
    assert _star(summary, "QV-3")["epochs"] == {"ORCA": 2, "PIKE": 1, "MOTH": 0, "NEWT": 0}
    assert [i["name"] for i in summary["instruments"]] == ["ORCA", "PIKE", "MOTH", "NEWT"]
    assert summary["astrometric_epochs"] == 11 and summary["velocity_epochs"] == 5


def test_data_points_and_time_spans(summary):
    qv1 = _star(summary, "QV-1")
    assert qv1["data_points"] == 2 * 6 + 3          # 2 per astrometric epoch, 1 per velocity
    assert qv1["first_yr"] == pytest.approx(2010.25)
    assert qv1["last_yr"] == pytest.approx(2017.0)
    assert qv1["span_yr"] == pytest.approx(6.75)
    assert summary["time_span"]["first_yr"] == pytest.approx(2010.25)
    assert summary["time_span"]["span_yr"] == pytest.approx(9.75)


def test_mirror_ambiguity_and_exclusions(summary):
    assert summary["mirror_ambiguity"] == ["QV-3"]
    assert summary["under_constrained"] == []
    assert summary["excluded"] == {"star 'QV-9' is not selected": 2}
    assert summary["instruments_without_data"] == []


def test_stars_with_fewer_points_than_parameters(files):
    orca = files.table("astrometry.ecsv")
    orca.rows = [r for r in orca.rows if not (r[0] == "QV-3" and r[1] == "2015.5")]
    summary = campaign_summary(load_campaign(files.write()))
    assert _star(summary, "QV-3")["data_points"] == 4
    assert summary["under_constrained"] == ["QV-3"]
    assert summary["parameters_per_star"] == len(STAR_PARAMETERS) == 6


def test_free_parameters_per_variant(summary):
    by_name = {v["name"]: v for v in summary["variants"]}
    nuisances = 1 + 2 + 3        # ORCA scale; PIKE offsets; NEWT zero point, jitter, outliers
    shared = 7 + 3 * 6 + nuisances
    assert len(by_name["gr"]["free_parameters"]) == shared
    assert len(by_name["free"]["free_parameters"]) == shared + 2
    assert by_name["newtonian"]["fixed_parameters"] == {"f_sp": 0.0, "f_z": 0.0}
    assert by_name["gr"]["reference"] and not by_name["free"]["reference"]
    assert "NEWT.outlier_fraction" in by_name["gr"]["free_parameters"]


def test_summary_is_plain_data(summary):
    assert json.loads(json.dumps(summary)) == summary


def test_text_summary(summary):
    text = format_summary(summary)
    assert "Test field, season one" in text
    assert "kepler" in text
    assert re.search(r"^\s+QV-1\s+4\s+2\s+1\s+2\s+2010\.25\s+2017\.00\s+6\.75\s+15$", text, re.M)
    assert re.search(r"^\s+total\s+7\s+4\s+2\s+3\s", text, re.M)
    assert re.search(r"^Mirror ambiguity .*: QV-3$", text, re.M)
    assert "Excluded rows: 2" in text
    assert "star 'QV-9' is not selected" in text
    assert re.search(r"^\s+free\s+33\s", text, re.M)
    assert re.search(r"^\s+gr \*\s+31\s", text, re.M)


def test_check_a_valid_campaign(files, capsys):
    path = files.write()
    assert check_command(str(path)) == 0
    out, err = capsys.readouterr()
    assert err == ""
    assert out.strip() == format_summary(campaign_summary(load_campaign(path))).strip()


def test_check_an_invalid_campaign(files, capsys):
    files.config["campaign"]["dynamics"] = "warp"
    files.table("pike.csv").set_cell(2, "x", "east")
    path = files.write()
    before = sorted(p.name for p in files.folder.iterdir())
    assert check_command(str(path)) == 2
    out, err = capsys.readouterr()
    assert out == ""
    lines = err.splitlines()
    assert lines[-1] == "2 problems found; the campaign is not valid"
    assert all(PROBLEM_LINE.match(line) for line in lines[:-1])
    assert lines[1] == (f"{files.display('pike.csv')}, line "
                        f"{files.table('pike.csv').row_line(files.written['pike.csv'], 2)}, "
                        "column 'x': not a number: 'east'")
    assert sorted(p.name for p in files.folder.iterdir()) == before


def test_an_internal_error_is_not_passed_off_as_bad_input(files, capsys, monkeypatch):
    def broken(path):
        raise RuntimeError("a bug")
    monkeypatch.setattr(summary_module, "load_campaign", broken)
    assert check_command(str(files.write())) == 3
    assert "internal error" in capsys.readouterr().err


def test_the_command_line(files):
    path = files.write()
    good = subprocess.run([sys.executable, "-m", "analyser.cli", "check", str(path)],
                          capture_output=True, text=True)
    assert good.returncode == 0, good.stderr
    assert "Epochs per star and instrument" in good.stdout
    files.config["priors"]["mass_msun"] = Inline({"log-uniform": [0, 1]})
    files.write()
    bad = subprocess.run([sys.executable, "-m", "analyser.cli", "check", str(path)],
                         capture_output=True, text=True)
    assert bad.returncode == 2
    assert bad.stdout == ""
    assert "Traceback" not in bad.stderr
    assert "priors.mass_msun: a log-uniform prior needs positive bounds" in bad.stderr
