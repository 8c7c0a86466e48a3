"""The report's formatting rules, without a bundle: rounding by the error,
LaTeX escaping and table layout, CSV fields, the warnings in plain words and
the sky orientation of the figures."""

import csv
import io
import math

import pytest

from analyser.report.cells import Measure, Rich, csv_fields, html, latex, latex_escape, measure_parts
from analyser.report.headline import plain_words
from analyser.report.latex import latex_table
from analyser.report.tables import Table, column, text, write_csv


@pytest.mark.parametrize("value, minus, plus, expected", [
    # two significant digits in the smaller error, the value to the same decimal
    (12214.4, 13.3, 13.6, ("12214", "13", "14")),
    (0.027707, 0.00216, 0.00209, ("0.0277", "0.0022", "0.0021")),
    (9.63737, 0.0099, 0.0085, ("9.6374", "0.0099", "0.0085")),
    (12214.4, 133.0, 141.0, ("12210", "130", "140")),
    (-0.00002, 0.0021, 0.0021, ("0.0000", "0.0021", "0.0021")),      # no "-0.0000"
])
def test_values_are_rounded_by_their_errors(value, minus, plus, expected):
    assert measure_parts(Measure(value, minus, plus)) == expected


def test_asymmetric_symmetric_and_fixed_values():
    assert latex(Measure(5.3795, 0.0166, 0.0144)) == "$5.380^{+0.014}_{-0.017}$"
    assert latex(Measure(2035.2449, 0.00604, 0.00598)) == r"$2035.2449 \pm 0.0060$"
    assert latex(Measure(2035.2449, 0.0061, 0.0060)) == "$2035.2449^{+0.0060}_{-0.0061}$"
    assert latex(Measure(1.0, fixed=True)) == "$1$ (fixed)"
    assert "(fixed)" in html(Measure(0.0, fixed=True))
    assert "\u2212" in html(Measure(-0.2254, 0.022, 0.023))        # typographic minus
    assert html(None) == "&mdash;" and latex(None) == "---"


def test_latex_specials_are_escaped():
    assert latex_escape("KESTREL.error_scale: 50% & #1 {x} ~^\\") == (
        r"KESTREL.error\_scale: 50\% \& \#1 \{x\} \textasciitilde{}\textasciicircum{}"
        r"\textbackslash{}")
    assert latex("a_b") == r"a\_b"


def _table():
    cols = [column("Star", align="l"), column("e"), column("Notes", align="l")]
    rows = [[text("TS-01"), Measure(0.85, 0.001, 0.002), text("50% covered")],
            [text("TS-02"), Measure(0.45, fixed=True), None]]
    return Table("demo", "Demo", text("A caption with 68% intervals_"), cols, rows)


def test_latex_table_layout():
    tex = latex_table(_table())
    assert tex.count(r"\toprule") == tex.count(r"\midrule") == tex.count(r"\bottomrule") == 1
    assert r"\begin{tabular}{lrl}" in tex and r"\label{tab:demo}" in tex
    assert r"\caption{A caption with 68\% intervals\_}" in tex
    body = [line for line in tex.splitlines() if line.endswith(r"\\")]
    assert body[0] == r"Star & e & Notes \\"
    assert body[1] == r"TS-01 & $0.8500^{+0.0020}_{-0.0010}$ & 50\% covered \\"
    assert body[2] == r"TS-02 & $0.45$ (fixed) & --- \\"


def test_csv_keeps_full_precision_in_three_fields():
    rows = list(csv.reader(io.StringIO(write_csv(_table()))))
    assert rows[0] == ["Star", "e", "e minus", "e plus", "Notes"]
    assert rows[1] == ["TS-01", "0.85", "0.001", "0.002", "50% covered"]
    assert rows[2] == ["TS-02", "0.45", "", "", ""]
    assert csv_fields(Rich("a", "<b>a</b>", r"\textbf{a}")) == ["a"]


def test_fit_warnings_in_plain_words():
    # the warning texts written by analyser.inference.run and prefit
    laplace = ("ln Z -2706.13 differs from the Laplace estimate -2710.49 by more than 3 nats; "
               "expected only if the posterior is far from Gaussian")
    assert "differ by 4.4 nats" in plain_words(laplace)
    tails = ("1.0% of the posterior lies in the far tails of the proposal prior; it may be too "
             "narrow (results stay exact, but sampling is inefficient and less reliable)")
    assert plain_words(tails).startswith("1.0% of the posterior weight")
    importance = ("ln Z -10.00 +- 0.20 disagrees with importance sampling from the prefit "
                  "(-14.00 +- 0.30, ESS 400)")
    assert "do not use this variant's Bayes factors" in plain_words(importance)
    shortfall = "the best sampled ln L is 9.0 below the prefit's mode (about 3.1 expected): x"
    assert "missed the peak" in plain_words(shortfall)
    assert plain_words("something new") == "Something new"


def test_sky_axes_put_east_on_the_left():
    import matplotlib
    matplotlib.use("Agg")
    import matplotlib.pyplot as plt
    from analyser.report.figures import _square_limits
    from analyser.report.style import sky_axes
    fig, ax = plt.subplots()
    _square_limits(ax, [-10.0, 10.0], [-5.0, 5.0])
    sky_axes(ax)
    fig.canvas.draw()
    east = ax.transData.transform((10.0, 0.0))       # x = +10 mas is East
    west = ax.transData.transform((-10.0, 0.0))
    north = ax.transData.transform((0.0, 5.0))
    south = ax.transData.transform((0.0, -5.0))
    assert east[0] < west[0], "East must be on the left"
    assert north[1] > south[1], "North must be up"
    x0, x1 = ax.get_xlim()
    y0, y1 = ax.get_ylim()
    assert math.isclose(abs(x1 - x0), abs(y1 - y0))       # equal scale on both axes
    plt.close(fig)


def test_mirror_split_far_from_its_laplace_value_is_flagged():
    from types import SimpleNamespace
    from analyser.report.headline import warnings

    def bundle(sampled, expected):
        mirror = {"modes": [{"fraction": 1 - sampled, "parameters": {}},
                            {"fraction": sampled, "parameters": {}}],
                  "log_like_difference": 0.3, "laplace_fractions": [1 - expected, expected]}
        return SimpleNamespace(doc={"warnings": []},
                               variants={"gr": {"mirror_ambiguity": {"XS-9": mirror}}})

    flagged = [w for _, w in warnings(bundle(0.80, 0.40)) if "Laplace evidences" in w]
    assert len(flagged) == 1 and "80%" in flagged[0] and "40%" in flagged[0]
    assert not [w for _, w in warnings(bundle(0.55, 0.45)) if "Laplace evidences" in w]
