"""The review report, built from a small fitted bundle.

The session fixture simulates a tiny invented campaign (two stars, one
without velocities, three instruments, a dozen seasons), fits two variants
(GR and free f_SP/f_z) with few live points and writes a results bundle;
the report is then rendered from that bundle alone.  The checks read the
numbers back from results.json and look for them in the tables, open the PDF,
look at every figure file and load the HTML in a headless browser.
"""

import copy
import csv
import json
import re
import shutil
import subprocess
import sys
import time
from pathlib import Path

import pytest

SCENARIO = {
    "scenario": {"name": "Test nucleus, two stars", "seed": 4242, "reference_epoch": 2012.0,
                 "dynamics": "analytic-1pn", "season_start_day": 80,
                 "season_length_days": 160},
    "truth": {"mass_msun": 5.0e6, "distance_pc": 9000.0, "x0_mas": 0.2, "y0_mas": -0.1,
              "vx0_mas_yr": 0.02, "vy0_mas_yr": -0.01, "vz0_km_s": 4.0, "f_sp": 1.0,
              "f_z": 1.0},
    "stars": {
        "TS-01": {"period_yr": 8.5, "e": 0.85, "i_deg": 50.0, "Omega_deg": 120.0,
                  "omega_deg": 300.0, "t_p_yr": 2014.3},
        "TS-02": {"period_yr": 16.0, "e": 0.45, "i_deg": 125.0, "Omega_deg": 230.0,
                  "omega_deg": 160.0, "t_p_yr": 2009.0, "velocities": False},
    },
    "observing": {
        "KESTREL": {"kind": "astrometry", "first_year": 2004, "last_year": 2019,
                    "nights_per_season": 2, "error_mas": 0.4, "error_scale": 1.1,
                    "outlier_fraction": 0.02},
        "PLOVER": {"kind": "velocity", "first_year": 2006, "last_year": 2019,
                   "nights_per_season": 2, "error_km_s": 20.0},
        "AVOCET": {"kind": "velocity", "first_year": 2012, "last_year": 2019,
                   "nights_per_season": 1, "error_km_s": 10.0, "zero_point_km_s": 12.0},
    },
    "campaign": {
        "instruments": {
            "KESTREL": {"kind": "astrometry", "reference": True, "error_model": "scale",
                        "outliers": True},
            "PLOVER": {"kind": "velocity", "reference": True},
            "AVOCET": {"kind": "velocity", "offset": True},
        },
        "priors": {
            "mass_msun": {"log-uniform": [1e6, 2e7]},
            "distance_pc": {"uniform": [5, 15], "unit": "kpc"},
            "x0_mas": {"gaussian": [0, 1]}, "y0_mas": {"gaussian": [0, 1]},
            "vx0_mas_yr": {"gaussian": [0, 0.1]}, "vy0_mas_yr": {"gaussian": [0, 0.1]},
            "vz0_km_s": {"gaussian": [0, 20]},
            "KESTREL.error_scale": {"log-uniform": [0.5, 2]},
            "KESTREL.outlier_fraction": {"uniform": [0, 0.1]},
            "AVOCET.zero_point_km_s": {"uniform": [-60, 60]},
        },
        "star_priors": {"default": {"period_yr": {"log-uniform": [2, 300]},
                                    "e": {"uniform": [0, 0.98]}}},
        "variants": {
            "reference": "gr",
            "gr": {"description": "General relativity (f_SP = f_z = 1)",
                   "f_sp": {"fixed": 1}, "f_z": {"fixed": 1}},
            "free": {"description": "Free Schwarzschild-precession and redshift factors",
                     "f_sp": {"uniform": [-2, 4]}, "f_z": {"uniform": [-2, 4]}},
        },
        "sampler": {"live_points": 40, "dlogz": 0.5, "prefit_starts": 4},
    },
}


def make_bundle(out_dir):
    """Simulate SCENARIO, fit both variants and write the bundle to out_dir."""
    from analyser.campaign import load_campaign
    from analyser.inference.run import fit_campaign
    from analyser.results.bundle import write_bundle
    from analyser.simulate import simulate, write_campaign

    out = Path(out_dir)
    started = time.time()
    write_campaign(out / "campaign", *simulate(copy.deepcopy(SCENARIO)))
    campaign = load_campaign(out / "campaign" / "campaign.toml")
    fits = fit_campaign(campaign, out / "bundle", variants=["gr", "free"], workers=1)
    write_bundle(out / "bundle", campaign, fits, "analyser fit campaign.toml --out bundle",
                 started)
    return out / "bundle"


@pytest.fixture(scope="session")
def report(tmp_path_factory):
    """(bundle folder, {name: path} written by build_report, results.json)."""
    from analyser.report.render import build_report
    bundle = make_bundle(tmp_path_factory.mktemp("report"))
    written = build_report(bundle)
    return bundle, written, json.loads((bundle / "results.json").read_text())


# ---------------------------------------------------------------- helpers

def _html(bundle):
    return (bundle / "report.html").read_text()


def _section(page, anchor):
    """The HTML of <figure ... id=anchor> ... </figure>."""
    m = re.search(rf'<figure[^>]*id="{anchor}">(.*?)</figure>', page, re.S)
    assert m, f"{anchor} missing from report.html"
    return m.group(1)


def _rows(fragment):
    """Table body rows as lists of cell texts (tags stripped, minus signs plain)."""
    body = re.search(r"<tbody>(.*?)</tbody>", fragment, re.S).group(1)
    out = []
    for tr in re.findall(r"<tr>(.*?)</tr>", body, re.S):
        cells = re.findall(r"<td[^>]*>(.*?)</td>", tr, re.S)
        out.append([re.sub(r"<[^>]+>", " ", c).replace("\u2212", "-").replace("&plusmn;", "±")
                    .strip() for c in cells])
    return out


def _first_number(text):
    m = re.match(r"\s*(-?\d+(?:\.\d+)?)", text)
    assert m, f"no number in {text!r}"
    return float(m.group(1))


def _csv(bundle, key):
    with open(bundle / "tables" / f"{key}.csv", newline="") as fh:
        return list(csv.reader(fh))


SCALES = {"mass_msun": 1e6, "distance_pc": 1e3, "coverage": 0.01, "periapsis_beta": 0.01}


def _check_measure(fields, summary, name, where):
    """CSV fields (value, minus, plus) against a results.json summary."""
    scale = SCALES.get(name.rsplit(".", 1)[-1], 1.0)
    if "fixed" in summary:
        assert float(fields[0]) == pytest.approx(summary["fixed"] / scale), where
        return
    med = summary["median"]
    assert float(fields[0]) == pytest.approx(med / scale, rel=1e-12), where
    assert float(fields[1]) == pytest.approx((med - summary["lo68"]) / scale, rel=1e-9), where
    assert float(fields[2]) == pytest.approx((summary["hi68"] - med) / scale, rel=1e-9), where


def _displayed_matches(text, summary, name, where):
    """The page shows the median, rounded to at most the smaller error."""
    scale = SCALES.get(name.rsplit(".", 1)[-1], 1.0)
    if "fixed" in summary:
        assert "fixed" in text and _first_number(text) == pytest.approx(summary["fixed"] / scale)
        return
    err = min(summary["median"] - summary["lo68"], summary["hi68"] - summary["median"]) / scale
    assert abs(_first_number(text) - summary["median"] / scale) <= 0.5 * err, (where, text)


def latex_problems(text):
    """Why a LaTeX fragment would not compile: unbalanced braces or environments,
    unescaped specials outside math, non-ASCII, ragged tabular rows."""
    problems = []
    if not text.isascii():
        problems.append("non-ASCII characters")
    depth = 0
    body = re.sub(r"\\[{}%&_#$]", "", text)          # escaped specials are fine
    for line in body.splitlines():
        code = line.split("%", 1)[0] if not line.lstrip().startswith("%") else ""
        for ch in code:
            depth += {"{": 1, "}": -1}.get(ch, 0)
            if depth < 0:
                problems.append(f"closing brace without opening: {line}")
                depth = 0
    if depth:
        problems.append("unbalanced braces")
    stack = []
    for kind, env in re.findall(r"\\(begin|end)\{(\w+\*?)\}", text):
        if kind == "begin":
            stack.append(env)
        elif not stack or stack.pop() != env:
            problems.append(f"\\end{{{env}}} does not match")
    if stack:
        problems.append(f"unclosed environments {stack}")
    for line in body.splitlines():
        if line.lstrip().startswith("%"):
            continue
        if line.count("$") % 2:
            problems.append(f"odd number of $ in: {line}")
        outside = re.sub(r"\$[^$]*\$", "", line)
        for ch in "_%&#^":
            if ch in outside and not (ch == "&" and line.rstrip().endswith(r"\\")):
                problems.append(f"unescaped {ch!r} outside math: {line}")
    m = re.search(r"\\begin\{tabular\}\{([lrc]+)\}(.*?)\\end\{tabular\}", text, re.S)
    if m:
        ncol = len(m.group(1))
        for line in m.group(2).splitlines():
            if line.rstrip().endswith(r"\\"):
                cells = len(re.findall(r"(?<!\\)&", line)) + 1
                if cells != ncol:
                    problems.append(f"{cells} cells for {ncol} columns: {line}")
    return problems


# ---------------------------------------------------------------- files

def test_every_written_file_exists_and_is_not_empty(report):
    bundle, written, _ = report
    for key in ("report.html", "report.pdf", "figures/sky.svg", "figures/corner.svg",
                "figures/relativity.svg", "figures/residuals.svg", "figures/star-TS-01.svg",
                "figures/star-TS-02.svg", "tables/globals.tex", "tables/elements.csv",
                "tables/all_tables.tex"):
        assert key in written, key
    for key, path in written.items():
        assert Path(path) == bundle / key
        assert Path(path).stat().st_size > 50, key


def test_every_figure_is_vector_and_referenced_in_the_page(report):
    bundle, written, _ = report
    page = _html(bundle)
    svgs = sorted(k for k in written if k.startswith("figures/") and k.endswith(".svg"))
    assert len(svgs) == 6
    for svg in svgs:
        assert f'<img src="{svg}"' in page, svg
        text = (bundle / svg).read_text()
        assert "<svg" in text and "<path" in text, svg
        assert "data:image" not in text and "<image" not in text, f"{svg} embeds a raster"
        pdf = bundle / svg.replace(".svg", ".pdf")
        assert pdf.read_bytes()[:5] == b"%PDF-", pdf
        assert f'href="{svg.replace(".svg", ".pdf")}"' in page
    srcs = re.findall(r'<img src="([^"]+)"', page)
    assert sorted(srcs) == svgs


# ---------------------------------------------------------------- tables against results.json

def test_global_parameter_table_has_the_numbers_of_results_json(report):
    bundle, _, doc = report
    from analyser.report.curves import GLOBALS
    rows = _csv(bundle, "globals")
    header, body = rows[0], rows[1:]
    assert len(body) == len(GLOBALS)
    html_rows = _rows(_section(_html(bundle), "tab-globals"))
    for name, row, hrow in zip(GLOBALS, body, html_rows):
        assert row[0].split(" [")[0] == name
        for k, variant in enumerate(doc["variants"]):
            col = header.index(variant)
            summary = doc["variants"][variant]["globals"][name]
            _check_measure(row[col:col + 3], summary, name, (name, variant))
            _displayed_matches(hrow[2 + k], summary, name, (name, variant))
    # priors come from the (unchanged) campaign file: the scenario's own
    prior = {r[0].split(" [")[0]: r[header.index("Prior")] for r in body}
    assert prior["mass_msun"] == "log-uniform [1, 20]"          # 1e6..2e7 M_sun in 1e6 M_sun
    assert prior["distance_pc"] == "uniform [5, 15]"            # kpc
    assert prior["x0_mas"] == "Gaussian(0, 1)"
    assert prior["f_sp"] == "uniform [-2, 4]"                   # where it is free


def test_star_tables_have_the_numbers_of_results_json(report):
    bundle, _, doc = report
    ref = doc["model_comparison"]["reference"]
    v = doc["variants"][ref]
    elements = _csv(bundle, "elements")
    header = elements[0]
    by_label = {r[0]: r for r in elements[1:]}
    row = by_label["TS-01"]
    for name, section in (("a_mas", "stars"), ("a_au", "derived"), ("e", "stars"),
                          ("i_deg", "stars"), ("Omega_deg", "stars"), ("omega_deg", "stars"),
                          ("t_p_yr", "stars"), ("period_yr", "stars"),
                          ("radial_period_yr", "derived")):
        col = next(k for k, h in enumerate(header) if h.startswith(name + " ") or h == name)
        _check_measure(row[col:col + 3], v[section]["TS-01"][name], name, name)
    # the astrometry-only star: one row per mirror mode, with that mode's numbers
    modes = v["mirror_ambiguity"]["TS-02"]["modes"]
    assert "TS-02" not in by_label
    for k, mode in enumerate(modes, start=1):
        row = by_label[f"TS-02 mode {k}"]
        assert f"{100 * mode['fraction']:.0f}% of samples" in row[-1]
        if mode["parameters"]:
            col = next(j for j, h in enumerate(header) if h.startswith("Omega_deg"))
            _check_measure(row[col:col + 3], mode["parameters"]["Omega_deg"], "Omega_deg", k)
    derived = _csv(bundle, "derived")
    header = derived[0]
    for row in derived[1:]:
        for name in ("periapsis_au", "gr_advance_arcmin", "redshift_signal_km_s",
                     "next_periapsis_yr", "periapsis_speed_km_s"):
            col = next(k for k, h in enumerate(header) if h.startswith(name))
            _check_measure(row[col:col + 3], v["derived"][row[0]][name], name, (row[0], name))


def test_model_comparison_table(report):
    bundle, _, doc = report
    comp = doc["model_comparison"]
    rows = {r[0]: r for r in _csv(bundle, "comparison")[1:]}
    header = _csv(bundle, "comparison")[0]
    lnz, lnb = header.index("ln Z"), header.index(f"ln B vs {comp['reference']}")
    for name, v in doc["variants"].items():
        row = rows[name + (" (reference)" if name == comp["reference"] else "")]
        assert float(row[lnz]) == pytest.approx(v["log_z"])
        assert float(row[lnz + 1]) == pytest.approx(v["log_z_err"])
        if name != comp["reference"]:
            b = comp["against_reference"][name]
            assert float(row[lnb]) == pytest.approx(b["ln_bayes_factor"])
            assert row[header.index("Evidence (Kass & Raftery)")] == b["strength"]
    page = _html(bundle)
    assert f"The evidence prefers <b>{comp['preferred']}</b>" in page


def test_instrument_tables(report):
    bundle, _, doc = report
    v = doc["variants"][doc["model_comparison"]["reference"]]
    rows = {r[0]: r for r in _csv(bundle, "residuals")[1:]}
    header = _csv(bundle, "residuals")[0]
    for inst, r in v["residuals"].items():
        assert rows[inst][header.index("chi2/N")] == f"{r['reduced_chi2']:.2f}"
        assert int(rows[inst][header.index("Outliers")]) == len(r["outliers"])
        assert int(rows[inst][header.index("N points")]) == r["n_points"]
    flagged = _csv(bundle, "outliers")[1:]
    expected = [(i, o["star"], f"{o['epoch_yr']:.3f}") for i, r in v["residuals"].items()
                for o in r["outliers"]]
    assert [(r[0], r[1], r[2]) for r in flagged] == expected
    nuis = {r[0].split(" [")[0]: r for r in _csv(bundle, "nuisances")[1:]}
    header = _csv(bundle, "nuisances")[0]
    assert sorted(nuis) == sorted(v["nuisances"])
    for name, summary in v["nuisances"].items():
        row = nuis[name]
        col = header.index(doc["model_comparison"]["reference"])
        _check_measure(row[col:col + 3], summary, name, name)


def test_latex_tables_are_compile_ready(report):
    bundle, written, _ = report
    tex = [k for k in written if k.endswith(".tex") and not k.endswith("all_tables.tex")]
    assert len(tex) >= 9
    for key in tex:
        text = (bundle / key).read_text()
        assert r"\toprule" in text and r"\midrule" in text and r"\bottomrule" in text
        assert latex_problems(text) == [], key
    # per cent signs of the captions are escaped; values carry asymmetric errors in math mode
    glob = (bundle / "tables" / "globals.tex").read_text()
    assert r"68\%" in glob and " 68%" not in glob
    assert re.search(r"\$-?\d+\.\d+\^\{\+[\d.]+\}_\{-[\d.]+\}\$", glob)
    assert r"$10^{6}\,M_\odot$" in glob                         # units in the header
    doc = (bundle / "tables" / "all_tables.tex").read_text()
    assert latex_problems(doc) == []
    for key in tex:
        assert rf"\input{{{Path(key).stem}.tex}}" in doc


def test_latex_checker_catches_mistakes():
    good = "\\begin{tabular}{lr}\nA & $x_1$ \\\\\n\\end{tabular}\n"
    assert latex_problems(good) == []
    assert latex_problems(good.replace("$x_1$", "x_1"))          # unescaped underscore
    assert latex_problems(good.replace("{lr}", "{lrr}"))         # ragged row
    assert latex_problems(good.replace("\\end{tabular}", ""))    # unclosed environment
    assert latex_problems("50% done")                             # unescaped per cent
    assert latex_problems("{a")                                   # unbalanced brace


# ---------------------------------------------------------------- the page and the PDF

def test_summary_states_campaign_headlines_and_warnings(report):
    bundle, _, doc = report
    from analyser.report.headline import plain_words
    page = _html(bundle)
    summary = page[page.index('id="summary"'):page.index('id="orbits"')]
    assert doc["campaign"]["name"] in page
    assert "2 stars" in summary and "KESTREL 64" in summary
    ref = doc["model_comparison"]["reference"]
    m = doc["variants"][ref]["globals"]["mass_msun"]
    shown = re.search(r'class="hl-value">([^<]+)<', summary).group(1)
    assert abs(float(shown) - m["median"] / 1e6) <= 0.5 * m["std"] / 1e6
    for w in doc["warnings"]:
        text = plain_words(w.split(": ", 1)[1])
        assert text.replace("'", "&#39;").replace('"', "&#34;") in summary, w
    assert "<sub>SP</sub>" in summary


def test_cautions_say_what_in_this_run_bears_on_them(report):
    bundle, _, doc = report
    import numpy as np
    from astropy.table import Table
    page = _html(bundle)
    cautions = page[page.index('id="cautions"'):page.index('id="reproducibility"')]
    for title in ("Reference-frame tie", "Source confusion", "Mass-distance correlation",
                  "Velocity zero points", "Prior sensitivity", "Extended mass",
                  "What the model leaves out", "own uncertainty"):
        assert title in cautions, title
    ref = doc["model_comparison"]["reference"]
    samples = Table.read(bundle / doc["variants"][ref]["samples_file"], format="ascii.ecsv")
    rho = np.corrcoef(samples["mass_msun"], samples["distance_pc"])[0, 1]
    assert f"<b>{rho:.3f}</b>" in cautions
    derived = doc["variants"][ref]["derived"]
    driver = max(derived, key=lambda s: derived[s]["gr_advance_arcmin"]["median"])
    assert f"comes mostly from {driver}" in cautions
    for name, v in doc["variants"].items():
        assert f"{v['log_z']:.2f}" in cautions


def test_pdf_opens_and_has_its_pages(report):
    import pypdf
    bundle, _, _ = report
    reader = pypdf.PdfReader(bundle / "report.pdf")
    n = len(reader.pages)
    assert n >= 6
    texts = [p.extract_text() for p in reader.pages]
    assert all(t.strip() for t in texts), "an empty page"
    assert f"page 1 of {n}" in texts[0] and f"page {n} of {n}" in texts[-1]
    joined = "\n".join(texts)
    for heading in ("1 Summary", "Orbits and data", "Global parameters", "The stars",
                    "Cautions", "Appendix: reproducibility"):
        assert heading in joined, heading
    widths = {round(float(p.mediabox.width)) for p in reader.pages}
    assert widths == {595, 842}, "A4 portrait pages and the landscape star tables"


def test_report_loads_nothing_from_the_network(report):
    bundle, _, _ = report
    page = _html(bundle)
    for pattern in (r'src="(?:https?:)?//', r'href="(?:https?:)?//', r"url\(\s*['\"]?(?:https?:)?//",
                    r"@import", r"<script", r"<link"):
        assert not re.search(pattern, page), pattern


def test_headless_chromium_shows_the_page_without_missing_images(report, tmp_path):
    bundle, _, _ = report
    browser = shutil.which("chromium") or (Path("/usr/bin/chromium").exists() and "/usr/bin/chromium")
    assert browser, ("headless Chromium is needed for this test: install the Debian package "
                     "`chromium` (apt-get install -y chromium)")
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
             "--disable-background-networking", "--disable-component-update", "--disable-sync",
             f"--user-data-dir={tmp_path / 'profile'}", "--enable-logging=stderr", "--v=0"]
    url = (bundle / "report.html").as_uri()
    shot = tmp_path / "report.png"
    run = subprocess.run([browser, *flags, f"--screenshot={shot}", "--window-size=1280,2400",
                          url], capture_output=True, text=True, timeout=120)
    assert shot.is_file() and shot.stat().st_size > 20000, run.stderr[-2000:]
    console = [line for line in run.stderr.splitlines() if "CONSOLE" in line
               or "net::ERR" in line or "Failed to load" in line]
    assert console == [], console
    from PIL import Image
    im = Image.open(shot).convert("L")
    assert im.getextrema()[0] < 100, "the screenshot is blank"
    dom = subprocess.run([browser, *flags, "--dump-dom", url], capture_output=True, text=True,
                         timeout=120).stdout
    sources = re.findall(r'<(?:img|object)[^>]+(?:src|data)="([^"]+)"', dom)
    assert len(sources) == 6
    for src in sources:
        assert (bundle / src).is_file(), f"missing image {src}"


# ---------------------------------------------------------------- command, inputs, isolation

def test_report_command_rejects_what_is_not_a_bundle(report, tmp_path, capsys):
    from analyser.cli import main
    bundle, _, _ = report
    assert main(["report", str(tmp_path / "nowhere")]) == 2
    empty = tmp_path / "empty"
    empty.mkdir()
    assert main(["report", str(empty)]) == 2
    broken = tmp_path / "broken"
    broken.mkdir()
    (broken / "results.json").write_text("{not json")
    assert main(["report", str(broken)]) == 2
    partial = tmp_path / "partial"
    shutil.copytree(bundle, partial, ignore=shutil.ignore_patterns("samples"))
    assert main(["report", str(partial)]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 4, err
    assert "Traceback" not in "\n".join(err)
    assert "no such folder" in err[0] and "no results.json" in err[1]
    assert "not valid JSON" in err[2] and "missing" in err[3]


def test_change_since_baseline_from_comparison_json_and_no_inference(report, tmp_path):
    """Rebuilt in a fresh interpreter: the section appears with the gates, and
    the report code never imports the inference package."""
    bundle, _, doc = report
    assert "Change since the baseline" not in _html(bundle)
    copy = tmp_path / "bundle"
    shutil.copytree(bundle, copy)
    m = doc["variants"]["gr"]["globals"]["mass_msun"]
    comparison = {"baseline": "season 2025", "parameters": [
        {"name": "mass_msun", "new_median": m["median"], "new_std": m["std"],
         "old_median": m["median"] - 2e4, "old_std": 3e4, "shift_sigma": 0.55, "exceeds": False}],
        "added_epochs": {"TS-01": {"KESTREL": 2}}, "new_stars": [], "dropped_stars": [],
        "gates": [{"name": "central mass stable", "kind": "shift", "passed": True, "value": 0.55,
                   "limit": 3.0, "detail": "mass_msun"},
                  {"name": "KESTREL fit quality", "kind": "reduced_chi2", "passed": False,
                   "value": 2.3, "limit": 2.0, "detail": "KESTREL"}]}
    (copy / "comparison.json").write_text(json.dumps(comparison))
    code = ("import sys; from analyser.report.render import report_command; "
            f"rc = report_command({str(copy)!r}); "
            "bad = [m for m in sys.modules if m.startswith('analyser.inference')]; "
            "print('INFERENCE', bad); sys.exit(rc)")
    run = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                         timeout=600)
    assert run.returncode == 0, run.stderr[-3000:]
    assert "INFERENCE []" in run.stdout
    page = (copy / "report.html").read_text()
    assert "Change since the baseline" in page and "season 2025" in page
    assert "1 of 2 gates passed" in page and "failed: KESTREL fit quality" in page
    rows = _rows(_section(page, "tab-gates"))
    assert [r[2] for r in rows] == ["passed", "FAILED"]
    assert latex_problems((copy / "tables" / "change.tex").read_text()) == []


def test_priors_fall_back_to_what_is_known(report):
    from analyser.report.load import load_bundle
    from analyser.report.priors import NOT_RECORDED, prior_table
    bundle, _, _ = report
    b = load_bundle(bundle)
    source, priors = prior_table(b)
    assert "results.json" in source and priors["free"]["f_sp"]["kind"] == "uniform"
    for v in b.variants.values():          # an older bundle, without priors
        v.pop("priors")
    source, priors = prior_table(b)
    assert "campaign file" in source and priors["free"]["f_sp"]["kind"] == "uniform"
    b.doc["campaign"]["file"] = str(bundle / "no-such-campaign.toml")
    source, priors = prior_table(b)
    assert "does not record" in source
    assert priors["gr"]["f_sp"] == {"kind": "fixed", "a": 1.0}
    assert priors["gr"]["mass_msun"] == NOT_RECORDED
