"""Numbers as an engineer writes them on a report: costs to the unit with thousands
separators, lengths to 0.1 m, heads to 0.01 m, velocities to 0.01 m/s, gaps as a
percentage. The same precisions are the workbook's number formats (``EXCEL_FORMATS``).
"""

from __future__ import annotations

import math

EXCEL_FORMATS = {
    "money": "#,##0",
    "length": "#,##0.0",
    "head": "#,##0.00",
    "velocity": "0.00",
    "flow": "#,##0.00",
    "dn": "0",
    "count": "0",
    "percent": "0.000%",
    "factor": "0.00",
}
"""openpyxl number format by kind of quantity."""


def _missing(value: float | None) -> bool:
    return value is None or (isinstance(value, float) and math.isnan(value))


def money(value: float | None, currency: str = "") -> str:
    """``3,814,317 USD``; a dash when there is no value."""
    if _missing(value):
        return "–"
    return f"{value:,.0f} {currency}".strip()


def length(value: float | None) -> str:
    """A length [m] to 0.1 m: ``22,012.3``."""
    return "–" if _missing(value) else f"{value:,.1f}"


def head(value: float | None) -> str:
    """A level or head [m] to 0.01 m: ``842.00``."""
    return "–" if _missing(value) else f"{value:,.2f}"


def velocity(value: float | None) -> str:
    """A velocity [m/s] to 0.01 m/s."""
    return "–" if _missing(value) else f"{value:.2f}"


def flow_l_s(value_m3_s: float | None) -> str:
    """A flow given in m³/s, written in L/s to 0.01 L/s."""
    return "–" if _missing(value_m3_s) else f"{value_m3_s * 1000:,.2f}"


def percent(fraction: float | None, digits: int = 3) -> str:
    """A fraction as a percentage: 0.00056 -> ``0.056 %``."""
    return "–" if _missing(fraction) else f"{fraction * 100:.{digits}f} %"


def dn(value: float) -> str:
    """A nominal size without a needless decimal: 150.0 -> ``150``."""
    return f"{value:g}"


def chainage_label(chainage_m: float) -> str:
    """Chainage in the trade's km+m notation: 12345.6 -> '12+345.6'."""
    kilometres = int(chainage_m // 1000)
    metres = chainage_m - 1000 * kilometres
    return f"{kilometres}+{metres:05.1f}"
