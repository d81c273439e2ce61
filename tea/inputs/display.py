"""Showing numbers as people read them, in the case's own units and currency.

The engine works per hectare in tonnes; a US-customary case is shown per acre in
short tons, carbon included (short tons of C and CO2e; kilograms as pounds),
with energy in GJ and, beside it, MMBtu. Money gets thousands separators,
sensible rounding and a minus sign that cannot be missed.
"""

from __future__ import annotations

import math

from tea.inputs.units import HA_PER_ACRE, KG_PER_LB, KM_PER_MILE, L_PER_US_GALLON, T_PER_SHORT_TON

#: a metric unit of a canonical unit string -> its US customary unit and size [metric units per US unit]
_US_FORMS = {"t": ("short ton", T_PER_SHORT_TON), "kg": ("lb", KG_PER_LB), "ha": ("acre", HA_PER_ACRE),
             "l": ("gal", L_PER_US_GALLON), "km": ("mile", KM_PER_MILE)}

#: GJ per million British thermal units (International Table Btu = 1055.05585262 J; NIST SP 811, 2008, B.8)
GJ_PER_MMBTU = 1.05505585262


def convert(value: float | None, unit: str, system: str) -> tuple[float | None, str]:
    """A canonical value and unit as shown in a unit system.

    ``unit`` is a canonical unit string such as ``"money/ha"``, ``"t DM/ha/yr"``,
    ``"t C/ha"`` or ``"money/t DM"``.

    >>> v, u = convert(10.0, "t DM/ha", "us_customary")
    >>> round(v, 4), u
    (4.4609, 'short ton DM/acre')
    >>> v, u = convert(1.0, "t C/ha", "us_customary")
    >>> round(v, 4), u
    (0.4461, 'short ton C/acre')
    >>> v, u = convert(100.0, "l/ha", "us_customary")
    >>> round(v, 4), u
    (10.6907, 'gal/acre')
    >>> convert(100.0, "money/ha", "metric")
    (100.0, 'money/ha')
    """
    if system == "metric" or value is None:
        return value, unit
    head, *rest = unit.split("/")
    factor = 1.0
    for metric, (us, size) in _US_FORMS.items():  # the amount: t -> short ton, litres -> gallons, ...
        if head == metric or head.startswith(metric + " "):
            head, factor = us + head[len(metric):], factor / size
            break
    new_rest = []
    for part in rest:  # per ha -> per acre, per t DM -> per short ton DM, ...
        for metric, (us, size) in _US_FORMS.items():
            if part == metric or part.startswith(metric + " "):
                part, factor = us + part[len(metric):], factor * size
                break
        new_rest.append(part)
    return value * factor, "/".join([head, *new_rest])


def mmbtu(value_gj: float | None) -> float | None:
    """An energy amount in GJ as MMBtu.

    >>> round(mmbtu(1055.05585262), 6)
    1000.0
    """
    return None if value_gj is None else value_gj / GJ_PER_MMBTU


def in_mmbtu(value: float, unit: str) -> tuple[float, str]:
    """The same amount with GJ as MMBtu (GJ in the numerator or in a denominator).

    >>> v, u = in_mmbtu(10.0, "money/GJ")
    >>> round(v, 4), u
    (10.5506, 'money/MMBtu')
    """
    parts = unit.split("/")
    if parts[0].startswith("GJ"):
        value, parts[0] = value / GJ_PER_MMBTU, parts[0].replace("GJ", "MMBtu", 1)
    for i in range(1, len(parts)):
        if parts[i] == "GJ":
            value, parts[i] = value * GJ_PER_MMBTU, "MMBtu"
    return value, "/".join(parts)


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

    >>> number(1234.567), number(12.3456), number(0.012345), number(-0.0)
    ('1,235', '12.3', '0.0123', '0')
    """
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return "–"
    if digits is None:
        a = abs(value)
        digits = 0 if a >= 100 or a == 0 else min(6, 2 - math.floor(math.log10(a)))
    text = f"{value:,.{digits}f}"
    return text[1:] if text.startswith("-") and not text.strip("-0.,") else text  # no "-0": a zero has no sign


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


def before_site_factor(factor: float) -> str:
    """What a mature yield given in a case is, said beside it: "before site factor 0.85" ("" at 1).

    >>> before_site_factor(0.85), before_site_factor(1.0)
    ('before site factor 0.85', '')
    """
    return f"before site factor {factor:g}" if factor != 1 else ""
