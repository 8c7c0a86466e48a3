"""Names, symbols and display units of every quantity the report shows.

Each parameter of the bundle (by its base name, e.g. "mass_msun" or
"offset_x_mas") has a description, a symbol in HTML and LaTeX, a display
unit and the factor that takes the bundle's internal value to that unit
(the mass is shown in 10^6 M_sun, the distance in kpc).  Units come in
three spellings: plain (CSV headers), HTML and LaTeX.
"""

from dataclasses import dataclass


@dataclass(frozen=True)
class Unit:
    plain: str
    html: str
    latex: str


UNITS = {
    "": Unit("", "", ""),
    "1e6 Msun": Unit("1e6 M_sun", "10<sup>6</sup>&#8239;M<sub>&#8857;</sub>",
                     r"$10^{6}\,M_\odot$"),
    "kpc": Unit("kpc", "kpc", "kpc"),
    "mas": Unit("mas", "mas", "mas"),
    "mas/yr": Unit("mas/yr", "mas&#8239;yr<sup>&minus;1</sup>", r"mas\,yr$^{-1}$"),
    "km/s": Unit("km/s", "km&#8239;s<sup>&minus;1</sup>", r"km\,s$^{-1}$"),
    "deg": Unit("deg", "deg", "deg"),
    "yr": Unit("yr", "yr", "yr"),
    "AU": Unit("AU", "AU", "AU"),
    "h": Unit("h", "h", "h"),
    "R_s": Unit("R_s", "<i>R</i><sub>S</sub>", r"$R_\mathrm{S}$"),
    "arcmin": Unit("arcmin", "arcmin", "arcmin"),
    "%": Unit("%", "%", r"\%"),
    "nats": Unit("nats", "nats", "nats"),
}


@dataclass(frozen=True)
class Quantity:
    description: str
    html: str           # symbol
    latex: str          # symbol, in math mode
    unit: str = ""      # key of UNITS
    scale: float = 1.0  # internal value / scale = displayed value
    mpl: str = ""       # symbol for matplotlib's mathtext

    def label_html(self):
        u = UNITS[self.unit].html
        return f"{self.html} ({u})" if u else self.html

    def label_latex(self):
        u = UNITS[self.unit].latex
        return f"{self.latex} ({u})" if u else self.latex

    def label_plain(self, name):
        u = UNITS[self.unit].plain
        return f"{name} [{u}]" if u else name

    def label_mpl(self):
        u = UNITS[self.unit].plain.replace("1e6 M_sun", r"$10^6\,M_\odot$")
        u = u.replace("mas/yr", r"mas yr$^{-1}$").replace("km/s", r"km s$^{-1}$")
        return f"{self.mpl} ({u})" if u else self.mpl


QUANTITIES = {
    # globals
    "mass_msun": Quantity("Central mass", "<i>M</i>", "$M$", "1e6 Msun", 1e6, "$M$"),
    "distance_pc": Quantity("Distance", "<i>R</i><sub>0</sub>", "$R_0$", "kpc", 1e3, "$R_0$"),
    "x0_mas": Quantity("Frame offset (East)", "<i>x</i><sub>0</sub>", "$x_0$", "mas", 1.0,
                       "$x_0$"),
    "y0_mas": Quantity("Frame offset (North)", "<i>y</i><sub>0</sub>", "$y_0$", "mas", 1.0,
                       "$y_0$"),
    "vx0_mas_yr": Quantity("Frame drift (East)", "<i>v</i><sub><i>x</i>,0</sub>", "$v_{x,0}$",
                           "mas/yr", 1.0, "$v_{x,0}$"),
    "vy0_mas_yr": Quantity("Frame drift (North)", "<i>v</i><sub><i>y</i>,0</sub>", "$v_{y,0}$",
                           "mas/yr", 1.0, "$v_{y,0}$"),
    "vz0_km_s": Quantity("Systemic velocity", "<i>v</i><sub><i>z</i>,0</sub>", "$v_{z,0}$",
                         "km/s", 1.0, "$v_{z,0}$"),
    "f_sp": Quantity("Schwarzschild-precession factor", "<i>f</i><sub>SP</sub>",
                     r"$f_\mathrm{SP}$", "", 1.0, r"$f_\mathrm{SP}$"),
    "f_z": Quantity("Redshift factor", "<i>f</i><sub><i>z</i></sub>", "$f_z$", "", 1.0,
                    "$f_z$"),
    # instrument nuisances
    "offset_x_mas": Quantity("Astrometric offset (East)", "&Delta;<i>x</i>", r"$\Delta x$",
                             "mas", 1.0, r"$\Delta x$"),
    "offset_y_mas": Quantity("Astrometric offset (North)", "&Delta;<i>y</i>", r"$\Delta y$",
                             "mas", 1.0, r"$\Delta y$"),
    "zero_point_km_s": Quantity("Velocity zero point", "&Delta;<i>v</i>", r"$\Delta v$",
                                "km/s", 1.0, r"$\Delta v$"),
    "error_scale": Quantity("Error scale factor", "<i>s</i>", "$s$", "", 1.0, "$s$"),
    "jitter_mas": Quantity("Added astrometric jitter", "&sigma;<sub>jit</sub>",
                           r"$\sigma_\mathrm{jit}$", "mas", 1.0, r"$\sigma_\mathrm{jit}$"),
    "jitter_km_s": Quantity("Added velocity jitter", "&sigma;<sub>jit</sub>",
                            r"$\sigma_\mathrm{jit}$", "km/s", 1.0, r"$\sigma_\mathrm{jit}$"),
    "outlier_fraction": Quantity("Outlier fraction", "<i>q</i>", "$q$", "", 1.0, "$q$"),
    # orbital elements
    "a_mas": Quantity("Semi-major axis", "<i>a</i>", "$a$", "mas", 1.0, "$a$"),
    "a_au": Quantity("Semi-major axis", "<i>a</i>", "$a$", "AU", 1.0, "$a$"),
    "e": Quantity("Eccentricity", "<i>e</i>", "$e$", "", 1.0, "$e$"),
    "i_deg": Quantity("Inclination", "<i>i</i>", "$i$", "deg", 1.0, "$i$"),
    "Omega_deg": Quantity("Position angle of the ascending node", "&Omega;", r"$\Omega$",
                          "deg", 1.0, r"$\Omega$"),
    "omega_deg": Quantity("Argument of periapsis", "&omega;", r"$\omega$", "deg", 1.0,
                          r"$\omega$"),
    "t_p_yr": Quantity("Epoch of periapsis", "<i>t</i><sub>p</sub>", r"$t_\mathrm{p}$", "yr",
                       1.0, r"$t_\mathrm{p}$"),
    "period_yr": Quantity("Period", "<i>P</i>", "$P$", "yr", 1.0, "$P$"),
    "radial_period_yr": Quantity("Radial period", "<i>P</i><sub>r</sub>", r"$P_\mathrm{r}$",
                                 "yr", 1.0, r"$P_\mathrm{r}$"),
    "coverage": Quantity("Fraction of the orbit covered", "covered", "covered", "%", 0.01,
                         "covered"),
    # derived
    "periapsis_au": Quantity("Periapsis distance", "<i>r</i><sub>p</sub>", r"$r_\mathrm{p}$",
                             "AU", 1.0, r"$r_\mathrm{p}$"),
    "periapsis_light_hours": Quantity("Periapsis distance", "<i>r</i><sub>p</sub>",
                                      r"$r_\mathrm{p}$", "h", 1.0, r"$r_\mathrm{p}$"),
    "periapsis_rs": Quantity("Periapsis distance", "<i>r</i><sub>p</sub>", r"$r_\mathrm{p}$",
                             "R_s", 1.0, r"$r_\mathrm{p}$"),
    "periapsis_speed_km_s": Quantity("Speed at periapsis", "<i>v</i><sub>p</sub>",
                                     r"$v_\mathrm{p}$", "km/s", 1.0, r"$v_\mathrm{p}$"),
    "periapsis_beta": Quantity("Speed at periapsis / c", "<i>v</i><sub>p</sub>/<i>c</i>",
                               r"$v_\mathrm{p}/c$", "%", 0.01, r"$v_\mathrm{p}/c$"),
    "gr_advance_arcmin": Quantity("GR periapsis advance per orbit", "&delta;&omega;<sub>GR</sub>",
                                  r"$\delta\omega_\mathrm{GR}$", "arcmin", 1.0,
                                  r"$\delta\omega_\mathrm{GR}$"),
    "redshift_signal_km_s": Quantity("Relativistic redshift at periapsis",
                                     "&Delta;<i>v</i><sub>rel</sub>", r"$\Delta v_\mathrm{rel}$",
                                     "km/s", 1.0, r"$\Delta v_\mathrm{rel}$"),
    "next_periapsis_yr": Quantity("Next periapsis passage", "<i>t</i><sub>next</sub>",
                                  r"$t_\mathrm{next}$", "yr", 1.0, r"$t_\mathrm{next}$"),
}


def base_name(name):
    """"KESTREL.offset_x_mas" -> "offset_x_mas"; "mass_msun" -> itself."""
    return name.rsplit(".", 1)[-1]


def quantity(name):
    """The Quantity of a parameter (full or base name); unknown names get a plain one."""
    base = base_name(name)
    if base in QUANTITIES:
        return QUANTITIES[base]
    return Quantity(base.replace("_", " "), base, r"\texttt{" + base.replace("_", r"\_") + "}",
                    mpl=base.replace("_", " "))
