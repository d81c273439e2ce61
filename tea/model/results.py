"""Decision figures: a view of the ledger.

:func:`figures` computes every decision figure for many cases at once from the
ledger lines (arrays shaped ``(cases, years)``), so risk and screening reuse it;
:func:`summarise` wraps one case's figures in a :class:`Results` dataclass with
``to_dict()`` for JSON. Money and quantities are per hectare; ``whole_field``
multiplies them by the area.

Definitions
-----------
* NPV: the net cash flow discounted at the real rate, year 0 undiscounted.
  "vs current use" figures use the incremental flow (net cash flow minus the
  gross margin the field earns today), the change the decision makes.
* EAV (equivalent annual value): NPV / annuity factor over the stand life, to
  compare with the yearly margin of the current use.
* Break-even price and mature yield: the value making NPV = 0. NPV is linear
  in both (no cost depends on the price; every yield-driven line is
  proportional to the mature yield), so the root is exact: price from the
  present value of the dry matter sold, yield from two evaluations of the ledger.
* Peak funding need: the lowest point of the cumulative (undiscounted) cash
  flow, as a positive amount, and its year.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping

import numpy as np
import pandas as pd

from tea import __version__
from tea.methods import carbon, finance, loan
from tea.model import ledger
from tea.inputs.case import Case
from tea.core.texts import CAUTIONS


@dataclass(frozen=True)
class Figure:
    """One decision figure's name, unit and whether it scales with area."""

    name: str
    unit: str  # "money", "money/ha", "fraction", "yr", ... ("money" = the case's currency)
    scales: bool  # per ha: multiplied by the area for the whole field
    doc: str


FIGURES: tuple[Figure, ...] = (
    Figure("npv", "money/ha", True, "Net present value of the stand's own cash flows."),
    Figure("npv_vs_current_use", "money/ha", True,
           "NPV of the change from today's use: stand cash flow minus the current use's (margin - rent - overheads)."),
    Figure("pv_current_use", "money/ha", True,
           "Present value of what the field nets under its current use (margin - rent - overheads) over the stand life."),
    Figure("irr", "fraction", False, "Internal rate of return of the stand's cash flows (real)."),
    Figure("irr_vs_current_use", "fraction", False, "IRR of the incremental cash flows."),
    Figure("mirr", "fraction", False, "Modified IRR (finance and reinvestment rates as the case says)."),
    Figure("eav", "money/ha/yr", True, "Equivalent annual value of the stand: NPV / annuity factor."),
    Figure("current_margin", "money/ha/yr", True, "The current use's yearly gross margin."),
    Figure("current_use_net", "money/ha/yr", True,
           "What the field nets a year under its current use: margin - rent - overheads."),
    Figure("eav_vs_current_use", "money/ha/yr", True, "How much more (or less) a year the stand earns than today's use."),
    Figure("payback_year", "yr", False, "First year the cumulative cash flow is back to zero."),
    Figure("payback_years", "yr", False, "Simple payback, interpolated within the year."),
    Figure("discounted_payback_year", "yr", False, "First year the cumulative discounted cash flow is back to zero."),
    Figure("discounted_payback_years", "yr", False, "Discounted payback, interpolated within the year."),
    Figure("breakeven_price", "money/price unit", False, "Biomass price that makes NPV = 0 (per t DM, or per GJ)."),
    Figure("breakeven_price_vs_current_use", "money/price unit", False, "Price that makes the stand match the current use."),
    Figure("breakeven_mature_yield_t_dm_per_ha", "t DM/ha/yr", False, "Mature yield that makes NPV = 0."),
    Figure("breakeven_mature_yield_vs_current_use_t_dm_per_ha", "t DM/ha/yr", False,
           "Mature yield that makes the stand match the current use."),
    Figure("peak_funding_need", "money/ha", True, "Deepest point of the cumulative cash flow, as a positive amount."),
    Figure("peak_funding_year", "yr", False, "Year of the peak funding need."),
    Figure("establishment_cost", "money/ha", True, "Establishment cost, with the expected replanting in year 1."),
    Figure("sold_t_dm", "t DM/ha", True, "Dry matter sold over the stand life."),
    Figure("sold_gj", "GJ/ha", True, "Energy sold over the stand life."),
    Figure("mean_sold_t_dm_per_year", "t DM/ha/yr", False, "Dry matter sold per year of stand life, on average."),
    Figure("soc_start_t_c_per_ha", "t C/ha", False, "SOC stock at planting (the current use's equilibrium)."),
    Figure("soc_end_t_c_per_ha", "t C/ha", False, "SOC stock when the stand is removed."),
    Figure("soc_gain_t_c", "t C/ha", True, "SOC gained over the stand life, against the current use."),
    Figure("soc_gain_t_co2e", "t CO2e/ha", True, "SOC gain as CO2 (x 44/12)."),
    Figure("soc_loss_after_reversion_t_c", "t C/ha", True,
           "SOC expected to be lost again once the field returns to its current use."),
    Figure("ghg_emissions_t_co2e", "t CO2e/ha", True, "Emissions over the stand life (N2O, fertiliser, diesel, haulage)."),
    Figure("ghg_net_t_co2e", "t CO2e/ha", True, "Net balance over the stand life: emissions minus SOC gain."),
    Figure("ghg_net_t_co2e_per_year", "t CO2e/ha/yr", True, "Net balance per year of stand life."),
    Figure("ghg_net_kg_co2e_per_t_dm", "kg CO2e/t DM", False, "Net balance per t of dry matter sold."),
    Figure("ghg_net_kg_co2e_per_gj", "kg CO2e/GJ", False, "Net balance per GJ sold."),
    Figure("credited_t_co2e", "t CO2e/ha", True, "Carbon credits earned over the stand life (after the buffer)."),
    Figure("carbon_credit_revenue", "money/ha", True, "Credit receipts over the stand life, undiscounted."),
    Figure("carbon_credit_pv", "money/ha", True, "Present value of the credit receipts."),
    Figure("loan_principal", "money/ha", True, "Establishment loan drawn at planting."),
    Figure("loan_payment", "money/ha/yr", True, "Level yearly payment once the grace years end."),
    Figure("loan_interest_total", "money/ha", True, "Interest over the life of the loan."),
    Figure("min_dscr", "ratio", False, "Lowest debt service cover ratio over the loan."),
    Figure("min_dscr_year", "yr", False, "Year of the lowest DSCR."),
    Figure("dscr_covenant", "ratio", False, "DSCR the lender requires."),
    Figure("years_below_covenant", "yr", False, "Number of years the DSCR falls below the covenant."),
    Figure("equity_peak_funding_need", "money/ha", True, "Deepest point of the grower's own cumulative cash, after the loan."),
)
FIGURE_NAMES = tuple(f.name for f in FIGURES)
FIGURE_BY_NAME = {f.name: f for f in FIGURES}


def _row(a: np.ndarray, life: np.ndarray) -> np.ndarray:
    """Value of each row at its own last year."""
    return np.take_along_axis(a, life.reshape(-1, 1), axis=1)[:, 0]


def figures(p: Mapping[str, Any], L: Mapping[str, np.ndarray], breakevens: bool = True) -> dict[str, np.ndarray]:
    """Every decision figure for all cases (arrays shaped ``(cases,)``, per ha).

    Parameters
    ----------
    p : mapping
        :func:`tea.model.ledger.model_inputs` output.
    L : mapping
        :func:`tea.model.ledger.compute` output for ``p``.
    breakevens : bool
        Compute the break-even yields (one more evaluation of the ledger).
    """
    net, inc = L["net_cash_flow"], L["incremental_cash_flow"]
    p = _broadcast_columns(p, net.shape[0])
    life = p["life"][:, 0]
    rate = p["rate"][:, 0]
    df = L["discount_factor"]
    out: dict[str, np.ndarray] = {}
    out["npv"] = np.sum(net * df, axis=1)
    out["npv_vs_current_use"] = np.sum(inc * df, axis=1)
    out["pv_current_use"] = np.sum(L["current_use_cash_flow"] * df, axis=1)
    out["irr"] = np.atleast_1d(finance.irr(net))
    out["irr_vs_current_use"] = np.atleast_1d(finance.irr(inc))
    fin = p.get("mirr_finance_rate", p["rate"])[:, 0]
    rei = p.get("mirr_reinvest_rate", p["rate"])[:, 0]
    out["mirr"] = _mirr_by_life(net, life, fin, rei)
    af = finance.annuity_factor(rate, life)
    out["eav"] = out["npv"] / af
    out["current_margin"] = p["margin"][:, 0] * np.ones_like(rate)
    out["current_use_net"] = (p["margin"] - p["rent"] - p["overheads"])[:, 0] * np.ones_like(rate)
    out["eav_vs_current_use"] = out["npv_vs_current_use"] / af
    y, yy = finance.payback(net)
    out["payback_year"], out["payback_years"] = np.atleast_1d(y), np.atleast_1d(yy)
    y, yy = finance.payback(net, rate)
    out["discounted_payback_year"], out["discounted_payback_years"] = np.atleast_1d(y), np.atleast_1d(yy)

    # break-even price: NPV(price) = NPV + (price' - price) * PV(price-driven revenue per unit price)
    unit_pv = np.sum(L["sold_t_dm"] * L["price_index"] * df, axis=1)  # per unit of price per t DM
    price0 = p["price"][:, 0]
    per_gj = p.get("price_basis_gj", np.zeros_like(p["price"]))[:, 0] > 0
    hv = p["hv_delivered"][:, 0]
    with np.errstate(divide="ignore", invalid="ignore"):
        be = np.where(unit_pv > 0, price0 - out["npv"] / unit_pv, np.nan)
        be_inc = np.where(unit_pv > 0, price0 - out["npv_vs_current_use"] / unit_pv, np.nan)
    out["breakeven_price"] = np.where(per_gj, be / hv, be)
    out["breakeven_price_vs_current_use"] = np.where(per_gj, be_inc / hv, be_inc)

    if breakevens:
        half = dict(p)
        half["mature"] = p["mature"] * 0.5
        L_half = ledger.compute(half, net.shape[1])
        slope = (out["npv"] - np.sum(L_half["net_cash_flow"] * df, axis=1)) / (0.5 * p["mature"][:, 0])
        slope_inc = (out["npv_vs_current_use"] - np.sum(L_half["incremental_cash_flow"] * df, axis=1)) / (0.5 * p["mature"][:, 0])
        with np.errstate(divide="ignore", invalid="ignore"):
            out["breakeven_mature_yield_t_dm_per_ha"] = np.where(
                slope > 0, p["mature"][:, 0] - out["npv"] / slope, np.nan)
            out["breakeven_mature_yield_vs_current_use_t_dm_per_ha"] = np.where(
                slope_inc > 0, p["mature"][:, 0] - out["npv_vs_current_use"] / slope_inc, np.nan)
    else:
        out["breakeven_mature_yield_t_dm_per_ha"] = np.full_like(rate, np.nan)
        out["breakeven_mature_yield_vs_current_use_t_dm_per_ha"] = np.full_like(rate, np.nan)

    need, year = finance.peak_funding(net)
    out["peak_funding_need"], out["peak_funding_year"] = np.atleast_1d(need), np.atleast_1d(year).astype(float)
    out["establishment_cost"] = np.sum(L["establishment_cost"], axis=1)
    out["sold_t_dm"] = np.sum(L["sold_t_dm"], axis=1)
    out["sold_gj"] = np.sum(L["sold_gj"], axis=1)
    out["mean_sold_t_dm_per_year"] = out["sold_t_dm"] / life

    soc = L["soc_t_c"]
    out["soc_start_t_c_per_ha"] = soc[:, 0]
    out["soc_end_t_c_per_ha"] = _row(soc, life)
    out["soc_gain_t_c"] = out["soc_end_t_c_per_ha"] - p["soc_start"][:, 0]
    out["soc_gain_t_co2e"] = out["soc_gain_t_c"] * carbon.C_TO_CO2
    out["soc_loss_after_reversion_t_c"] = carbon.soc_reversion_loss_t_c_per_ha(
        out["soc_end_t_c_per_ha"], p["soc_start"][:, 0])
    out["ghg_emissions_t_co2e"] = np.sum(L["ghg_emissions_t_co2e"], axis=1)
    out["ghg_net_t_co2e"] = np.sum(L["ghg_net_t_co2e"], axis=1)
    out["ghg_net_t_co2e_per_year"] = out["ghg_net_t_co2e"] / life
    with np.errstate(divide="ignore", invalid="ignore"):
        out["ghg_net_kg_co2e_per_t_dm"] = np.where(out["sold_t_dm"] > 0, 1000.0 * out["ghg_net_t_co2e"] / out["sold_t_dm"], np.nan)
        out["ghg_net_kg_co2e_per_gj"] = np.where(out["sold_gj"] > 0, 1000.0 * out["ghg_net_t_co2e"] / out["sold_gj"], np.nan)
    out["credited_t_co2e"] = np.sum(L["credited_t_co2e"], axis=1)
    out["carbon_credit_revenue"] = np.sum(L["carbon_credit_revenue"], axis=1)
    out["carbon_credit_pv"] = np.sum(L["carbon_credit_revenue"] * df, axis=1)

    out["loan_principal"] = L["loan_drawdown"][:, 0]
    out["loan_payment"] = np.max(L["debt_service"] * (L["loan_principal"] > 0), axis=1)
    out["loan_interest_total"] = np.sum(L["loan_interest"], axis=1)
    low, low_year = loan.min_dscr(L["dscr"])
    out["min_dscr"], out["min_dscr_year"] = low, np.where(low_year < 0, np.nan, low_year)
    covenant = p.get("dscr_covenant", np.full_like(p["rate"], np.nan))[:, 0]
    out["dscr_covenant"] = covenant
    out["years_below_covenant"] = np.sum(np.nan_to_num(L["dscr"], nan=np.inf) < covenant[:, None], axis=1).astype(float)
    out["equity_peak_funding_need"] = np.atleast_1d(finance.peak_funding(L["equity_cash_flow"])[0])
    return out


def _broadcast_columns(p: Mapping[str, Any], rows: int) -> dict[str, Any]:
    """Every (1, 1) input column repeated to (rows, 1), so shared inputs index like per-case ones."""
    out = dict(p)
    for key, value in p.items():
        if isinstance(value, np.ndarray) and value.ndim == 2 and value.shape == (1, 1) and rows > 1:
            out[key] = np.broadcast_to(value, (rows, 1))
    return out


def _mirr_by_life(net: np.ndarray, life: np.ndarray, finance_rate, reinvest_rate) -> np.ndarray:
    """MIRR over each row's own years 0..life (trailing padded years would change its exponent)."""
    out = np.empty(net.shape[0])
    for L_ in np.unique(life):
        rows = life == L_
        out[rows] = np.atleast_1d(finance.mirr(net[rows, : L_ + 1], finance_rate[rows], reinvest_rate[rows]))
    return out


# ----------------------------------------------------------------------------- one case
@dataclass
class Results:
    """The decision figures of one case, per ha and for the whole field."""

    case_name: str
    case_hash: str
    currency: str
    area_ha: float
    stand_life_years: int
    discount_rate_real: float
    discount_rate_given: float
    rate_basis: str
    inflation: float
    price_basis: str
    per_ha: dict[str, float | None]
    notes: dict[str, str] = field(default_factory=dict)
    warnings: list[str] = field(default_factory=list)
    version: str = __version__

    @property
    def whole_field(self) -> dict[str, float | None]:
        return {
            name: (None if v is None else v * self.area_ha if FIGURE_BY_NAME[name].scales else v)
            for name, v in self.per_ha.items()
        }

    def __getitem__(self, name: str) -> float | None:
        return self.per_ha[name]

    def to_dict(self) -> dict[str, Any]:
        return {
            "case": self.case_name,
            "case_hash": self.case_hash,
            "tool_version": self.version,
            "currency": self.currency,
            "area_ha": self.area_ha,
            "stand_life_years": self.stand_life_years,
            "discount_rate": {
                "used_real": self.discount_rate_real,
                "given": self.discount_rate_given,
                "basis": self.rate_basis,
                "inflation": self.inflation,
            },
            "price_basis": self.price_basis,
            "figures_per_ha": dict(self.per_ha),
            "figures_whole_field": self.whole_field,
            "figure_units": {f.name: f.unit for f in FIGURES},
            "notes": dict(self.notes),
            "warnings": list(self.warnings),
            "cautions": list(CAUTIONS),
        }


def _clean(v: float) -> float | None:
    v = float(v)
    return None if not np.isfinite(v) else v


def summarise(case: Case, frame: pd.DataFrame | None = None) -> Results:
    """The decision figures of one case, read off its ledger (built here if not given)."""
    if frame is None:
        frame = ledger.build_ledger(case)
    if frame.attrs.get("case_hash") != case.hash:
        raise ValueError("this ledger was not built from this case")
    p = with_case_options(case, ledger.model_inputs(case.values))
    L = {name: frame[name].to_numpy(dtype=float)[None, :] for name in ledger.LINE_NAMES}
    figs = figures(p, L)
    per_ha = {name: _clean(figs[name][0]) for name in FIGURE_NAMES}
    notes: dict[str, str] = {}
    for name, flows in (("irr", L["net_cash_flow"][0]), ("irr_vs_current_use", L["incremental_cash_flow"][0])):
        _, reason = finance.irr_explained(flows)
        if reason:
            notes[name] = f"IRR undefined: {reason}"
    if per_ha["payback_year"] is None:
        notes["payback_year"] = "the cumulative cash flow never returns to zero within the stand life"
    if per_ha["discounted_payback_year"] is None:
        notes["discounted_payback_year"] = "the cumulative discounted cash flow never returns to zero within the stand life"
    if per_ha["breakeven_mature_yield_t_dm_per_ha"] is not None and per_ha["breakeven_mature_yield_t_dm_per_ha"] < 0:
        notes["breakeven_mature_yield_t_dm_per_ha"] = "negative: the stand pays even with no harvest"
    if per_ha["min_dscr"] is None:
        notes["min_dscr"] = "no loan: no debt service falls due"
    if per_ha["mirr"] is None:
        notes["mirr"] = "MIRR undefined: the flows need both a cost and a receipt"
    return Results(
        case_name=case.name,
        case_hash=case.hash,
        currency=case.currency,
        area_ha=case.area_ha,
        stand_life_years=case.stand_life,
        discount_rate_real=float(p["rate"][0, 0]),
        discount_rate_given=case["finance.discount_rate"],
        rate_basis=case["finance.rate_basis"],
        inflation=case["finance.inflation"],
        price_basis=case.price_basis,
        per_ha=per_ha,
        notes=notes,
        warnings=list(case.warnings),
    )


def with_case_options(case_or_values: Case | Mapping[str, Any], p: dict[str, Any]) -> dict[str, Any]:
    """Add the inputs :func:`figures` needs beyond the ledger (price basis, MIRR rates)."""
    v = case_or_values.values if isinstance(case_or_values, Case) else case_or_values
    p = dict(p)
    p["price_basis_gj"] = ledger._col(np.asarray(v.get("revenue.price_per_gj") is not None, dtype=float))
    p["dscr_covenant"] = ledger._col(v["loan.dscr_covenant"])
    for key in ("mirr_finance_rate", "mirr_reinvest_rate"):
        if v.get(f"finance.{key}") is not None:  # in the case's rate basis, like the discount rate
            p[key] = ledger._col(ledger._real_rate(v, f"finance.{key}"))
    return p
