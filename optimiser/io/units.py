"""Quantities with units, parsed with pint: flows such as "42 L/s", "150 m^3/h", "3.6 ML/d"."""

from __future__ import annotations

import math
import re
from functools import lru_cache

import pint

_NUMBER = r"[-+]?(\d+\.?\d*|\.\d+)([eE][-+]?\d+)?"
_BARE_NUMBER = re.compile(rf"^\s*{_NUMBER}\s*$")
_LEADING_NUMBER = re.compile(rf"^\s*{_NUMBER}")
# "m3/s", "m3/h": the trade's way of writing cubic metres, which pint does not read.
_CUBIC_METRE = re.compile(r"(?<![A-Za-z])([cdk]?m)3(?![0-9^])")
# Numbers a unit may hold: exponents ("m^3", "s**-1", "m^1.5") and digits written on a
# unit's name ("m3"). Any other digit after the leading number is a second number.
_EXPONENT = re.compile(r"(\^|\*\*)\s*[-+]?\d+(\.\d+)?|(?<=[A-Za-z])\d+")
MAX_FLOW_M3_S = 100.0
"""The largest flow accepted [m^3/s]: a few times the largest water-supply aqueducts
(tens of m^3/s, from memory), so a slip of unit or exponent is caught."""


@lru_cache(maxsize=1)
def _registry() -> pint.UnitRegistry:
    registry = pint.UnitRegistry()
    return registry


def parse_flow_m3_s(text: object) -> float:
    """Volumetric flow [m^3/s] from a string with a unit.

    The string is one number (decimal point, optional exponent) followed by one unit
    that pint reads ("42 L/s", "150 m^3/h", "3.6 ML/d"); "m3" is read as "m^3"
    ("150 m3/h"). Raises ValueError with a plain message: a bare number ("give a unit"),
    no number, a second number or other text beside the unit ("42 L/s 3", "4 2 L/s"),
    a unit that is not a flow, an unparsable string, a flow that is not finite, a
    negative flow, or a flow above :data:`MAX_FLOW_M3_S`.
    """
    if isinstance(text, bool) or not isinstance(text, str | int | float):
        raise ValueError(f"expected a flow such as \"42 L/s\", got {text!r}")
    if not isinstance(text, str):
        raise ValueError(f"{text!r} has no unit: give a unit, e.g. \"{text} L/s\"")
    if not text.strip():
        raise ValueError("the flow is empty: give a number and a unit, e.g. \"42 L/s\"")
    if _BARE_NUMBER.match(text):
        raise ValueError(f"\"{text}\" has no unit: give a unit, e.g. \"{text.strip()} L/s\"")
    if not _LEADING_NUMBER.match(text):
        raise ValueError(f"\"{text}\" does not start with a number: give a number and a "
                         "unit, e.g. \"42 L/s\"")
    number_text, unit_text = _split_number_and_unit(text)
    registry = _registry()
    unit = _parse_unit(registry, text, unit_text)
    if unit.dimensionality != registry.parse_units("m^3/s").dimensionality:
        raise ValueError(
            f"\"{text}\" is not a flow (its unit is {unit:~}); give a volume per "
            "time such as L/s, m^3/h or ML/d"
        )
    magnitude = float(number_text)
    if not math.isfinite(magnitude):
        raise ValueError(f"\"{text}\" is not a finite number")
    value = float(registry.Quantity(magnitude, unit).to("m^3/s").magnitude)
    if not math.isfinite(value):
        raise ValueError(f"\"{text}\" is not a finite number")
    if value < 0:
        raise ValueError(f"\"{text}\" is negative; flows are given as positive numbers")
    if value > MAX_FLOW_M3_S:
        raise ValueError(f"\"{text}\" is {value:.4g} m^3/s, above the largest flow this "
                         f"tool accepts ({MAX_FLOW_M3_S:g} m^3/s); check the number and "
                         "its unit")
    return value


def _split_number_and_unit(text: str) -> tuple[str, str]:
    """The leading number and the rest of a flow string, both stripped."""
    match = _LEADING_NUMBER.match(text)
    assert match is not None  # the caller has checked that the text starts with a number
    return match.group(0).strip(), text[match.end():].strip()


def _parse_unit(registry: pint.UnitRegistry, text: str, unit_text: str) -> pint.Unit:
    """The unit after the number, strictly: a unit expression with no number of its own.

    pint would read "42 L/s 3" as 42 x 3 L/s and "4 2 L/s" as 4 x 2 L/s; a flow is one
    number followed by one unit, so any other number outside an exponent is an error.
    """
    if not unit_text:
        raise ValueError(f"\"{text}\" has no unit: give a unit, e.g. \"{text.strip()} L/s\"")
    rest = _EXPONENT.sub("", unit_text)
    if re.search(r"\d|[^\w\s/*()]", rest) or unit_text[0] in "*/":
        raise ValueError(f"\"{text}\" is not one number followed by a unit: write it as, "
                         "e.g., \"42 L/s\" (use a decimal point, no spaces or commas "
                         "inside the number, and nothing after the unit)")
    try:
        unit = registry.parse_units(_CUBIC_METRE.sub(r"\1^3", unit_text))
    except Exception as error:  # pint raises several types for bad strings
        raise ValueError(f"cannot read the flow \"{text}\" ({error})") from None
    return unit
