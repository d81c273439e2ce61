"""The commented starter case written by ``tea new``.

Every key of the schema appears: values the case must give carry an invented
example value (and the case is marked demo until the user changes it); values
the crop preset supplies are shown commented out with the preset's value and
source; other defaults are shown commented out.
"""

from __future__ import annotations

import fnmatch

from typing import Any

from tea.inputs import schema, units
from tea.inputs.case import PLANTING_PRICE, PLANTING_RATE, PLANTING_UNIT, load_preset

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
#: the same in a US customary starter, whose seed is counted in pounds (:meth:`tea.inputs.case.Preset.values_in`)
US_UNIT_PRICE_EXAMPLE = {"seeded_grass": 9.0}
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


def _shown(k: schema.Key, value: Any, system: str, given_in_system: bool = False) -> tuple[str, Any]:
    """The key spelled in ``system`` and the canonical value converted to it (``given_in_system``: already is),
    rounded to 3 significant digits as an example is."""
    if given_in_system or isinstance(value, list):
        return units.spell(k.template, system), value
    return units.in_system(k.template, value, system, digits=3)


#: ``tea new --from CASE``: whose each key is, pattern by pattern over the schema's key paths (``fnmatch``; the
#: first pattern a key matches decides). FIELD_AND_DEAL keys come from the source case as it gives them; CROP keys
#: from the new crop's preset or starter values. With the same preset as the source case every value it gives is
#: carried over, crop keys included: the same crop on the same field is the same case.
FIELD_AND_DEAL, CROP = "source case", "new crop"
CARRY: tuple[tuple[str, tuple[str, ...]], ...] = (
    # the case's own settings: its currency, unit system and paper (name and notes are written anew)
    (FIELD_AND_DEAL, ("case.*",)),
    # which crop it is: the point of the new case
    (CROP, ("crop.*",)),
    # the field: where it lies, its soil, climate and region, what it earns and burns in its current use (the
    # counterfactual), its site climate, how it yields against any crop's mature yield, and the carbon it holds
    # today (reference stock, current-use factors, prior vegetation, the soil's C:N)
    (FIELD_AND_DEAL, ("field.*", "site_climate.*", "yield.site_factor", "carbon.soc_ref_*", "carbon.current_*",
                      "carbon.prior_biomass_*", "carbon.biomass_carbon_fraction", "carbon.soc_c_to_n")),
    # the crop's planting: its material (what, how many, the price of one), the planting or drilling operation
    # that material needs, and how often such a planting fails and how much is re-planted
    (CROP, ("establishment.planting_*", "establishment.failure_probability", "establishment.replant_share")),
    # getting the field ready whatever goes in (cultivation, weeds, fertiliser and lime, fencing, the N at
    # planting) and the establishment grant and its conditions: the field's and the scheme's
    (FIELD_AND_DEAL, ("establishment.*",)),
    # the crop's growth: mature and record yield, ramp-up, decline, mortality (the field's factor is above)
    (CROP, ("yield.*",)),
    # the buyer's terms: the moisture specification and what wetter biomass costs (drying per t of water, or
    # the price cut); they stay whatever crop is delivered
    (FIELD_AND_DEAL, ("harvest.buyer_moisture_max", "harvest.above_spec", "harvest.drying_per_t_water",
                      "harvest.price_cut_per_point")),
    # the crop's harvest: timing and interval, first harvest and cut-back, losses, moisture at harvest, what
    # keeps in store (bales or chips)
    (CROP, ("harvest.*",)),
    # the farm's fertiliser buying and spreading: prices of N, P2O5 and K2O, urea share, spreading cost
    (FIELD_AND_DEAL, ("nutrients.*_price_per_kg", "nutrients.urea_share_of_n", "nutrients.spreading_per_ha")),
    # the crop's nutrient offtake per t harvested and how much of it is put back
    (CROP, ("nutrients.*",)),
    # the crop's own machinery: cutting (a mower or a coppice harvester), baling or chipping, taking the
    # stand out (rhizomes or stools)
    (CROP, ("costs.harvest_per_ha", "costs.baling_chipping_per_t_dm", "costs.removal_per_ha")),
    # haulage to the buyer (distance and rate), storage, rent, overheads, insurance, upkeep and their changes
    (FIELD_AND_DEAL, ("costs.*",)),
    # what the crop is worth per GJ, and what its rhizomes or stools fetch at removal
    (CROP, ("revenue.heating_value_gj_per_t_dm", "revenue.salvage_per_ha")),
    # the prices and the contract: market and contract price on their basis (t DM or GJ), their paths,
    # the yearly payment
    (FIELD_AND_DEAL, ("revenue.*",)),
    # the carbon of the crop's stand: its land-use class and factors, the biomass it holds, the diesel its own
    # operations burn
    (CROP, ("carbon.crop_*", "carbon.stand_biomass_*", "carbon.diesel_establishment_*", "carbon.diesel_harvest_*",
            "carbon.diesel_l_per_t_dm", "carbon.diesel_removal_*")),
    # the carbon rules and prices: SOC method (a measured rate is the field's measurement), transition, N2O
    # method, GWP, emission factors, credit price, verification, registry, buffer and reversal
    (FIELD_AND_DEAL, ("carbon.*",)),
    # operations by year are timed to the source crop's stand (a cut-back, weed control in its ramp-up): with
    # another crop they are written commented out, to take back those of the field (lime)
    (CROP, ("schedule.*",)),
    # how long the crop stands
    (CROP, ("finance.stand_life_years",)),
    # the money: discount rate and its basis, inflation, escalation, MIRR rates; the loan, the working-capital
    # line, tax and the lender's downside case
    (FIELD_AND_DEAL, ("finance.*", "loan.*", "working_capital.*", "tax.*", "downside.*")),
)


def whose(path: str) -> str:
    """:data:`FIELD_AND_DEAL` or :data:`CROP` for a schema key path (the first group of :data:`CARRY` it matches).

    >>> whose("harvest.buyer_moisture_max"), whose("harvest.timing"), whose("nutrients.n_price_per_kg")
    ('source case', 'new crop', 'source case')
    """
    for owner, patterns in CARRY:
        if any(fnmatch.fnmatchcase(path, pattern) for pattern in patterns):
            return owner
    raise KeyError(f"{path} is in no group of CARRY")


def _carried(base, same_crop: bool) -> dict[str, Any]:
    """The values the source case gives that the new case takes, canonical."""
    given = {p: v for p, v in base.values.items()
             if "." in p and base.origin.get(p) == "case" and p not in ("case.name", "case.notes")}
    return {p: v for p, v in given.items() if same_crop or whose(p) == FIELD_AND_DEAL}


def _exact(value: Any) -> str:
    """A carried value as TOML, exact: a float at 12 significant digits (what a unit conversion leaves over
    the typed number is rounding), in the shortest form that reads back as that float."""
    if isinstance(value, list):
        return "[" + ", ".join(_exact(v) for v in value) + "]"
    if isinstance(value, float):
        return repr(float(f"{value:.12g}"))
    return _toml(value)


def _spelled_as_given(k: schema.Key, value: Any, system: str, base) -> tuple[str, str]:
    """A carried key and value in the spelling the source case gave it (in its unit system), else ``system``'s."""
    spelling = base.given_spelling.get(k.path)
    if system != base.unit_system or spelling not in units.spellings(k.template):
        spelling = units.spell(k.template, system)
    value = value if isinstance(value, list) else units.in_spelling(k.template, spelling, value)
    return spelling, _exact(value)


def _operations_lines(ops: list[dict[str, Any]], system: str, active: bool) -> list[str]:
    """The source case's ``[[operations]]`` (canonical) written back in ``system``'s spelling."""
    from tea.inputs import operations

    out = []
    mark = "" if active else "# "
    for op in ops:
        out.append(f"{mark}[[operations]]")
        out.append(f"{mark}name = {_toml(op['name'])}")
        for key in operations.TIMING:
            if key in op:
                out.append(f"{mark}{key} = {_toml(op[key])}")
        for template in operations.AMOUNTS:
            if units.spell(template) in op:
                spelling, value = units.in_system(template, op[units.spell(template)], system)
                out.append(f"{mark}{spelling} = {_exact(value)}")
        out.append("")
    return out


def _analysis_lines(section: str, parsed: dict[str, Any], system: str) -> list[str]:
    """A source case's [sensitivity] or [risk] (parsed: canonical paths and units) written back, the inputs
    named in ``system``'s spelling and their values in its units."""
    def name_factor(path: str) -> tuple[str, float]:
        k = schema.BY_PATH.get(path)
        if k is None:  # a pseudo-input (a multiplier, a probability)
            return path, 1.0
        spelling = units.spell(k.template, system)
        return f"{k.section}.{spelling}", units.spellings(k.template)[spelling]

    def table(spec: dict[str, Any], factor: float) -> str:
        return "{ " + ", ".join(f"{key} = " + (_toml(v) if isinstance(v, str) else _exact(v / factor))
                                for key, v in spec.items()) + " }"

    out = [f"[{section}]"]
    for key, value in parsed.items():
        if key == "inputs" and isinstance(value, list):
            out.append(f"inputs = [{', '.join(_toml(name_factor(p)[0]) for p in value)}]")
        elif key not in ("inputs", "ranges", "surface", "correlations"):
            out.append(f"{key} = {_toml(value)}")
    for path, spec in parsed.get("ranges", {}).items():
        name, factor = name_factor(path)
        out.append(f'ranges.{_toml(name)} = {table(spec, factor)}')
    if section == "risk":
        for path, spec in parsed.get("inputs", {}).items():
            name, factor = name_factor(path)
            out.append(f'inputs.{_toml(name)} = {table(spec, factor)}')
    surface = parsed.get("surface")
    if surface:
        for key, v in surface.items():
            if key in ("x", "y"):
                v = name_factor(v)[0]
            elif key.startswith(("x_", "y_")):
                v = float(v) / name_factor(surface[key[0]])[1]
            out.append(f"surface.{key} = {_exact(v) if isinstance(v, float) else _toml(v)}")
    corrs = [f"{{ inputs = [{', '.join(_toml(name_factor(p)[0]) for p in corr['inputs'])}], "
             f"rank = {_exact(float(corr['rank']))} }}" for corr in parsed.get("correlations", [])]
    if corrs:
        out.append(f"correlations = [{', '.join(corrs)}]")
    return out + [""]


def _crop_called(case) -> str:
    """What a case's crop is called, in lower case: its ``crop.name``, else the first common name of its preset."""
    named = case.values.get("crop.name")
    if named:
        return str(named).strip().lower()
    aliases = getattr(case.preset, "aliases", ()) or ()
    return str(aliases[0]).lower() if aliases else str(case["crop.preset"])


def starter_case(name: str, crop: str, system: str = "metric", currency: str = "EUR", base=None,
                 crop_name: str | None = None) -> str:
    """TOML text of a starter case for a crop preset, every key documented.

    ``base`` (a :class:`tea.inputs.case.Case`): another crop on that case's field
    and deal: the values it gives that :data:`CARRY` calls the field's and the
    deal's are carried over (all of them, crop keys, operations, sensitivity and
    risk included, when ``crop`` is its own preset), each key marked with where
    its value comes from. ``crop_name``: what the crop is called (e.g.
    ``"willow"`` for the coppice preset), written as ``crop.name``.
    """
    preset = load_preset(crop)
    examples = dict(EXAMPLES)
    examples["establishment.planting_unit_price"] = UNIT_PRICE_EXAMPLE.get(preset.kind, 0.1)
    if preset.kind == "coppice":
        examples.update(COPPICE_EXAMPLES)
    in_us = set()
    if system == "us_customary":
        us = dict(US_EXAMPLES, **(US_COPPICE_EXAMPLES if preset.kind == "coppice" else {}))
        if preset.kind in US_UNIT_PRICE_EXAMPLE:
            us["establishment.planting_unit_price"] = US_UNIT_PRICE_EXAMPLE[preset.kind]
        examples.update(us)
        in_us = set(us)
    # the same crop: the same preset, and no other crop of it named (one preset stands for several crops)
    same_crop = base is not None and base["crop.preset"] == crop and (
        crop_name is None or crop_name.strip().lower() == _crop_called(base))
    carried = _carried(base, same_crop) if base is not None else {}
    for own in ("case.currency", "case.units"):  # the command's (the source case's unless it says otherwise)
        carried.pop(own, None)
    if PLANTING_PRICE in carried and PLANTING_UNIT not in carried:
        # a price carried over is per the unit the source case counted in: that unit goes with it, whatever unit
        # this case's system would count the preset's material in
        carried[PLANTING_UNIT] = base[PLANTING_UNIT]
    in_system = preset.values_in(system)  # the preset's values as a case in this unit system takes them
    # the unit this case counts planting material in, which the preset's rate is shown in
    planting_unit = carried.get(PLANTING_UNIT, in_system.get(PLANTING_UNIT))
    # the crop's keys a case must give that get an invented example (none with the same crop: all carried)
    invented = [k for k in schema.KEYS if base is not None and k.section != "crop" and whose(k.path) == CROP
                and k.path not in carried and (k.default is schema.REQUIRED or k.path in examples)]
    yield_doc: int | None = None  # the line describing the mature yield
    left_for_user = 0  # money keys left for the user's own values (a currency far from a dollar)
    lines = [f"# Starter case for `tea`, crop preset {crop}: {preset.described()}."]
    if base is None:
        lines += ["# Keys without '#' need your values: the numbers there are invented examples."]
    elif same_crop:
        lines += [f"# The same crop as {base.source} ({base.name}): every value that case gives is carried over",
                  "# unchanged ([source case] beside the key), with its [[operations]], [sensitivity] and [risk]."]
    else:
        dropped = []  # the values the source case gave for its own crop
        for path, value in base.values.items():
            if base.origin.get(path) == "case" and path not in carried and not path.startswith("crop.") \
                    and path in schema.BY_PATH and whose(path) == CROP:
                spelling, shown = _spelled_as_given(schema.BY_PATH[path], value, system, base)
                dropped.append(f"{path.partition('.')[0]}.{spelling} = {shown}")
        lines += [f"# Another crop on the field and deal of {base.source} ({base.name}). Beside each key:",
                  "#   [source case]       carried over unchanged: the field, its current use and site climate, the",
                  "#                       buyer's terms (moisture limit, drying), prices and contract, haulage, rent,",
                  "#                       overheads, grants, carbon prices and rules, finance, loan and tax;",
                  "#   [new crop: example] an invented starter value for this crop: put in the real one before",
                  "#                       comparing the crops;",
                  "#   [new crop: preset]  this crop's preset value (behind '#'; remove the '#' to change it).",
                  *_wrapped("Invented for this crop, check them: ",  # named as this case's keys are spelled
                            [f"{k.section}.{units.spell(k.template, system)}" for k in invented]),
                  *_wrapped("Not carried, the source crop's own values: ", dropped),
                  "# Not carried: the source case's [[operations]] (below, behind '#': take back those of the field),",
                  "# [sensitivity] and [risk] (their ranges are about the source crop)."]
    dollar_like = currency in schema.DOLLAR_LIKE
    head, lines = lines, []  # the header, which a note on money keys left for the user's values may join below
    lines += [
        "# Keys behind '#' show the preset's or the default value; remove the '#' to change one.",
        "# Units are in the key names; the README's case-file reference lists every key.",
        "# `tea check` this file after editing; set demo = false once the numbers are yours.",
        "",
    ]
    for section in schema.SECTIONS:
        if section == "schedule":  # laid out from [[operations]]: shown as one commented example
            ops = base.values.get("operations") if base is not None else None
            if ops:
                lines += ["# Operations in given years, " + ("[source case]:" if same_crop else
                          "the source case's, timed to its crop [source case, not carried]:")]
                lines += _operations_lines(ops, system, active=same_crop)
                continue
            lines += ["# Operations in given years (a cut-back, weed control, lime every few years): one",
                      "# [[operations]] table each, with year = N, years = [..] or every = N (with from = N),",
                      "# and the cost, diesel, N or lime of each. The README explains them.",
                      "# [[operations]]", '# name = "lime"', "# every = 5", "# from = 5",
                      f"# {units.spell('cost_per_{ha}', system)} = 65.0", ""]
            continue
        lines.append(f"[{section}]")
        for k in schema.keys_in(section):
            unit = k.unit_text(system, currency)
            doc = f"{units.in_words_of(k.doc, system)}" + (f" [{unit}]" if unit else "") + \
                (f" One of: {', '.join(k.choices)}." if k.choices else "")
            tag = ""  # in a case from a source case: where the value comes from
            if base is not None and k.path not in ("case.name", "case.notes"):
                tag = "[source case] " if k.path in carried or whose(k.path) == FIELD_AND_DEAL else \
                    "[new crop] " if k.section == "crop" else "[new crop: default] "
            if k.path == "case.name":
                value, active = name, True
            elif k.path == "case.notes" and base is not None:
                value, active = (f"The field and deal of {base.name}, with {crop_name or crop.replace('_', ' ')}"
                                 + ("." if not invented else "; the crop's values marked [new crop: example] "
                                    "are invented."), True)
            elif k.path == "case.demo" and invented:
                value, active = True, True
                tag = "[new crop: example values below] "
            elif k.path == "crop.name" and crop_name:
                value, active = crop_name, True
            elif k.path == "crop.preset":
                value, active = crop, True
            elif k.path in carried:
                spelling, shown = _spelled_as_given(k, carried[k.path], system, base)
                lines.append(f"# {tag}{doc}")
                lines.append(f"{spelling} = {shown}")
                continue
            elif k.path == "case.currency":
                value, active = currency, True
            elif k.path == "case.units":
                value, active = system, True
            elif k.path == "case.demo":
                value, active = True, True
            elif base is not None and whose(k.path) == FIELD_AND_DEAL and k.default is not schema.DERIVED:
                # not given in the source case: its default (or left out) here too, never an example
                value = None if k.default in (None, schema.PRESET, schema.REQUIRED) else schema.default_in(k, system)[0]
                active = False
                tag = "[source case: not given there] "
            elif k.default is schema.REQUIRED or k.path in examples:
                value, active = examples.get(k.path), True
                tag = "[new crop: example] " if base is not None else ""
            elif k.path == PLANTING_UNIT and planting_unit != preset.values.get(PLANTING_UNIT):
                # seed counted in pounds in a US case: said, so that the price beside it is read per pound
                value, active = planting_unit, True
                doc += (f" Preset: {preset.values[PLANTING_UNIT]}, counted in pounds in a US customary case "
                        f"({preset.sources[k.path]}).")
            elif k.path in preset.values:
                value, active = in_system[k.path], False
                if k.path == PLANTING_RATE:
                    value = preset.planting_rate_in(planting_unit)
                doc += f" Preset: {preset.source_in(k.path, system, currency)}."
                tag = "[new crop: preset] " if base is not None else ""
            elif k.default in (schema.DERIVED, schema.PRESET) or k.default is None:
                value, active = OPTIONAL_EXAMPLES.get(k.path), False
                if k.default is schema.DERIVED:
                    doc += f" Looked up if left out ({k.source})."
                elif value is not None:
                    doc += " Not used unless given; the value shown is an example."
            else:
                value, active = schema.default_in(k, system)[0], False
            if active and k.money and k.path in examples and value is not None and not dollar_like:
                # an example in a currency of about a dollar would read as a real price in this one: the key
                # is left for the user's own value, which the loader asks for until it is given
                value = f"your {currency} value"
                tag += "[your value] "
                left_for_user += 1
            elif not active and k.money and value is not None and not dollar_like and k.path in OPTIONAL_EXAMPLES:
                value = None  # an optional example's amount, in a currency of about a dollar: not shown
            spelling, shown = _shown(k, value, system, k.path in in_us and active)
            if k.path == MATURE_YIELD:
                yield_doc = len(lines)
            lines.append(f"# {tag}{doc}")
            if value is None:
                lines.append(f"# {spelling} = ...")
            else:
                lines.append(("" if active else "# ") + f"{spelling} = {_toml(shown)}")
        lines.append("")
    if left_for_user:
        head += ["# Money: tea's examples are in a currency of about a dollar, so the money keys marked [your value]",
                 f"# hold no number: give each in {currency} (`tea check` lists those still missing)."]
    if same_crop:
        for section in ("sensitivity", "risk"):
            if base.values.get(section):
                lines += ["# [source case]"] + _analysis_lines(section, base.values[section], system)
    estimate = _estimated_yield("\n".join(lines), system)
    if estimate is not None and yield_doc is not None:
        lines[yield_doc] += (f" Not used as shown: this case's [site_climate] gives an estimate of {estimate} with "
                             "this crop's light-use parameters (`tea yield` shows how); remove the '#' and give "
                             "your own to use it instead.")
    return "\n".join(head + lines)


def _wrapped(head: str, items: list[str], width: int = 110) -> list[str]:
    """Comment lines listing ``items`` after ``head``, wrapped (none when there are no items)."""
    if not items:
        return []
    out, line = [], "# " + head
    for i, item in enumerate(items):
        piece = item + (", " if i < len(items) - 1 else ".")
        if len(line) + len(piece) > width and line.strip("# "):
            out.append(line.rstrip())
            line = "#   "
        line += piece
    return out + [line]


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
