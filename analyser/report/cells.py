"""What goes in a table cell, and how it is spelled in HTML, LaTeX and CSV.

A measured value is shown as its posterior median with the distances to the
16th and 84th percentiles, x^{+a}_{-b}, rounded so that the smaller error
keeps two significant digits and the value keeps the same last decimal
(common practice); when both errors round to the same digits it becomes
x +- a.  Fixed parameters read "1 (fixed)".  CSV cells keep full precision:
a measured cell becomes three fields (value, minus, plus).
"""

import html as _html
import math
from dataclasses import dataclass

MINUS = "\u2212"      # typographic minus sign for the page


@dataclass(frozen=True)
class Measure:
    """median (value), lower and upper 68% errors (positive), or a fixed value."""
    value: float
    minus: float = math.nan
    plus: float = math.nan
    fixed: bool = False

    @classmethod
    def from_summary(cls, summary, scale=1.0):
        """From a results.json summary dict ({median, lo68, hi68} or {fixed})."""
        if summary is None:
            return None
        if "fixed" in summary:
            return cls(summary["fixed"] / scale, fixed=True)
        med = summary["median"]
        return cls(med / scale, (med - summary["lo68"]) / scale, (summary["hi68"] - med) / scale)

    @property
    def has_errors(self):
        return math.isfinite(self.minus) and math.isfinite(self.plus) and \
            min(self.minus, self.plus) > 0


@dataclass(frozen=True)
class Rich:
    """Text with its own HTML and LaTeX spellings (e.g. with symbols)."""
    plain: str
    html: str
    latex: str


def decimals(error, digits=2):
    """Decimals that leave `digits` significant digits in `error` (may be < 0)."""
    return digits - 1 - math.floor(math.log10(abs(error)))


def _round_text(x, places):
    """x rounded to `places` decimals (places < 0 rounds to tens, hundreds ...)."""
    if places > 0:
        return f"{x:.{places}f}"
    return f"{round(x, places):.0f}"


def significant(x, digits=4):
    """x with `digits` significant digits, no exponent for everyday magnitudes."""
    if x is None or not math.isfinite(x):
        return "n/a"
    if x == 0:
        return "0"
    if abs(x) >= 1e6 or abs(x) < 1e-4:
        return f"{x:.{digits - 1}e}"
    return _round_text(x, max(decimals(x, digits), 0))


def measure_parts(m):
    """(value, minus, plus) as text, or (value, None, None) without errors."""
    if m.fixed or not m.has_errors:
        return (f"{m.value:g}" if m.fixed else significant(m.value)), None, None
    places = decimals(min(m.minus, m.plus))
    lo, hi = _round_text(m.minus, places), _round_text(m.plus, places)
    value = _round_text(m.value, places)
    if value in ("-0", "-0." + "0" * max(places, 0)):
        value = value[1:]
    return value, lo, hi


def _typeset_minus(text):
    return text.replace("-", MINUS)


def html(cell):
    """HTML of a cell (trusted markup for Rich cells, escaped plain text)."""
    if cell is None:
        return "&mdash;"
    if isinstance(cell, Rich):
        return cell.html
    if isinstance(cell, Measure):
        value, lo, hi = measure_parts(cell)
        if cell.fixed:
            return f'{_typeset_minus(value)} <span class="fixed">(fixed)</span>'
        if lo is None:
            return _typeset_minus(value)
        if lo == hi:
            return f"{_typeset_minus(value)}&#8201;&plusmn;&#8201;{lo}"
        return (f'{_typeset_minus(value)}<span class="err"><span class="up">+{hi}</span>'
                f'<span class="dn">{MINUS}{lo}</span></span>')
    return _html.escape(str(cell))


LATEX_SPECIALS = {"\\": r"\textbackslash{}", "&": r"\&", "%": r"\%", "$": r"\$", "#": r"\#",
                  "_": r"\_", "{": r"\{", "}": r"\}", "~": r"\textasciitilde{}",
                  "^": r"\textasciicircum{}"}


def latex_escape(text):
    """Plain text made safe for LaTeX (the ten special characters)."""
    return "".join(LATEX_SPECIALS.get(ch, ch) for ch in str(text))


def latex(cell):
    if cell is None:
        return "---"
    if isinstance(cell, Rich):
        return cell.latex
    if isinstance(cell, Measure):
        value, lo, hi = measure_parts(cell)
        if cell.fixed:
            return f"${value}$ (fixed)"
        if lo is None:
            return f"${value}$"
        if lo == hi:
            return f"${value} \\pm {lo}$"
        return f"${value}^{{+{hi}}}_{{-{lo}}}$"
    return latex_escape(cell)


def csv_fields(cell):
    """CSV fields of a cell: three for a measure (value, minus, plus), else one."""
    if cell is None:
        return [""]
    if isinstance(cell, Measure):
        if cell.fixed or not cell.has_errors:
            return [repr(float(cell.value)), "", ""]
        return [repr(float(cell.value)), repr(float(cell.minus)), repr(float(cell.plus))]
    if isinstance(cell, Rich):
        return [cell.plain]
    return [str(cell)]
