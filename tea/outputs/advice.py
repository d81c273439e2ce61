"""What the grower's page says about its inputs: sources a grower can trust, warnings in plain words.

The terminal keeps the technical form (file, key, value, expected range); the
page says what is unusual and why it matters, and names a source only where
it is a published one. Values recalled without a document (``from memory``)
and facts of the trade (``common practice``) are shown as "tea default"; their
detail stays in the workbook and in ``tea presets -v``.
"""

from __future__ import annotations

import re

from tea.core.errors import UNUSUAL, WHAT_IF, Notice
from tea.inputs import display, schema
from tea.inputs.case import Case

#: what a source note says when it is not a published source
UNPUBLISHED = ("from memory", "common practice", "default")
TEA_DEFAULT = "tea default"

#: why an input matters, by section (the page says it after what is unusual)
WHY = {
    "field": "it sets the area and the field's baseline",
    "establishment": "the planting-year cost is most of the money at risk",
    "yield": "the yield drives every receipt",
    "harvest": "it sets how much dry matter is sold",
    "nutrients": "it sets the fertiliser bill",
    "costs": "it is paid every year or every harvest",
    "revenue": "the price sets every receipt",
    "carbon": "it sets the carbon figures and any credit income",
    "finance": "it weighs every future year against today",
    "loan": "it sets the loan repayments",
    "case": "it applies to every figure",
    "site_climate": "it sets what the site can grow",
}
#: warnings with their own words: key path -> sentence (not for a value of that key outside its usual range,
#: which is said as such)
SPECIAL = {
    "field.current_margin_per_ha": "What the field earns today was not given, so it is taken as nothing: the "
                                   "comparison with today's use may flatter the crop.",
    "yield.decline_per_year": "A yearly yield decline was given without the year it starts, so no decline "
                              "is counted.",
    "revenue.price_change_per_year": "A yearly price change was given along with a price path; the path is used.",
    "yield.fresh_moisture": "A moisture content was given for a dry-matter yield, so it is not used.",
    "loan.profile": "The loan is repaid every year but the crop is cut only every few years, so in the years "
                    "between harvests there is no sale to repay it from: repayments shaped to the harvests "
                    "(a sculpted loan) suit such a crop.",
}


def source_text(case: Case, path: str) -> str:
    """Where a value came from, as the grower's page names it: a published source, or "tea default"."""
    if case.origin.get(path) == "default":
        return TEA_DEFAULT
    note = case.notes.get(path, "") or case.origin.get(path, "")
    if note.startswith("preset "):
        _name, _, note = note[len("preset "):].partition(": ")
    if not note or any(note.lower().startswith(word) for word in UNPUBLISHED):
        return TEA_DEFAULT
    return note


#: units said in words when a count of them is not one
_PLURAL = {"acre": "acres", "yr": "years", "mile": "miles", "year": "years", "short ton": "short tons"}


def _amount(value: float, unit: str | None, about: bool = False) -> str:
    """A value of a warning said for a grower: shares as percentages (a yearly one 'a year'), other
    quantities with thousands separators and their unit in words; ``about``: a range's bound, rounded to two
    significant figures (12,355.3 acres: about 12,000 acres)."""
    value = float(f"{value:.6g}")  # as the terminal's line gives it
    if about and value:
        rounded = float(f"{value:.2g}")
        prefix = "about " if abs(rounded - value) > 1e-9 * abs(value) else ""
        value = rounded
    else:
        prefix = ""
    if unit and unit.startswith("fraction"):
        shown = display.percent(value, 0 if float(f"{100 * value:.6g}").is_integer() else 1)
        return prefix + shown + (" a year" if unit.endswith("/yr") else "")
    word = (_PLURAL.get(unit, unit) if value != 1 else unit) if unit else ""
    return prefix + f"{display.number(value)} {word}".strip()


def _range(low: float | None, high: float | None, unit: str | None) -> str:
    """A usual range in words, its unit said once: "0 to 20 % a year", "up to about 12,000 acres"."""
    lo = None if low is None else _amount(low, unit, about=True)
    hi = None if high is None else _amount(high, unit, about=True)
    if lo is None or hi is None:
        return f"up to {hi}" if hi is not None else f"from {lo}"
    number = re.match(r"(?:about )?[0-9,.\-\u2212]+", lo)
    if number and lo[number.end():] == hi[len(hi) - len(lo) + number.end():]:
        lo = number.group().strip()
    return f"{lo} to {hi}"


def _sentence(text: str) -> str:
    """Text ended as a sentence."""
    return text if text.endswith((".", "!", "?")) else text + "."


def grower_warning(warning: str) -> str:
    """A warning of the loader, said for a grower: what is unusual and why it matters. A warning that is no
    :class:`~tea.core.errors.Notice` (nothing known of it but its text) is given as it is."""
    if not isinstance(warning, Notice):
        return warning
    key = schema.BY_PATH.get(warning.path) if warning.path else None
    message = warning.message  # without the terminal's "check it": the page says it below, with why
    if key is None:
        return _sentence(message[:1].upper() + message[1:])
    if key.path in SPECIAL and warning.kind != UNUSUAL:
        return SPECIAL[key.path]
    why = WHY.get(key.section, "it changes the figures")
    if warning.kind == UNUSUAL and warning.value is not None:
        return (f"{key.words} is {_amount(warning.value, warning.unit)}, outside the usual range "
                f"({_range(warning.low, warning.high, warning.unit)}): check it, because {why}.")
    return f"{key.words}: {message}; check it, because {why}."


def grower_warnings(case: Case) -> list[str]:
    """Every warning of a case, said for a grower, each once; those about sensitivity ranges and risk
    distributions that do not sit on the case's own values are said in one sentence naming the inputs."""
    said, off = [], []
    for w in case.warnings:
        if not (isinstance(w, Notice) and w.kind == WHAT_IF):
            said.append(grower_warning(w))
            continue
        key = schema.BY_PATH.get(w.path)
        off.append(key.words.lower() if key is not None else w.path)
    if off:
        names = list(dict.fromkeys(off))
        said.append(f"The ranges tried for {', '.join(names)} in the chart of what moves the NPV, or in the risk "
                    "figures, do not sit on the case's own value: those figures describe other values; check them.")
    return list(dict.fromkeys(said))


#: the TDWG botanical continents (tea.inputs.schema.REGIONS) in words
REGION_WORDS = {"europe": "Europe", "africa": "Africa", "asia_temperate": "temperate Asia",
                "asia_tropical": "tropical Asia", "australasia": "Australasia", "pacific": "the Pacific",
                "northern_america": "northern America", "southern_america": "southern America",
                "antarctic": "the Antarctic"}


def crop_name(case: Case) -> str:
    """What the crop is called on the outputs: the case's ``crop.name``, else the preset's name in words."""
    if case.values.get("crop.name"):
        return case.values["crop.name"]
    words = case.preset.name.replace("_", " ")
    return f"{words} ({case.preset.aliases[0]} type)" if case.preset.aliases else words


def non_native_caution(case: Case) -> str | None:
    """The caution for a crop the preset says is non-native in the case's region (``field.region``), or whose
    sources do not settle whether it is native there; None where it is native or no region is given."""
    region = case.values.get("field.region")
    native = case.preset.non_native_in(region)
    if region is None or native is False:
        return None
    where = REGION_WORDS.get(region, region)
    if native is None:
        return (f"tea's sources do not say whether the crop ({crop_name(case)}) is native to {where}: planting it "
                "may be regulated (invasive-species and planting rules); check local rules before planting.")
    return (f"The crop ({crop_name(case)}) is not native to {where}: planting it may be "
            "regulated (invasive-species and planting rules); check local rules before planting.")
