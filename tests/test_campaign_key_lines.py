"""Locating keys of the campaign file by line, so that problems can point at them."""

import tomllib

from analyser.data.tomlfile import index_key_lines, render_key

TEXT = '''\
# a comment
tables = [
    { file = "a.ecsv", kind = "astrometry" },   # first
    { file = "b.csv", kind = "velocity", units = { v = "km/s" } },
]

[campaign]
name = """a name
with = signs on two lines"""
seed = 3

[priors]
"HALO.error_scale" = { log-uniform = [0.5, 2] }
mass_msun.fixed = 4e6

[star_priors."QV-1"]
e = { uniform = [0, 0.5] }

[[gates]]
name = "first"
[[gates]]
name = "second"
'''


def test_every_key_is_found_on_its_line():
    tomllib.loads(TEXT)                       # the example is valid TOML
    lines = index_key_lines(TEXT)
    assert lines[("tables",)] == 2
    assert lines[("tables", 0, "file")] == 3
    assert lines[("tables", 1, "units")] == 4
    assert lines[("campaign", "name")] == 8
    assert ("campaign", "with") not in lines   # inside a multi-line string
    assert lines[("campaign", "seed")] == 10
    assert lines[("priors", "HALO.error_scale")] == 13
    assert lines[("priors", "mass_msun", "fixed")] == 14
    assert lines[("star_priors", "QV-1", "e")] == 17
    assert lines[("gates", 0, "name")] == 20
    assert lines[("gates", 1, "name")] == 22


def test_keys_are_shown_as_written():
    assert render_key(("priors", "HALO.error_scale")) == 'priors."HALO.error_scale"'
    assert render_key(("gates", 1, "limit")) == "gates[2].limit"
    assert render_key(("star_priors", "QV-1", "e")) == "star_priors.QV-1.e"
