"""The case-file schema: every key a case may hold, its unit, default, range and source.

One table drives the loader's validation, the starter case written by
``tea new``, the case-file reference in the README and the inputs sheet of the
workbook, so the four cannot drift apart.

Key templates carry their unit in slots (see :mod:`tea.inputs.units`):
``mature_{t}_dm_per_{ha}`` accepts ``mature_t_dm_per_ha`` or
``mature_short_ton_dm_per_acre``. Money is always in the case's one currency.
Values are stored canonically (ha, t, kg, km, l, GJ) after loading.

Default kinds
-------------
* a plain value: the default below, with its source;
* ``PRESET``: the crop preset supplies it (each preset value has its source);
* ``REQUIRED``: the case must give it;
* ``DERIVED``: looked up from another input (e.g. SOC_ref from climate and soil);
* ``None``: optional, absent means "not used".
"""

from __future__ import annotations

import difflib
import functools
import re
from dataclasses import dataclass, field
from functools import cached_property
from typing import Any, Iterable

from tea.inputs import units

#: currencies of about a US dollar each (within a factor of about two): a money input above its usual
#: ceiling (a money key's ``warn_hi``) in one of them is pointed out; in another currency the ceiling is
#: :data:`OTHER_CURRENCY_FACTOR` times higher, a bound for values no unit of account makes usual: the
#: currencies with the most units to a dollar count some 25,000 (common practice: exchange rates, from memory)
DOLLAR_LIKE = frozenset("AUD CAD CHF EUR GBP NZD USD".split())
OTHER_CURRENCY_FACTOR = 100_000.0
#: the usual ceiling of a money input that gives none (all such are per ha, or per ha a year), in a
#: dollar-like currency: ten times or more what a stand on a field commonly costs or earns, so that only a
#: slip (a price typed in the wrong unit, digits repeated) is pointed out (common practice: establishment a
#: few thousand per ha); the keys priced per another unit give their own (biomass tens to a couple of
#: hundred per t DM, heat a few per GJ, carbon credits tens per t CO2e)
MONEY_PER_HA_USUAL_HI = 50_000.0

#: a key of the case file named in a description (``rate_basis``)
_KEY_NAME = re.compile(r"\b[a-z0-9]+_[a-z0-9_]+\b")


class _Marker:
    def __init__(self, name: str):
        self.name = name

    def __repr__(self) -> str:
        return self.name


PRESET = _Marker("PRESET")
REQUIRED = _Marker("REQUIRED")
DERIVED = _Marker("DERIVED")

# the IPCC climate zones, soil classes and land uses the carbon tables cover
from tea.inputs.published import CLIMATES, LAND_USES, SOILS  # noqa: E402

#: the nine botanical continents of the TDWG World Geographical Scheme for Recording Plant Distributions,
#: level 1 (R. K. Brummitt, 2001, 2nd ed., Hunt Institute for Botanical Documentation)
REGIONS = ("europe", "africa", "asia_temperate", "asia_tropical", "australasia", "pacific", "northern_america",
           "southern_america", "antarctic")


@dataclass(frozen=True)
class Key:
    """One case key.

    ``lo``/``hi`` bound the canonical value (an error outside); ``lo_open``/
    ``hi_open`` make a bound exclusive. ``warn_lo``/``warn_hi`` mark legal but
    unusual values (a warning outside); a money key's ``warn_hi`` is for a
    currency of about a dollar, :data:`MONEY_PER_HA_USUAL_HI` where not given
    (see :meth:`usual_hi`).
    """

    section: str
    template: str
    kind: str  # float | int | str | enum | list | bool
    default: Any
    doc: str
    source: str = ""
    money: bool = False  # value is in the case's currency
    choices: tuple[str, ...] = ()
    lo: float | None = None
    hi: float | None = None
    lo_open: bool = False
    hi_open: bool = False
    warn_lo: float | None = None
    warn_hi: float | None = None
    unit: str = ""  # unit words beyond the slots, e.g. "fraction", "yr", "GJ/t DM"
    aliases: tuple[str, ...] = field(default=())  # further accepted templates (e.g. fresh yield)
    label: str = ""  # what the key means in a few words, where its description's opening would not say it

    def usual_hi(self, currency: str = "") -> float | None:
        """Above what a value is unusual (a warning), canonical units; a money key's in ``currency``: its
        ceiling in a currency of about a dollar (:data:`DOLLAR_LIKE`), :data:`OTHER_CURRENCY_FACTOR` times it
        in another.

        >>> k = BY_PATH["revenue.price_per_t_dm"]
        >>> k.usual_hi("EUR"), k.usual_hi("JPY"), BY_PATH["costs.rent_per_ha"].usual_hi("GBP")
        (1000.0, 100000000.0, 50000.0)
        """
        if not self.money:
            return self.warn_hi
        ceiling = MONEY_PER_HA_USUAL_HI if self.warn_hi is None else float(self.warn_hi)
        return ceiling if currency in DOLLAR_LIKE else ceiling * OTHER_CURRENCY_FACTOR

    @cached_property
    def words(self) -> str:
        """What the key means in a few words, for a reader of the outputs rather than of the file: ``label``,
        else the description up to its first full stop, colon or bracket without a clause that names a key of
        the file.

        >>> BY_PATH["finance.discount_rate"].words, BY_PATH["loan.grace_years"].words
        ('Discount rate', 'Grace years')
        """
        if self.label:
            return self.label
        opening = re.split(r"\.(?=\s|$)|[:(;]", self.doc, maxsplit=1)[0].strip()  # "years 1..n" stays whole
        clauses = [c for c in opening.split(", ") if not _KEY_NAME.search(c)] or [opening]
        words = ", ".join(clauses)
        return words[:1].upper() + words[1:]

    @cached_property
    def name(self) -> str:
        """The canonical (metric) spelling, e.g. ``mature_t_dm_per_ha``."""
        return units.spell(self.template)

    @cached_property
    def path(self) -> str:
        return f"{self.section}.{self.name}"

    def unit_text(self, system: str = "metric", currency: str = "") -> str:
        """The unit of the key as shown to people, in a unit system (e.g. ``USD/acre/yr``)."""
        num, den = [], []
        if self.money:
            num.append(currency or "currency")
        for name, exponent, what in units.slots_with_substance(self.template):
            word = units.SYSTEMS[system][name].replace("_", " ") + (f" {what}" if what else "")
            (num if exponent > 0 else den).append(word)
        if self.unit.startswith("/"):
            # a carbon credit is one metric tonne of CO2e wherever it is sold: said so beside short tons
            den.append(self.unit[1:].replace("t CO2e", "metric ton CO2e") if system == "us_customary"
                       else self.unit[1:])
        elif self.unit:
            num.append(self.unit)
        text = " ".join(num) if num else ("1" if den else "")
        return text + "".join("/" + d for d in den)

    def spellings(self) -> dict[str, float]:
        return units.spellings(self.template)


def _k(section, template, kind, default, doc, **kw) -> Key:
    return Key(section, template, kind, default, doc, **kw)


FRACTION = dict(lo=0.0, hi=1.0, unit="fraction")
MONEY_HA = dict(money=True, lo=0.0)

KEYS: tuple[Key, ...] = (
    # --- case --------------------------------------------------------------------
    _k("case", "name", "str", REQUIRED, "Name of the case, shown on every output."),
    _k("case", "notes", "str", "", "Free text shown on the outputs (e.g. who prepared it, for whom)."),
    _k("case", "currency", "str", REQUIRED, "ISO 4217 code of the one currency all money is in (e.g. EUR, USD, GBP).",
       label="Currency"),
    _k("case", "units", "enum", "metric", "Unit system the outputs are shown in.", choices=tuple(units.SYSTEMS)),
    _k("case", "demo", "bool", False, "Marks the case as invented demo data; outputs then say so."),
    _k("case", "page_size", "enum", "A4", "Paper size of the printed summary (a US customary case: Letter unless given).",
       choices=("A4", "Letter")),
    # --- field -------------------------------------------------------------------
    _k("field", "name", "str", "field", "Name of the field."),
    _k("field", "area_{ha}", "float", REQUIRED, "Area planted.", lo=0.0, lo_open=True, warn_hi=5000.0),
    _k("field", "climate", "enum", REQUIRED, "IPCC climate zone (IPCC 2006 Vol.4 Ch.3 Fig. 3A.5.1).", choices=CLIMATES),
    _k("field", "soil", "enum", REQUIRED, "IPCC soil class (IPCC 2006 Vol.4 Ch.3 Fig. 3A.5.3).", choices=SOILS),
    _k("field", "region", "enum", None,
       "Botanical continent of the field (TDWG World Geographical Scheme for Recording Plant Distributions, level 1; "
       "Brummitt 2001): says whether the crop is native there.", choices=REGIONS),
    _k("field", "current_use", "enum", "cropland_full_till",
       "What the field is used for today (the counterfactual); sets its SOC factors.", choices=LAND_USES),
    _k("field", "current_margin_per_{ha}", "float", 0.0,
       "Annual gross margin the field earns today, before rent and overheads, years 1..stand life; "
       "may be negative.", money=True, unit="/yr", source="case input; 0 if not given (warned)",
       label="Current-use margin"),
    _k("field", "current_n_{kg}_per_{ha}", "float", 0.0,
       "Nitrogen the current use applies per year (fertiliser and manure N), for its N2O and fertiliser "
       "emissions.", lo=0.0, warn_hi=400.0, unit="/yr"),
    _k("field", "current_p2o5_{kg}_per_{ha}", "float", 0.0, "P2O5 the current use applies per year.", lo=0.0,
       warn_hi=200.0, unit="/yr"),
    _k("field", "current_k2o_{kg}_per_{ha}", "float", 0.0, "K2O the current use applies per year.", lo=0.0,
       warn_hi=300.0, unit="/yr"),
    _k("field", "current_diesel_{l}_per_{ha}", "float", 0.0, "Diesel the current use burns per year.", lo=0.0,
       warn_hi=300.0, unit="/yr"),
    # --- crop --------------------------------------------------------------------
    _k("crop", "preset", "str", REQUIRED, "Crop preset (see `tea presets`), or a crop name it lists (e.g. miscanthus): "
       "its values fill every key the case leaves out."),
    _k("crop", "name", "str", None, "What the crop is called on the outputs (e.g. miscanthus); the preset's "
       "name if not given."),
    # --- establishment (year 0) -----------------------------------------------------
    _k("establishment", "site_preparation_per_{ha}", "float", REQUIRED, "Ploughing, cultivation, stone picking.", **MONEY_HA),
    _k("establishment", "weed_control_per_{ha}", "float", REQUIRED, "Herbicide and its application in the planting year.", **MONEY_HA),
    _k("establishment", "planting_units_per_{ha}", "float", PRESET,
       "Planting material per ha, in the unit planting_unit names: rhizomes, cuttings, or kg of seed (lb in a US "
       "customary case).", lo=0.0, unit="units", label="Planting density"),
    _k("establishment", "planting_unit_price", "float", REQUIRED, "Price of one unit of planting material.", money=True, lo=0.0, unit="/unit", warn_hi=20),
    _k("establishment", "planting_unit", "str", PRESET, "What one unit of planting material is (shown on outputs)."),
    _k("establishment", "planting_operation_per_{ha}", "float", REQUIRED, "Contract planting or drilling.", **MONEY_HA),
    _k("establishment", "fertiliser_per_{ha}", "float", REQUIRED, "Fertiliser and lime at planting.", **MONEY_HA),
    _k("establishment", "fencing_other_per_{ha}", "float", 0.0, "Fencing (e.g. against rabbits or deer) and other one-off costs.", **MONEY_HA,
       label="Fencing and other one-off costs"),
    _k("establishment", "n_{kg}_per_{ha}", "float", 0.0, "Nitrogen applied at planting (for N2O).", lo=0.0, warn_hi=200.0),
    _k("establishment", "failure_probability", "float", PRESET,
       "Chance that establishment partly fails and must be gap-filled or replanted in year 1.", **FRACTION, warn_hi=0.5),
    _k("establishment", "replant_share", "float", PRESET,
       "Share of the planting material and planting operation re-spent when it fails.", **FRACTION),
    _k("establishment", "grant_per_{ha}", "float", 0.0, "Establishment grant.", **MONEY_HA),
    _k("establishment", "grant_year", "int", 0, "Year the grant is paid: 0 at planting, later when paid in arrears.",
       lo=0, hi=10),
    _k("establishment", "grant_commitment_years", "int", 0,
       "Years the stand must stand to keep the whole grant; removed earlier, the unearned share is paid back "
       "in the removal year (pro rata). 0 = no condition.", lo=0, hi=60),
    # --- yield -------------------------------------------------------------------
    _k("yield", "mature_{t}_dm_per_{ha}", "float", PRESET,
       "Mature annual yield: dry matter standing at the autumn peak (for a coppice, wood grown per year), "
       "before site factor and losses. Fresh input: give mature_fresh_t_per_ha and fresh_moisture instead.",
       lo=0.0, lo_open=True, unit="/yr", aliases=("mature_fresh_{t}_per_{ha}",)),
    _k("yield", "fresh_moisture", "float", None,
       "Moisture content (wet basis) of a mature yield given as fresh tonnes.", lo=0.0, hi=1.0, hi_open=True, unit="fraction"),
    _k("yield", "record_{t}_dm_per_{ha}", "float", PRESET,
       "Highest yield recorded for the crop; a mature yield above it is warned, above twice it (or 100 t DM/ha) refused.",
       lo=0.0, lo_open=True, unit="/yr"),
    _k("yield", "ramp_up_fractions", "list", PRESET,
       "Yield in years 1, 2, ... as fractions of the mature yield, until the list ends (then 1).",
       lo=0.0, hi=1.5, unit="fraction"),
    _k("yield", "decline_start_year", "int", 0, "Last year at full yield before a late decline; 0 means no decline.", lo=0),
    _k("yield", "decline_per_year", "float", 0.0, "Yield lost per year after decline_start_year, compounding.", **FRACTION, warn_hi=0.2,
       label="Yearly yield decline"),
    _k("yield", "mortality_per_year", "float", 0.0,
       "Share of the plants (stools, crowns) dying each year from year 2 on, compounding; gaps are not refilled.",
       **FRACTION, warn_hi=0.1, label="Yearly plant losses"),
    _k("yield", "site_factor", "float", 1.0, "Yield of this field relative to the crop's mature yield (marginal land < 1).",
       lo=0.0, hi=2.0, lo_open=True, warn_hi=1.2, unit="fraction"),
    # --- site climate (optional: the yield potential by Monteith's equation, `tea yield`) ----------
    _k("site_climate", "radiation_mj_per_m2_per_day", "list", None,
       "Mean daily incident global radiation of each month, January first (12 values); with temperature_c it "
       "gives the site's yield potential (no mature yield given: the estimate is used).",
       lo=0.0, hi=45.0, unit="MJ/m2/d", source="site climate normals (e.g. a national weather service)",
       label="Monthly radiation"),
    _k("site_climate", "temperature_c", "list", None, "Mean air temperature of each month, January first (12 values).",
       lo=-60.0, hi=50.0, unit="degC", source="site climate normals", label="Monthly mean temperature"),
    _k("site_climate", "rainfall_mm", "list", None,
       "Rainfall of each month (12 values); with pet_mm it limits the estimate in dry months.",
       lo=0.0, hi=3000.0, unit="mm", source="site climate normals"),
    _k("site_climate", "pet_mm", "list", None, "Potential (reference) evapotranspiration of each month (12 values).",
       lo=0.0, hi=1000.0, unit="mm", source="site climate normals",
       label="Potential evapotranspiration"),
    # --- harvest -----------------------------------------------------------------
    _k("harvest", "timing", "enum", PRESET, "When the crop is cut.", choices=("autumn", "late_winter")),
    _k("harvest", "interval_years", "int", PRESET, "Years between harvests (1 for grasses, 2-5 for coppice).", lo=1, hi=10),
    _k("harvest", "uncut_carryover", "float", PRESET,
       "Share of a year's growth left uncut that is still there to harvest a year later (1 for coppice, whose "
       "wood keeps; far less for a grass, whose uncut shoots die back and weather).", **FRACTION),
    _k("harvest", "first_year", "int", PRESET, "Year of the first harvest; each harvest takes the growth since the last.", lo=1),
    _k("harvest", "cut_back_year", "int", PRESET,
       "Last year whose growth is cut back and never sold (a coppice's cut-back, a grass's topped first year); "
       "0 = none. It must come before the first harvest.", lo=0),
    _k("harvest", "final_harvest_at_removal", "bool", PRESET,
       "Whether the growth standing since the last harvest is harvested in the removal year."),
    _k("harvest", "overwinter_dm_loss", "float", PRESET,
       "Share of the autumn standing dry matter lost (leaves, tips) by a late-winter harvest.", **FRACTION, warn_hi=0.5),
    _k("harvest", "field_loss", "float", PRESET, "Share of cut dry matter lost in cutting, baling or chipping.", **FRACTION, warn_hi=0.3),
    _k("harvest", "storage_loss", "float", PRESET, "Share of harvested dry matter lost in storage.", **FRACTION, warn_hi=0.3),
    _k("harvest", "moisture_autumn", "float", PRESET, "Moisture content (wet basis) at an autumn harvest.",
       lo=0.0, hi=1.0, hi_open=True, warn_hi=0.75, unit="fraction"),
    _k("harvest", "moisture_late_winter", "float", PRESET, "Moisture content (wet basis) at a late-winter harvest.",
       lo=0.0, hi=1.0, hi_open=True, warn_hi=0.75, unit="fraction"),
    _k("harvest", "storage_loss_wet", "float", PRESET,
       "Share of harvested dry matter lost in storage when it is stored wetter than storage_safe_moisture.",
       **FRACTION, warn_hi=0.4, label="Storage loss of biomass stored wet"),
    _k("harvest", "storage_safe_moisture", "float", 0.25,
       "Highest moisture content (wet basis) at which biomass keeps in store with the dry storage loss.",
       lo=0.0, hi=1.0, hi_open=True, unit="fraction",
       source="common practice: bales keep at 20-25 % moisture; wetter ones heat and lose dry matter"),
    _k("harvest", "green_cut_yield_factor", "float", PRESET,
       "Growth in the years after an autumn (green) harvest relative to the growth under a late-winter "
       "harvest: below 1 where cutting before senescence weakens the next years' regrowth.",
       lo=0.0, hi=1.5, lo_open=True, unit="fraction"),
    _k("harvest", "buyer_moisture_max", "float", None,
       "Highest moisture content (wet basis) the buyer accepts; wetter biomass is dried to it or its price is "
       "cut (above_spec). Not given: no specification.", lo=0.0, hi=1.0, hi_open=True, unit="fraction"),
    _k("harvest", "above_spec", "enum", "dry",
       "What happens to biomass wetter than the buyer's specification: dried to it (drying_per_t_water), or "
       "sold wet at a price cut per point of moisture above it (price_cut_per_point).",
       choices=("dry", "price_cut")),
    _k("harvest", "drying_per_{t}_water", "float", 0.0,
       "Cost of drying, per t of water removed to reach the buyer's moisture specification.", **MONEY_HA, warn_hi=500,
       label="Drying cost"),
    _k("harvest", "price_cut_per_point", "float", 0.0,
       "Share of the price deducted per percentage point of moisture above the buyer's specification.",
       lo=0.0, hi=0.2, unit="fraction/point"),
    # --- nutrients -----------------------------------------------------------------
    *(
        _k("nutrients", f"{nut}_{timing}_{{kg}}_per_{{t}}_dm", "float", PRESET,
           f"{label} removed per t of dry matter harvested {when}.", lo=0.0, warn_hi=40.0,
           label=f"{label} taken off by a harvest {when}")
        for nut, label in (("n", "N"), ("p2o5", "P2O5"), ("k2o", "K2O"))
        for timing, when in (("autumn", "in autumn"), ("late_winter", "in late winter"))
    ),
    *(
        _k("nutrients", f"{nut}_replace_share", "float", PRESET,
           f"Share of the {label} removed by a late-winter harvest that is put back as fertiliser in the harvest "
           "year.", lo=0.0, hi=2.0, warn_hi=1.0, unit="fraction")
        for nut, label in (("n", "N"), ("p2o5", "P2O5"), ("k2o", "K2O"))
    ),
    *(
        _k("nutrients", f"{nut}_replace_share_autumn", "float", PRESET,
           f"Share of the {label} removed by an autumn (green) harvest that is put back as fertiliser in the "
           "harvest year.", lo=0.0, hi=2.0, warn_hi=1.0, unit="fraction")
        for nut, label in (("n", "N"), ("p2o5", "P2O5"), ("k2o", "K2O"))
    ),
    *(
        _k("nutrients", f"{nut}_price_per_{{kg}}", "float", REQUIRED, f"Price of {label} in fertiliser.", money=True, lo=0.0,
           warn_hi=20.0)
        for nut, label in (("n", "N"), ("p2o5", "P2O5"), ("k2o", "K2O"))
    ),
    _k("nutrients", "urea_share_of_n", "float", 0.0,
       "Share of the N applied after planting given as urea (its carbon is emitted as CO2, IPCC Eq. 11.13).",
       **FRACTION),
    _k("nutrients", "spreading_per_{ha}", "float", 0.0, "Cost of spreading fertiliser, in each year any is applied.", **MONEY_HA),
    # --- annual costs ----------------------------------------------------------------
    _k("costs", "harvest_per_{ha}", "float", REQUIRED, "Cutting, per harvest.", **MONEY_HA),
    _k("costs", "baling_chipping_per_{t}_dm", "float", REQUIRED, "Baling or chipping, per t of dry matter harvested.", **MONEY_HA, warn_hi=500,
       label="Baling or chipping cost"),
    _k("costs", "haul_distance_{km}", "float", REQUIRED, "One-way distance from field to buyer.", lo=0.0, warn_hi=300.0),
    _k("costs", "haul_per_{t}_{km}", "float", REQUIRED, "Haulage, per fresh tonne delivered and unit distance.", **MONEY_HA, warn_hi=10,
       label="Haulage rate"),
    _k("costs", "storage_per_{t}_dm", "float", 0.0, "Storage, per t of dry matter sold.", **MONEY_HA, warn_hi=500,
       label="Storage cost"),
    _k("costs", "rent_per_{ha}", "float", 0.0, "Land rent (or its opportunity cost), years 1..stand life.", **MONEY_HA, unit="/yr"),
    _k("costs", "overheads_per_{ha}", "float", 0.0, "Share of farm overheads, years 1..stand life.", **MONEY_HA, unit="/yr",
       label="Farm overheads"),
    _k("costs", "insurance_per_{ha}", "float", 0.0, "Crop and liability insurance, years 1..stand life.", **MONEY_HA, unit="/yr",
       label="Crop and liability insurance"),
    _k("costs", "upkeep_per_{ha}", "float", 0.0, "Yearly field upkeep (weed control, inspection), years 1..stand life.", **MONEY_HA, unit="/yr"),
    _k("costs", "removal_per_{ha}", "float", REQUIRED, "Taking the stand out and returning the field to its former use, in the last year.", **MONEY_HA),
    _k("costs", "change_per_year", "float", 0.0,
       "Yearly change of every cost after planting except rent (real or nominal as finance.escalation_basis says).",
       lo=-0.5, hi=1.0, hi_open=True, warn_lo=-0.1, warn_hi=0.1, unit="fraction/yr"),
    _k("costs", "rent_change_per_year", "float", 0.0,
       "Yearly change of the rent (real or nominal as finance.escalation_basis says).",
       lo=-0.5, hi=1.0, hi_open=True, warn_lo=-0.1, warn_hi=0.1, unit="fraction/yr"),
    # --- revenue -----------------------------------------------------------------
    _k("revenue", "price_per_{t}_dm", "float", None, "Biomass price per t of dry matter delivered (give this or price_per_gj).",
       money=True, lo=0.0, warn_hi=1000, label="Biomass price"),
    _k("revenue", "price_per_gj", "float", None, "Biomass price per GJ delivered, through the heating value.", money=True,
       lo=0.0, unit="/GJ", warn_hi=60, label="Biomass price per GJ"),
    _k("revenue", "heating_value_gj_per_{t}_dm", "float", PRESET, "Net heating value of the dry matter.", unit="GJ",
       lo=0.0, lo_open=True, warn_lo=12.0, warn_hi=22.0),
    _k("revenue", "price_change_per_year", "float", 0.0,
       "Change of the market price per year, from year 1 (0.01 = +1 %/yr; real or nominal as finance.escalation_basis says).", lo=-0.5, hi=0.5, warn_lo=-0.1, warn_hi=0.1, unit="fraction/yr"),
    _k("revenue", "price_path", "list", None,
       "Real price multipliers for years 1, 2, ... (the last repeats); replaces price_change_per_year.",
       lo=0.0, hi=10.0, unit="fraction"),
    _k("revenue", "annual_payment_per_{ha}", "float", 0.0, "Yearly payment (e.g. an agri-environment payment).", **MONEY_HA, unit="/yr"),
    _k("revenue", "annual_payment_years", "int", 0, "Number of years from year 1 the payment is made; 0 = every year.", lo=0),
    _k("revenue", "contract_years", "int", 0,
       "Years from year 1 sold under a fixed-price contract (then at the market price); 0 = no contract.", lo=0, hi=60),
    _k("revenue", "contract_price_per_{t}_dm", "float", None,
       "Contract price per t of dry matter delivered (give this or contract_price_per_gj, as the market price).",
       money=True, lo=0.0, warn_hi=1000, label="Contract price"),
    _k("revenue", "contract_price_per_gj", "float", None, "Contract price per GJ delivered.", money=True, lo=0.0,
       unit="/GJ", warn_hi=60),
    _k("revenue", "contract_change_per_year", "float", 0.0,
       "Yearly change of the contract price (its indexation clause; real or nominal as finance.escalation_basis says).",
       lo=-0.5, hi=1.0, hi_open=True, warn_lo=-0.1, warn_hi=0.1, unit="fraction/yr"),
    _k("revenue", "salvage_per_{ha}", "float", 0.0,
       "Receipt at removal (e.g. rhizomes or stools sold, a terminal value), in the last year.", **MONEY_HA),
    # --- carbon ------------------------------------------------------------------
    _k("carbon", "soc_method", "enum", "stock_change",
       "SOC path: IPCC Tier 1 linear stock change over the transition, a first-order approach to the new "
       "equilibrium, or a measured rate per year (soc_rate_t_c_per_ha_per_year) over the transition.",
       choices=("stock_change", "first_order", "measured_rate"), label="Soil carbon method"),
    _k("carbon", "transition_years", "int", 20, "Years to the new SOC equilibrium.", lo=1, hi=200,
       source="IPCC 2006 Vol.4 Ch.2, default time dependence of stock change factors (D = 20 yr)"),
    _k("carbon", "first_order_rate_per_year", "float", None,
       "Rate constant k of the first-order option; not given: k = ln(20) / transition_years, which puts 95 % of "
       "the change within the transition period.", lo=0.0, hi=5.0, lo_open=True, unit="1/yr",
       source="first-order decay: 1 - exp(-k D) = 0.95 at k = ln(20) / D"),
    _k("carbon", "soc_ref_{t}_c_per_{ha}", "float", DERIVED, "Reference SOC stock, 0-30 cm, native vegetation.",
       lo=0.0, lo_open=True, warn_hi=200.0, source="IPCC 2006 Vol.4 Ch.2 Table 2.3 by climate and soil"),
    *(
        _k("carbon", f"current_{f}", "float", DERIVED, f"{label} of the current land use.", lo=0.0, hi=3.0, lo_open=True,
           source="IPCC 2006 Vol.4 Table 5.5 (cropland) / Table 6.2 (grassland) by current_use and climate")
        for f, label in (("f_lu", "Land-use factor F_LU"), ("f_mg", "Management factor F_MG"), ("f_i", "Input factor F_I"))
    ),
    _k("carbon", "crop_land_use", "enum", PRESET,
       "Land use whose SOC factors hold under the stand: perennial_grass (a grass harvested every year: the set-aside "
       "factor on former cropland, grassland on former grassland), perennial_crop (perennial/tree crop, e.g. "
       "coppice), or any other land use named.", choices=LAND_USES,
       source="IPCC 2006 Vol.4 Ch.5 Table 5.5; Ch.6, land converted to grassland (set-aside factor for cropland "
              "converted to grassland)"),
    *(
        _k("carbon", f"crop_{f}", "float", DERIVED, f"{label} under the stand.", lo=0.0, hi=3.0, lo_open=True,
           source="IPCC 2006 Vol.4 Table 5.5 / Table 6.2 by crop_land_use, current_use and climate")
        for f, label in (("f_lu", "Land-use factor F_LU"), ("f_mg", "Management factor F_MG"), ("f_i", "Input factor F_I"))
    ),
    _k("carbon", "soc_rate_{t}_c_per_{ha}_per_year", "float", None,
       "SOC change per year under the stand with soc_method = measured_rate (a gain positive), from a field "
       "measurement or a published synthesis, until the transition period ends.", lo=-5.0, hi=5.0,
       warn_lo=-1.5, warn_hi=1.5,
       source="e.g. Poeplau & Don 2014, GCB Bioenergy, doi:10.1111/gcbb.12043: 0.40 +/- 0.20 t C/ha/yr "
              "for Miscanthus on former cropland in Europe", label="Measured SOC change per year"),
    _k("carbon", "prior_biomass_{t}_dm_per_{ha}", "float", DERIVED,
       "Biomass standing on the field before the stand (above and below ground), lost as CO2 at planting.",
       lo=0.0, warn_hi=50.0,
       source="IPCC 2006 Vol.4 Ch.6 Table 6.4 (grassland, by climate; from memory); 0 for cropland"),
    _k("carbon", "stand_biomass_{t}_dm_per_{ha}", "float", 0.0,
       "Biomass the mature stand holds between harvests (rhizomes and roots, coppice stools, stems standing on "
       "average over a rotation): built up with the ramp-up, lost at removal. 0 = not counted.",
       lo=0.0, warn_hi=60.0),
    _k("carbon", "stand_biomass_n_{kg}_per_{t}_dm", "float", 0.0,
       "N per t of the stand's own biomass (rhizomes, roots, stools), ploughed in at removal as crop residue.",
       lo=0.0, warn_hi=30.0, label="N content of the stand's biomass"),
    _k("carbon", "biomass_carbon_fraction", "float", 0.47, "Carbon per t of dry matter of the prior vegetation.",
       lo=0.3, hi=0.6, unit="t C/t DM", source="IPCC 2006 Vol.4 Ch.6, default carbon fraction 0.47; from memory",
       label="Carbon share of the prior vegetation's dry matter"),
    _k("carbon", "soc_c_to_n", "float", 15.0,
       "C:N ratio of the soil organic matter lost: N mineralised = SOC lost / C:N (IPCC Eq. 11.8).",
       lo=5.0, hi=40.0, unit="ratio", label="C:N ratio of the soil organic matter lost",
       source="IPCC 2006 Vol.4 Ch.11 Eq. 11.8: default C:N 15 for land-use change (10 for management change); "
              "from memory"),
    _k("carbon", "n2o_method", "enum", "ipcc2006", "IPCC default N2O factors: 2006 Guidelines or 2019 Refinement.",
       choices=("ipcc2006", "ipcc2019")),
    _k("carbon", "gwp", "enum", "AR6", "IPCC assessment report of the GWP100 values.", choices=("AR4", "AR5", "AR6")),
    _k("carbon", "diesel_kg_co2_per_{l}", "float", DERIVED,
       "CO2 (only: no CH4 or N2O of combustion) from burning one unit of diesel; the older spelling "
       "diesel_kg_co2e_per_l is read as this key.", unit="kg CO2", lo=0.0, warn_lo=2.0, warn_hi=3.5,
       aliases=("diesel_kg_co2e_per_{l}",), label="CO2 from burning diesel",
       source="IPCC 2006 Vol.2 Ch.1 Tables 1.2/1.4 (see tea/inputs/data/ipcc.toml)"),
    _k("carbon", "diesel_establishment_{l}_per_{ha}", "float", PRESET, "Diesel burnt in establishment.", lo=0.0),
    _k("carbon", "diesel_harvest_{l}_per_{ha}", "float", PRESET, "Diesel burnt per harvest (cutting).", lo=0.0),
    _k("carbon", "diesel_{l}_per_{t}_dm", "float", PRESET, "Diesel burnt baling or chipping, per t DM harvested.", lo=0.0,
       label="Diesel for baling or chipping"),
    _k("carbon", "diesel_removal_{l}_per_{ha}", "float", PRESET, "Diesel burnt removing the stand.", lo=0.0),
    *(
        _k("carbon", f"{nut}_manufacture_{{kg}}_co2e_per_{{kg}}", "float", DERIVED, f"Emissions from making one unit of {label}.",
           lo=0.0, warn_hi=15.0, source="tea/inputs/data/ipcc.toml (from memory)")
        for nut, label in (("n", "N"), ("p2o5", "P2O5"), ("k2o", "K2O"))
    ),
    _k("carbon", "haul_{kg}_co2e_per_{t}_{km}", "float", DERIVED, "Road haulage emissions per fresh t and unit distance.",
       lo=0.0, warn_hi=1.0, source="tea/inputs/data/ipcc.toml (from memory)", label="Haulage emissions"),
    _k("carbon", "credit_price_per_t_co2e", "float", 0.0, "Price a buyer pays per credited t CO2e; 0 = no credits.", money=True, lo=0.0, unit="/t CO2e", warn_hi=1000),
    _k("carbon", "credit_first_year", "int", 1,
       "First verification year: the removals up to it are credited in it, later ones in their own year; none "
       "in the removal year.", lo=0),
    _k("carbon", "verification_per_{ha}", "float", 0.0,
       "Cost of one verification (audit, soil sampling), in the first verification year and every "
       "verification_interval_years after it while the stand stands.", **MONEY_HA),
    _k("carbon", "verification_interval_years", "int", 5, "Years between verifications.", lo=1, hi=20,
       source="common practice: soil-carbon registries verify every few years (commonly up to 5)"),
    _k("carbon", "registry_per_{ha}", "float", 0.0,
       "Yearly registry and account fees while credits are sold, from year 1 to the year before removal.",
       **MONEY_HA, unit="/yr"),
    _k("carbon", "credit_reversal", "enum", "payback",
       "At removal the soil carbon gained is lost again: payback = the credited removals lost beyond the buffer "
       "are paid back at the credit price in the removal year; buffer_only = the registry's buffer bears the loss.",
       choices=("payback", "buffer_only")),
    _k("carbon", "credit_buffer_share", "float", 0.2, "Share of removals held back in a non-permanence buffer.", **FRACTION,
       source="common practice: registries hold back 10-30 % of soil-carbon removals"),
    # --- operations by year (laid out from the case's [[operations]]) ------------------
    _k("schedule", "cost_per_{ha}_by_year", "list", [0.0],
       "Cost of the operations in years 0, 1, 2, ... (from [[operations]]; escalated like other costs after "
       "planting).", money=True, lo=0.0),
    _k("schedule", "diesel_{l}_per_{ha}_by_year", "list", [0.0],
       "Diesel the operations burn in years 0, 1, 2, ... (from [[operations]]).", lo=0.0),
    _k("schedule", "n_{kg}_per_{ha}_by_year", "list", [0.0],
       "N the operations apply in years 0, 1, 2, ... (from [[operations]]).", lo=0.0),
    _k("schedule", "limestone_{t}_per_{ha}_by_year", "list", [0.0],
       "Limestone (CaCO3) the operations spread in years 0, 1, 2, ... (from [[operations]]).", lo=0.0),
    _k("schedule", "dolomite_{t}_per_{ha}_by_year", "list", [0.0],
       "Dolomite (CaMg(CO3)2) the operations spread in years 0, 1, 2, ... (from [[operations]]).", lo=0.0),
    # --- finance -------------------------------------------------------------------
    _k("finance", "discount_rate", "float", REQUIRED, "Discount rate, real or nominal as rate_basis says.",
       lo=-0.5, hi=1.0, hi_open=True, lo_open=True, warn_lo=0.0, warn_hi=0.2, unit="fraction/yr"),
    _k("finance", "rate_basis", "enum", "real", "Whether discount_rate is real or nominal (then made real with inflation, Fisher equation).",
       choices=("real", "nominal"), label="Discount rate basis"),
    _k("finance", "inflation", "float", 0.0, "General inflation per year: makes nominal rates real (rate_basis = nominal) and turns today's money into the loan's money of the year.",
       lo=-0.5, hi=1.0, hi_open=True, lo_open=True, warn_lo=-0.05, warn_hi=0.15, unit="fraction/yr"),
    _k("finance", "escalation_basis", "enum", "real",
       "Whether the yearly changes of prices, costs and rent are real (beyond inflation) or nominal "
       "(then made real with inflation).", choices=("real", "nominal")),
    _k("finance", "stand_life_years", "int", PRESET, "Years from planting to removal; the analysis horizon.", lo=2, hi=60, warn_hi=30),
    _k("finance", "mirr_finance_rate", "float", None, "Finance rate of MIRR; the real discount rate if not given.",
       lo=-0.5, hi=1.0, hi_open=True, lo_open=True, unit="fraction/yr"),
    _k("finance", "mirr_reinvest_rate", "float", None, "Reinvestment rate of MIRR; the real discount rate if not given.",
       lo=-0.5, hi=1.0, hi_open=True, lo_open=True, unit="fraction/yr"),
    # --- establishment loan ------------------------------------------------------------
    _k("loan", "share_of_establishment", "float", 0.0,
       "Share of the year-0 establishment cost borrowed; 0 = no loan.", **FRACTION),
    _k("loan", "sized_on", "enum", "cost_net_of_grant",
       "What the share is of: the year-0 establishment cost, or that cost less the grant.",
       choices=("cost_net_of_grant", "cost")),
    _k("loan", "profile", "enum", "annuity",
       "Repayment profile: level payments (annuity), equal principal (straight_line), or debt service set to "
       "the cash available over a target DSCR (sculpted; the loan is capped at what that repays).",
       choices=("annuity", "straight_line", "sculpted")),
    _k("loan", "sculpt_dscr", "float", 1.35, "Target DSCR of a sculpted profile.", lo=1.0, hi=10.0,
       unit="ratio", source="from memory: lenders sculpt to 1.30-1.40 over a 1.20-1.25 covenant"),
    _k("loan", "rate", "float", None, "Loan interest rate per year (needed when a share is borrowed).",
       lo=0.0, hi=1.0, hi_open=True, warn_hi=0.2, unit="fraction/yr"),
    _k("loan", "term_years", "int", 10, "Years of repayment after the grace years.", lo=1, hi=40),
    _k("loan", "grace_years", "int", 0, "Years 1..n during ramp-up with no principal repaid.", lo=0, hi=10,
       label="Grace years"),
    _k("loan", "grace_interest", "enum", "interest_only",
       "In the grace years, pay the interest, or add it to the loan (capitalised).",
       choices=("interest_only", "capitalised")),
    _k("loan", "dscr_covenant", "float", 1.25, "Lowest debt service cover ratio the lender accepts.",
       lo=0.0, lo_open=True, hi=10.0, warn_lo=1.0, warn_hi=2.0, unit="ratio",
       source="from memory: common lending practice asks 1.20-1.35, often 1.25"),
    _k("loan", "covenant_first_year", "int", 0,
       "First year the DSCR covenant is tested; 0 = the first repayment year.", lo=0, hi=60),
    _k("loan", "reserve_years", "float", 0.0,
       "Debt service reserve: years of the next year's debt service held back from planting on; 0 = none.",
       lo=0.0, hi=2.0, unit="yr"),
    _k("loan", "bridge_grant", "bool", False,
       "Bridge a grant paid in arrears with a short loan at the loan's rate, repaid when the grant arrives."),
    _k("loan", "cfads_credit_share", "float", 0.0,
       "Share of carbon-credit receipts counted as cash available for debt service (0 = excluded).", **FRACTION),
    _k("loan", "cfads_counts_grants", "bool", True, "Whether grant receipts count as cash available for debt service."),
    _k("loan", "cfads_uncontracted_share", "float", 1.0,
       "Share of biomass sales outside a fixed-price contract counted as cash available for debt service.", **FRACTION),
    # --- working capital line ----------------------------------------------------------
    _k("working_capital", "limit_per_{ha}", "float", 0.0,
       "Limit of a working-capital line drawn when cash after debt service runs short; 0 = none.", **MONEY_HA),
    _k("working_capital", "rate", "float", 0.0, "Interest rate of the working-capital line per year.",
       lo=0.0, hi=1.0, hi_open=True, warn_hi=0.25, unit="fraction/yr"),
    # --- tax ---------------------------------------------------------------------------
    _k("tax", "rate", "float", 0.0, "Tax rate on the stand's taxable result; 0 = no tax.", **FRACTION),
    _k("tax", "establishment", "enum", "amortised",
       "Establishment cost deducted when spent (expensed) or in equal parts over amortisation_years (amortised).",
       choices=("amortised", "expensed")),
    _k("tax", "amortisation_years", "int", 10, "Years over which an amortised establishment cost is deducted.",
       lo=1, hi=60),
    _k("tax", "losses", "enum", "carried_forward",
       "A loss is carried forward against later profits, or relieved at once against other farm income.",
       choices=("carried_forward", "relieved")),
    _k("tax", "interest_deductible", "bool", True, "Whether loan interest is deductible (the grower's own tax)."),
    # --- the lender's downside case ------------------------------------------------------
    _k("downside", "price_change", "float", -0.15, "Change of every biomass price in the downside case.",
       lo=-1.0, hi=1.0, unit="fraction", source="from memory: lender stress tests commonly take 10-20 % off price"),
    _k("downside", "yield_change", "float", -0.10, "Change of the mature yield in the downside case.",
       lo=-1.0, hi=1.0, unit="fraction", source="from memory: lender stress tests commonly take 10-20 % off yield"),
    _k("downside", "delay_years", "int", 1, "Years the yield ramp-up starts late in the downside case.",
       lo=0, hi=5, source="from memory: a year's delay, the usual establishment setback"),
)

SECTIONS: tuple[str, ...] = tuple(dict.fromkeys(k.section for k in KEYS))
BY_PATH: dict[str, Key] = {k.path: k for k in KEYS}


#: defaults that depend on the case's unit system: key path -> {system: (default, where it comes from)}
DEFAULTS_BY_SYSTEM: dict[str, dict[str, tuple[Any, str]]] = {
    "case.page_size": {"us_customary": ("Letter", "default for a US customary case (ANSI Letter paper)")},
}


def default_in(key: Key, system: str) -> tuple[Any, str]:
    """A key's default in a unit system and where it comes from (:data:`DEFAULTS_BY_SYSTEM`, else the key's own).

    >>> default_in(BY_PATH["case.page_size"], "us_customary")[0], default_in(BY_PATH["case.page_size"], "metric")[0]
    ('Letter', 'A4')
    """
    return DEFAULTS_BY_SYSTEM.get(key.path, {}).get(system, (key.default, key.source or "default"))


def keys_in(section: str) -> list[Key]:
    return [k for k in KEYS if k.section == section]


#: physical ceiling on a harvested yield [t DM ha⁻¹ yr⁻¹]: from memory, the
#: most that the maximum efficiency of solar energy conversion allows any crop
YIELD_CEILING_T_DM_PER_HA = 100.0


# ----------------------------------------------------------------------------- spellings
@functools.lru_cache(maxsize=None)
def spelling_index() -> dict[str, dict[str, tuple[Key, float]]]:
    """section -> accepted spelling -> (key, factor to canonical)."""
    index: dict[str, dict[str, tuple[Key, float]]] = {}
    for k in KEYS:
        for spelling, factor in k.spellings().items():
            index.setdefault(k.section, {})[spelling] = (k, factor)
    return index


@functools.lru_cache(maxsize=None)
def alias_index() -> dict[str, dict[str, tuple[Key, float]]]:
    """section -> alias spelling (e.g. a fresh-yield key) -> (key, factor)."""
    index: dict[str, dict[str, tuple[Key, float]]] = {}
    for k in KEYS:
        for alias in k.aliases:
            for spelling, factor in units.spellings(alias).items():
                index.setdefault(k.section, {})[spelling] = (k, factor)
    return index


def suggest(word: str, candidates: Iterable[str]) -> str:
    """"; did you mean 'x'?" for the nearest candidate; every candidate the word is part of, or that is as near
    as the nearest, where there are several (a guess between equals would mislead).

    >>> suggest("temperat", ["boreal", "cool_temperate_dry", "warm_temperate_dry"])
    "; did you mean 'cool_temperate_dry' or 'warm_temperate_dry'?"
    >>> suggest("borel", ["boreal", "cool_temperate_dry"])
    "; did you mean 'boreal'?"
    >>> suggest("clay", ["high_activity_clay", "low_activity_clay", "sandy"])
    "; did you mean 'high_activity_clay' or 'low_activity_clay'?"
    """
    candidates = list(candidates)
    within = [c for c in candidates if len(word) >= 3 and word.lower() in c.lower() and word != c]
    close = difflib.get_close_matches(word, candidates, n=4, cutoff=0.5)
    if len(within) > 1:
        named = within[:4]
    elif close:
        nearness = lambda c: difflib.SequenceMatcher(None, word, c).ratio()  # noqa: E731 - get_close_matches' own
        named = [c for c in close if nearness(c) >= nearness(close[0]) - 0.02]
    else:
        return ""
    shown = [repr(c) for c in named]
    return f"; did you mean {shown[0] if len(shown) == 1 else ', '.join(shown[:-1]) + ' or ' + shown[-1]}?"
