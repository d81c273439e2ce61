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
emission factors, global warming potentials, default input factors) are
looked up by :mod:`tea.inputs.published`; the functions here take them as
arguments. The numbers are planning estimates for a Tier 1
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

import numpy as np

__all__ = [
    "C_TO_CO2",
    "N2O_N_TO_N2O",
    "soc_equilibrium",
    "soc_path_stock_change",
    "soc_path_first_order",
    "soc_after_reversion",
    "soc_reversion_loss_t_c_per_ha",
    "n2o_direct_kg_n2o_n",
    "n2o_indirect_kg_n2o_n",
    "n2o_n_to_n2o",
]

# Stoichiometry, not data: molar mass of CO2 (44) over that of C (12), and of
# N2O (44) over the mass of its two N atoms (28).
C_TO_CO2 = 44.0 / 12.0
N2O_N_TO_N2O = 44.0 / 28.0



def _scalar_or_array(x):
    """A plain float for a 0-d result, the array otherwise."""
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x




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

