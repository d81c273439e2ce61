"""Soil organic carbon and field greenhouse-gas arithmetic (IPCC Tier 1).

Pure functions over numbers and numpy arrays. Arrays follow the shape rule of
`tea`: cases (scenarios) on the first axis, years on the last axis, year index
0 = the planting year. Every argument broadcasts with numpy rules, so a
``(cases, 1)`` column of stocks against a ``(1, years)`` row of years gives a
``(cases, years)`` table.

Sign convention of this module:

* soil organic carbon (SOC) is a **stock** [t C ha⁻¹]; a stock change is
  positive when the soil gains carbon (a removal of CO2 from the atmosphere);
* emissions (N2O, fuel, purchased inputs) are **positive** quantities of gas
  emitted [kg N2O-N], [kg N2O], [kg CO2e].

The published coefficients (reference stocks, stock-change factors, N2O
emission factors, global warming potentials, default input factors) live in
the packaged data file ``tea/data/ipcc.toml``, each with its source; they are
read once and cached. The numbers are planning estimates for a Tier 1
inventory, not agronomic advice and not a verified carbon credit: crediting
is governed by the rules of the registry concerned.

References
----------
.. [1] IPCC (2006). *2006 IPCC Guidelines for National Greenhouse Gas
   Inventories*, Vol. 4 Agriculture, Forestry and Other Land Use: Ch. 2
   (Eq. 2.25, Table 2.3), Ch. 5 (Table 5.5), Ch. 6 (Table 6.2), Ch. 11
   (Eq. 11.1, 11.9, 11.10, Tables 11.1 and 11.3). IGES, Japan.
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
from pathlib import Path

import numpy as np

__all__ = [
    "C_TO_CO2",
    "N2O_N_TO_N2O",
    "CLIMATES",
    "SOILS",
    "LAND_USES",
    "GASES",
    "REPORTS",
    "N2O_VERSIONS",
    "climate_regimes",
    "soc_ref_t_c_per_ha",
    "land_use_factors",
    "soc_equilibrium",
    "soc_path_stock_change",
    "soc_path_first_order",
    "soc_after_reversion",
    "soc_reversion_loss_t_c_per_ha",
    "n2o_factors",
    "n2o_direct_kg_n2o_n",
    "n2o_indirect_kg_n2o_n",
    "n2o_n_to_n2o",
    "gwp",
    "default_input_factors",
]

# Stoichiometry, not data: molar mass of CO2 (44) over that of C (12), and of
# N2O (44) over the mass of its two N atoms (28).
C_TO_CO2 = 44.0 / 12.0
N2O_N_TO_N2O = 44.0 / 28.0

_DATA_FILE = "ipcc.toml"


@functools.lru_cache(maxsize=1)
def _data() -> dict:
    """The packaged coefficient file, parsed once."""
    if __package__:
        raw = (resources.files(__package__) / "data" / _DATA_FILE).read_bytes()
    else:  # module loaded by file path, outside its package: read the file beside it
        raw = (Path(__file__).parent / "data" / _DATA_FILE).read_bytes()
    return tomllib.loads(raw.decode("utf-8"))


CLIMATES: tuple[str, ...] = tuple(_data()["soc_ref"]["cells"])
SOILS: tuple[str, ...] = tuple(_data()["soc_ref"]["soils"])
LAND_USES: tuple[str, ...] = tuple(_data()["land_uses"])
GASES: tuple[str, ...] = tuple(_data()["gwp100"])
REPORTS: tuple[str, ...] = tuple(k for k in _data()["gwp100"]["n2o"] if k != "source")
N2O_VERSIONS: tuple[str, ...] = tuple(_data()["n2o"])


def _scalar_or_array(x):
    """A plain float for a 0-d result, the array otherwise."""
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


def _check_name(kind: str, name, valid: tuple[str, ...]) -> str:
    if name not in valid:
        raise KeyError(f"unknown {kind} {name!r}; valid {kind}s: {', '.join(valid)}")
    return name


def _check_nonnegative(name: str, value) -> np.ndarray:
    arr = np.asarray(value, dtype=float)
    if np.any(arr < 0):
        raise ValueError(f"{name} must be >= 0, got {value!r}")
    return arr


def _check_fraction(name: str, value) -> np.ndarray:
    arr = np.asarray(value, dtype=float)
    if np.any((arr < 0) | (arr > 1)):
        raise ValueError(f"{name} must be a fraction between 0 and 1, got {value!r}")
    return arr


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


def soc_equilibrium(soc_ref, f_lu, f_mg, f_i):
    """Equilibrium soil organic carbon stock of a land use.

    Parameters
    ----------
    soc_ref : float or array_like
        Reference stock SOC_REF [t C ha⁻¹].
    f_lu, f_mg, f_i : float or array_like
        Land-use, management and input factors [-].

    Returns
    -------
    float or ndarray
        Equilibrium stock [t C ha⁻¹], broadcast shape of the inputs.

    Notes
    -----
    Per hectare, the stock of IPCC 2006 Eq. 2.25 [1]_:

    .. math:: SOC = SOC_{REF} \\cdot F_{LU} \\cdot F_{MG} \\cdot F_I

    The land use reaches this stock after the transition period (20 yr by
    default), see `soc_path_stock_change`.

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 4, Ch. 2, Eq. 2.25.

    Examples
    --------
    Cool temperate moist climate, high-activity clay, arable land:

    >>> round(soc_equilibrium(95.0, 0.69, 1.0, 1.0), 2)
    65.55
    """
    soc_ref = _check_nonnegative("soc_ref", soc_ref)
    f_lu = _check_nonnegative("f_lu", f_lu)
    f_mg = _check_nonnegative("f_mg", f_mg)
    f_i = _check_nonnegative("f_i", f_i)
    return _scalar_or_array(soc_ref * f_lu * f_mg * f_i)


def soc_path_stock_change(soc_start, soc_target, years, transition_years=20):
    """SOC stock path of the IPCC stock-change method: linear, then constant.

    Parameters
    ----------
    soc_start : float or array_like
        Stock at the end of year t = 0 [t C ha⁻¹], e.g. the equilibrium of
        the former land use; shape ``()`` or ``(cases, 1)``.
    soc_target : float or array_like
        Equilibrium stock of the new land use [t C ha⁻¹]; shape ``()`` or
        ``(cases, 1)``.
    years : array_like
        Year indices t = 0, 1, ..., L [yr]; shape ``(years,)`` or
        ``(1, years)``.
    transition_years : float or array_like, default 20
        Transition period D [yr], > 0; shape ``()`` or ``(cases, 1)``.

    Returns
    -------
    float or ndarray
        Stock at the end of each year t [t C ha⁻¹], shape ``(cases, years)``
        (the broadcast shape of the inputs).

    Notes
    -----
    IPCC 2006 Eq. 2.25 [1]_ spreads the difference between two equilibrium
    stocks evenly over the transition period D, 20 yr by default:

    .. math:: SOC(t) = SOC_{start} + (SOC_{target} - SOC_{start})
              \\cdot \\min(\\max(t / D, 0), 1)

    so the annual change is :math:`(SOC_{target} - SOC_{start}) / D` for
    :math:`0 < t \\le D` and 0 afterwards.

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 4, Ch. 2, Eq. 2.25.

    Examples
    --------
    Arable land (65.55 t C/ha) planted to a perennial crop (95 t C/ha):

    >>> soc_path_stock_change(65.55, 95.0, [0, 10, 20, 25]).round(3).tolist()
    [65.55, 80.275, 95.0, 95.0]
    """
    soc_start = _check_nonnegative("soc_start", soc_start)
    soc_target = _check_nonnegative("soc_target", soc_target)
    t = np.asarray(years, dtype=float)
    d = np.asarray(transition_years, dtype=float)
    if np.any(~(d > 0)):
        raise ValueError(f"transition_years must be > 0 [yr], got {transition_years!r}")
    progress = np.clip(t / d, 0.0, 1.0)
    return _scalar_or_array(soc_start + (soc_target - soc_start) * progress)


def soc_path_first_order(soc_start, soc_target, years, rate_per_year):
    """SOC stock path approaching the new equilibrium by first-order kinetics.

    Parameters
    ----------
    soc_start : float or array_like
        Stock at t = 0 [t C ha⁻¹]; shape ``()`` or ``(cases, 1)``.
    soc_target : float or array_like
        Equilibrium stock of the new land use [t C ha⁻¹]; shape ``()`` or
        ``(cases, 1)``.
    years : array_like
        Year indices t [yr]; shape ``(years,)`` or ``(1, years)``.
    rate_per_year : float or array_like
        Rate constant k [yr⁻¹], >= 0; the half-life is ln 2 / k.

    Returns
    -------
    float or ndarray
        Stock at the end of each year t [t C ha⁻¹], broadcast shape.

    Notes
    -----
    The single-pool model of soil carbon turnover:

    .. math:: SOC(t) = SOC_{target} + (SOC_{start} - SOC_{target})\\, e^{-k t}

    It reaches the same equilibrium as the IPCC stock-change path [1]_ but
    front-loads the change: half of it is done after ln 2 / k years.

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 4, Ch. 2, Eq. 2.25 (the equilibrium stocks).

    Examples
    --------
    >>> import math
    >>> round(soc_path_first_order(60.0, 100.0, math.log(2) / 0.1, 0.1), 6)
    80.0
    """
    soc_start = _check_nonnegative("soc_start", soc_start)
    soc_target = _check_nonnegative("soc_target", soc_target)
    k = _check_nonnegative("rate_per_year", rate_per_year)
    t = np.asarray(years, dtype=float)
    return _scalar_or_array(soc_target + (soc_start - soc_target) * np.exp(-k * t))


def soc_after_reversion(
    soc_at_removal, soc_former_equilibrium, years_after_removal, transition_years=20
):
    """SOC stock after the stand is removed and the land returns to its former use.

    Parameters
    ----------
    soc_at_removal : float or array_like
        Stock when the stand is removed [t C ha⁻¹]; shape ``()`` or
        ``(cases, 1)``.
    soc_former_equilibrium : float or array_like
        Equilibrium stock of the former land use [t C ha⁻¹]
        (`soc_equilibrium` of its factors); shape ``()`` or ``(cases, 1)``.
    years_after_removal : array_like
        Years since removal t [yr], t = 0 at removal; shape ``(years,)`` or
        ``(1, years)``.
    transition_years : float or array_like, default 20
        Transition period D [yr], > 0.

    Returns
    -------
    float or ndarray
        Stock at the end of each year after removal [t C ha⁻¹].

    Notes
    -----
    The former land use is a land-use change like any other: under IPCC 2006
    Eq. 2.25 [1]_ the stock moves linearly from its value at removal to the
    former-use equilibrium over D years (`soc_path_stock_change`):

    .. math:: SOC(t) = SOC_{removal} + (SOC_{former} - SOC_{removal})
              \\cdot \\min(t / D, 1)

    The carbon given back is reported by `soc_reversion_loss_t_c_per_ha`.

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 4, Ch. 2, Eq. 2.25.

    Examples
    --------
    >>> soc_after_reversion(95.0, 65.55, [0, 10, 20]).round(3).tolist()
    [95.0, 80.275, 65.55]
    """
    return soc_path_stock_change(
        soc_at_removal, soc_former_equilibrium, years_after_removal, transition_years
    )


def soc_reversion_loss_t_c_per_ha(soc_at_removal, soc_former_equilibrium):
    """Soil carbon expected to be lost once the land returns to its former use.

    Parameters
    ----------
    soc_at_removal : float or array_like
        Stock when the stand is removed [t C ha⁻¹].
    soc_former_equilibrium : float or array_like
        Equilibrium stock of the former land use [t C ha⁻¹].

    Returns
    -------
    float or ndarray
        Loss [t C ha⁻¹], >= 0, broadcast shape of the inputs.

    Notes
    -----
    The carbon the perennial stand added to the soil is not permanent. If the
    stand is removed and the land goes back to its former use, the stock
    returns toward the former-use equilibrium (`soc_after_reversion`); the
    amount given back over the following transition period (20 yr by default
    under IPCC 2006 Eq. 2.25 [1]_) is

    .. math:: \\Delta SOC_{loss} = \\max(0,\\ SOC_{removal} - SOC_{former})

    Multiply by `C_TO_CO2` for t CO2 ha⁻¹. When the stand left the soil
    below the former-use equilibrium (e.g. planted on grassland that lost
    carbon at conversion), reverting would be a gain; that gain is not
    counted here (reported as 0), a conservative choice.

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 4, Ch. 2, Eq. 2.25.

    Examples
    --------
    >>> round(soc_reversion_loss_t_c_per_ha(95.0, 65.55), 2)
    29.45
    >>> soc_reversion_loss_t_c_per_ha(60.0, 65.55)
    0.0
    """
    soc_at_removal = _check_nonnegative("soc_at_removal", soc_at_removal)
    soc_former = _check_nonnegative("soc_former_equilibrium", soc_former_equilibrium)
    return _scalar_or_array(np.maximum(0.0, soc_at_removal - soc_former))


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


def n2o_direct_kg_n2o_n(n_applied_kg, ef1):
    """Direct N2O emission from synthetic fertiliser N.

    Parameters
    ----------
    n_applied_kg : float or array_like
        Synthetic fertiliser N applied, F_SN [kg N], per hectare or in total;
        shape ``(cases, years)`` or any broadcastable shape.
    ef1 : float or array_like
        Emission factor EF1 [kg N2O-N (kg N)⁻¹], see `n2o_factors`.

    Returns
    -------
    float or ndarray
        Direct emission [kg N2O-N], same basis as `n_applied_kg`.

    Notes
    -----
    IPCC 2006 Eq. 11.1 [1]_ restricted to synthetic N (no organic N, crop
    residue or mineralisation terms, no flooded rice):

    .. math:: N_2O_{Direct}\\text{-}N = F_{SN} \\cdot EF_1

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 4, Ch. 11, Eq. 11.1 and Table 11.1.

    Examples
    --------
    >>> n2o_direct_kg_n2o_n(100.0, 0.010)
    1.0
    """
    f_sn = _check_nonnegative("n_applied_kg", n_applied_kg)
    ef1 = _check_fraction("ef1", ef1)
    return _scalar_or_array(f_sn * ef1)


def n2o_indirect_kg_n2o_n(n_applied_kg, frac_gasf, ef4, frac_leach, ef5):
    """Indirect N2O emission from synthetic fertiliser N (volatilisation + leaching).

    Parameters
    ----------
    n_applied_kg : float or array_like
        Synthetic fertiliser N applied, F_SN [kg N]; any broadcastable shape.
    frac_gasf : float or array_like
        Fraction of F_SN volatilised as NH3 and NOx [kg N (kg N)⁻¹].
    ef4 : float or array_like
        N2O from N volatilised and redeposited [kg N2O-N (kg N)⁻¹].
    frac_leach : float or array_like
        Fraction of F_SN lost by leaching and runoff [kg N (kg N)⁻¹]; 0 in
        dry climates.
    ef5 : float or array_like
        N2O from N leached [kg N2O-N (kg N)⁻¹].

    Returns
    -------
    float or ndarray
        Indirect emission [kg N2O-N], same basis as `n_applied_kg`.

    Notes
    -----
    IPCC 2006 Eq. 11.9 (atmospheric deposition) plus Eq. 11.10 (leaching)
    [1]_, synthetic N only:

    .. math:: N_2O_{(ATD)}\\text{-}N + N_2O_{(L)}\\text{-}N
              = F_{SN} \\cdot Frac_{GASF} \\cdot EF_4
              + F_{SN} \\cdot Frac_{LEACH} \\cdot EF_5

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 4, Ch. 11, Eq. 11.9, 11.10 and Table 11.3.

    Examples
    --------
    100 kg N, 2006 defaults, wet climate: 0.10 + 0.225 kg N2O-N.

    >>> round(n2o_indirect_kg_n2o_n(100.0, 0.10, 0.010, 0.30, 0.0075), 4)
    0.325
    """
    f_sn = _check_nonnegative("n_applied_kg", n_applied_kg)
    frac_gasf = _check_fraction("frac_gasf", frac_gasf)
    ef4 = _check_fraction("ef4", ef4)
    frac_leach = _check_fraction("frac_leach", frac_leach)
    ef5 = _check_fraction("ef5", ef5)
    volatilised = f_sn * frac_gasf * ef4
    leached = f_sn * frac_leach * ef5
    return _scalar_or_array(volatilised + leached)


def n2o_n_to_n2o(kg_n2o_n):
    """Convert a mass of N2O-N to a mass of N2O.

    Parameters
    ----------
    kg_n2o_n : float or array_like
        Emission as nitrogen [kg N2O-N].

    Returns
    -------
    float or ndarray
        Emission as N2O [kg N2O].

    Notes
    -----
    .. math:: N_2O = N_2O\\text{-}N \\cdot 44 / 28

    the ratio of the molar mass of N2O to that of its two N atoms, as used
    in IPCC 2006 Vol. 4 Ch. 11 [1]_.

    References
    ----------
    .. [1] IPCC (2006). 2006 IPCC Guidelines for National Greenhouse Gas
       Inventories, Vol. 4, Ch. 11, Section 11.2.1.

    Examples
    --------
    >>> round(n2o_n_to_n2o(1.325), 4)
    2.0821
    """
    return _scalar_or_array(np.asarray(kg_n2o_n, dtype=float) * N2O_N_TO_N2O)


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
