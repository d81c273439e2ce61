"""The commented starter case written by ``tea new``.

Every key of the schema appears: values the case must give carry an invented
example value (and the case is marked demo until the user changes it); values
the crop preset supplies are shown commented out with the preset's value and
source; other defaults are shown commented out.
"""

from __future__ import annotations

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


def _shown(k: schema.Key, value: Any, system: str) -> tuple[str, Any]:
    """The key spelled in ``system`` and the canonical value converted to it."""
    spelling = units.spell(k.template, system)
    factor = units.spellings(k.template)[spelling]
    if isinstance(value, list) or isinstance(value, (str, bool)) or value is None:
        return spelling, value
    shown = value / factor
    if isinstance(shown, float) and factor != 1.0:
        shown = float(f"{shown:.3g}")
    return spelling, shown


def starter_case(name: str, crop: str, system: str = "metric", currency: str = "EUR") -> str:
    """TOML text of a starter case for a crop preset, every key documented."""
    preset = load_preset(crop)
    examples = dict(EXAMPLES)
    examples["establishment.planting_unit_price"] = UNIT_PRICE_EXAMPLE.get(preset.kind, 0.1)
    if preset.kind == "coppice":
        examples.update(COPPICE_EXAMPLES)
    lines = [
        f"# Starter case for `tea`, crop preset {crop}: {preset.title}.",
        "# Keys without '#' need your values: the numbers there are invented examples.",
        "# Keys behind '#' show the preset's or the default value; remove the '#' to change one.",
        "# Units are in the key names; the README's case-file reference lists every key.",
        "# `tea check` this file after editing; set demo = false once the numbers are yours.",
        "",
    ]
    for section in schema.SECTIONS:
        lines.append(f"[{section}]")
        for k in schema.keys_in(section):
            unit = k.unit_text(system, currency)
            doc = f"{k.doc}" + (f" [{unit}]" if unit else "") + (f" One of: {', '.join(k.choices)}." if k.choices else "")
            if k.path == "case.name":
                value, active = name, True
            elif k.path == "case.currency":
                value, active = currency, True
            elif k.path == "case.units":
                value, active = system, True
            elif k.path == "case.demo":
                value, active = True, True
            elif k.path == "crop.preset":
                value, active = crop, True
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
            spelling, shown = _shown(k, value, system)
            lines.append(f"# {doc}")
            if value is None:
                lines.append(f"# {spelling} = ...")
            else:
                lines.append(("" if active else "# ") + f"{spelling} = {_toml(shown)}")
        lines.append("")
    return "\n".join(lines)
