"""Published coefficient tables: IPCC reference stocks, stock-change factors, N2O
factors, GWP100 and default input emission factors, read from ``data/ipcc.toml``.

These are look-ups by label (climate zone, soil class, land use, guideline
version, assessment report), done when a case is resolved; the equations that
use the numbers are in :mod:`tea.methods.carbon`. Every entry of the data file
carries its source and status.

References
----------
.. [1] IPCC (2006). *2006 IPCC Guidelines for National Greenhouse Gas
   Inventories*, Vol. 4 Agriculture, Forestry and Other Land Use: Ch. 2
   (Table 2.3), Ch. 5 (Table 5.5), Ch. 6 (Table 6.2), Ch. 11 (Tables 11.1
   and 11.3). IGES, Japan.
.. [2] IPCC (2019). *2019 Refinement to the 2006 IPCC Guidelines for
   National Greenhouse Gas Inventories*, Vol. 4 Ch. 11, Tables 11.1 and 11.3.
.. [3] European Commission, Joint Research Centre (2010). *ILCD Handbook,
   Detailed guidance*, Annex B Tables 10-12 (reproducing IPCC 2006
   Tables 2.3 and 5.5).
"""

from __future__ import annotations

import copy
import functools
import tomllib
from importlib import resources

import numpy as np


_DATA_FILE = "ipcc.toml"


@functools.lru_cache(maxsize=1)
def _data() -> dict:
    """The packaged coefficient file, parsed once."""
    raw = (resources.files("tea.inputs.data") / _DATA_FILE).read_bytes()
    return tomllib.loads(raw.decode("utf-8"))


CLIMATES: tuple[str, ...] = tuple(_data()["soc_ref"]["cells"])
SOILS: tuple[str, ...] = tuple(_data()["soc_ref"]["soils"])
LAND_USES: tuple[str, ...] = tuple(_data()["land_uses"])
GASES: tuple[str, ...] = tuple(_data()["gwp100"])
REPORTS: tuple[str, ...] = tuple(k for k in _data()["gwp100"]["n2o"] if k != "source")
N2O_VERSIONS: tuple[str, ...] = tuple(_data()["n2o"])


def _check_name(kind: str, name, valid: tuple[str, ...]) -> str:
    if name not in valid:
        raise KeyError(f"unknown {kind} {name!r}; valid {kind}s: {', '.join(valid)}")
    return name


def climate_regimes(climate: str) -> tuple[str, str]:
    """Temperature and moisture regime of a climate name.

    Parameters
    ----------
    climate : str
        One of `CLIMATES`.

    Returns
    -------
    temperature_regime : str
        ``"tropical"`` for the tropical climates, ``"temperate_boreal"`` for
        boreal, cool temperate and warm temperate.
    moisture_regime : str
        ``"dry"`` for the climates named ``*_dry``, ``"moist_wet"`` for the
        others.

    Notes
    -----
    The regimes pick the column of the stock-change factor tables [1]_. The
    reference-stock table lists boreal without a moisture split; it is put in
    the moist/wet column here, as most boreal land is moist (from memory).
    The regimes only select stock-change factors: the wet/dry choice of the
    N2O factors is a separate argument of `n2o_factors`.

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 4, Ch. 5, Table 5.5.

    Examples
    --------
    >>> climate_regimes("cool_temperate_moist")
    ('temperate_boreal', 'moist_wet')
    >>> climate_regimes("tropical_dry")
    ('tropical', 'dry')
    """
    _check_name("climate", climate, CLIMATES)
    temperature = "tropical" if climate.startswith("tropical") else "temperate_boreal"
    moisture = "dry" if climate.endswith("_dry") else "moist_wet"
    return temperature, moisture


def soc_ref_t_c_per_ha(climate: str, soil: str) -> float:
    """Reference soil organic carbon stock under native vegetation, 0-30 cm.

    Parameters
    ----------
    climate : str
        One of `CLIMATES`.
    soil : str
        One of `SOILS`: ``high_activity_clay``, ``low_activity_clay``,
        ``sandy``, ``spodic``, ``volcanic``.

    Returns
    -------
    float
        SOC_REF [t C ha⁻¹], 0-30 cm depth.

    Raises
    ------
    KeyError
        If the climate or soil is unknown, or the table has no value for the
        pair (the message lists the soils that have one).

    Notes
    -----
    The default (Tier 1) reference stock of IPCC 2006 Table 2.3 [1]_, as
    reproduced in the ILCD Handbook [2]_. Cells marked NA in the table (for
    example spodic soils outside the boreal and cool temperate moist zones)
    have no value.

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 4, Ch. 2, Table 2.3.
    .. [2] EC-JRC (2010). ILCD Handbook, Detailed guidance, Annex B Table 10.

    Examples
    --------
    >>> soc_ref_t_c_per_ha("cool_temperate_moist", "high_activity_clay")
    95.0
    """
    _check_name("climate", climate, CLIMATES)
    _check_name("soil", soil, SOILS)
    row = _data()["soc_ref"]["cells"][climate]
    if soil not in row:
        raise KeyError(
            f"no reference SOC stock for soil {soil!r} in climate {climate!r} (NA in "
            f"IPCC 2006 Table 2.3); soils with a value there: {', '.join(row)}"
        )
    return float(row[soil])


def land_use_factors(land_use: str, climate: str) -> tuple[float, float, float]:
    """Stock-change factors of a named land use in a climate.

    Parameters
    ----------
    land_use : str
        One of `LAND_USES`: ``cropland_full_till``, ``cropland_reduced_till``,
        ``cropland_no_till``, ``cropland_low_input`` (full till, low input),
        ``set_aside``, ``grassland`` (nominally managed),
        ``grassland_degraded`` (moderately), ``grassland_improved``,
        ``perennial_crop``.
    climate : str
        One of `CLIMATES`; its regimes (`climate_regimes`) pick the column.

    Returns
    -------
    f_lu, f_mg, f_i : float
        Land-use, management and input factors [-].

    Notes
    -----
    Cropland values from IPCC 2006 Table 5.5 [1]_ (via [3]_), grassland
    values from Table 6.2 [2]_. Management and input factors apply to
    cultivated land only: 1 is used for perennial crops and set-aside [3]_.

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 4, Ch. 5, Table 5.5.
    .. [2] IPCC (2006). Vol. 4, Ch. 6, Table 6.2.
    .. [3] EC-JRC (2010). ILCD Handbook, Detailed guidance, Annex B
       Tables 11-12.

    Examples
    --------
    >>> land_use_factors("cropland_full_till", "cool_temperate_moist")
    (0.69, 1.0, 1.0)
    >>> land_use_factors("cropland_no_till", "tropical_dry")
    (0.58, 1.17, 1.0)
    """
    _check_name("land use", land_use, LAND_USES)
    temperature, moisture = climate_regimes(climate)
    levels = _data()["land_uses"][land_use]
    tables = _data()["stock_change_factors"]
    return tuple(
        float(tables[factor][levels[factor]][temperature][moisture])
        for factor in ("f_lu", "f_mg", "f_i")
    )


def prior_biomass_t_dm_per_ha(land_use: str, climate: str) -> tuple[float, float, str]:
    """Biomass standing on the field before the stand, lost at conversion, and its carbon fraction.

    Grassland: IPCC 2006 Vol. 4 Ch. 6 Table 6.4 total non-woody biomass by climate; cropland, set-aside and a
    perennial crop are converted after their last harvest: 0.

    Returns
    -------
    biomass [t DM ha⁻¹], carbon fraction [t C (t DM)⁻¹], source text

    >>> prior_biomass_t_dm_per_ha("cropland_full_till", "cool_temperate_moist")[0]
    0.0
    """
    _check_name("land use", land_use, LAND_USES)
    _check_name("climate", climate, CLIMATES)
    table = _data()["grassland_biomass"]
    if land_use.startswith("grassland"):
        return float(table[climate]), float(table["carbon_fraction"]), table["source"]
    return 0.0, float(table["carbon_fraction"]), "converted after the last harvest: no standing biomass (common practice)"


def crop_land_use(crop_use: str, current_use: str) -> str:
    """The land use whose factors hold under a stand, given what the field was before.

    A perennial grass harvested every year (``perennial_grass``) takes, on
    former cropland, the set-aside factor of Table 5.5: IPCC 2006 Vol. 4
    Ch. 6 (Land converted to grassland, mineral soils, Tier 1) calls it good
    practice to use it for cultivated annual cropland converted to grassland,
    which gains carbon at a rate similar to set-aside land. On former
    grassland the stand stays grassland, nominally managed. Any other crop
    land use is taken as it is.

    >>> crop_land_use("perennial_grass", "cropland_full_till"), crop_land_use("perennial_grass", "grassland")
    ('perennial_grass', 'grassland')
    >>> land_use_factors("perennial_grass", "cool_temperate_moist")[0]  # the set-aside F_LU, Table 5.5
    0.82
    >>> crop_land_use("perennial_crop", "grassland")
    'perennial_crop'
    """
    _check_name("land use", crop_use, LAND_USES)
    if crop_use == "perennial_grass" and str(current_use).startswith("grassland"):
        return "grassland"
    return crop_use


def n2o_factors(version, wet, disaggregated: bool = True) -> dict[str, float]:
    """N2O emission factors for synthetic fertiliser N, by guideline version and climate.

    Parameters
    ----------
    version : str or int
        ``"2006"`` (IPCC 2006 Guidelines) or ``"2019"`` (2019 Refinement).
    wet : bool
        True for a wet climate, False for a dry one. Leaching (Frac_LEACH) is
        counted in wet climates only, in both versions.
    disaggregated : bool, default True
        For 2019: use the climate-specific EF1 (synthetic fertiliser) and
        EF4; False uses the aggregated values. The 2006 Guidelines have no
        climate split, so this argument does not change their factors.

    Returns
    -------
    dict
        ``ef1`` [kg N2O-N (kg N)⁻¹], ``frac_gasf`` [kg N volatilised
        (kg N)⁻¹], ``frac_leach`` [kg N leached (kg N)⁻¹], ``ef4``
        [kg N2O-N (kg N volatilised)⁻¹], ``ef5`` [kg N2O-N (kg N leached)⁻¹].

    Notes
    -----
    Defaults of Tables 11.1 and 11.3 in IPCC 2006 [1]_ and the 2019
    Refinement [2]_. For 2019 the disaggregated values are the default here
    because the input is synthetic fertiliser and the climate is known:
    wet EF1 0.016 (the 0.006 for other N inputs in wet climates does not
    apply), dry EF1 0.005; EF4 wet 0.014, dry 0.005. With
    ``disaggregated=False`` EF1 and EF4 are the aggregated 0.010.

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 4, Ch. 11, Tables 11.1 and 11.3.
    .. [2] IPCC (2019). 2019 Refinement, Vol. 4, Ch. 11, Tables 11.1 and 11.3.

    Examples
    --------
    >>> n2o_factors("2019", wet=True)["ef1"]
    0.016
    >>> n2o_factors("2019", wet=True, disaggregated=False)["ef1"]
    0.01
    >>> n2o_factors(2006, wet=False)["frac_leach"]
    0.0
    """
    version = _check_name("N2O factor version", str(version), N2O_VERSIONS)
    if not isinstance(wet, (bool, np.bool_)):
        raise TypeError(f"wet must be True (wet climate) or False (dry climate), got {wet!r}")
    climate = "wet" if wet else "dry"
    factors = {}
    for name in ("ef1", "frac_gasf", "frac_leach", "ef4", "ef5"):
        entry = _data()["n2o"][version][name]
        if climate in entry and (disaggregated or "aggregated" not in entry):
            factors[name] = float(entry[climate])
        else:
            factors[name] = float(entry["aggregated"])
    return factors


def gwp(gas: str, report: str) -> float:
    """100-year global warming potential of a gas in an IPCC assessment report.

    Parameters
    ----------
    gas : str
        ``"co2"``, ``"ch4"`` or ``"n2o"`` (case-insensitive).
    report : str
        ``"AR4"``, ``"AR5"`` or ``"AR6"`` (case-insensitive).

    Returns
    -------
    float
        GWP100 [kg CO2e (kg gas)⁻¹].

    Notes
    -----
    AR5 values are those without climate-carbon feedback (N2O 265; 298 with
    feedback). The AR6 CH4 value 27.9 does not split fossil (29.8) from
    non-fossil (27.0) methane.

    References
    ----------
    .. [1] IPCC (2007). Climate Change 2007: The Physical Science Basis
       (AR4 WG1).
    .. [2] IPCC (2013). Climate Change 2013: The Physical Science Basis
       (AR5 WG1).
    .. [3] IPCC (2021). Climate Change 2021: The Physical Science Basis
       (AR6 WG1), Ch. 7, Table 7.15.

    Examples
    --------
    >>> gwp("n2o", "AR6")
    273.0
    """
    gas_key = _check_name("gas", str(gas).lower(), GASES)
    report_key = _check_name("report", str(report).upper(), REPORTS)
    return float(_data()["gwp100"][gas_key][report_key])


def default_input_factors() -> dict[str, dict]:
    """Default emission factors for diesel, fertiliser manufacture and road haulage.

    Returns
    -------
    dict
        Keyed by factor name, each a dict with ``value``, ``unit``,
        ``status`` and ``source`` (plus the components and check values the
        data file records):

        * ``diesel_kg_co2_per_l`` [kg CO2 L⁻¹]
        * ``fertiliser_n_kg_co2e_per_kg_n`` [kg CO2e (kg N)⁻¹]
        * ``fertiliser_p2o5_kg_co2e_per_kg_p2o5`` [kg CO2e (kg P2O5)⁻¹]
        * ``fertiliser_k2o_kg_co2e_per_kg_k2o`` [kg CO2e (kg K2O)⁻¹]
        * ``road_haulage_kg_co2e_per_t_km`` [kg CO2e t⁻¹ km⁻¹]

        The dict is a copy: changing it does not change the packaged data.

    Notes
    -----
    Diesel is computed from the IPCC 2006 Vol. 2 default emission factor and
    net calorific value of gas/diesel oil [1]_ and a density:

    .. math:: EF_{diesel} = EF_{CO_2} \\cdot NCV \\cdot \\rho
              = 74\\,100 \\cdot 43.0 \\cdot 10^{-6} \\cdot 0.84

    [kg CO2 TJ⁻¹ · TJ Gg⁻¹ · Gg kg⁻¹ · kg L⁻¹]. These three numbers, and the
    fertiliser and haulage factors, are from memory (status in each entry);
    the 40 CFR 98 Table C-1 value for distillate No. 2 (2.696 kg L⁻¹) is
    recorded beside the diesel factor as a check.

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 2 Energy, Ch. 1, Tables 1.2 and 1.4.
    .. [2] US EPA. 40 CFR Part 98 Subpart C, Table C-1.

    Examples
    --------
    >>> round(default_input_factors()["diesel_kg_co2_per_l"]["value"], 3)
    2.676
    """
    factors = copy.deepcopy(_data()["inputs"])
    diesel = factors["diesel_kg_co2_per_l"]
    tj_per_kg = diesel["ncv_tj_per_gg"] / 1.0e6  # 1 Gg = 10^6 kg
    diesel["value"] = diesel["ef_kg_co2_per_tj"] * tj_per_kg * diesel["density_kg_per_l"]
    return factors


# ----------------------------------------------------------------------------- tables the model reads by label
N2O_METHODS = ("ipcc2006", "ipcc2019")


@functools.lru_cache(maxsize=1)
def tables() -> dict[str, dict]:
    """The published tables the model looks up by label (:func:`tea.model.expr.lookup`).

    Each table: ``keys`` (labels; a key of several labels joins them with a
    space), ``columns`` (name -> values in key order), ``units`` and ``source``.
    The workbook writes each table on a sheet and reads it with INDEX/MATCH,
    so an edited climate or method takes effect there too.
    """
    moisture = {c: ("wet" if climate_regimes(c)[1] == "moist_wet" else "dry") for c in CLIMATES}
    n2o_keys = [f"{m} {w}" for m in N2O_METHODS for w in ("wet", "dry")]
    n2o_cols: dict[str, list[float]] = {name: [] for name in ("ef1", "frac_gasf", "frac_leach", "ef4", "ef5")}
    for key in n2o_keys:
        method, wet = key.split(" ")
        for name, value in n2o_factors(method.removeprefix("ipcc"), wet == "wet").items():
            n2o_cols[name].append(value)
    return {
        "climate_moisture": {
            "keys": list(CLIMATES), "columns": {"moisture": [moisture[c] for c in CLIMATES]},
            "units": {"moisture": ""},
            "source": "IPCC 2006 Vol.4 Ch.3 climate zones: moisture regime (wet = moist or wet, boreal included)",
        },
        "n2o_factors": {
            "keys": n2o_keys, "columns": n2o_cols,
            "units": {"ef1": "kg N2O-N/kg N", "frac_gasf": "kg N/kg N", "frac_leach": "kg N/kg N",
                      "ef4": "kg N2O-N/kg N", "ef5": "kg N2O-N/kg N"},
            "source": "IPCC 2006 Vol.4 Ch.11 Tables 11.1, 11.3; 2019 Refinement Tables 11.1, 11.3 "
                      "(leaching in wet climates only)",
        },
        "gwp100": {
            "keys": list(REPORTS), "columns": {"n2o": [gwp("n2o", r) for r in REPORTS],
                                               "ch4": [gwp("ch4", r) for r in REPORTS]},
            "units": {"n2o": "kg CO2e/kg N2O", "ch4": "kg CO2e/kg CH4"},
            "source": _data()["gwp100"]["n2o"]["source"],
        },
    }


# ----------------------------------------------------------------------------- light-use efficiency
@functools.lru_cache(maxsize=1)
def _light_use() -> dict:
    raw = (resources.files("tea.inputs.data") / "light_use.toml").read_bytes()
    return tomllib.loads(raw.decode("utf-8"))


def light_use_entries(crop: str) -> dict[str, dict]:
    """Parameters of Monteith's equation for a crop preset (or a reference crop), each entry with
    ``value``, ``low``, ``high``, ``unit`` and ``source`` (``data/light_use.toml``); the shared
    entries (PAR share, soil water) first. A copy: changing it does not change the packaged data.

    Raises KeyError naming the crops the file holds.

    >>> light_use_entries("rhizome_grass")["extinction_coefficient"]["value"]
    0.6
    """
    data = _light_use()
    crops = {**data["crops"], **data.get("reference", {})}
    _check_name("crop", crop, tuple(crops))
    return copy.deepcopy({**data["common"], **crops[crop]})


def light_use_parameters(crop: str, which: str = "value") -> dict[str, float]:
    """The values (or the ``low``/``high`` ends) of :func:`light_use_entries`, by name.

    >>> light_use_parameters("coppice")["rue_g_per_mj_par"], light_use_parameters("coppice", "low")["par_share"]
    (1.8, 0.47)
    """
    return {name: entry[which] for name, entry in light_use_entries(crop).items()}


def light_use_crops() -> tuple[str, ...]:
    """The crop presets the light-use data covers."""
    return tuple(_light_use()["crops"])
