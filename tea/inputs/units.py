"""Units of measure: the exact definitions `tea` converts with, and key spellings.

Canonical internal units are ha, t (tonne, 1000 kg), kg, km, litre, GJ and the
case's one currency. A case key carries its unit in its name, written with
*slots*: ``mature_{t}_dm_per_{ha}`` is spelled ``mature_t_dm_per_ha`` in metric
units or ``mature_short_ton_dm_per_acre`` in US customary units (any mix of the
two is accepted). A slot before the first ``_per_`` is a numerator, after it a
denominator, which fixes the conversion factor.

References
----------
.. [1] NIST Handbook 44 (2024), Appendix C, "General Tables of Units of
   Measurement": 1 acre = 4046.8564224 m² (international foot basis), 1 short
   ton = 2000 lb, 1 lb = 0.45359237 kg, 1 mile = 1.609344 km, 1 US gallon =
   231 in³ = 3.785411784 L.
"""

from __future__ import annotations

import itertools
import re
from typing import Any

#: exact legal definitions [canonical unit per unit]
HA_PER_ACRE = 0.40468564224
T_PER_SHORT_TON = 0.90718474
KG_PER_LB = 0.45359237
KM_PER_MILE = 1.609344
L_PER_US_GALLON = 3.785411784
#: 1 kg m⁻² = 1000 kg / 1000 m² ... i.e. 10 t ha⁻¹ (10,000 m² per ha, 1,000 kg per t)
T_PER_HA_PER_KG_PER_M2 = 10.0

#: slot -> {spelling: size in canonical units}; the first spelling is canonical
SLOTS: dict[str, dict[str, float]] = {
    "ha": {"ha": 1.0, "acre": HA_PER_ACRE},
    "t": {"t": 1.0, "short_ton": T_PER_SHORT_TON},
    "kg": {"kg": 1.0, "lb": KG_PER_LB},
    "km": {"km": 1.0, "mile": KM_PER_MILE},
    "l": {"l": 1.0, "gal": L_PER_US_GALLON},
}

#: the spelling of each slot in each unit system a case may choose for display
SYSTEMS: dict[str, dict[str, str]] = {
    "metric": {"ha": "ha", "t": "t", "kg": "kg", "km": "km", "l": "l"},
    "us_customary": {"ha": "acre", "t": "short_ton", "kg": "lb", "km": "mile", "l": "gal"},
}

_SLOT_RE = re.compile(r"\{(\w+)\}")


def slots_of(template: str) -> list[tuple[str, int]]:
    """The slots of a key template with their exponent (+1 numerator, -1 denominator).

    >>> slots_of("haul_per_{t}_{km}")
    [('t', -1), ('km', -1)]
    >>> slots_of("n_autumn_{kg}_per_{t}_dm")
    [('kg', 1), ('t', -1)]
    """
    per = template.find("_per_")
    out = []
    for m in _SLOT_RE.finditer(template):
        exponent = -1 if (per >= 0 and m.start() > per) else 1
        out.append((m.group(1), exponent))
    return out


#: what a mass slot weighs, from the word after it in a key: ``{t}_dm`` is t of dry matter
_SUBSTANCES = {"dm": "DM", "c": "C", "co2e": "CO2e"}


def slots_with_substance(template: str) -> list[tuple[str, int, str]]:
    """The slots of a template with their exponent and what they measure (``DM``, ``C``, ``CO2e`` or "").

    >>> slots_with_substance("n_autumn_{kg}_per_{t}_dm")
    [('kg', 1, ''), ('t', -1, 'DM')]
    """
    out = []
    for (name, exponent), m in zip(slots_of(template), _SLOT_RE.finditer(template)):
        after = template[m.end():].lstrip("_").split("_", 1)[0]
        out.append((name, exponent, _SUBSTANCES.get(after, "")))
    return out


def spell(template: str, system: str | dict[str, str] = "metric") -> str:
    """A key template spelled in one unit system.

    >>> spell("mature_{t}_dm_per_{ha}", "us_customary")
    'mature_short_ton_dm_per_acre'
    """
    choice = SYSTEMS[system] if isinstance(system, str) else system
    return _SLOT_RE.sub(lambda m: choice[m.group(1)], template)


def spellings(template: str) -> dict[str, float]:
    """Every accepted spelling of a key template -> factor to canonical units.

    The value given under a spelling is multiplied by the factor to give the
    canonical value.

    >>> round(spellings("area_{ha}")["area_acre"], 11)
    0.40468564224
    >>> round(spellings("rent_per_{ha}")["rent_per_acre"], 6)
    2.471054

    A slot that appears twice is spelled the same both times, so a ratio of
    like units stays a pure number:

    >>> spellings("n_manufacture_{kg}_co2e_per_{kg}")
    {'n_manufacture_kg_co2e_per_kg': 1.0, 'n_manufacture_lb_co2e_per_lb': 1.0}
    """
    slots = slots_of(template)
    names = list(dict.fromkeys(n for n, _ in slots))  # each distinct slot once
    out: dict[str, float] = {}
    for combo in itertools.product(*(list(SLOTS[n].items()) for n in names)):
        choice = dict(zip(names, (spelling for spelling, _ in combo)))
        size = dict(zip(names, (s for _, s in combo)))
        factor = 1.0
        for n, e in slots:
            factor *= size[n] ** e
        out[spell(template, choice)] = factor
    if not names:
        out[template] = 1.0
    return out


def in_spelling(template: str, spelling: str, value: Any) -> Any:
    """A canonical value as the key spelled ``spelling`` (one of :func:`spellings`) takes it: a number, or
    each number of a list, divided by the spelling's size; anything else (text, a flag, a table) as it is.

    >>> round(in_spelling("rent_per_{ha}", "rent_per_acre", 247.1054), 6)
    100.0
    >>> [round(x, 4) for x in in_spelling("yield_{t}_dm_per_{ha}", "yield_short_ton_dm_per_acre", [0.0, 10.0])]
    [0.0, 4.4609]
    >>> in_spelling("rent_per_{ha}", "rent_per_acre", "your USD value")
    'your USD value'
    """
    factor = spellings(template)[spelling]
    if factor == 1.0:
        return value
    if isinstance(value, (int, float)) and not isinstance(value, bool):
        return value / factor
    if isinstance(value, list):
        return [x / factor if isinstance(x, (int, float)) and not isinstance(x, bool) else x for x in value]
    return value


def in_system(template: str, value: Any, system: str, digits: int | None = None) -> tuple[str, Any]:
    """A key's spelling in ``system`` and a canonical value as that key takes it (:func:`in_spelling`); with
    ``digits``, a converted number (or each of a list) rounded to that many significant digits, as an
    example value is shown.

    >>> spelled, value = in_system("mature_{t}_dm_per_{ha}", 10.0, "us_customary")
    >>> spelled, round(value, 4)
    ('mature_short_ton_dm_per_acre', 4.4609)
    >>> in_system("mature_{t}_dm_per_{ha}", [10.0, 20.0], "us_customary", digits=3)
    ('mature_short_ton_dm_per_acre', [4.46, 8.92])
    >>> in_system("mature_{t}_dm_per_{ha}", 10.0, "metric", digits=3)
    ('mature_t_dm_per_ha', 10.0)
    """
    spelling = spell(template, system)
    shown = in_spelling(template, spelling, value)
    if digits is None or shown is value:
        return spelling, shown

    def rounded(x: Any) -> Any:
        return float(f"{x:.{digits}g}") if isinstance(x, float) else x

    return spelling, [rounded(x) for x in shown] if isinstance(shown, list) else rounded(shown)


def display_factor(template: str, system: str) -> float:
    """Factor turning a canonical value into the value shown in ``system``.

    >>> round(display_factor("yield_{t}_dm_per_{ha}", "us_customary"), 6)
    0.44609
    """
    return 1.0 / spellings(template)[spell(template, system)]


def unit_label(template: str, system: str) -> str:
    """A short human unit label for a template's slots, e.g. ``short ton/acre``."""
    num, den = [], []
    for name, e in slots_of(template):
        word = SYSTEMS[system][name].replace("_", " ")
        (num if e > 0 else den).append(word)
    text = " ".join(num) if num else ""
    if den:
        text = (text or "1") + "/" + "/".join(den)
    return text


#: metric words in key descriptions and their US customary words
#: (whole words only: "per ha" is not the start of "per harvest")
US_WORDS = (("100 t DM/ha", "45 short ton DM/acre"), ("per ha", "per acre"), ("t DM/ha", "short ton DM/acre"),
            ("per t", "per short ton"), ("_t_per_ha", "_short_ton_per_acre"))


def in_words_of(doc: str, system: str) -> str:
    """A key's description in the words of a unit system (the schema writes metric).

    >>> in_words_of("Cutting, per harvest; fuel per ha; price per t DM.", "us_customary")
    'Cutting, per harvest; fuel per acre; price per short ton DM.'
    """
    if system == "metric":
        return doc
    for metric, us in US_WORDS:
        if metric.startswith("_"):  # a part of a key's name
            doc = doc.replace(metric, us)
        else:
            doc = re.sub(rf"(?<![A-Za-z0-9_]){re.escape(metric)}(?![A-Za-z0-9])", us, doc)
    return doc
