"""The commented starter case written by ``tea new``.

Every key of the schema appears: values the case must give carry an invented
example value (and the case is marked demo until the user changes it); values
the crop preset supplies are shown commented out with the preset's value and
source; other defaults are shown commented out.
"""

from __future__ import annotations

import re

from typing import Any

from tea.inputs import schema, units
from tea.inputs.case import load_preset

#: invented example values for the keys a case must give, canonical units
#: (money per ha or per t in no particular currency); never check values
EXAMPLES: dict[str, Any] = {
    "case.currency": None,  # from the command line
    "field.area_ha": 10.0,
    "field.climate": "cool_temperate_moist",
    "field.soil": "high_activity_clay",
    "establishment.site_preparation_per_ha": 200.0,
    "establishment.weed_control_per_ha": 100.0,
    "establishment.planting_operation_per_ha": 300.0,
    "establishment.fertiliser_per_ha": 60.0,
    "costs.harvest_per_ha": 110.0,
    "costs.baling_chipping_per_t_dm": 15.0,
    "costs.haul_distance_km": 30.0,
    "costs.haul_per_t_km": 0.12,
    "costs.removal_per_ha": 300.0,
    "nutrients.n_price_per_kg": 1.1,
    "nutrients.p2o5_price_per_kg": 0.95,
    "nutrients.k2o_price_per_kg": 0.7,
    "revenue.price_per_t_dm": 95.0,
    "finance.discount_rate": 0.06,
}
#: example values shown (commented out) for optional keys that have no default
OPTIONAL_EXAMPLES: dict[str, Any] = {
    "yield.fresh_moisture": 0.5,
    "revenue.price_per_gj": 6.5,
    "revenue.price_path": [1.0, 1.0, 0.95],
    "finance.mirr_finance_rate": 0.06,
    "finance.mirr_reinvest_rate": 0.06,
    "loan.rate": 0.055,
}
UNIT_PRICE_EXAMPLE = {"rhizome_grass": 0.11, "seeded_grass": 20.0, "coppice": 0.085}
COPPICE_EXAMPLES = {"costs.harvest_per_ha": 420.0, "costs.removal_per_ha": 800.0}
#: the same invented examples for a US customary starter, as round numbers in US units (per acre, short ton,
#: mile, lb): never converted from the metric ones, so the file reads as a US case would be written
US_EXAMPLES: dict[str, Any] = {
    "field.area_ha": 25.0,
    "establishment.site_preparation_per_ha": 80.0,
    "establishment.weed_control_per_ha": 40.0,
    "establishment.planting_operation_per_ha": 120.0,
    "establishment.fertiliser_per_ha": 25.0,
    "costs.harvest_per_ha": 45.0,
    "costs.baling_chipping_per_t_dm": 14.0,
    "costs.haul_distance_km": 20.0,
    "costs.haul_per_t_km": 0.2,
    "costs.removal_per_ha": 120.0,
    "nutrients.n_price_per_kg": 0.5,
    "nutrients.p2o5_price_per_kg": 0.45,
    "nutrients.k2o_price_per_kg": 0.3,
    "revenue.price_per_t_dm": 85.0,
}
US_COPPICE_EXAMPLES = {"costs.harvest_per_ha": 170.0, "costs.removal_per_ha": 320.0}
#: metric words in key descriptions and their US customary words
#: (whole words only: "per ha" is not the start of "per harvest"; the amount of planting material stays in the
#: preset's own unit, e.g. kg of seed, per acre)
US_WORDS = (("100 t DM/ha", "45 short ton DM/acre"), ("per ha", "per acre"), ("t DM/ha", "short ton DM/acre"),
            ("per t", "per short ton"), ("_t_per_ha", "_short_ton_per_acre"))


def _in_words_of(doc: str, system: str) -> str:
    """A key's description in the words of a unit system (the schema writes metric).

    >>> _in_words_of("Cutting, per harvest; fuel per ha; price per t DM.", "us_customary")
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


def _toml(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, list):
        return "[" + ", ".join(_toml(v) for v in value) + "]"
    if isinstance(value, float):
        return f"{value:.6g}" if "e" not in f"{value:.6g}" else repr(value)
    return str(value)


def _shown(k: schema.Key, value: Any, system: str, given_in_system: bool = False,
           precise: bool = False) -> tuple[str, Any]:
    """The key spelled in ``system`` and the canonical value converted to it (``given_in_system``: already is;
    ``precise``: a value carried from a case, kept to 9 significant digits rather than rounded for an example)."""
    spelling = units.spell(k.template, system)
    if given_in_system:
        return spelling, value
    factor = units.spellings(k.template)[spelling]
    if isinstance(value, list) or isinstance(value, (str, bool)) or value is None:
        return spelling, value
    shown = value / factor
    if isinstance(shown, float) and factor != 1.0:
        shown = float(f"{shown:.9g}" if precise else f"{shown:.3g}")
    return spelling, shown


#: what belongs to the crop, not to the field or the deal: not copied by ``tea new --from``
CROP_KEYS = ("crop.", "establishment.planting_", "establishment.failure_probability", "establishment.replant_share",
             "yield.", "harvest.", "nutrients.n_", "nutrients.p2o5_autumn", "nutrients.p2o5_late", "nutrients.p2o5_re",
             "nutrients.k2o_autumn", "nutrients.k2o_late", "nutrients.k2o_re", "costs.harvest_per_ha",
             "costs.baling_chipping_per_t_dm", "costs.removal_per_ha", "revenue.heating_value_gj_per_t_dm",
             "carbon.crop_", "carbon.diesel_establishment", "carbon.diesel_harvest", "carbon.diesel_l_per",
             "carbon.diesel_removal", "finance.stand_life_years")
#: ... except these, which describe the field or the deal
FIELD_KEYS = ("yield.site_factor", "nutrients.n_price_per_kg")


def _copied(path: str) -> bool:
    return path in FIELD_KEYS or not path.startswith(CROP_KEYS)


def starter_case(name: str, crop: str, system: str = "metric", currency: str = "EUR", base=None,
                 crop_name: str | None = None) -> str:
    """TOML text of a starter case for a crop preset, every key documented.

    ``base`` (a :class:`tea.inputs.case.Case`): start from that case's field and
    deal (every value it gives that is not about the crop), for another crop on
    the same field; ``system`` and ``currency`` are then the base case's.
    ``crop_name``: what the crop is called (e.g. ``"willow"`` for the coppice
    preset), written as ``crop.name``.
    """
    preset = load_preset(crop)
    examples = dict(EXAMPLES)
    examples["establishment.planting_unit_price"] = UNIT_PRICE_EXAMPLE.get(preset.kind, 0.1)
    if preset.kind == "coppice":
        examples.update(COPPICE_EXAMPLES)
    in_us = set()
    if system == "us_customary":
        us = dict(US_EXAMPLES, **(US_COPPICE_EXAMPLES if preset.kind == "coppice" else {}))
        examples.update(us)
        in_us = set(us)
    carried: dict[str, Any] = {}
    if base is not None:
        carried = {p: v for p, v in base.values.items() if base.origin.get(p) == "case" and "." in p and _copied(p)}
        carried.pop("case.name", None)
        carried["case.notes"] = f"The field and deal of {base.name}, with {crop_name or crop.replace('_', ' ')}."
    yield_doc: int | None = None  # the line describing the mature yield
    lines = [
        f"# Starter case for `tea`, crop preset {crop}: {preset.title}.",
        *([f"# The field and the deal come from {base.source} ({base.name}); the crop's values are the preset's",
           "# and invented examples: check them (planting material, harvest and removal costs, the price)."]
          if base is not None else []),
        "# Keys without '#' need your values: the numbers there are invented examples.",
        "# Keys behind '#' show the preset's or the default value; remove the '#' to change one.",
        "# Units are in the key names; the README's case-file reference lists every key.",
        "# `tea check` this file after editing; set demo = false once the numbers are yours.",
        "",
    ]
    for section in schema.SECTIONS:
        if section == "schedule":  # laid out from [[operations]]: shown as one commented example
            lines += ["# Operations in given years (a cut-back, weed control, lime every few years): one",
                      "# [[operations]] table each, with year = N, years = [..] or every = N (with from = N),",
                      "# and the cost, diesel, N or lime of each. The README explains them.",
                      "# [[operations]]", '# name = "lime"', "# every = 5", "# from = 5",
                      f"# {units.spell('cost_per_{ha}', system)} = 65.0", ""]
            continue
        lines.append(f"[{section}]")
        for k in schema.keys_in(section):
            unit = k.unit_text(system, currency)
            doc = f"{_in_words_of(k.doc, system)}" + (f" [{unit}]" if unit else "") + \
                (f" One of: {', '.join(k.choices)}." if k.choices else "")
            if k.path == "case.name":
                value, active = name, True
            elif k.path in carried:
                value, active = carried[k.path], True
                spelling, shown = _shown(k, value, system, precise=True)
                lines.append(f"# {doc}")
                lines.append(f"{spelling} = {_toml(shown)}")
                continue
            elif k.path == "case.currency":
                value, active = currency, True
            elif k.path == "case.units":
                value, active = system, True
            elif k.path == "case.demo":
                value, active = True, True
            elif k.path == "crop.preset":
                value, active = crop, True
            elif k.path == "crop.name" and crop_name:
                value, active = crop_name, True
            elif k.default is schema.REQUIRED or k.path in examples:
                value, active = examples.get(k.path), True
            elif k.path in preset.values:
                value, active = preset.values[k.path], False
                doc += f" Preset: {preset.sources[k.path]}."
            elif k.default in (schema.DERIVED, schema.PRESET) or k.default is None:
                value, active = OPTIONAL_EXAMPLES.get(k.path), False
                if k.default is schema.DERIVED:
                    doc += f" Looked up if left out ({k.source})."
                elif value is not None:
                    doc += " Not used unless given; the value shown is an example."
            else:
                value, active = k.default, False
            spelling, shown = _shown(k, value, system, k.path in in_us and active)
            if k.path == MATURE_YIELD:
                yield_doc = len(lines)
            lines.append(f"# {doc}")
            if value is None:
                lines.append(f"# {spelling} = ...")
            else:
                lines.append(("" if active else "# ") + f"{spelling} = {_toml(shown)}")
        lines.append("")
    estimate = _estimated_yield("\n".join(lines), system)
    if estimate is not None and yield_doc is not None:
        lines[yield_doc] += (f" Not used as shown: this case's [site_climate] gives an estimate of {estimate} with "
                             "this crop's light-use parameters (`tea yield` shows how); remove the '#' and give "
                             "your own to use it instead.")
    return "\n".join(lines)


MATURE_YIELD = "yield.mature_t_dm_per_ha"


def _estimated_yield(text: str, system: str) -> str | None:
    """The mature yield a starter's case takes from its site climate, as shown (e.g. ``"20.8 t DM/ha"``), or
    None when the case gives it, has no site climate or does not load yet."""
    from tea.core.errors import CaseError
    from tea.inputs.case import load_text

    try:
        case = load_text(text, source="starter")
    except CaseError:
        return None
    if case.origin.get(MATURE_YIELD) != "estimated":
        return None
    us = system == "us_customary"
    f = units.display_factor("mature_{t}_dm_per_{ha}", "us_customary") if us else 1.0
    return f"{case[MATURE_YIELD] * f:.3g} {'short ton DM/acre' if us else 't DM/ha'}"
