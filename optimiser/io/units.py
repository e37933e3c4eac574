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


@lru_cache(maxsize=1)
def _registry() -> pint.UnitRegistry:
    registry = pint.UnitRegistry()
    return registry


def parse_flow_m3_s(text: object) -> float:
    """Volumetric flow [m^3/s] from a string with a unit.

    "m3" is read as "m^3" ("150 m3/h"). Raises ValueError with a plain message: a bare
    number ("give a unit"), no number, a unit that is not a flow, an unparsable string,
    a flow that is not finite, or a negative flow.
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
    registry = _registry()
    try:
        quantity = registry.Quantity(_CUBIC_METRE.sub(r"\1^3", text))
    except Exception as error:  # pint raises several types for bad strings
        raise ValueError(f"cannot read the flow \"{text}\" ({error})") from None
    if not isinstance(quantity, pint.Quantity) or quantity.dimensionless:
        raise ValueError(f"\"{text}\" has no unit: give a unit, e.g. \"42 L/s\"")
    if quantity.dimensionality != registry.Quantity("1 m^3/s").dimensionality:
        raise ValueError(
            f"\"{text}\" is not a flow (its unit is {quantity.units:~}); give a volume per "
            "time such as L/s, m^3/h or ML/d"
        )
    value = float(quantity.to("m^3/s").magnitude)
    if not math.isfinite(value):
        raise ValueError(f"\"{text}\" is not a finite number")
    if value < 0:
        raise ValueError(f"\"{text}\" is negative; flows are given as positive numbers")
    return value
