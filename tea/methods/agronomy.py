"""Crop models: yield by stand age, harvest cycles, losses, moisture and nutrient offtake.

Pure functions over numpy arrays shaped ``(cases, years)`` (year index 0 is the
planting year) or broadcastable to it; per-case parameters come as ``(cases, 1)``
columns. No files, no case objects.

Conventions
-----------
* The mature yield is the dry matter standing at the autumn peak [t DM ha⁻¹ yr⁻¹]
  (for a coppice: wood grown per year). A late-winter harvest loses a share of it
  (leaf and tip fall) but finds the crop drier and its nutrients moved back into
  roots and rhizomes (common practice; Himken et al. 1997 measured the losses).
* A harvest in year ``t`` takes the growth of the ``interval`` years ending in ``t``;
  growth before the first such window (a coppice's cut-back year) is not harvested.
"""

from __future__ import annotations

import numpy as np


def growth_fraction(years, ramp_up, decline_start_year=0, decline_per_year=0.0):
    """Growth in each year as a fraction of the mature yield.

    Parameters
    ----------
    years : ndarray (years,)
        Year index t = 0, 1, ... [yr].
    ramp_up : array_like (k,) or (cases, k)
        Fractions of the mature yield in years 1..k; 1 after the list ends [-].
        A 2-D array may pad short rows with NaN (read as 1).
    decline_start_year : int or ndarray (cases, 1)
        Last year at full yield; 0 means no decline [yr].
    decline_per_year : float or ndarray (cases, 1)
        Share of yield lost each year after ``decline_start_year``, compounding [-].

    Returns
    -------
    ndarray (cases, years)
        0 in year 0; ramp-up, plateau, then decline [-].

    Examples
    --------
    >>> growth_fraction(np.arange(6), [0.0, 0.5], 3, 0.1).round(3).tolist()
    [[0.0, 0.0, 0.5, 1.0, 0.9, 0.81]]
    """
    years = np.asarray(years)
    ramp = np.atleast_2d(np.asarray(ramp_up, dtype=float))
    k = ramp.shape[1]
    frac = np.ones((ramp.shape[0], years.size))
    idx = years - 1  # ramp index of each year
    in_ramp = (idx >= 0) & (idx < k)
    frac[:, in_ramp] = ramp[:, idx[in_ramp]]
    frac = np.where(np.isnan(frac), 1.0, frac)
    frac[:, years == 0] = 0.0
    start = np.asarray(decline_start_year)
    rate = np.asarray(decline_per_year, dtype=float)
    excess = np.where(start > 0, np.maximum(years - start, 0), 0)
    return frac * (1.0 - rate) ** excess


def harvest_flags(years, first_year, interval_years, stand_life):
    """Whether a harvest is taken in each year.

    Harvests fall in ``first_year``, then every ``interval_years``, up to the stand life.

    Examples
    --------
    >>> harvest_flags(np.arange(11), 4, 3, 10).astype(int).tolist()
    [[0, 0, 0, 0, 1, 0, 0, 1, 0, 0, 1]]
    """
    years = np.asarray(years)
    first = np.asarray(first_year)
    n = np.asarray(interval_years)
    life = np.asarray(stand_life)
    flag = (years >= first) & ((years - first) % n == 0) & (years <= life) & (years >= 1)
    return np.atleast_2d(flag)


def harvested_growth(growth, flags, interval_years):
    """Standing dry matter cut at each harvest: the growth since the previous harvest window.

    Parameters
    ----------
    growth : ndarray (cases, years)
        Dry matter grown each year [t DM ha⁻¹].
    flags : ndarray of bool (cases, years)
        Harvest years.
    interval_years : int or ndarray (cases, 1)
        Years of growth each harvest takes [yr].

    Returns
    -------
    ndarray (cases, years)
        Sum of ``growth`` over the ``interval_years`` years ending at each harvest, 0 elsewhere
        [t DM ha⁻¹].

    Examples
    --------
    >>> g = np.array([[0, 3, 7, 8, 9, 9, 9, 9.0]])
    >>> harvested_growth(g, harvest_flags(np.arange(8), 4, 3, 7), 3).tolist()
    [[0.0, 0.0, 0.0, 0.0, 24.0, 0.0, 0.0, 27.0]]
    """
    growth = np.atleast_2d(growth)
    cum = np.cumsum(growth, axis=1)
    cases, n_years = growth.shape
    n = np.broadcast_to(np.asarray(interval_years), (cases, 1))
    lag_idx = np.arange(n_years)[None, :] - n  # index of the cumulative total before the window
    before = np.where(lag_idx >= 0, np.take_along_axis(cum, np.clip(lag_idx, 0, None), axis=1), 0.0)
    return np.where(flags, cum - before, 0.0)


def fresh_tonnes(dry_t, moisture):
    """Fresh mass of a dry-matter mass at a wet-basis moisture content.

    fresh = dry / (1 - moisture)  [t]

    >>> fresh_tonnes(8.0, 0.2)
    10.0
    """
    return dry_t / (1.0 - moisture)


#: energy to evaporate water at 25 °C [GJ t⁻¹ of water]: the term the net
#: calorific value as received loses per tonne of moisture (ISO 18125:2017,
#: q_net,ar = q_net,d (1 - M) - 2.443 M [MJ/kg]; from memory)
WATER_VAPORISATION_GJ_PER_T = 2.443


def delivered_heating_value(heating_value_dry, moisture):
    """Net heating value of fuel delivered moist, per tonne of its dry matter.

    A tonne of dry matter delivered at wet-basis moisture M carries M / (1 - M)
    tonnes of water, whose evaporation the net value loses:

    q = q_dry - 2.443 M / (1 - M)   [GJ (t DM)⁻¹]

    equivalent to ISO 18125's q_net,ar = q_net,d (1 - M) - 2.443 M per fresh tonne.

    Parameters
    ----------
    heating_value_dry : float or ndarray
        Net heating value of the dry matter [GJ (t DM)⁻¹].
    moisture : float or ndarray
        Wet-basis moisture at delivery [-].

    >>> round(delivered_heating_value(18.5, 0.5), 3)
    16.057
    """
    return heating_value_dry - WATER_VAPORISATION_GJ_PER_T * moisture / (1.0 - moisture)


def price_index(years, change_per_year=0.0, path=None):
    """Real price multiplier by year: (1 + g)^(t - 1) from year 1, or a given path.

    Parameters
    ----------
    years : ndarray (years,)
    change_per_year : float or ndarray (cases, 1)
        Real change per year [yr⁻¹].
    path : array_like (k,) or None
        Multipliers for years 1..k; the last repeats [-]. Replaces ``change_per_year``.

    Returns
    -------
    ndarray (cases, years); year 0 is 0 (nothing is sold at planting); year 1 is 1
    with a change per year, or the path's first multiplier.

    Examples
    --------
    >>> price_index(np.arange(4), 0.1).round(2).tolist()
    [[0.0, 1.0, 1.1, 1.21]]
    >>> price_index(np.arange(5), path=[1.0, 0.9]).tolist()
    [[0.0, 1.0, 0.9, 0.9, 0.9]]
    """
    years = np.asarray(years)
    if path is not None:
        path = np.atleast_2d(np.asarray(path, dtype=float))
        idx = np.clip(years - 1, 0, path.shape[1] - 1)
        out = path[:, idx]
    else:
        g = np.asarray(change_per_year, dtype=float)
        out = np.atleast_2d((1.0 + g) ** np.maximum(years - 1, 0))
    return np.where(years >= 1, out, 0.0)
