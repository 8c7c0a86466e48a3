"""The season's command end to end: run twice (the second season adds epochs)
with a baseline, the comparison's numbers, and the exit status of passing and
failing gates; plus CI outputs (gates.json, JUnit XML)."""

import json
import shutil
import xml.etree.ElementTree as ET

import pytest

from analyser.cli import main

from .fitting import make_campaign, scenario

GATES = [{"name": "mass stable", "kind": "shift", "parameter": "mass_msun", "limit": 5.0},
         {"name": "elements of TC-1 stable", "kind": "shift", "parameter": "TC-1.*",
          "limit": 5.0},
         {"name": "KITE fit quality", "kind": "reduced_chi2", "instrument": "KITE",
          "limit": 2.0}]


def _season(folder, last_year):
    sc = scenario(stars=("TC-1", "TC-2"))
    sc["campaign"]["variants"] = {"reference": "gr", "gr": {"f_sp": {"fixed": 1},
                                                          "f_z": {"fixed": 1}}}
    sc["campaign"]["gates"] = GATES
    sc["observing"]["KITE"]["last_year"] = last_year
    sc["observing"]["HERON"]["last_year"] = last_year
    return make_campaign(folder, sc)


@pytest.fixture(scope="module")
def two_seasons(tmp_path_factory):
    root = tmp_path_factory.mktemp("seasons")
    _season(root / "s1", 2023)
    _season(root / "s2", 2025)
    code1 = main(["run", str(root / "s1" / "campaign.toml"), "--out", str(root / "b1"),
                  "--workers", "1"])
    code2 = main(["run", str(root / "s2" / "campaign.toml"), "--out", str(root / "b2"),
                  "--baseline", str(root / "b1"), "--junit", str(root / "gates.xml"),
                  "--workers", "1"])
    return root, code1, code2


def test_both_seasons_pass_their_gates(two_seasons):
    _, code1, code2 = two_seasons
    assert code1 == 0 and code2 == 0


def test_comparison_counts_the_added_epochs_and_shifts(two_seasons):
    root, _, _ = two_seasons
    comp = json.loads((root / "b2" / "comparison.json").read_text())
    new = json.loads((root / "b2" / "results.json").read_text())
    old = json.loads((root / "b1" / "results.json").read_text())
    for star in ("TC-1", "TC-2"):
        n_new = {s["name"]: s for s in new["campaign"]["stars"]}[star]["epochs"]
        n_old = {s["name"]: s for s in old["campaign"]["stars"]}[star]["epochs"]
        for inst, n in comp["added_epochs"][star].items():
            assert n == n_new[inst] - n_old[inst] > 0
    assert comp["new_stars"] == [] and comp["dropped_stars"] == []
    row = next(r for r in comp["parameters"] if r["name"] == "mass_msun")
    g_new = new["variants"]["gr"]["globals"]["mass_msun"]
    g_old = old["variants"]["gr"]["globals"]["mass_msun"]
    expected = (g_new["median"] - g_old["median"]) / (g_new["std"] ** 2 + g_old["std"] ** 2) ** 0.5
    assert row["shift_sigma"] == pytest.approx(expected)
    # the same data simulated from the same truth: no parameter should have moved a lot
    assert abs(row["shift_sigma"]) < 5.0


def test_ci_outputs_list_every_gate(two_seasons):
    root, _, _ = two_seasons
    gates = json.loads((root / "b2" / "gates.json").read_text())
    assert gates["passed"] is True
    assert [g["name"] for g in gates["gates"]] == [g["name"] for g in GATES]
    suite = ET.parse(root / "gates.xml").getroot()
    assert suite.get("tests") == "3" and suite.get("failures") == "0"
    assert (root / "b2" / "report.html").exists() and (root / "b2" / "report.pdf").exists()
    assert "Change since the baseline" in (root / "b2" / "report.html").read_text()


def test_a_failing_gate_sets_exit_status_one(two_seasons, tmp_path):
    root, _, _ = two_seasons
    strict = tmp_path / "strict"
    shutil.copytree(root / "b2", strict)
    doc = json.loads((strict / "results.json").read_text())
    doc["gates"].append({"name": "impossible fit quality", "kind": "reduced_chi2",
                         "instrument": "KITE", "limit": 0.01, "parameter": ""})
    (strict / "results.json").write_text(json.dumps(doc))
    assert main(["compare", str(strict), str(root / "b1"), "--junit",
                 str(tmp_path / "g.xml")]) == 1
    suite = ET.parse(tmp_path / "g.xml").getroot()
    assert suite.get("failures") == "1"


def test_rerun_with_same_inputs_resumes_from_checkpoints(two_seasons):
    root, _, _ = two_seasons
    before = json.loads((root / "b1" / "results.json").read_text())
    assert main(["run", str(root / "s1" / "campaign.toml"), "--out", str(root / "b1"),
                 "--workers", "1"]) == 0
    after = json.loads((root / "b1" / "results.json").read_text())
    assert after["variants"]["gr"]["resumed"] is True
    assert after["variants"]["gr"]["log_z"] == pytest.approx(before["variants"]["gr"]["log_z"])


def test_invalid_campaign_exits_two(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[campaign]\nname = 'x'\n[[tables]]\nfile = 'missing.ecsv'\nkind = 'astrometry'\n")
    assert main(["run", str(bad), "--out", str(tmp_path / "out")]) == 2
