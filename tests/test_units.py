"""Flows with units (contract: flows are strings with a unit; a bare number is an error).

Conversions are definitions of the units (1 L = 1e-3 m^3, 1 h = 3600 s, 1 d = 86400 s,
M = 1e6): common practice, no source.
"""

from __future__ import annotations

import pytest

from optimiser.io.units import parse_flow_m3_s


@pytest.mark.parametrize(("text", "m3_s"), [
    ("42 L/s", 0.042),
    ("42 l/s", 0.042),
    ("42L/s", 0.042),
    ("150 m^3/h", 150 / 3600),
    ("150 m**3/h", 150 / 3600),
    ("150 m3/h", 150 / 3600),
    ("3.6 ML/d", 3.6e6 * 1e-3 / 86400),
    ("1 m^3/s", 1.0),
    ("1 m3/s", 1.0),
    ("1e-3 m^3/s", 1e-3),
    ("0 L/s", 0.0),
    ("  2.5 L/s  ", 0.0025),
    ("42 L / s", 0.042),
    ("42 L s^-1", 0.042),
    ("42 L s**-1", 0.042),
    ("42 (L/s)", 0.042),
    ("42 litre/second", 0.042),
    ("100 m^3/s", 100.0),
])
def test_flows_with_units(text, m3_s):
    assert parse_flow_m3_s(text) == pytest.approx(m3_s, rel=1e-12)


def test_the_three_contract_examples_agree():
    """The contract's examples 150 m^3/h and 3.6 ML/d are the same flow, 41.67 L/s."""
    assert parse_flow_m3_s("150 m^3/h") == pytest.approx(parse_flow_m3_s("3.6 ML/d"))


@pytest.mark.parametrize(("value", "words"), [
    ("42", "no unit"),
    ("  42 ", "no unit"),
    ("4.2e1", "no unit"),
    (42, "no unit"),
    (42.0, "no unit"),
    ("42 m", "not a flow"),
    ("42 L", "not a flow"),
    ("42 kg/s", "not a flow"),
    ("42 L/s/s", "not a flow"),
    ("-5 L/s", "negative"),
    ("-0.1 m^3/h", "negative"),
    ("L/s", "number"),
    ("", "empty"),
    ("   ", "empty"),
    ("nan L/s", "number"),
    ("1e999 L/s", "finite"),
    ("42 lps", "cannot read"),
    ("forty L/s", "number"),
    (True, "expected a flow"),
    (None, "expected a flow"),
    ([42], "expected a flow"),
])
def test_bad_flows_are_plain_value_errors(value, words):
    with pytest.raises(ValueError, match=words):
        parse_flow_m3_s(value)


def test_bare_number_message_suggests_a_unit():
    with pytest.raises(ValueError, match=r'give a unit, e\.g\. "42 L/s"'):
        parse_flow_m3_s("42")


@pytest.mark.parametrize("text", [
    "42 L/s 3",      # pint alone reads 126 L/s
    "4 2 L/s",       # pint alone reads 8 L/s
    "4,2 L/s",       # a decimal comma: pint alone reads 42 L/s
    "42 L/s * 2",
    "2*3 L/s",
    "42 * L/s",
    "42 L/s 3 L/s",
    "42 L/s;",
    "42 L/s.",
    "1_000 L/s",
    "42.5.3 L/s",
])
def test_a_flow_is_one_number_followed_by_one_unit(text):
    """A second number, an operator or stray text beside the unit is refused, never
    multiplied in: a flow string is one number and one unit (common practice, no source)."""
    with pytest.raises(ValueError, match="one number followed by a unit"):
        parse_flow_m3_s(text)


@pytest.mark.parametrize("text", ["1e6 m^3/s", "100.1 m^3/s", "1e12 L/s", "9e6 ML/d"])
def test_absurd_flows_are_refused(text):
    """Above 100 m^3/s is beyond any water-supply main (the largest aqueducts carry tens
    of m^3/s, from memory): a slip of unit or exponent, refused with the limit named."""
    with pytest.raises(ValueError, match="largest flow"):
        parse_flow_m3_s(text)
