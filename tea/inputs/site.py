"""A case's site climate: checked, and turned into the crop's yield potential (Monteith's equation).

The optional ``[site_climate]`` section gives 12 monthly values of mean daily global
radiation [MJ m⁻² d⁻¹] and mean air temperature [°C], and optionally rainfall and
PET [mm]. :func:`season_for` runs :func:`tea.methods.lue.season` with the crop's
parameters (``data/light_use.toml``, keyed by preset). When the case gives no mature
yield, the estimate at the autumn peak becomes ``yield.mature_t_dm_per_ha``; when it
gives one, the outputs show it as a share of the potential and warn above 1.
"""

from __future__ import annotations

from typing import Any, Mapping

from tea.core.errors import Notice, Problem
from tea.inputs import published, rules
from tea.methods import lue

SECTION = "site_climate"
RADIATION = f"{SECTION}.radiation_mj_per_m2_per_day"
TEMPERATURE = f"{SECTION}.temperature_c"
RAINFALL = f"{SECTION}.rainfall_mm"
PET = f"{SECTION}.pet_mm"
MONTHS = 12
#: the note a yield estimated from the site climate carries (its origin on every output)
ESTIMATED = "estimated from the site climate (Monteith's light-use efficiency; `tea yield` shows it)"


def given(values: Mapping[str, Any]) -> bool:
    """Whether the case has a site climate (radiation and temperature)."""
    return values.get(RADIATION) is not None and values.get(TEMPERATURE) is not None


def check(values: Mapping[str, Any], source: str, bad_keys: set[str]) -> list[Problem]:
    """Problems of a site climate: 12 values per list, radiation with temperature, rainfall with PET."""
    problems = []
    for path in (RADIATION, TEMPERATURE, RAINFALL, PET):
        v = values.get(path)
        if isinstance(v, list) and len(v) != MONTHS and path not in bad_keys:
            problems.append(Problem(source, path, f"expected 12 monthly values (January first), got {len(v)}"))
    for a, b in ((RADIATION, TEMPERATURE), (TEMPERATURE, RADIATION), (RAINFALL, PET), (PET, RAINFALL)):
        if values.get(a) is not None and values.get(b) is None and b not in bad_keys:
            problems.append(Problem(source, b, f"missing value: {a.partition('.')[2]} goes with "
                                    f"{b.partition('.')[2]} (12 monthly values)"))
    return problems


def season_for(values: Mapping[str, Any], params: Mapping[str, float] | None = None) -> lue.Season:
    """The crop's season at the case's site (a case's canonical values, e.g. ``case.values``).

    ``params`` replaces the preset's light-use parameters (e.g. the low or high ends
    for a sensitivity run). The table the workbook writes is ``season_for(...).rows()``.
    """
    crop = values["crop.preset"]
    p = published.light_use_parameters(crop) if params is None else dict(params)
    rain = values.get(RAINFALL)
    return lue.season(values[RADIATION], values[TEMPERATURE], p,
                      rainfall=rain, pet=values.get(PET) if rain is not None else None,
                      late_harvest=values.get("harvest.timing") == "late_winter",
                      late_loss=values.get("harvest.overwinter_dm_loss", 0.0))


def apply(values: dict, origin: dict, notes: dict, problems: list, warnings: list, source: str,
          spelled: Mapping[str, str]) -> None:
    """Check the site climate; fill the mature yield from it when the case gives none; warn above it."""
    bad = {p.key for p in problems}
    found = check(values, source, bad)
    problems.extend(found)
    if found or not given(values) or any(p.startswith(SECTION) for p in bad):
        return
    crop = values.get("crop.preset")
    if crop not in published.light_use_crops():
        return  # the crop.preset problem is reported already
    s = season_for(values)
    potential = s.peak_t_per_ha
    path = "yield.mature_t_dm_per_ha"
    if origin.get(path) != "case":
        if potential <= 0.0:
            problems.append(no_yield_problem(s, source))
            return
        values[path], origin[path], notes[path] = potential, "estimated", ESTIMATED
    elif potential > 0.0 and assumed(values) > potential:
        key, f, unit = rules.mature_yield_as_given(values, spelled)
        warnings.append(Notice(source, key, f"{assumed(values) * f:.3g} {unit} (with the site factor) is "
                               f"{assumed(values) / potential:.0%} of the site's potential from its climate "
                               f"({potential * f:.3g} {unit})", path=path, check=True))
    elif potential <= 0.0:
        warnings.append(Notice(source, TEMPERATURE, "the site is never warm enough for the crop's season; "
                               "the assumed yield has no climate potential to compare with", path=TEMPERATURE))


def no_yield_problem(s: lue.Season, source: str) -> Problem:
    """Why a site gives no yield: no day warm enough for the crop's season, or no water in it."""
    if s.season_days > 0 and s.intercepted_par.sum() > 0 and not (s.water > 0).any():
        return Problem(source, RAINFALL, "the crop's season has no water (rainfall with the soil's store gives "
                       "no evaporation in any month); no yield can be estimated: check rainfall_mm and pet_mm, or "
                       "give yield.mature_t_dm_per_ha")
    return Problem(source, TEMPERATURE, f"the site is never warm enough for the crop's season (above "
                   f"{s.parameters['base_temperature_c']:g} degC); no yield can be estimated: give "
                   "yield.mature_t_dm_per_ha")


def assumed(values: Mapping[str, Any]) -> float:
    """The mature yield the case assumes for this field: mature yield x site factor [t DM ha⁻¹]."""
    return float(values["yield.mature_t_dm_per_ha"]) * float(values.get("yield.site_factor", 1.0))


def potential(values: Mapping[str, Any], origin: Mapping[str, str] | None = None) -> dict | None:
    """The site's potential and the assumed yield's share of it, or None without a site climate.

    Keys: ``potential_t_dm_per_ha`` (autumn peak), ``harvested_t_dm_per_ha`` (after any late loss),
    ``assumed_t_dm_per_ha`` (mature yield x site factor), ``assumed_share`` (None when the potential is 0), ``estimated`` (the
    assumed yield is the estimate).
    """
    if not given(values):
        return None
    s = season_for(values)
    peak = s.peak_t_per_ha
    mine = assumed(values)
    return {
        "potential_t_dm_per_ha": peak,
        "harvested_t_dm_per_ha": s.harvested_t_per_ha,
        "assumed_t_dm_per_ha": mine,
        "assumed_share": mine / peak if peak > 0 else None,
        "estimated": (origin or {}).get("yield.mature_t_dm_per_ha") == "estimated",
    }
