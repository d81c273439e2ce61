"""Yield potential from a site's climate: Monteith's light-use-efficiency equation.

Pure functions over numpy arrays; no files, no case objects. The crop's
parameters (with their published sources) are data, read by
:func:`tea.inputs.published.light_use_parameters`.

The equation (Monteith 1977 [1]_) writes the dry matter a crop grows in a season
as the product of four terms:

.. math::

    Y = S \\cdot f \\cdot \\varepsilon \\cdot H

* :math:`S` the photosynthetically active radiation (PAR) incident over the
  growing season [MJ m⁻²]: global radiation times the PAR share (about 0.49 of
  global radiation, Stanhill & Fuchs 1977 [2]_; Szeicz 1974 [3]_);
* :math:`f` the share of it the canopy intercepts, from the leaf area index by
  Beer's law, :math:`f = 1 - e^{-k L}` (Monsi & Saeki 1953 [4]_), the leaf area
  growing with thermal time above a base temperature from the start of the
  season (the day the mean air temperature rises above the base) until the
  season ends (the day it falls below the crop's end temperature);
* :math:`\\varepsilon` the conversion efficiency of intercepted PAR into
  above-ground dry matter [g MJ⁻¹], lowered in a dry month by the ratio of
  actual to potential evapotranspiration of a monthly soil-water bucket
  (Thornthwaite & Mather 1955 [5]_) when rainfall and PET are given;
* :math:`H` the share of the above-ground dry matter harvested: the harvested
  part (stems of a coppice) and, for a late-winter harvest, one less the share
  lost between the autumn peak and the harvest.

Time step: the year is taken as 365 days. Radiation is the month's mean daily
value on each of its days (so monthly totals are kept exactly); temperature is
interpolated linearly between mid-month values (cyclically, December to January)
so that the season starts and ends on a day, not on a month boundary.

References
----------
.. [1] Monteith, J. L. (1977). Climate and the efficiency of crop production in
   Britain. *Phil. Trans. R. Soc. Lond. B* 281 (pages from memory). doi:10.1098/rstb.1977.0140
.. [2] Stanhill, G. & Fuchs, M. (1977). The relative flux density of
   photosynthetically active radiation. *J. Appl. Ecol.* 14 (pages from memory).
.. [3] Szeicz, G. (1974). Solar radiation for plant growth. *J. Appl. Ecol.* 11 (volume and pages from memory).
.. [4] Monsi, M. & Saeki, T. (1953). Über den Lichtfaktor in den
   Pflanzengesellschaften und seine Bedeutung für die Stoffproduktion.
   *Jap. J. Bot.* 14, 22-52 (from memory).
.. [5] Thornthwaite, C. W. & Mather, J. R. (1955). The water balance.
   *Publications in Climatology* 8(1). Drexel Institute of Technology (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

#: days of each month of a 365-day year
DAYS_IN_MONTH = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
#: month of each day of the year (0 = January), 365 values
MONTH_OF_DAY = np.repeat(np.arange(12), DAYS_IN_MONTH)
#: day of the year (0-based, fractional) at the middle of each month
MID_MONTH_DAY = np.cumsum(DAYS_IN_MONTH) - DAYS_IN_MONTH / 2.0
#: g m⁻² to t ha⁻¹ (1 g m⁻² = 10 kg ha⁻¹ = 0.01 t ha⁻¹; unit identity)
G_PER_M2_TO_T_PER_HA = 0.01


def monteith(radiation, interception, efficiency, harvest_share):
    """Monteith's equation, Y = S f ε H.

    Parameters
    ----------
    radiation : array_like
        Incident PAR over the period, S [MJ m⁻²].
    interception : array_like
        Share of S the canopy intercepts, f [-].
    efficiency : array_like
        Dry matter per unit of intercepted PAR, ε [g MJ⁻¹].
    harvest_share : array_like
        Share of the dry matter harvested, H [-].

    Returns
    -------
    ndarray
        Dry matter harvested [t ha⁻¹].

    Examples
    --------
    1,000 MJ m⁻² of PAR, 60 % intercepted, 2.5 g MJ⁻¹, all harvested: 1,500 g m⁻² = 15 t ha⁻¹.

    >>> float(monteith(1000.0, 0.6, 2.5, 1.0))
    15.0
    """
    return (np.asarray(radiation, dtype=float) * interception * efficiency * harvest_share
            * G_PER_M2_TO_T_PER_HA)


def par(global_radiation, par_share):
    """Photosynthetically active part of global radiation [same unit as the input].

    Parameters
    ----------
    global_radiation : array_like
        Incident global (short-wave) radiation [MJ m⁻² d⁻¹ or MJ m⁻²].
    par_share : float
        Energy share of global radiation in 400-700 nm [-] (0.49 ± 0.02 in monthly
        values, Stanhill & Fuchs 1977; 0.50 ± 0.03, Szeicz 1974).

    >>> float(par(20.0, 0.49))
    9.8
    """
    return np.asarray(global_radiation, dtype=float) * par_share


def interception(lai, extinction_coefficient):
    """Share of incident radiation a canopy intercepts, Beer's law 1 - exp(-k L).

    Parameters
    ----------
    lai : array_like
        Leaf area index L [m² leaf m⁻² ground].
    extinction_coefficient : float
        Canopy extinction coefficient k [-].

    >>> round(float(interception(3.0, 0.6)), 4)
    0.8347
    """
    return 1.0 - np.exp(-extinction_coefficient * np.asarray(lai, dtype=float))


def daily_temperature(monthly_temperature):
    """Mean air temperature of each day of a 365-day year [°C].

    Linear between mid-month values, cyclic from December to January.

    Parameters
    ----------
    monthly_temperature : array_like (12,)
        Mean air temperature of each month [°C].

    >>> t = daily_temperature(np.arange(12.0))
    >>> float(t[15]), t.shape
    (0.0, (365,))
    """
    t = np.asarray(monthly_temperature, dtype=float)
    x = np.concatenate(([MID_MONTH_DAY[-1] - 365.0], MID_MONTH_DAY, [MID_MONTH_DAY[0] + 365.0]))
    y = np.concatenate(([t[-1]], t, [t[0]]))
    return np.interp(np.arange(365) + 0.5, x, y)


def growing_season(daily_temp, base_temperature, end_temperature):
    """Days of the growing season: a boolean array of 365 days.

    The season runs around the warmest day: back to the last day the mean
    temperature was at or below the base temperature (the canopy starts to grow
    the day after) and forward to the first day it falls below the end
    temperature (the canopy is gone, killed by frost or shed). A site warm
    enough all year has a season of the whole year; a site never above the base
    temperature has none. Works for either hemisphere (the season may span
    the turn of the year).

    Parameters
    ----------
    daily_temp : ndarray (365,)
        Daily mean air temperature [°C].
    base_temperature : float
        Temperature above which the canopy grows [°C].
    end_temperature : float
        Temperature below which the canopy is lost in autumn [°C].

    Returns
    -------
    season : ndarray (365,) of bool
    start : int
        Index of the first day of the season (-1 when there is none).
    """
    t = np.asarray(daily_temp, dtype=float)
    n = t.size
    warmest = int(np.argmax(t))
    season = np.zeros(n, dtype=bool)
    if t[warmest] <= base_temperature:
        return season, -1
    if np.all(t > base_temperature) and np.all(t >= end_temperature):
        return np.ones(n, dtype=bool), int(np.argmin(t))
    # the canopy starts the day after the last day at or below the base temperature; where no day is that cold,
    # the day after the last day below the end temperature (the season that day ended)
    cold = (t <= base_temperature) if np.any(t <= base_temperature) else (t < end_temperature)
    start = warmest
    for _ in range(n):  # back to the day after the last cold day
        prev = (start - 1) % n
        if cold[prev]:
            break
        start = prev
    day = warmest
    for _ in range(n):  # forward to the first day below the end temperature
        season[day] = True
        nxt = (day + 1) % n
        if t[nxt] < end_temperature or nxt == start:
            break
        day = nxt
    season[start] = True
    # the days from the start to the warmest day
    day = start
    while day != warmest:
        season[day] = True
        day = (day + 1) % n
    return season, start


def leaf_area_index(daily_temp, season, start, base_temperature, leaf_area_per_degree_day, lai_max):
    """Leaf area index of each day: grows with thermal time from the season's start, up to a maximum.

    Parameters
    ----------
    daily_temp : ndarray (365,)
        Daily mean air temperature [°C].
    season, start
        As :func:`growing_season` returns them.
    base_temperature : float
        Base temperature of thermal time [°C].
    leaf_area_per_degree_day : float
        Leaf area index gained per degree-day above the base [m² m⁻² (°C d)⁻¹].
    lai_max : float
        Leaf area index of the full canopy [m² m⁻²].

    Returns
    -------
    ndarray (365,)
        0 outside the season [m² m⁻²].
    """
    t = np.asarray(daily_temp, dtype=float)
    n = t.size
    lai = np.zeros(n)
    if start < 0:
        return lai
    order = (start + np.arange(n)) % n  # days from the season's start
    dd = np.maximum(t[order] - base_temperature, 0.0) * season[order]
    lai[order] = np.minimum(lai_max, leaf_area_per_degree_day * np.cumsum(dd))
    return np.where(season, lai, 0.0)


def water_factor(rainfall, pet, soil_water_capacity, crop_coefficient=1.0):
    """Monthly ratio of actual to potential evapotranspiration of a soil-water bucket [-].

    Thornthwaite-Mather bookkeeping with a monthly step: the store (full at
    ``soil_water_capacity``) gains the month's rain and loses the crop's demand
    ``crop_coefficient × PET`` as far as rain and store allow. The year is run
    twice so the store at the start of January is the one the year itself leaves.

    Parameters
    ----------
    rainfall : array_like (12,)
        Monthly rainfall [mm].
    pet : array_like (12,)
        Monthly potential (reference) evapotranspiration [mm].
    soil_water_capacity : float
        Plant-available water the root zone holds when full [mm].
    crop_coefficient : float
        Crop demand as a multiple of PET [-].

    Returns
    -------
    ndarray (12,)
        AET/PET of each month, 1 where PET is 0 [-].

    >>> water_factor([50] * 12, [0] * 12, 100.0).tolist() == [1.0] * 12
    True
    >>> water_factor([0] * 12, [100] * 12, 100.0).round(2).tolist()[:2]
    [0.0, 0.0]
    """
    rain = np.asarray(rainfall, dtype=float)
    demand = np.asarray(pet, dtype=float) * crop_coefficient
    store = float(soil_water_capacity)
    ratio = np.ones(12)
    for _ in range(2):
        for m in range(12):
            available = store + rain[m]
            aet = min(demand[m], available)
            store = min(soil_water_capacity, available - aet)
            ratio[m] = aet / demand[m] if demand[m] > 0 else 1.0
    return ratio


@dataclass(frozen=True)
class Season:
    """A crop's season at a site, month by month, and the four terms of Monteith's equation.

    Month arrays have 12 values (January first).
    """

    global_radiation: np.ndarray  # incident global radiation of each month [MJ m⁻²]
    par_in_season: np.ndarray  # PAR incident on the days of the growing season [MJ m⁻²]
    intercepted_par: np.ndarray  # PAR intercepted by the canopy [MJ m⁻²]
    water: np.ndarray  # AET/PET factor on the conversion efficiency [-]
    dry_matter: np.ndarray  # above-ground dry matter grown [t ha⁻¹]
    lai_max_reached: float  # the largest leaf area index of the season [m² m⁻²]
    season_days: int  # days in the growing season [d]
    efficiency: float  # ε of the unstressed crop [g MJ⁻¹]
    harvested_part: float  # share of above-ground dry matter in the harvested part [-]
    late_loss: float  # share of the autumn peak lost before a late-winter harvest [-]
    parameters: dict = field(default_factory=dict)

    @property
    def radiation(self) -> float:
        """S: PAR incident over the growing season [MJ m⁻²]."""
        return float(self.par_in_season.sum())

    @property
    def intercepted_share(self) -> float:
        """f: share of S intercepted [-]."""
        s = self.radiation
        return float(self.intercepted_par.sum() / s) if s > 0 else 0.0

    @property
    def conversion(self) -> float:
        """ε as realised: dry matter per MJ intercepted, water limitation included [g MJ⁻¹]."""
        ipar = float(self.intercepted_par.sum())
        return float(self.dry_matter.sum() / G_PER_M2_TO_T_PER_HA / ipar) if ipar > 0 else 0.0

    @property
    def harvest_share(self) -> float:
        """H: share of the season's above-ground dry matter harvested [-]."""
        return self.harvested_part * (1.0 - self.late_loss)

    @property
    def peak_t_per_ha(self) -> float:
        """Harvestable dry matter at the autumn peak, before any late-winter loss [t ha⁻¹]."""
        return float(self.dry_matter.sum()) * self.harvested_part

    @property
    def harvested_t_per_ha(self) -> float:
        """Y = S f ε H: dry matter harvested [t ha⁻¹]."""
        return float(monteith(self.radiation, self.intercepted_share, self.conversion, self.harvest_share))

    def rows(self) -> list[dict]:
        """The month-by-month table (one dict per month, keys with their units), then a total row."""
        out = []
        for m in range(12):
            s, i = float(self.par_in_season[m]), float(self.intercepted_par[m])
            out.append({
                "month": m + 1,
                "global_radiation_mj_per_m2": float(self.global_radiation[m]),
                "par_in_season_mj_per_m2": s,
                "intercepted_par_mj_per_m2": i,
                "share_intercepted": i / s if s > 0 else 0.0,
                "water_factor": float(self.water[m]),
                "dry_matter_t_per_ha": float(self.dry_matter[m]),
            })
        return out


def season(radiation, temperature, params, rainfall=None, pet=None, late_harvest=False, late_loss=0.0):
    """A crop's growing season at a site and its yield by Monteith's equation.

    Parameters
    ----------
    radiation : array_like (12,)
        Mean daily incident global radiation of each month [MJ m⁻² d⁻¹].
    temperature : array_like (12,)
        Mean air temperature of each month [°C].
    params : mapping
        The crop's parameters (values only), as :func:`tea.inputs.published.light_use_parameters`
        gives them: ``par_share`` [-], ``extinction_coefficient`` [-], ``base_temperature_c`` [°C],
        ``end_temperature_c`` [°C], ``leaf_area_per_degree_day`` [m² m⁻² (°C d)⁻¹], ``lai_max``
        [m² m⁻²], ``rue_g_per_mj_par`` [g MJ⁻¹], ``harvested_part`` [-],
        ``soil_water_capacity_mm`` [mm]; optionally ``first_day`` and ``last_day`` (0-based day of
        the year) bounding the season of an annual crop (sowing to maturity).
    rainfall, pet : array_like (12,), optional
        Monthly rainfall and potential evapotranspiration [mm]; both or neither.
    late_harvest : bool
        Harvested in late winter (the late loss applies) rather than at the autumn peak.
    late_loss : float
        Share of the autumn peak lost before a late-winter harvest [-].

    Returns
    -------
    Season

    Examples
    --------
    A warm site (20 °C all year, 15 MJ m⁻² d⁻¹) and a canopy at once full (k = 0.5, L = 6):
    f = 1 - exp(-3) = 0.9502, S = 365 × 15 × 0.5 = 2,737.5 MJ m⁻², ε = 2 g MJ⁻¹, H = 1.

    >>> p = dict(par_share=0.5, extinction_coefficient=0.5, base_temperature_c=5.0, end_temperature_c=5.0,
    ...          leaf_area_per_degree_day=1.0, lai_max=6.0, rue_g_per_mj_par=2.0, harvested_part=1.0,
    ...          soil_water_capacity_mm=100.0)
    >>> s = season([15.0] * 12, [20.0] * 12, p)
    >>> round(s.radiation, 1), round(s.intercepted_share, 4), round(s.harvested_t_per_ha, 2)
    (2737.5, 0.9502, 52.02)
    """
    rad = np.asarray(radiation, dtype=float)
    temp = np.asarray(temperature, dtype=float)
    if rad.shape != (12,) or temp.shape != (12,):
        raise ValueError("radiation and temperature need 12 monthly values each")
    if (rainfall is None) != (pet is None):
        raise ValueError("give rainfall and pet together, or neither")
    t_day = daily_temperature(temp)
    in_season, start = growing_season(t_day, params["base_temperature_c"], params["end_temperature_c"])
    first, last = params.get("first_day"), params.get("last_day")
    if first is not None or last is not None:  # an annual crop: sown on one day, mature on another
        days = np.arange(365)
        in_season = in_season & (days >= (first or 0)) & (days <= (last if last is not None else 364))
        start = int(np.argmax(in_season)) if in_season.any() else -1
    lai = leaf_area_index(t_day, in_season, start, params["base_temperature_c"],
                          params["leaf_area_per_degree_day"], params["lai_max"])
    par_day = par(rad[MONTH_OF_DAY], params["par_share"]) * in_season
    ipar_day = par_day * interception(lai, params["extinction_coefficient"])
    par_month = np.bincount(MONTH_OF_DAY, par_day, minlength=12)
    ipar_month = np.bincount(MONTH_OF_DAY, ipar_day, minlength=12)
    if rainfall is None:
        water = np.ones(12)
    else:
        water = water_factor(rainfall, pet, params["soil_water_capacity_mm"])
    dm = ipar_month * params["rue_g_per_mj_par"] * water * G_PER_M2_TO_T_PER_HA
    return Season(
        global_radiation=rad * DAYS_IN_MONTH,
        par_in_season=par_month,
        intercepted_par=ipar_month,
        water=water,
        dry_matter=dm,
        lai_max_reached=float(lai.max()),
        season_days=int(in_season.sum()),
        efficiency=float(params["rue_g_per_mj_par"]),
        harvested_part=float(params["harvested_part"]),
        late_loss=float(late_loss) if late_harvest else 0.0,
        parameters=dict(params),
    )


__all__ = ["DAYS_IN_MONTH", "Season", "daily_temperature", "growing_season", "interception", "leaf_area_index",
           "monteith", "par", "season", "water_factor"]
