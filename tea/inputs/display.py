"""Showing numbers as people read them, in the case's own units and currency.

The engine works per hectare in tonnes; a US-customary case is shown per acre in
short tons (carbon stays in metric tonnes of C and CO2e, as carbon markets
trade it). Money gets thousands separators, sensible rounding and a minus sign
that cannot be missed.
"""

from __future__ import annotations

import math

from tea.inputs.units import HA_PER_ACRE, T_PER_SHORT_TON

_CARBON_UNITS = ("t C", "t CO2e", "kg CO2e")


def convert(value: float | None, unit: str, system: str) -> tuple[float | None, str]:
    """A canonical value and unit as shown in a unit system.

    ``unit`` is a canonical unit string such as ``"money/ha"``, ``"t DM/ha/yr"``,
    ``"t C/ha"`` or ``"money/t DM"``.

    >>> v, u = convert(10.0, "t DM/ha", "us_customary")
    >>> round(v, 4), u
    (4.4609, 'short ton DM/acre')
    >>> convert(100.0, "money/ha", "metric")
    (100.0, 'money/ha')
    """
    if system == "metric" or value is None:
        return value, unit
    parts = unit.split("/")
    head, rest = parts[0], parts[1:]
    factor = 1.0
    if head.startswith("t ") and not head.startswith(_CARBON_UNITS) or head == "t":
        head = head.replace("t", "short ton", 1)
        factor /= T_PER_SHORT_TON
    new_rest = []
    for part in rest:
        if part == "ha":
            factor *= HA_PER_ACRE
            new_rest.append("acre")
        elif part.startswith("t ") or part == "t":
            factor *= T_PER_SHORT_TON
            new_rest.append(part.replace("t", "short ton", 1))
        else:
            new_rest.append(part)
    return value * factor, "/".join([head, *new_rest])


def area(value_ha: float, system: str) -> tuple[float, str]:
    """An area in the system's unit."""
    if system == "metric":
        return value_ha, "ha"
    return value_ha / HA_PER_ACRE, "acres"


def money(value: float | None, currency: str = "", digits: int | None = None) -> str:
    """Money with thousands separators; negatives as ``-1,234``; None as an en dash.

    >>> money(-1234.6, "EUR")
    '-1,235 EUR'
    >>> money(12.345, "USD")
    '12.35 USD'
    """
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "–"
    if digits is None:
        digits = 0 if abs(value) >= 100 else 2
    text = f"{value:,.{digits}f}"
    if text.startswith("-") and float(text.replace(",", "")) == 0:
        text = text[1:]
    return f"{text} {currency}".strip()


def number(value: float | None, digits: int | None = None) -> str:
    """A plain quantity, rounded to about three significant figures.

    >>> number(1234.567), number(12.3456), number(0.012345)
    ('1,235', '12.3', '0.0123')
    """
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "–"
    if digits is None:
        a = abs(value)
        digits = 0 if a >= 100 or a == 0 else min(6, 2 - math.floor(math.log10(a)))
    return f"{value:,.{digits}f}"


def percent(value: float | None, digits: int = 1) -> str:
    """A fraction as a percentage.

    >>> percent(0.0725)
    '7.3 %'
    """
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "–"
    return f"{100 * value:.{digits}f} %"


def unit_text(unit: str, currency: str, price_unit: str = "t DM") -> str:
    """A unit string with ``money`` replaced by the currency."""
    return unit.replace("money", currency).replace("price unit", price_unit)
