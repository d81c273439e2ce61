"""Crop presets: the packaged values of each crop, every one with its source, read by a case under its own.

A preset (``tea/inputs/presets/NAME.toml``) gives canonical values by key, each with the source it comes
from, the crop's other names and the regions where it is native or not. :class:`Preset` shows them for a
case: the harvest interval in words, a value in a unit system, the source beside a converted value.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from functools import lru_cache
from importlib import resources
from typing import Any, Mapping

from tea.core.safe_text import toml_value
from tea.inputs import schema, units

PLANTING_UNIT, PLANTING_RATE = "establishment.planting_unit", "establishment.planting_units_per_ha"
PLANTING_PRICE = "establishment.planting_unit_price"


def scaled(value: Any, factor: float) -> Any:
    """A value given in a key's spelling, in canonical units: a number or each number of a list times ``factor``."""
    if factor == 1.0 or isinstance(value, (str, bool)):
        return value
    if isinstance(value, list):
        return [v * factor for v in value]
    return value * factor


@dataclass(frozen=True)
class Preset:
    """A crop preset: canonical values by key path, each with its source."""

    name: str
    title: str
    kind: str
    values: Mapping[str, Any]
    sources: Mapping[str, str]
    aliases: tuple[str, ...] = ()
    native_regions: tuple[str, ...] = ()
    non_native_regions: tuple[str, ...] = ()
    region_sources: Mapping[str, str] = field(default_factory=dict)

    def described(self, interval_years: Any = None) -> str:
        """The preset's title with the harvest interval it is grown at: a case's own (``interval_years``), else
        the preset's. ``case.preset.described(case["harvest.interval_years"])``, or :attr:`Case.crop_words`.

        >>> load_preset("seeded_grass").described(2)
        'Seed-sown perennial grass (switchgrass type), harvested every 2 years'
        """
        n = self.values.get("harvest.interval_years", 1) if interval_years is None else interval_years
        return f"{self.title}, harvested every " + ("year" if int(n) == 1 else f"{int(n)} years")

    def source_in(self, path: str, system: str, currency: str = "") -> str:
        """The source of a preset value, read beside the value in ``system``: where the value is converted
        (a US customary case), its metric value first, the units the source's own figures are in.

        >>> load_preset("seeded_grass").source_in("yield.record_t_dm_per_ha", "us_customary")[:34]
        'metric value 35 t DM/ha/yr; Wullsc'
        """
        source = self.sources[path]
        key = schema.BY_PATH.get(path)
        value = self.values.get(path)
        if system == "metric" or key is None or not isinstance(value, (int, float)) or isinstance(value, bool) \
                or units.display_factor(key.template, system) == 1.0:
            return source
        return f"metric value {value:g} {key.unit_text('metric', currency)}; {source}"

    def values_in(self, system: str) -> dict[str, Any]:
        """The preset's values for a case in a unit system: as given, except that a US customary case counts
        planting material the preset counts in kilograms (seed) in pounds, as US seed is sold, with the rate per
        ha in pounds to match (:meth:`planting_rate_in`).

        >>> v = load_preset("seeded_grass").values_in("us_customary")
        >>> v["establishment.planting_unit"], round(v["establishment.planting_units_per_ha"], 2)
        ('lb seed', 17.64)
        """
        values = dict(self.values)
        unit = values.get(PLANTING_UNIT)
        if system == "us_customary" and isinstance(unit, str) and unit.startswith("kg "):
            values[PLANTING_UNIT] = "lb " + unit[3:]
            values[PLANTING_RATE] = self.planting_rate_in(values[PLANTING_UNIT])
        return values

    def planting_rate_in(self, unit: Any) -> Any:
        """The preset's planting material per ha counted in ``unit``: in pounds where the preset counts kilograms
        of the same material (``"kg seed"``) and ``unit`` is pounds of it (``"lb seed"``; 1 lb = 0.45359237 kg,
        NIST Handbook 44 Appendix C), else its own rate.

        >>> p = load_preset("seeded_grass")
        >>> round(p.planting_rate_in("lb seed"), 2), p.planting_rate_in("kg seed"), p.planting_rate_in("bag")
        (17.64, 8.0, 8.0)
        """
        rate, own = self.values.get(PLANTING_RATE), self.values.get(PLANTING_UNIT)
        if isinstance(rate, (int, float)) and isinstance(own, str) and own.startswith("kg ") \
                and unit == "lb " + own[3:]:
            return rate / units.KG_PER_LB
        return rate

    def non_native_in(self, region: str | None) -> bool | None:
        """Whether the crop is non-native in a region (True/False), or None where the preset does not say (no
        region given, or one its sources do not settle).

        >>> willow = load_preset("coppice")
        >>> willow.non_native_in("europe"), willow.non_native_in("northern_america"), willow.non_native_in(None)
        (False, True, None)
        """
        if region in self.non_native_regions:
            return True
        if region in self.native_regions:
            return False
        return None


def preset_names() -> list[str]:
    """Names of the packaged crop presets."""
    return sorted(p.name[:-5] for p in resources.files("tea.inputs.presets").iterdir() if p.name.endswith(".toml"))


@lru_cache(maxsize=None)
def load_preset(name: str) -> Preset:
    """Read a packaged preset. Raises KeyError naming the valid presets."""
    if name not in preset_names():
        raise KeyError(f"unknown crop preset {toml_value(name)}; valid presets: {', '.join(preset_names())}")
    text = resources.files("tea.inputs.presets").joinpath(f"{name}.toml").read_text(encoding="utf-8")
    data = tomllib.loads(text)
    head = data.pop("preset")
    values: dict[str, Any] = {}
    sources: dict[str, str] = {}
    spelled = schema.spelling_index()
    for section, table in data.items():
        for key, entry in table.items():
            found = spelled.get(section, {}).get(key)
            if found is None or not isinstance(entry, dict) or "value" not in entry or "source" not in entry:
                raise ValueError(f"preset {name}: {section}.{key} is not a schema key with value and source")
            k, factor = found
            values[k.path] = scaled(entry["value"], factor)
            sources[k.path] = entry["source"]
    regions = {what: head.get(f"{what}_regions", {"value": [], "source": ""}) for what in ("native", "non_native")}
    return Preset(name, head["title"], head["kind"], values, sources, tuple(head.get("aliases", ())),
                  tuple(regions["native"]["value"]), tuple(regions["non_native"]["value"]),
                  {"native": regions["native"]["source"], "non-native": regions["non_native"]["source"]})


def preset_for(name: str) -> str | None:
    """The preset a crop name stands for: a preset's own name, or one of its aliases (any case), else None.

    >>> preset_for("Miscanthus"), preset_for("willow"), preset_for("rhizome_grass"), preset_for("bamboo")
    ('rhizome_grass', 'coppice', 'rhizome_grass', None)
    """
    word = name.strip().lower()
    for preset in preset_names():
        if word == preset or word in (a.lower() for a in load_preset(preset).aliases):
            return preset
    return None
