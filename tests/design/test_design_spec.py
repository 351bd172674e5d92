"""Spec files: every key read with its unit; every bad spec a one-line error at its file and line.

Reference: the format documented in docs/spec-format.md, and SPICE's scale suffixes
(common practice: m is milli, meg is mega).
"""

import pytest

from symbias.design.spec import load_spec, parse_spec
from symbias.errors import SpecError

GOOD = """[block]
family = "current-mirror"
technology = "mos"
current = "5uA"
outputs = 12

[supply]
min = 1.62
max = 1.98

[limits]
headroom_max = "350mV"
rout_min = "20megohm"
ratio_error_max = "1%"
random_error_max = 0.01
temperature = [-40, 125]
tc_max = "50ppm"
line_sensitivity_max = "0.5%/V"
devices_max = 6
supply_current_max = "70u"

[weights]
rout = 2
"""


def test_every_key_is_read_with_its_unit():
    spec = parse_spec(GOOD, "good.toml")
    assert spec.block.current == 5e-6 and spec.block.outputs == 12 and spec.block.technology == "mos"
    assert spec.limits.headroom_max == 0.35 and spec.limits.rout_min == 2e7
    assert spec.limits.ratio_error_max == 0.01 and spec.limits.tc_max == 50
    assert spec.limits.line_sensitivity_max == 0.5 and spec.limits.devices_max == 6
    assert spec.limits.supply_current_max == pytest.approx(70e-6)
    assert dict(spec.weights) == {"rout": 2.0}
    assert spec.to_dict()["limits"]["temperature"] == [-40.0, 125.0]


def test_the_shipped_example_reads():
    spec = load_spec("examples/sensor_bias_spec.toml")
    assert spec.block.family == "current-mirror" and spec.supply.max == 1.98


BAD = [
    ("unknown key", ("outputs = 12", "outputs = 12\nspeed = 3"), 6, "unknown key"),
    ("wrong unit", ('current = "5uA"', 'current = "5uV"'), 4, "wrong unit"),
    ("text for a number", ("outputs = 12", 'outputs = "twelve"'), 5, "expected a number"),
    ("negative", ("outputs = 12", "outputs = -2"), 5, "whole number"),
    ("boolean", ("max = 1.98", "max = true"), 9, "expected a number"),
    ("infinite", ("max = 1.98", "max = inf"), 9, "not a finite"),
    ("supply reversed", ("min = 1.62", "min = 2.5"), 8, "above max"),
    ("temperature reversed", ("temperature = [-40, 125]", "temperature = [125, -40]"), 16, "low < high"),
    ("below absolute zero", ("temperature = [-40, 125]", "temperature = [-300, 125]"), 16, "-273.15"),
    ("headroom above supply", ('headroom_max = "350mV"', 'headroom_max = 1.7'), 12, "no room"),
    ("unknown family", ('family = "current-mirror"', 'family = "mirror"'), 2, "not one of"),
    ("unknown weight", ("rout = 2", "speed = 2"), 23, "not a metric"),
    ("negative weight", ("rout = 2", "rout = -1"), 23, ">= 0"),
    ("unknown table", ("[weights]", "[weight]"), 22, "unknown table"),
    ("TOML syntax", ("outputs = 12", "outputs = "), 5, "TOML"),
]


@pytest.mark.parametrize(("change", "line", "cause"), [pytest.param(c, l, w, id=i) for i, c, l, w in BAD])
def test_bad_spec_is_one_line_at_its_place(change, line, cause):
    old, new = change
    text = GOOD.replace(old, new, 1)
    with pytest.raises(SpecError) as caught:
        parse_spec(text, "bad.toml")
    err = caught.value
    assert err.path == "bad.toml" and err.line == line, str(err)
    assert cause in err.reason and "\n" not in str(err)


def test_missing_file():
    with pytest.raises(SpecError, match="cannot read spec"):
        load_spec("no/such/spec.toml")
