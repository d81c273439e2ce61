"""An establishment loan: drawdown, grace years, level amortisation, debt service and DSCR.

Pure functions over arrays shaped ``(cases, years)``; per-case parameters are
``(cases, 1)`` columns. The loan is drawn at t = 0. In each grace year the
interest is paid (``interest_only``) or added to the balance (``capitalised``);
then the balance is repaid by a level payment over ``term_years``
(PMT, the annuity formula), each payment split into interest on the opening
balance and principal (IPMT/PPMT). Payments fall at the end of each year, as
every ledger flow after year 0 does.

DSCR (debt service cover ratio) = cash flow available for debt service / debt
service, for years with debt service; the cash flow available is the stand's
net cash flow before financing: cash available over principal and interest
(common practice in project and agricultural lending; the model's own line,
``cfads``, counts only what the case's ``loan.cfads_*`` switches count).
In a nominal case the loan is contracted in money of the year while the
ledger is in today's money: the ledger converts with (1 + inflation)^t.
"""

from __future__ import annotations

import numpy as np


def level_payment(rate, n_periods, principal):
    """Level end-of-period payment repaying ``principal`` over ``n_periods`` [money per period].

    payment = P r / (1 - (1 + r)^-n), or P / n where r = 0 (the annuity formula;
    numpy-financial ``pmt`` with the opposite sign).

    >>> round(float(level_payment(0.075 / 12, 180, 200000)), 6)
    1854.02472
    """
    rate = np.asarray(rate, dtype=float)
    n = np.asarray(n_periods, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        # 1 - (1 + r)^-n as -expm1(-n log1p(r)): exact for rates too small for 1 + r to tell from 1
        annuity = np.where(rate == 0, n, -np.expm1(-n * np.log1p(rate)) / np.where(rate == 0, 1.0, rate))
    return principal / annuity


def schedule(principal, rate, term_years, grace_years, capitalised, n_years):
    """Yearly loan lines for all cases.

    Parameters
    ----------
    principal : ndarray (cases, 1)
        Amount drawn at t = 0 [money ha⁻¹].
    rate : ndarray (cases, 1)
        Interest rate [yr⁻¹].
    term_years, grace_years : ndarray of int (cases, 1)
        Repayment years after the grace years; grace years [yr].
    capitalised : ndarray of bool (cases, 1)
        Whether grace-year interest is added to the balance.
    n_years : int
        Number of year rows (year 0 included).

    Returns
    -------
    dict of ndarray (cases, years)
        ``loan_drawdown``, ``loan_interest``, ``loan_principal``, ``debt_service``
        (interest paid + principal), ``loan_balance`` (end of year) [money ha⁻¹].
    """
    t = np.arange(n_years)[None, :]
    P = np.asarray(principal, dtype=float)
    r = np.asarray(rate, dtype=float)
    g = np.asarray(grace_years)
    n = np.asarray(term_years)
    cap = np.asarray(capitalised, dtype=bool)
    growth = (1.0 + r)
    in_grace = (t >= 1) & (t <= g)
    # balance at the end of the grace years
    B = np.where(cap, P * growth**g, P)
    pay = level_payment(r, n, B)
    k = t - g  # repayment year 1..n
    repaying = (k >= 1) & (k <= n)
    # balance before repayment year k: B (1+r)^(k-1) - pay ((1+r)^(k-1) - 1)/r
    km1 = np.maximum(k - 1, 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        fv_factor = np.where(r == 0, km1, np.expm1(km1 * np.log1p(r)) / np.where(r == 0, 1.0, r))
    opening = B * growth**km1 - pay * fv_factor
    grace_opening = np.where(cap, P * growth ** np.maximum(t - 1, 0), P)
    interest_due = np.where(repaying, opening * r, np.where(in_grace, grace_opening * r, 0.0))
    interest_paid = np.where(in_grace & cap, 0.0, interest_due)
    principal_paid = np.where(repaying, pay - opening * r, 0.0)
    drawdown = np.where(t == 0, P, 0.0)
    balance = np.where(
        t == 0, P,
        np.where(in_grace, np.where(cap, P * growth**t, P),
                 np.where(repaying, opening - principal_paid, 0.0)),
    )
    return {
        "loan_drawdown": drawdown * np.ones_like(interest_due),
        "loan_interest": interest_due,
        "loan_principal": principal_paid,
        "debt_service": interest_paid + principal_paid,
        "loan_balance": balance * np.ones_like(interest_due),
    }


def dscr(cash_available, debt_service):
    """Debt service cover ratio by year; NaN where no debt service falls due.

    >>> dscr(np.array([[0.0, 120.0, 90.0]]), np.array([[0.0, 100.0, 100.0]])).tolist()
    [[nan, 1.2, 0.9]]
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(debt_service > 0, cash_available / np.where(debt_service > 0, debt_service, 1.0), np.nan)


def min_dscr(ratio):
    """Lowest DSCR of each row and its year; NaN and -1 where no debt service falls due."""
    filled = np.where(np.isnan(ratio), np.inf, ratio)
    year = np.argmin(filled, axis=1)
    low = filled[np.arange(ratio.shape[0]), year]
    none = ~np.isfinite(low)
    return np.where(none, np.nan, low), np.where(none, -1, year)
