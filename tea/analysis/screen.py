"""Screening many fields, and the lean evaluator that risk and screening share.

Two parts:

* :func:`evaluate` computes decision figures for many variants of one case at
  once (``p`` from :func:`tea.model.ledger.model_inputs`, columns shaped
  ``(cases, 1)``), in chunks of rows so that memory stays bounded. Its *lean*
  path computes only what screening and risk report; :func:`tea.model.ledger.compute`
  with :func:`tea.model.results.figures` stays the reference (the *full* path, also
  available here), and the tests hold the two equal to 1e-9.
* :func:`screen` reads a field table (CSV, one row per field, columns
  overriding case values), checks every cell, skips and reports bad rows,
  evaluates every good row in one vectorised pass per chunk and returns the
  fields ranked.

The lean path
-------------
Every ledger line is a per-row coefficient times a year pattern that depends
only on a few *structural* inputs (stand life, ramp-up, harvest cycle, price
path, SOC path, loan terms): a harvest's dry matter is mature yield x site
factor x (1 - losses) x the harvested share of the growth pattern, a yearly
cost is its amount x the years the stand stands, and so on (every cost or
receipt that depends on the yield is proportional to the harvested dry
matter, as :mod:`tea.model.ledger` defines it). Rows are grouped by their
structural inputs; within a group the net cash flow is the matrix product of
a (rows x terms) coefficient matrix and a (terms x years) pattern matrix,
and sums over the years (dry matter sold, emissions, present values) reduce
to sums of the patterns. Only the IRR, the paybacks, the funding peaks and
the DSCR need the year-by-year flows. The same functions of
:mod:`tea.methods.agronomy`, :mod:`tea.methods.carbon` and :mod:`tea.methods.loan` as the ledger's
build the patterns.
"""

from __future__ import annotations

import csv
import io
import math
import sys
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Callable, Iterator, Mapping, Sequence

import numpy as np

from tea import __version__
from tea.methods import agronomy, carbon, finance, loan
from tea.inputs import published
from tea.model import ledger, results
from tea.inputs import schema
from tea.inputs.case import Case
from tea.core.errors import CaseError, OutputError, Problem
from tea.core.texts import CAUTIONS

C_TO_CO2 = carbon.C_TO_CO2
N2O_N_TO_N2O = carbon.N2O_N_TO_N2O

#: rows evaluated together: keeps the year arrays of a chunk in the processor cache
CHUNK_ROWS = 8192
#: rows read, checked and evaluated together from a field table
TABLE_CHUNK_ROWS = 65536
#: above this many structural groups per row the lean path stops paying; the full ledger is used
MAX_GROUP_SHARE = 1.0 / 256.0

#: the figures the lean path computes (names as in :data:`tea.model.results.FIGURE_NAMES`)
LEAN_FIGURES = (
    "npv", "npv_vs_current_use", "pv_current_use", "irr", "irr_vs_current_use", "eav", "current_margin", "current_use_net",
    "eav_vs_current_use", "payback_year", "payback_years", "discounted_payback_year", "discounted_payback_years",
    "breakeven_price", "breakeven_price_vs_current_use", "peak_funding_need", "peak_funding_year",
    "establishment_cost", "sold_t_dm", "sold_gj", "mean_sold_t_dm_per_year", "soc_start_t_c_per_ha",
    "soc_end_t_c_per_ha", "soc_gain_t_c", "soc_gain_t_co2e", "soc_loss_after_reversion_t_c",
    "ghg_emissions_t_co2e", "ghg_net_t_co2e", "ghg_net_t_co2e_per_year", "ghg_net_kg_co2e_per_t_dm",
    "ghg_net_kg_co2e_per_gj", "credited_t_co2e", "carbon_credit_revenue", "carbon_credit_pv", "loan_principal",
    "loan_payment", "loan_interest_total", "min_dscr", "min_dscr_year", "dscr_covenant", "years_below_covenant",
    "equity_peak_funding_need",
)
#: the yearly lines the lean path can hand back
LEAN_LINES = ("net_cash_flow", "incremental_cash_flow", "cumulative_cash_flow", "discounted_cash_flow",
              "cumulative_discounted_cash_flow", "equity_cash_flow")

#: structural inputs: rows share year patterns when these are equal
STRUCTURE = ("life", "first", "interval", "decline_start", "decline_rate", "price_change", "payment_years",
             "credit_first", "first_order", "transition", "k_rate", "loan_rate", "loan_term", "loan_grace",
             "loan_capitalised")


# ============================================================================= inputs for many rows
def model_inputs(values: Mapping[str, Any], case_or_values: Case | Mapping[str, Any] | None = None) -> dict[str, Any]:
    """:func:`tea.model.ledger.model_inputs` plus the options :func:`tea.model.results.figures` needs."""
    p = ledger.model_inputs(values)
    return results.with_case_options(values if case_or_values is None else case_or_values, p)


def n_rows(p: Mapping[str, Any]) -> int:
    """Number of rows (cases) in model inputs whose columns are (rows, 1) or (1, 1)."""
    n = 1
    for name, a in p.items():
        if isinstance(a, np.ndarray) and a.ndim == 2 and name != "ramp" and a.shape[1] == 1:
            n = max(n, a.shape[0])
    ramp = p.get("ramp")
    if isinstance(ramp, np.ndarray) and ramp.ndim == 2:
        n = max(n, ramp.shape[0])
    return n


def _take(p: Mapping[str, Any], rows: slice | np.ndarray, n: int) -> dict[str, Any]:
    """The rows of every per-row column; shared columns as they are."""
    out = {}
    for name, a in p.items():
        if isinstance(a, np.ndarray) and a.ndim == 2 and a.shape[0] == n and n > 1:
            out[name] = a[rows]
        else:
            out[name] = a
    return out


def _broadcast(p: Mapping[str, Any], n: int) -> dict[str, Any]:
    """Every (1, 1) column broadcast to (n, 1), as :func:`tea.model.results.figures` expects."""
    out = {}
    for name, a in p.items():
        if isinstance(a, np.ndarray) and a.ndim == 2 and a.shape == (1, 1) and name != "ramp":
            out[name] = np.broadcast_to(a, (n, 1))
        else:
            out[name] = a
    return out


def _col(p: Mapping[str, Any], name: str) -> np.ndarray:
    """A (rows,) or (1,) view of a column."""
    return np.asarray(p[name]).reshape(-1)


# ============================================================================= evaluation
def evaluate(
    p: Mapping[str, Any],
    n_years: int | None = None,
    names: Sequence[str] | None = None,
    lines: Sequence[str] = (),
    chunk_rows: int = CHUNK_ROWS,
    lean: bool | None = None,
    progress: Callable[[int], None] | None = None,
) -> dict[str, np.ndarray]:
    """Decision figures (and optionally yearly lines) for many rows of model inputs.

    Parameters
    ----------
    p : mapping
        :func:`model_inputs` output; per-row columns (rows, 1), shared ones (1, 1).
    n_years : int, optional
        Year rows; default the longest stand life + 1.
    names : sequence of str, optional
        Figures wanted (default :data:`LEAN_FIGURES`).
    lines : sequence of str
        Yearly lines wanted, each returned (rows, years).
    chunk_rows : int
        Rows computed together.
    lean : bool, optional
        True: the lean path (an error if a figure needs the full ledger);
        False: the full ledger; None: lean where it serves.
    progress : callable, optional
        Called with the number of rows done after each chunk.

    Returns
    -------
    dict of ndarray
        Each figure shaped (rows,), per ha; each line (rows, years).
    """
    names = tuple(LEAN_FIGURES if names is None else names)
    n = n_rows(p)
    if n_years is None:
        n_years = int(_col(p, "life").max()) + 1
    can_lean = set(names) <= set(LEAN_FIGURES) and set(lines) <= set(LEAN_LINES)
    groups = _groups(p, n) if can_lean and lean is not False else None
    if lean is None:
        lean = groups is not None and len(groups) <= max(16, int(n * MAX_GROUP_SHARE))
    elif lean and not can_lean:
        raise ValueError(f"the lean path computes {', '.join(LEAN_FIGURES)} and lines {', '.join(LEAN_LINES)}")
    out = {name: np.empty(n) for name in names}
    out.update({name: np.empty((n, n_years)) for name in lines})
    if lean:
        for rows in groups:
            sub = _take(p, rows, n) if not (isinstance(rows, slice) and rows == slice(0, n)) else p
            count = rows.stop - rows.start if isinstance(rows, slice) else rows.size
            pat = _Patterns(sub, n_years)
            for start in range(0, count, chunk_rows):
                stop = min(start + chunk_rows, count)
                q = _take(sub, slice(start, stop), count)
                got = _lean_chunk(q, pat, stop - start, names, lines)
                target = rows[start:stop] if not isinstance(rows, slice) else slice(rows.start + start, rows.start + stop)
                for name, value in got.items():
                    out[name][target] = value.T if value.ndim == 2 else value
                if progress is not None:
                    progress(stop - start)
        return out
    for start in range(0, n, chunk_rows):
        stop = min(start + chunk_rows, n)
        q = _broadcast(_take(p, slice(start, stop), n), stop - start)
        L = ledger.compute(q, n_years)
        figs = results.figures(q, L, breakevens=any(x.startswith("breakeven_mature") for x in names))
        for name in names:
            out[name][start:stop] = figs[name]
        for name in lines:
            out[name][start:stop] = L[name]
        if progress is not None:
            progress(stop - start)
    return out


def _groups(p: Mapping[str, Any], n: int) -> list[slice | np.ndarray]:
    """Row sets sharing every structural input (one slice when all rows do)."""
    cols = []
    for name in STRUCTURE:
        a = _col(p, name)
        if a.size > 1 and not np.all(a == a[0]):
            cols.append(a.astype(float))
    ramp = np.asarray(p["ramp"], dtype=float)
    if ramp.ndim == 2 and ramp.shape[0] > 1:
        filled = np.where(np.isnan(ramp), -1.0, ramp)
        if not np.all(filled == filled[0]):
            cols.extend(filled.T)
    if not cols:
        return [slice(0, n)]
    # one integer code per row: the codes of each column combined in mixed radix
    code = np.zeros(n, dtype=np.int64)
    size = 1
    for col in cols:
        values, inverse = np.unique(col, return_inverse=True)
        if size * values.size >= 2**62:  # renumber before the mixed-radix code could overflow
            _, code = np.unique(code, return_inverse=True)
            code = code.reshape(-1)
            size = int(code.max()) + 1
        code = code * values.size + inverse.reshape(-1)
        size *= values.size
    _, code = np.unique(code, return_inverse=True)
    code = code.reshape(-1)
    order = np.argsort(code, kind="stable")
    bounds = np.cumsum(np.bincount(code))
    return [order[a:b] for a, b in zip(np.concatenate([[0], bounds[:-1]]), bounds)]


class _Patterns:
    """Year patterns shared by a group of rows (built with the ledger's own model functions)."""

    # term order of the pattern matrix
    TERMS = ("y0", "y1", "harvested", "fertilised", "harvest", "active", "last", "revenue", "paid", "credit")

    def __init__(self, p: Mapping[str, Any], n_years: int):
        first = lambda name: _col(p, name)[0]  # noqa: E731
        life = int(first("life"))
        t = np.arange(n_years)
        T = t.astype(float)
        active = ((t >= 1) & (t <= life)).astype(float)
        ramp = p["ramp"]
        ramp_arr = np.asarray(ramp, dtype=float)
        if ramp_arr.ndim == 2:
            ramp = ramp_arr[:1]
        growth = agronomy.growth_fraction(t, ramp, int(first("decline_start")), float(first("decline_rate")))[0] * active
        interval = int(first("interval"))
        flags = agronomy.harvest_flags(t, int(first("first")), interval, life)[0]
        harvested = agronomy.harvested_growth(growth[None, :], flags[None, :], interval)[0]
        price = agronomy.price_index(t, float(first("price_change")), p["price_path"])[0] * active
        years_paid = int(first("payment_years"))
        paid = active * ((t <= years_paid) if years_paid > 0 else 1.0)
        held = np.minimum(T, life)
        if first("first_order") > 0:
            progress = 1.0 - np.exp(-float(first("k_rate")) * held)
        else:
            progress = np.clip(held / float(first("transition")), 0.0, 1.0)
        self.first_order = bool(first("first_order") > 0)
        self.k_rate = float(first("k_rate"))
        self.transition = float(first("transition"))
        step = np.diff(progress, prepend=progress[0])
        credit = (t >= int(first("credit_first"))) * active * step
        rows = {
            "y0": (t == 0).astype(float),
            "y1": ((t == 1) & (life >= 1)).astype(float),
            "harvested": harvested,
            "fertilised": (harvested > 0).astype(float),
            "harvest": flags.astype(float),
            "active": active,
            "last": (t == life).astype(float),
            "revenue": harvested * price,
            "paid": paid,
            "credit": credit,
        }
        self.P = np.vstack([rows[k] for k in self.TERMS])  # (terms, years)
        self.PT = np.ascontiguousarray(self.P.T)  # (years, terms)
        self.sums = self.P.sum(axis=1)
        self.life = life
        self.t = t
        self.T = T
        self.active = active
        self.progress_end = float(progress[life]) if life < n_years else float(progress[-1])
        sched = loan.schedule(np.ones((1, 1)), _col(p, "loan_rate")[:1].reshape(1, 1),
                              _col(p, "loan_term")[:1].reshape(1, 1), _col(p, "loan_grace")[:1].reshape(1, 1),
                              _col(p, "loan_capitalised")[:1].reshape(1, 1) > 0, n_years)
        self.debt_service = sched["debt_service"][0]
        self.draw_less_service = sched["loan_drawdown"][0] - sched["debt_service"][0]
        self.cum_draw_less_service = np.cumsum(self.draw_less_service)
        self.payment = float(np.max(sched["debt_service"][0] * (sched["loan_principal"][0] > 0)))
        self.interest_total = float(sched["loan_interest"][0].sum())
        self.service_years = np.flatnonzero(self.debt_service > 0)
        self.index = {k: i for i, k in enumerate(self.TERMS)}


def _coefficients(q: Mapping[str, Any], m: int) -> dict[str, np.ndarray]:
    """Per-row amounts multiplying each pattern, (m,) each, and the per-row quantities."""
    g = lambda name: _col(q, name)  # noqa: E731
    yield_ = g("mature") * g("site_factor")
    harvested = yield_ * g("retention") * (1.0 - g("field_loss"))
    sold = harvested * (1.0 - g("storage_loss"))
    est0 = g("site_prep") + g("weed") + g("material") + g("planting") + g("est_fert") + g("fencing")
    replant = g("p_fail") * g("replant_share") * (g("material") + g("planting"))
    nutrient_kg = g("n_per_t") * g("n_share") + g("p_per_t") * g("p_share") + g("k_per_t") * g("k_share")
    per_harvested = (harvested * (g("n_per_t") * g("n_share") * g("n_price") + g("p_per_t") * g("p_share") * g("p_price")
                                  + g("k_per_t") * g("k_share") * g("k_price") + g("baling"))
                     + sold / (1.0 - g("moisture")) * g("distance") * g("haul_rate") + sold * g("storage"))
    spreading = g("spreading") * ((harvested * nutrient_kg) > 0)
    fixed = g("rent") + g("overheads") + g("insurance") + g("upkeep")
    soc_start, soc_target = g("soc_start"), g("soc_target")
    credited_per_step = np.maximum(soc_target - soc_start, 0.0) * C_TO_CO2 * (1.0 - g("buffer"))
    c = {
        "y0": g("grant") - est0,
        "y1": -replant,
        "harvested": -per_harvested,
        "fertilised": -spreading,
        "harvest": -g("harvest_cost"),
        "active": -fixed,
        "last": -g("removal"),
        "revenue": sold * g("price"),
        "paid": g("payment"),
        "credit": credited_per_step * g("credit_price"),
    }
    c = {k: np.broadcast_to(v, (m,)) for k, v in c.items()}
    extra = dict(yield_=yield_, harvested=harvested, sold=sold, est0=est0, replant=replant,
                 credited_per_step=credited_per_step, soc_start=soc_start, soc_target=soc_target)
    return c, {k: np.broadcast_to(v, (m,)) for k, v in extra.items()}


def _payback_from(flow: np.ndarray, cum: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """:func:`tea.methods.finance.payback` from flows and their running totals, both (years, rows).

    Same rule: the first year t after the cumulative flow first turns negative
    at which it is >= 0 again, interpolated as ``t - 1 + deficit / flow_t``;
    0 if it is never negative, NaN if it never recovers.
    """
    years, rows = flow.shape
    year = np.full(rows, np.nan)
    crossing = np.full(rows, np.nan)
    cols = np.arange(rows)
    # usual rows: negative from year 0 (the establishment cost), so recovery is searched from year 1
    usual = cum[0] < 0
    at = np.argmax(cum[1:] >= 0, axis=0) + 1 if years > 1 else np.zeros(rows, dtype=np.int64)
    if years > 1:
        found = usual & (cum[at, cols] >= 0)
    else:
        found = np.zeros(rows, dtype=bool)
    other = np.flatnonzero(~usual)
    if other.size:
        sub = cum[:, other]
        negative = sub < 0
        ever = negative.any(axis=0)
        start = np.argmax(negative, axis=0)
        recovered = (sub >= 0) & (np.arange(years)[:, None] > start[None, :])
        at[other] = np.argmax(recovered, axis=0)
        found[other] = ever & recovered.any(axis=0)
        never = other[~ever]
        year[never] = 0.0
        crossing[never] = 0.0
    idx = np.flatnonzero(found)
    at_f = at[idx]
    deficit = -cum[at_f - 1, idx]
    with np.errstate(divide="ignore", invalid="ignore"):
        crossing[idx] = at_f - 1 + deficit / flow[at_f, idx]
    year[idx] = at_f
    return year, crossing


def _running_total(x: np.ndarray) -> np.ndarray:
    """Cumulative sum down the year axis of a (years, rows) array, one year at a time.

    (For short year axes this is several times faster than ``np.cumsum``
    along the rows of the transposed array.)
    """
    out = np.empty_like(x)
    out[0] = x[0]
    for t in range(1, x.shape[0]):
        np.add(out[t - 1], x[t], out=out[t])
    return out


#: columns per matrix product: small enough that the BLAS library runs it on one thread
_GEMM_COLUMNS = 2048


def _flows(PT: np.ndarray, C: np.ndarray) -> np.ndarray:
    """Yearly flows (years, rows) = pattern matrix (years, terms) x coefficients (terms, rows)."""
    years, m = PT.shape[0], C.shape[1]
    out = np.empty((years, m))
    for a in range(0, m, _GEMM_COLUMNS):
        b = min(a + _GEMM_COLUMNS, m)
        out[:, a:b] = PT @ C[:, a:b]
    return out


def _lean_chunk(q: Mapping[str, Any], pat: _Patterns, m: int, names: Sequence[str],
                lines: Sequence[str]) -> dict[str, np.ndarray]:
    """The lean figures of ``m`` rows sharing the patterns ``pat``; yearly arrays are (years, rows)."""
    want = set(names) | set(lines)
    g = lambda name: np.broadcast_to(_col(q, name), (m,))  # noqa: E731
    c, x = _coefficients(q, m)
    terms = pat.TERMS
    C = np.empty((len(terms), m))
    for i, k in enumerate(terms):
        C[i] = c[k]
    margin = g("margin")
    # the current use nets its margin less the rent and overheads it pays too (tea.model.ledger: current_use_cash_flow)
    current_net = margin - g("rent") - g("overheads")
    active_i = pat.index["active"]
    C_inc = C.copy()
    C_inc[active_i] -= current_net
    rate = g("rate")
    life = pat.life
    # the loan is in money of the year; the ledger in today's money (tea.model.ledger: to_nominal)
    to_nominal = (1.0 + g("loan_inflation")[None, :]) ** pat.T[:, None]  # (years, rows)
    out: dict[str, np.ndarray] = {}

    def need(*keys: str) -> bool:
        return any(k in want for k in keys)

    need_flows = need("irr", "payback_year", "payback_years", "peak_funding_need", "peak_funding_year",
                      "equity_peak_funding_need", "discounted_payback_year", "discounted_payback_years",
                      "min_dscr", "min_dscr_year", "years_below_covenant", *LEAN_LINES)
    net = _flows(pat.PT, C) if need_flows else None
    uniform_rate = bool(np.all(rate == rate[0]))
    if uniform_rate:
        df = (1.0 + rate[0]) ** -pat.T  # (years,)
        pv_terms = pat.P @ df  # present value of each pattern
        npv = pv_terms @ C
        npv_inc = pv_terms @ C_inc
        pv_active = pv_terms[active_i]
        af = float(finance.annuity_factor(rate[0], life))
        rev_pv = pv_terms[pat.index["revenue"]]
        credit_pv = pv_terms[pat.index["credit"]]
    else:
        df = (1.0 + rate[None, :]) ** -pat.T[:, None]  # (years, rows)
        pv_terms = None
        pv_active = pat.active @ df
        npv = np.einsum("tm,tm->m", net, df) if net is not None else np.einsum("kt,tm,km->m", pat.P, df, C)
        npv_inc = npv - current_net * pv_active
        af = finance.annuity_factor(rate, life)
        rev_pv = pat.P[pat.index["revenue"]] @ df
        credit_pv = pat.P[pat.index["credit"]] @ df

    out["npv"] = npv
    out["npv_vs_current_use"] = npv_inc
    out["pv_current_use"] = current_net * pv_active
    out["eav"] = npv / af
    out["current_margin"] = margin.copy()
    out["current_use_net"] = current_net
    out["eav_vs_current_use"] = npv_inc / af
    if need("irr"):
        out["irr"] = np.atleast_1d(finance.irr(net.T))
    if need("irr_vs_current_use", "incremental_cash_flow"):
        inc = _flows(pat.PT, C_inc)
        if "irr_vs_current_use" in want:
            out["irr_vs_current_use"] = np.atleast_1d(finance.irr(inc.T))
        if "incremental_cash_flow" in lines:
            out["incremental_cash_flow"] = inc
    if need("payback_year", "payback_years", "peak_funding_need", "peak_funding_year", "cumulative_cash_flow",
            "equity_peak_funding_need"):
        cum = _running_total(net)
        if need("payback_year", "payback_years"):
            out["payback_year"], out["payback_years"] = _payback_from(net, cum)
        if need("peak_funding_need", "peak_funding_year"):
            year = np.argmin(cum, axis=0)
            out["peak_funding_year"] = year.astype(float)
            out["peak_funding_need"] = np.maximum(0.0, -cum[year, np.arange(m)])
        if "equity_peak_funding_need" in want:
            principal = g("loan_share") * x["est0"]
            rows = np.flatnonzero(principal > 0)
            low = cum.min(axis=0)
            if rows.size:
                eq = cum[:, rows] + _running_total(
                pat.draw_less_service[:, None] * principal[None, rows] / to_nominal[:, rows])
                low[rows] = eq.min(axis=0)
            out["equity_peak_funding_need"] = np.maximum(0.0, -low)
        if "cumulative_cash_flow" in lines:
            out["cumulative_cash_flow"] = cum
    if need("discounted_payback_year", "discounted_payback_years", "discounted_cash_flow",
            "cumulative_discounted_cash_flow"):
        dnet = net * (df[:, None] if df.ndim == 1 else df)
        dcum = _running_total(dnet)
        if need("discounted_payback_year", "discounted_payback_years"):
            out["discounted_payback_year"], out["discounted_payback_years"] = _payback_from(dnet, dcum)
        if "discounted_cash_flow" in lines:
            out["discounted_cash_flow"] = dnet
        if "cumulative_discounted_cash_flow" in lines:
            out["cumulative_discounted_cash_flow"] = dcum
    if "net_cash_flow" in lines:
        out["net_cash_flow"] = net
    if "equity_cash_flow" in lines:
        principal = g("loan_share") * x["est0"]
        out["equity_cash_flow"] = net + pat.draw_less_service[:, None] * principal[None, :] / to_nominal

    # break-even price: NPV is linear in the price; unit_pv is the PV of the revenue per unit price
    unit_pv = x["sold"] * rev_pv
    price0 = g("price")
    with np.errstate(divide="ignore", invalid="ignore"):
        be = np.where(unit_pv > 0, price0 - npv / unit_pv, np.nan)
        be_inc = np.where(unit_pv > 0, price0 - npv_inc / unit_pv, np.nan)
    per_gj = g("price_basis_gj") > 0
    hv = g("hv_delivered")  # a per-GJ price pays for the heating value at the delivered moisture
    out["breakeven_price"] = np.where(per_gj, be / hv, be)
    out["breakeven_price_vs_current_use"] = np.where(per_gj, be_inc / hv, be_inc)

    out["establishment_cost"] = x["est0"] + x["replant"]
    sum_harvested = pat.sums[pat.index["harvested"]]
    out["sold_t_dm"] = x["sold"] * sum_harvested
    out["sold_gj"] = out["sold_t_dm"] * hv
    out["mean_sold_t_dm_per_year"] = out["sold_t_dm"] / life

    soc_start, soc_target = x["soc_start"], x["soc_target"]
    if pat.first_order:
        soc_end = soc_target + (soc_start - soc_target) * np.exp(-pat.k_rate * life)
    else:
        soc_end = soc_start + (soc_target - soc_start) * min(max(life / pat.transition, 0.0), 1.0)
    out["soc_start_t_c_per_ha"] = soc_start.copy()
    out["soc_end_t_c_per_ha"] = soc_end
    out["soc_gain_t_c"] = soc_end - soc_start
    out["soc_gain_t_co2e"] = out["soc_gain_t_c"] * C_TO_CO2
    out["soc_loss_after_reversion_t_c"] = np.maximum(0.0, soc_end - soc_start)

    # emissions over the stand life: each line's coefficient times the sum of its pattern
    harvested_total = x["harvested"] * sum_harvested
    sold_total = out["sold_t_dm"]
    n_applied = harvested_total * g("n_per_t") * g("n_share") + g("est_n")
    p_applied = harvested_total * g("p_per_t") * g("p_share")
    k_applied = harvested_total * g("k_per_t") * g("k_share")
    n2o = (n_applied * (g("ef1") + g("frac_gasf") * g("ef4") + g("frac_leach") * g("ef5"))
           * N2O_N_TO_N2O * g("gwp_n2o") / 1000.0)
    fert = (n_applied * g("ef_n") + p_applied * g("ef_p") + k_applied * g("ef_k")) / 1000.0
    diesel = (g("diesel_est") + pat.sums[pat.index["harvest"]] * g("diesel_harvest")
              + harvested_total * g("diesel_per_t") + pat.sums[pat.index["last"]] * g("diesel_removal"))
    haul = sold_total / (1.0 - g("moisture")) * g("distance") * g("ef_haul") / 1000.0
    emissions = n2o + fert + diesel * g("ef_diesel") / 1000.0 + haul
    out["ghg_emissions_t_co2e"] = emissions
    out["ghg_net_t_co2e"] = emissions - out["soc_gain_t_co2e"]
    out["ghg_net_t_co2e_per_year"] = out["ghg_net_t_co2e"] / life
    with np.errstate(divide="ignore", invalid="ignore"):
        out["ghg_net_kg_co2e_per_t_dm"] = np.where(sold_total > 0, 1000.0 * out["ghg_net_t_co2e"] / sold_total, np.nan)
        out["ghg_net_kg_co2e_per_gj"] = np.where(out["sold_gj"] > 0, 1000.0 * out["ghg_net_t_co2e"] / out["sold_gj"],
                                                 np.nan)
    out["credited_t_co2e"] = x["credited_per_step"] * pat.sums[pat.index["credit"]]
    out["carbon_credit_revenue"] = out["credited_t_co2e"] * g("credit_price")
    out["carbon_credit_pv"] = x["credited_per_step"] * g("credit_price") * credit_pv

    principal = g("loan_share") * x["est0"]
    out["loan_principal"] = principal.copy()
    out["loan_payment"] = principal * pat.payment
    out["loan_interest_total"] = principal * pat.interest_total
    covenant = g("dscr_covenant")
    out["dscr_covenant"] = covenant.copy()
    if need("min_dscr", "min_dscr_year", "years_below_covenant"):
        cols = pat.service_years
        low = np.full(m, np.nan)
        low_year = np.full(m, np.nan)
        below = np.zeros(m)
        has = np.flatnonzero(principal > 0)
        if cols.size and has.size:
            service = pat.debt_service[cols][:, None] * principal[None, has]  # (service years, rows)
            ratio = net[np.ix_(cols, has)] * to_nominal[np.ix_(cols, has)] / service
            pick = np.argmin(ratio, axis=0)
            low[has] = ratio[pick, np.arange(has.size)]
            low_year[has] = cols[pick]
            below[has] = np.sum(ratio < covenant[None, has], axis=0)
        out["min_dscr"], out["min_dscr_year"], out["years_below_covenant"] = low, low_year, below
    return {k: v for k, v in out.items() if k in want}


# ============================================================================= the field table
ID_COLUMN = "field_id"
#: schema keys of kind str a field table may carry (labels, not model inputs)
LABEL_KEYS = ("field.name",)


@dataclass
class Column:
    """One column of a field table: what its header names."""

    header: str
    index: int
    kind: str  # "id" | "key" | "label" | "unknown"
    key: schema.Key | None = None
    factor: float = 1.0
    reason: str = ""


@dataclass
class BadRow:
    """One problem of one row of a field table."""

    line: int  # line number in the file (the header is line 1 when there are no comment lines)
    row: int  # data row number, 1 = the first data row
    column: str
    value: str
    reason: str

    def __str__(self) -> str:
        where = f"line {self.line} (row {self.row})"
        col = f": {self.column}" if self.column else ""
        return f"{where}{col}: {self.reason}"


@dataclass
class ScreenResult:
    """A screened field table: figures per field, ranked, and the rows skipped."""

    table: Any  # pandas.DataFrame, ranked
    bad: list[BadRow]
    rows_read: int
    rows_skipped: int
    warnings: list[str]
    rank_by: str
    case: Case
    source: str
    units_note: str
    ascending: bool = False

    @property
    def rows_evaluated(self) -> int:
        return self.rows_read - self.rows_skipped


def _all_spellings() -> dict[str, list[tuple[schema.Key, float]]]:
    from tea.inputs.case import _spelling_index

    out: dict[str, list[tuple[schema.Key, float]]] = {}
    for section, table in _spelling_index().items():
        for spelling, (k, factor) in table.items():
            out.setdefault(spelling, []).append((k, factor))
    return out


def resolve_column(header: str, index: int) -> Column:
    """What a field-table header names: the id column, a case key (any spelling), or nothing known."""
    from tea.inputs.case import _spelling_index, _suggest

    name = header.strip()
    if name == ID_COLUMN:
        return Column(header, index, "id")
    spelled = _spelling_index()
    hit = None
    if "." in name:
        section, _, key = name.partition(".")
        found = spelled.get(section, {}).get(key)
        if found is None:
            candidates = [f"{s}.{k}" for s in spelled for k in spelled[s]]
            return Column(header, index, "unknown", reason="unknown column" + _suggest(name, candidates))
        hit = found
    else:
        options = _all_spellings().get(name, [])
        if len(options) > 1:
            paths = ", ".join(f"{k.section}.{name}" for k, _ in options)
            return Column(header, index, "unknown", reason=f"ambiguous column: write it as one of {paths}")
        if not options:
            return Column(header, index, "unknown",
                          reason="unknown column" + _suggest(name, list(_all_spellings()) + [ID_COLUMN]))
        hit = options[0]
    k, factor = hit
    if k.path in LABEL_KEYS:
        return Column(header, index, "label", k, factor)
    if k.section in ("case", "crop") or k.kind in ("list", "bool", "str"):
        return Column(header, index, "unknown", k, factor,
                      reason=f"{k.path} cannot differ between fields of one screen (it belongs to the base case)")
    return Column(header, index, "key", k, factor)


def _read_rows(path: Path) -> Iterator[tuple[int, list[str]]]:
    """(line number, cells) of each data row and the header; '#' comment lines and blank lines skipped."""
    try:
        handle = path.open("r", encoding="utf-8-sig", newline="")
    except FileNotFoundError:
        raise CaseError([Problem(str(path), "", "file not found")]) from None
    except OSError as exc:
        raise CaseError([Problem(str(path), "", f"cannot read the file ({exc})")]) from None
    with handle:
        reader = csv.reader(handle)
        try:
            for cells in reader:
                if not cells or (len(cells) == 1 and not cells[0].strip()):
                    continue
                if cells[0].lstrip().startswith("#"):
                    continue
                yield reader.line_num, cells
        except (csv.Error, UnicodeDecodeError) as exc:
            raise CaseError([Problem(str(path), f"line {reader.line_num}", f"not a readable CSV file ({exc})")]) from None


def _count_rows(path: Path) -> int:
    try:
        with path.open("rb") as f:
            return sum(1 for line in f if line.strip() and not line.lstrip().startswith(b"#")) - 1
    except OSError:
        return 0


def _range_reason(k: schema.Key, value: float, factor: float, system: str) -> str | None:
    from tea.inputs.case import _range_error

    return _range_error(k, value, factor, system)


class _Checker:
    """Reads, checks and merges the rows of a field table over a base case, chunk by chunk."""

    def __init__(self, case: Case, columns: list[Column], source: str):
        self.case = case
        self.columns = columns
        self.source = source
        self.keys = [c for c in columns if c.kind == "key"]
        self.system = case.unit_system
        by_path: dict[str, Column] = {}
        problems = []
        for c in columns:
            if c.kind in ("key", "label"):
                if c.key.path in by_path:
                    problems.append(Problem(source, c.header, f"names the same key as column {by_path[c.key.path].header!r}; "
                                            "keep one of them"))
                by_path[c.key.path] = c
        ids = [c for c in columns if c.kind == "id"]
        if len(ids) > 1:
            problems.append(Problem(source, ID_COLUMN, "given twice; keep one column"))
        price_key = "revenue.price_per_gj" if case.price_basis == "gj" else "revenue.price_per_t_dm"
        for c in self.keys:
            if c.key.path in ("revenue.price_per_gj", "revenue.price_per_t_dm") and c.key.path != price_key:
                c.kind, c.reason = "unknown", (f"the base case prices by {price_key}; give the price in that key, "
                                               "not in this one")
        self.keys = [c for c in columns if c.kind == "key"]
        if problems:
            raise CaseError(problems)
        self.by_path = {c.key.path: c for c in self.keys}

    def check(self, chunk: list[tuple[int, int, list[str]]]) -> tuple[dict[str, Any], np.ndarray, list[BadRow], dict]:
        """Merged values for the chunk's rows, which rows are good, the problems, and the shown cells."""
        import pandas as pd

        from tea.inputs.case import _suggest

        m = len(chunk)
        width = len(self.columns)
        bad_rows: list[BadRow] = []
        good = np.ones(m, dtype=bool)

        def flag(i: int, column: str, value: str, reason: str) -> None:
            good[i] = False
            line, row, _ = chunk[i]
            bad_rows.append(BadRow(line, row, column, value, reason))

        for i, (line, row, cells) in enumerate(chunk):
            if len(cells) > width:
                extra = [v for v in cells[width:] if v.strip()]
                if extra:
                    flag(i, "", extra[0], f"{len(cells)} cells but the header names {width} columns: "
                         f"a value ({extra[0]!r}) in no known column")
        # the table column by column: each a numpy array of stripped strings
        padded = [cells[:width] + [""] * (width - len(cells)) if len(cells) != width else cells
                  for _, _, cells in chunk]
        columns = [np.char.strip(np.array(col, dtype=str)) for col in zip(*padded)] if m else \
            [np.empty(0, dtype=str) for _ in range(width)]

        for c in self.columns:
            if c.kind == "unknown":
                raw = columns[c.index]
                for i in np.flatnonzero(raw != ""):
                    flag(i, c.header, str(raw[i]), c.reason)

        values: dict[str, Any] = dict(self.case.values)
        shown: dict[str, np.ndarray] = {}
        given: dict[str, np.ndarray] = {}
        for c in self.columns:
            if c.kind in ("id", "label"):
                shown[c.header] = columns[c.index]
        for c in self.keys:
            k = c.key
            raw = columns[c.index]
            shown[c.header] = raw
            present = raw != ""
            given[k.path] = present
            base = values.get(k.path)
            if k.kind == "enum":
                for i in np.flatnonzero(present & ~np.isin(raw, k.choices)):
                    v = str(raw[i])
                    flag(i, c.header, v, f"expected one of {', '.join(k.choices)}, got {v!r}" + _suggest(v, k.choices))
                values[k.path] = np.where(present, raw, base if base is not None else "")
                continue
            nums = np.array(pd.to_numeric(pd.Series(raw), errors="coerce"), dtype=float)
            for i in np.flatnonzero(present & ~np.isfinite(nums)):
                v = str(raw[i])
                try:
                    float(v)
                    flag(i, c.header, v, f"expected a finite number, got {v!r}")
                except ValueError:
                    flag(i, c.header, v, f"expected a number, got {v!r}")
                nums[i] = np.nan
            nums[~present] = np.nan
            if k.kind == "int":
                fractional = np.isfinite(nums) & (nums != np.round(nums))
                for i in np.flatnonzero(fractional):
                    flag(i, c.header, str(raw[i]), f"expected a whole number, got {str(raw[i])!r}")
                nums[fractional] = np.nan
            canonical = nums * c.factor
            ok = present & np.isfinite(canonical)
            lo_bad = np.zeros(m, dtype=bool)
            if k.lo is not None:
                lo_bad |= ok & ((canonical < k.lo) | ((canonical == k.lo) if k.lo_open else False))
            if k.hi is not None:
                lo_bad |= ok & ((canonical > k.hi) | ((canonical == k.hi) if k.hi_open else False))
            for i in np.flatnonzero(lo_bad):
                flag(i, c.header, str(raw[i]), _range_reason(k, float(canonical[i]), c.factor, self.system) or "out of range")
            if base is None:
                base_value = np.nan
            else:
                base_value = float(base)
            merged = np.where(ok & ~lo_bad, canonical, base_value)
            if k.kind == "int":
                merged = np.where(np.isfinite(merged), merged, 0).astype(np.int64)
            values[k.path] = merged

        self._derive(values, given, flag, good.copy(), m)
        self._cross_checks(values, given, flag, good.copy(), m)
        return values, good, bad_rows, shown

    def _derive(self, values, given, flag, ok, m) -> None:
        """Re-derive, per row, the values the base case looked up from climate, soil and current use.

        Only rows still ``ok`` (no bad cell) are looked up.
        """
        case = self.case
        climate = np.broadcast_to(np.asarray(values["field.climate"], dtype=str), (m,))
        soil = np.broadcast_to(np.asarray(values["field.soil"], dtype=str), (m,))
        use = np.broadcast_to(np.asarray(values["field.current_use"], dtype=str), (m,))
        site_changed = ok & (given.get("field.climate", np.zeros(m, bool)) | given.get("field.soil", np.zeros(m, bool)))
        use_changed = ok & (given.get("field.climate", np.zeros(m, bool)) | given.get("field.current_use", np.zeros(m, bool)))
        ref = "carbon.soc_ref_t_c_per_ha"
        if case.origin.get(ref) != "case" and site_changed.any():
            refs = np.broadcast_to(np.asarray(values[ref], dtype=float), (m,)).copy()
            own = given.get(ref, np.zeros(m, bool))
            for combo in set(zip(climate[site_changed & ~own], soil[site_changed & ~own])):
                rows = np.flatnonzero(site_changed & ~own & (climate == combo[0]) & (soil == combo[1]))
                try:
                    refs[rows] = published.soc_ref_t_c_per_ha(combo[0], combo[1])
                except KeyError:
                    for i in rows:
                        flag(i, ref, "", f"IPCC Table 2.3 has no reference SOC stock for {combo[0]} on {combo[1]}; "
                             "give soc_ref_t_c_per_ha in this row")
            values[ref] = refs
        names = ("carbon.current_f_lu", "carbon.current_f_mg", "carbon.current_f_i")
        derived = [p for p in names if case.origin.get(p) != "case"]
        if derived and use_changed.any():
            cols = {p: np.broadcast_to(np.asarray(values[p], dtype=float), (m,)).copy() for p in derived}
            for combo in set(zip(use[use_changed], climate[use_changed])):
                rows = np.flatnonzero(use_changed & (use == combo[0]) & (climate == combo[1]))
                factors = dict(zip(names, published.land_use_factors(combo[0], combo[1])))
                for p in derived:
                    keep = rows[~given.get(p, np.zeros(m, bool))[rows]]
                    cols[p][keep] = factors[p]
            values.update(cols)

    def _cross_checks(self, values, given, flag, ok, m) -> None:
        """The case loader's rules that tie keys together, row by row (rows still ``ok`` only)."""
        from tea.inputs.case import YIELD_CEILING_T_DM_PER_HA

        g = lambda path: np.broadcast_to(np.asarray(values[path]), (m,))  # noqa: E731
        flag_ok = flag

        def flag(i, *args):  # noqa: F811
            if ok[i]:
                flag_ok(i, *args)
        touched = lambda *paths: any(p in given for p in paths)  # noqa: E731
        if touched("yield.mature_t_dm_per_ha", "yield.record_t_dm_per_ha"):
            y, rec = g("yield.mature_t_dm_per_ha").astype(float), g("yield.record_t_dm_per_ha").astype(float)
            ceiling = np.minimum(YIELD_CEILING_T_DM_PER_HA, 2.0 * rec)
            for i in np.flatnonzero(y > ceiling):
                flag(i, "yield.mature_t_dm_per_ha", f"{y[i]:g}",
                     f"{y[i]:g} t DM/ha is far above the highest recorded for this crop ({rec[i]:g} t DM/ha); "
                     f"expected at most {ceiling[i]:g}")
        life = g("finance.stand_life_years").astype(int)
        if touched("finance.stand_life_years", "harvest.first_year"):
            first = g("harvest.first_year").astype(int)
            for i in np.flatnonzero(first > life):
                flag(i, "harvest.first_year", f"{first[i]}",
                     f"the first harvest (year {first[i]}) falls after the stand's life ({life[i]} years)")
        if touched("finance.stand_life_years", "loan.term_years", "loan.grace_years", "loan.share_of_establishment"):
            share = g("loan.share_of_establishment").astype(float)
            grace, term = g("loan.grace_years").astype(int), g("loan.term_years").astype(int)
            for i in np.flatnonzero((share > 0) & (grace + term > life)):
                flag(i, "loan.term_years", f"{term[i]}",
                     f"grace ({grace[i]}) + term ({term[i]}) years run past the stand life ({life[i]} years)")
            if values.get("loan.rate") is None:
                for i in np.flatnonzero(share > 0):
                    flag(i, "loan.share_of_establishment", f"{share[i]:g}",
                         "a loan needs its interest rate (loan.rate), which the base case does not give")


def screen(fields: str | Path, case: Case, rank_by: str = "eav_vs_current_use", ascending: bool = False,
           chunk_rows: int = TABLE_CHUNK_ROWS, progress: bool | None = None) -> ScreenResult:
    """Screen a field table over a base case.

    Parameters
    ----------
    fields : path
        CSV file: a header row naming case keys (``area_ha``, ``costs.haul_distance_km``,
        ``site_factor``, ``climate``, ...; any spelling the case file accepts, with or
        without the section), an optional ``field_id`` column, then one row per
        field. Empty cells keep the base case's value. Lines starting with ``#``
        are comments.
    case : Case
        The base case.
    rank_by : str
        Figure to rank by (a name of :data:`LEAN_FIGURES`, or with ``_field``
        for the whole-field value).
    ascending : bool
        Rank the smallest first.
    chunk_rows : int
        Rows read, checked and evaluated together.
    progress : bool, optional
        Show a progress bar on stderr; default: when stderr is a terminal.

    Returns
    -------
    ScreenResult
    """
    import pandas as pd

    path = Path(fields)
    source = str(path)
    rows = _read_rows(path)
    try:
        header_line, header = next(rows)
    except StopIteration:
        raise CaseError([Problem(source, "", "no header row: expected a row naming the columns")]) from None
    columns = [resolve_column(h, j) for j, h in enumerate(header)]
    empty = [c for c in columns if not c.header.strip()]
    if empty:
        raise CaseError([Problem(source, f"column {empty[0].index + 1}", "has no name in the header row")])
    checker = _Checker(case, columns, source)
    warnings = [f"{source}: column {c.header!r}: {c.reason}; rows with a value there are skipped"
                for c in columns if c.kind == "unknown"]
    figure_names = SCREEN_FIGURES
    valid_rank = set(figure_names) | {f"{n}_field" for n in FIELD_FIGURES}
    if rank_by not in valid_rank:
        raise CaseError([Problem(source, "--rank-by", f"unknown figure {rank_by!r}; expected one of "
                                 + ", ".join(sorted(valid_rank)))])

    total = _count_rows(path)
    bar = progress_bar(total, "screening", progress)
    pieces = []
    bad: list[BadRow] = []
    read = 0
    try:
        chunk: list[tuple[int, int, list[str]]] = []
        for line, cells in rows:
            read += 1
            chunk.append((line, read, cells))
            if len(chunk) >= chunk_rows:
                pieces.append(_screen_chunk(checker, chunk, bad, figure_names))
                bar.update(len(chunk))
                chunk = []
        if chunk:
            pieces.append(_screen_chunk(checker, chunk, bad, figure_names))
            bar.update(len(chunk))
    finally:
        bar.close()
    table = pd.concat(pieces, ignore_index=True) if pieces else pd.DataFrame()
    if len(table):
        key = table[rank_by].to_numpy(dtype=float)
        order = np.lexsort((table["line"].to_numpy(), np.isnan(key), key if ascending else -key))
        table = table.iloc[order].reset_index(drop=True)
        table.insert(0, "rank", np.arange(1, len(table) + 1))
    skipped = len({b.line for b in bad})
    table = _rename_with_units(table, case)
    return ScreenResult(table, sorted(bad, key=lambda b: (b.line, b.column)), read, skipped, warnings,
                        rank_by, case, source, _units_note(case), ascending)


#: the figures a screen reports per field (per ha), in output order
SCREEN_FIGURES = (
    "eav_vs_current_use", "npv_vs_current_use", "npv", "eav", "irr", "irr_vs_current_use", "payback_year",
    "discounted_payback_year", "peak_funding_need", "establishment_cost", "breakeven_price",
    "breakeven_price_vs_current_use", "sold_t_dm", "mean_sold_t_dm_per_year", "soc_start_t_c_per_ha",
    "soc_end_t_c_per_ha", "soc_gain_t_c", "soc_gain_t_co2e", "ghg_net_t_co2e", "credited_t_co2e",
    "carbon_credit_pv", "loan_principal", "min_dscr", "years_below_covenant",
)
#: figures also given for the whole field (per ha x area)
FIELD_FIGURES = ("npv_vs_current_use", "npv", "eav_vs_current_use", "peak_funding_need", "soc_gain_t_co2e",
                 "ghg_net_t_co2e")


def _screen_chunk(checker: _Checker, chunk, bad: list[BadRow], names: Sequence[str]):
    import pandas as pd

    values, good, problems, shown = checker.check(chunk)
    bad.extend(problems)
    idx = np.flatnonzero(good)
    frame = pd.DataFrame({"line": [chunk[i][0] for i in idx]})
    for header, cells in shown.items():
        frame[header] = cells[idx]
    if idx.size == 0:
        for name in names:
            frame[name] = np.empty(0)
        for name in FIELD_FIGURES:
            frame[f"{name}_field"] = np.empty(0)
        return frame
    m = len(chunk)
    sub = {}
    for path, v in values.items():
        arr = np.asarray(v) if not isinstance(v, (list, dict)) else None
        if arr is not None and arr.ndim == 1 and arr.shape[0] == m and path not in ("yield.ramp_up_fractions",
                                                                                  "revenue.price_path"):
            sub[path] = arr[idx]
        else:
            sub[path] = v
    p = model_inputs(sub, checker.case)
    figs = evaluate(p, names=names)
    for name in names:
        frame[name] = figs[name]
    area = np.broadcast_to(np.asarray(sub["field.area_ha"], dtype=float), (idx.size,))
    for name in FIELD_FIGURES:
        frame[f"{name}_field"] = figs[name] * area
    return frame


def _units_note(case: Case) -> str:
    per = "acre" if case.unit_system == "us_customary" else "ha"
    units = "short tons, miles" if case.unit_system == "us_customary" else "t, km"
    return (f"money in {case.currency}; figures per {per} ({units}; carbon in metric t) unless the column ends in "
            "_field (whole field); rates and IRR as fractions (0.08 = 8 %); years counted from planting (year 0)")


def _rename_with_units(table, case: Case):
    """Figures shown in the case's unit system, each column named by its unit where a name alone is unclear.

    Per-area figures end in ``_per_ha`` (``_per_acre``); dry matter in US
    customary units is named ``short_ton_dm``; break-even prices end in the
    price's unit. Carbon stays in metric tonnes, money in the case's currency.
    """
    from tea.outputs import display

    if not len(table.columns):
        return table
    system = case.unit_system
    us = system == "us_customary"
    renames = {}
    for name in SCREEN_FIGURES:
        if name not in table:
            continue
        unit = results.FIGURE_BY_NAME[name].unit
        new = name
        if name.startswith("breakeven_price"):
            unit = "money/GJ" if case.price_basis == "gj" else "money/t DM"
            new = name + ("_per_gj" if case.price_basis == "gj" else "_per_short_ton_dm" if us else "_per_t_dm")
        factor, shown = display.convert(1.0, unit, system)
        if factor != 1.0:
            table[name] = table[name] * factor
        if "/ha" in unit and "per_ha" not in new:
            new = f"{new}_per_ha"
        if us:
            new = new.replace("per_ha", "per_acre")
            if shown.startswith("short ton"):
                new = new.replace("_t_dm", "_short_ton_dm")
        renames[name] = new
    for name in FIELD_FIGURES:
        col = f"{name}_field"
        factor, _ = display.convert(1.0, results.FIGURE_BY_NAME[name].unit.replace("/ha", ""), system)
        if col in table and factor != 1.0:
            table[col] = table[col] * factor
    return table.rename(columns=renames)


class _NoBar:
    def update(self, n: int) -> None:
        pass

    def close(self) -> None:
        pass


#: a run this long (rows or draws) shows its progress even when stderr is not a terminal (a log)
LONG_RUN = 1_000_000


def progress_bar(total: int, what: str, enabled: bool | None, unit: str = "rows"):
    """A tqdm bar on stderr, never on stdout.

    By default it is shown when stderr is a terminal (and only once the run
    has lasted 0.5 s), or, sparsely, for a long run logged to a file.
    """
    terminal = sys.stderr.isatty()
    if enabled is None:
        enabled = terminal or total >= LONG_RUN
    if not enabled:
        return _NoBar()
    from tqdm import tqdm

    if terminal:
        return tqdm(total=total, desc=what, unit=unit, file=sys.stderr, delay=0.5, leave=False)
    return tqdm(total=total, desc=what, unit=unit, file=sys.stderr, mininterval=30.0, ascii=True)


# ============================================================================= writing
def write_table(result: ScreenResult, out: str | Path, force: bool = False) -> Path:
    """Write the ranked table: .csv (with # comment lines on top), .xlsx or .parquet."""
    from tea.core.files import atomic_write, atomic_write_text, check_target

    out = Path(out)
    check_target(out, force)
    suffix = out.suffix.lower()
    meta = metadata_lines(result)
    if suffix == ".csv":
        head = "".join(f"# {line}\n" for line in meta)
        return atomic_write_text(out, head + csv_text(result.table), force=True)
    if suffix == ".xlsx":
        import pandas as pd

        if len(result.table) > 1_048_575:
            raise OutputError(f"{out}: {len(result.table):,} fields do not fit a worksheet (1,048,575 rows); write .csv")

        def write(tmp: Path) -> None:
            with pd.ExcelWriter(tmp, engine="openpyxl") as xl:
                result.table.to_excel(xl, sheet_name="ranked fields", index=False)
                pd.DataFrame({"notes": meta}).to_excel(xl, sheet_name="notes", index=False)
        return atomic_write(out, write, force=True)
    if suffix == ".parquet":
        if not parquet_available():
            raise OutputError(f"{out}: Parquet output needs the pyarrow package (pip install pyarrow); "
                              "write .csv or .xlsx instead")

        def write_pq(tmp: Path) -> None:
            table = result.table.copy()
            table.attrs = {"notes": "\n".join(meta)}
            table.to_parquet(tmp, index=False)
        return atomic_write(out, write_pq, force=True)
    raise OutputError(f"{out}: unknown output type {suffix or '(none)'}; expected .csv, .xlsx or .parquet")


def _csv_cell(text: str) -> str:
    """A text cell, quoted the CSV way (RFC 4180) where it holds a comma, a quote or a line break."""
    if any(ch in text for ch in ',"\r\n'):
        return '"' + text.replace('"', '""') + '"'
    return text


def csv_text(table) -> str:
    """A DataFrame as CSV text: numbers to 10 significant digits, NaN as an empty cell.

    Formats column by column (faster than ``DataFrame.to_csv`` with a float format).

    >>> import pandas as pd
    >>> print(csv_text(pd.DataFrame({"field_id": ["A, east"], "npv": [1234.56789012345], "irr": [float("nan")]})), end="")
    field_id,npv,irr
    "A, east",1234.56789,
    """
    cols = []
    for name in table.columns:
        values = table[name].to_numpy()
        if values.dtype.kind == "f":
            cols.append(["" if v != v else "%.10g" % v for v in values.tolist()])
        elif values.dtype.kind in "iub":
            cols.append([str(v) for v in values.tolist()])
        else:
            cols.append([_csv_cell(str(v)) for v in values.tolist()])
    lines = [",".join(_csv_cell(str(n)) for n in table.columns)]
    lines.extend(",".join(row) for row in zip(*cols))
    return "\n".join(lines) + "\n"


def parquet_available() -> bool:
    try:
        import pyarrow  # noqa: F401
    except ImportError:
        return False
    return True


def check_output(out: str | Path, force: bool) -> None:
    """Refuse, before any work, an output that cannot be written."""
    from tea.core.files import check_target

    out = Path(out)
    suffix = out.suffix.lower()
    if suffix not in (".csv", ".xlsx", ".parquet"):
        raise OutputError(f"{out}: unknown output type {suffix or '(none)'}; expected .csv, .xlsx or .parquet")
    if suffix == ".parquet" and not parquet_available():
        raise OutputError(f"{out}: Parquet output needs the pyarrow package (pip install pyarrow); "
                          "write .csv or .xlsx instead")
    check_target(out, force)


def write_errors(result: ScreenResult, out: str | Path, force: bool = True) -> Path:
    """Write the skipped rows' problems as CSV: line, row, column, value, reason."""
    from tea.core.files import atomic_write_text

    buf = io.StringIO()
    w = csv.writer(buf, lineterminator="\n")
    w.writerow(["line", "row", "column", "value", "reason"])
    for b in result.bad:
        w.writerow([b.line, b.row, b.column, b.value, b.reason])
    return atomic_write_text(out, buf.getvalue(), force=force)


def metadata_lines(result: ScreenResult) -> list[str]:
    case = result.case
    lines = [
        f"tea {__version__} screen of {result.source} over base case {case.name!r} ({case.source}, hash {case.hash})",
        f"{result.rows_evaluated} fields evaluated, {result.rows_skipped} rows skipped; ranked by {result.rank_by}"
        + (" (smallest first)" if result.ascending else " (largest first)"),
        result.units_note,
    ]
    if case["case.demo"]:
        lines.append("DEMO DATA: the base case is invented demo data")
    lines.extend(CAUTIONS)
    return lines


def summary_text(result: ScreenResult, top: int = 10) -> str:
    """The terminal view: counts, the best-ranked fields, the cautions."""
    from tea.outputs import display

    case = result.case
    out = [f"Screen of {result.source} over {case.name}" + ("   [DEMO DATA]" if case["case.demo"] else "")]
    out.append("=" * len(out[0]))
    out.append(f"{result.rows_read} rows read; {result.rows_evaluated} fields evaluated; "
               f"{result.rows_skipped} rows skipped" + (" (see the error file)" if result.rows_skipped else ""))
    out.append(result.units_note)
    table = result.table
    if len(table):
        per = "acre" if case.unit_system == "us_customary" else "ha"
        label = next((c for c in (ID_COLUMN, "field.name", "name") if c in table), "line")
        cols = [("rank", "rank"), (label, "field"), (f"eav_vs_current_use_per_{per}", f"EAV vs now /{per}/yr"),
                (f"npv_vs_current_use_per_{per}", f"NPV vs now /{per}"), ("npv_vs_current_use_field", "NPV vs now, field"),
                ("irr", "IRR"), ("payback_year", "payback yr"), (f"soc_gain_t_co2e_per_{per}", f"SOC t CO2e/{per}")]
        cols = [(c, h) for c, h in cols if c in table]
        head = table.head(top)
        cells = []
        for c, h in cols:
            vals = []
            for v in head[c].tolist():
                if c == "irr":
                    vals.append(display.percent(float(v)) if v == v else "–")
                elif c == "payback_year":
                    vals.append(f"{v:.0f}" if v == v else "none")
                elif isinstance(v, float):
                    vals.append(display.number(v) if v == v else "–")
                else:
                    vals.append(str(v))
            cells.append((h, vals))
        widths = [max(len(h), *(len(v) for v in vals)) for h, vals in cells]
        out.append("")
        out.append(f"Top {len(head)} by {result.rank_by} ({case.currency}):")
        out.append("  ".join(h.rjust(w) for (h, _), w in zip(cells, widths)))
        for i in range(len(head)):
            out.append("  ".join(vals[i].rjust(w) for (_, vals), w in zip(cells, widths)))
    out.append("Cautions:")
    out.extend(f"  - {c}" for c in CAUTIONS)
    return "\n".join(out)
