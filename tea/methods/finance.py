"""Discounting, rates of return, loan payments and paybacks over arrays of years.

The IRR and its rule live in :mod:`tea.methods.irr` and are re-exported here.

Pure functions of numbers and numpy arrays: no files, no case objects, no pandas.

Conventions
-----------
Flow arrays are net cash flows in the case's currency, one value per year:

* **Signs**: costs are negative, receipts are positive.
* **Timing**: ``flows[..., 0]`` is the planting year, t = 0, and is not
  discounted; flow ``t`` falls at the end of year ``t`` and is discounted by
  the factor :math:`(1 + r)^{-t}`. This is the numpy-financial ``npv``
  convention. (A spreadsheet's ``NPV`` discounts its first value by one year,
  so the spreadsheet equivalent is ``first + NPV(rate, rest)``.)
* **Shapes**: flows are shaped ``(years,)`` for one case or ``(cases, years)``
  for many, the year axis last. Rates are scalars or shaped ``(cases,)``. A
  function of one flow row returns a Python float (or int) for 1-D input and
  an ndarray shaped ``(cases,)`` for 2-D input.

These are planning estimates, not financial, tax or investment advice.

References
----------
.. [1] L. J. Gitman, *Principles of Managerial Finance, Brief*, 3rd ed.,
   Addison-Wesley, 2003, pp. 346-348 (NPV and IRR).
.. [2] D. R. Curtiss, "Recent extensions of Descartes' rule of signs",
   *Annals of Mathematics* 19(4), 251-278, 1918. doi:10.2307/1967494
.. [3] G. E. Collins and A. G. Akritas, "Polynomial real root isolation using
   Descartes' rule of signs", *Proc. 1976 ACM Symposium on Symbolic and
   Algebraic Computation*, 272-275, 1976. doi:10.1145/800205.806346
.. [4] A. Edelman and H. Murakami, "Polynomial roots from companion matrix
   eigenvalues", *Mathematics of Computation* 64(210), 763-776, 1995.
   doi:10.1090/S0025-5718-1995-1262279-2
.. [5] W. H. Press, S. A. Teukolsky, W. T. Vetterling and B. P. Flannery,
   *Numerical Recipes*, 3rd ed., Cambridge University Press, 2007, sec. 9.4
   (Newton-Raphson with a bracketing safeguard).
.. [6] OASIS, *Open Document Format for Office Applications (OpenDocument)
   v1.2, Part 2: Recalculated Formula (OpenFormula) Format*, 2011,
   sec. 6.12 (financial functions PMT, IPMT, PPMT, MIRR).
.. [7] R. A. Brealey, S. C. Myers and F. Allen, *Principles of Corporate
   Finance*, 10th ed., McGraw-Hill, 2011, ch. 2 (annuities), ch. 5 (payback),
   ch. 6 (equivalent annual cash flows).
.. [8] I. Fisher, *The Theory of Interest*, Macmillan, 1930, ch. 2.
"""
from __future__ import annotations


import numpy as np

from tea.methods._arrays import _flows_2d, _rates, _ufunc_like, _when_code
from tea.methods.irr import irr, irr_explained, irr_scalar, sign_changes

__all__ = [
    "discount_factors",
    "npv",
    "irr",
    "irr_scalar",
    "irr_explained",
    "mirr",
    "pmt",
    "ipmt",
    "ppmt",
    "annuity_factor",
    "capital_recovery_factor",
    "equivalent_annual_value",
    "fisher_real_rate",
    "fisher_nominal_rate",
    "payback",
    "peak_funding",
    "sign_changes",
]

def discount_factors(rate, n_periods: int) -> np.ndarray:
    """Discount factors :math:`(1 + r)^{-t}` for t = 0 .. n_periods - 1.

    Parameters
    ----------
    rate : float or array_like, shape (cases,)
        Discount rate per year [fraction, 0.08 = 8 %].
    n_periods : int
        Number of years, planting year included [yr].

    Returns
    -------
    numpy.ndarray, shape (n_periods,) or (cases, n_periods)
        Factor by which a flow at the end of year t is multiplied to give its
        value at t = 0 [-]. Column 0 is 1.

    References
    ----------
    .. [1] L. J. Gitman, *Principles of Managerial Finance, Brief*, 3rd ed.,
       Addison-Wesley, 2003, p. 346.

    Examples
    --------
    >>> discount_factors(0.08, 3).round(6).tolist()
    [1.0, 0.925926, 0.857339]
    >>> discount_factors([0.0, 0.1], 2).round(6).tolist()
    [[1.0, 1.0], [1.0, 0.909091]]
    """
    r = np.asarray(rate, dtype=float)
    if r.ndim > 1:
        raise ValueError(f"rate must be a scalar or shaped (cases,), got shape {r.shape}")
    n = int(n_periods)
    if n < 0:
        raise ValueError(f"n_periods must be >= 0, got {n_periods}")
    t = np.arange(n, dtype=float)
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        return (1.0 + r[..., np.newaxis]) ** -t


def npv(rate, flows):
    """Net present value of yearly net cash flows.

    Parameters
    ----------
    rate : float or array_like, shape (cases,)
        Discount rate per year [fraction]; one per case if an array.
    flows : array_like, shape (years,) or (cases, years)
        Net cash flow of each year [currency]; costs negative, receipts
        positive; ``flows[..., 0]`` at t = 0 is not discounted.

    Returns
    -------
    float or numpy.ndarray, shape (cases,)
        :math:`\\sum_t v_t (1 + r)^{-t}` [currency]. A float for 1-D flows and
        a scalar rate; an array if either is per case.

    Notes
    -----
    Same convention as ``numpy_financial.npv`` (``values[0]`` undiscounted),
    but a rate array pairs with the rows (one rate per case) instead of forming
    an outer product.

    References
    ----------
    .. [1] L. J. Gitman, *Principles of Managerial Finance, Brief*, 3rd ed.,
       Addison-Wesley, 2003, p. 346.

    Examples
    --------
    Plant for 40 000 now, receive 5 000, 8 000, 12 000 and 30 000 at the ends
    of years 1 to 4, discount at 8 %:

    >>> round(npv(0.08, [-40_000, 5_000, 8_000, 12_000, 30_000]), 5)
    3065.22267
    >>> npv([0.0, 0.05], [-4000, 500, 800]).round(2).tolist()
    [-2700.0, -2798.19]
    """
    f, one = _flows_2d(flows)
    r = _rates(rate, None if one else f.shape[0])
    df = discount_factors(r.reshape(-1) if r.ndim else r, f.shape[1])
    with np.errstate(over="ignore", invalid="ignore"):
        total = np.sum(f * df, axis=-1)
    if one and r.ndim == 0:
        return float(total.reshape(-1)[0])
    return total


# ---------------------------------------------------------------------------
# sign changes
# ---------------------------------------------------------------------------
def mirr(flows, finance_rate, reinvest_rate):
    """Modified internal rate of return.

    Parameters
    ----------
    flows : array_like, shape (years,) or (cases, years)
        Net cash flow of each year [currency]; costs negative, receipts
        positive; ``flows[..., 0]`` at t = 0.
    finance_rate : float or array_like, shape (cases,)
        Rate at which the costs are discounted to t = 0 [fraction per year].
    reinvest_rate : float or array_like, shape (cases,)
        Rate at which the receipts are compounded to the last year
        [fraction per year].

    Returns
    -------
    float or numpy.ndarray, shape (cases,)
        MIRR [fraction per year]; NaN where the flows lack either a positive
        or a negative value.

    Notes
    -----
    With n flows,

    .. math:: \\mathrm{MIRR} = \\left(\\frac{\\sum_{v_t>0} v_t (1+r_i)^{n-1-t}}
              {\\left|\\sum_{v_t<0} v_t (1+r_f)^{-t}\\right|}\\right)^{1/(n-1)} - 1

    the definition of numpy-financial and of OpenFormula MIRR [1]_.

    References
    ----------
    .. [1] OASIS, *OpenDocument v1.2, Part 2: Recalculated Formula
       (OpenFormula) Format*, 2011, sec. 6.12 (MIRR).
    .. [2] S. A. Y. Lin, "The modified internal rate of return and investment
       criterion", *The Engineering Economist* 21(4), 237-247, 1976.

    Examples
    --------
    >>> round(mirr([-100, 50, -60, 70], 0.10, 0.12), 8)
    -0.03909367
    >>> mirr([[-120000, 39000, 30000, 21000, 37000], [5, 5, 5, 5, 5]], 0.08, 0.10).round(5).tolist()
    [0.05438, nan]
    """
    f, one = _flows_2d(flows)
    rows, years = f.shape
    fr = _rates(finance_rate, None if one else rows, "finance_rate")
    rr = _rates(reinvest_rate, None if one else rows, "reinvest_rate")
    t = np.arange(years, dtype=float)
    with np.errstate(all="ignore"):
        growth = (1.0 + rr[..., np.newaxis]) ** (years - 1 - t)
        discount = (1.0 + fr[..., np.newaxis]) ** -t
        future = np.sum(np.where(f > 0, f, 0.0) * growth, axis=-1)
        present = np.abs(np.sum(np.where(f < 0, f, 0.0) * discount, axis=-1))
        result = (future / present) ** (1.0 / max(years - 1, 1)) - 1.0
    result = np.where((f > 0).any(axis=1) & (f < 0).any(axis=1), result, np.nan)
    if one and fr.ndim == 0 and rr.ndim == 0:
        return float(result.reshape(-1)[0])
    return result


# ---------------------------------------------------------------------------
# loan payments
# ---------------------------------------------------------------------------
def _pmt(rate, nper, pv, fv, when):
    """Level payment on float arrays (when coded 0/1), rate == 0 masked."""
    zero = rate == 0
    safe = np.where(zero, 1.0, rate)
    growth = (1.0 + rate) ** nper
    factor = np.where(zero, nper, (1.0 + safe * when) * (growth - 1.0) / safe)
    return -(fv + pv * growth) / factor


def _fv(rate, nper, payment, pv, when):
    """Future value (same equation as ``pmt``), rate == 0 masked."""
    zero = rate == 0
    safe = np.where(zero, 1.0, rate)
    growth = (1.0 + rate) ** nper
    factor = np.where(zero, nper, (1.0 + safe * when) * (growth - 1.0) / safe)
    return -(pv * growth + payment * factor)


def pmt(rate, nper, pv, fv=0.0, when="end"):
    """Level payment per period that repays a loan (interest plus principal).

    Parameters
    ----------
    rate : float or array_like
        Interest rate per period [fraction].
    nper : float or array_like
        Number of payments [periods].
    pv : float or array_like
        Present value: the amount borrowed is positive [currency].
    fv : float or array_like, optional
        Value left after the last payment [currency]; default 0.
    when : {'end', 'begin', 0, 1} or array_like, optional
        Payments at the end (0, default) or the beginning (1) of each period.

    Returns
    -------
    float or numpy.ndarray
        Payment per period [currency]; negative for a borrower who received
        ``pv > 0``. Arguments broadcast; a float if all are scalars.

    Notes
    -----
    Solves :math:`fv + pv(1+r)^n + pmt\\,(1 + r\\,w)\\frac{(1+r)^n - 1}{r} = 0`,
    or :math:`fv + pv + pmt\\,n = 0` where r = 0 [1]_; same signs and results
    as ``numpy_financial.pmt``.

    References
    ----------
    .. [1] OASIS, *OpenDocument v1.2, Part 2: Recalculated Formula
       (OpenFormula) Format*, 2011, sec. 6.12 (PMT).

    Examples
    --------
    Monthly payment on 200 000 over 15 years at 7.5 % a year:

    >>> round(pmt(0.075 / 12, 12 * 15, 200_000), 4)
    -1854.0247
    >>> pmt([0.0, 0.08], 10, 1).round(6).tolist()
    [-0.1, -0.149029]
    """
    w = _when_code(when)
    r, n, p, f, w = np.broadcast_arrays(*(np.asarray(a, dtype=float) for a in (rate, nper, pv, fv, w)))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        result = _pmt(r, n, p, f, w)
    return _ufunc_like(result, rate, nper, pv, fv, when)


def ipmt(rate, per, nper, pv, fv=0.0, when="end"):
    """Interest part of the level payment in period ``per``.

    Parameters
    ----------
    rate : float or array_like
        Interest rate per period [fraction].
    per : int or array_like
        Payment number, 1 for the first [-].
    nper : float or array_like
        Number of payments [periods].
    pv : float or array_like
        Present value: the amount borrowed is positive [currency].
    fv : float or array_like, optional
        Value left after the last payment [currency]; default 0.
    when : {'end', 'begin', 0, 1} or array_like, optional
        Payments at the end (0, default) or the beginning (1) of each period.

    Returns
    -------
    float or numpy.ndarray
        Interest paid in period ``per`` [currency], negative for a borrower.

    Notes
    -----
    Interest = rate x balance after ``per - 1`` payments; with payments at
    the beginning it is discounted by one period and is 0 in period 1 [1]_.
    ``pmt = ipmt + ppmt``; same results as ``numpy_financial.ipmt``.

    References
    ----------
    .. [1] OASIS, *OpenDocument v1.2, Part 2: Recalculated Formula
       (OpenFormula) Format*, 2011, sec. 6.12 (IPMT).

    Examples
    --------
    A one-year loan of 2 500 at 8.24 % a year, paid monthly:

    >>> round(ipmt(0.0824 / 12, 1, 12, 2500), 2)
    -17.17
    >>> round(float(ipmt(0.0824 / 12, np.arange(1, 13), 12, 2500).sum()), 2)
    -112.98
    """
    w = _when_code(when)
    r, k, n, p, f, w = np.broadcast_arrays(
        *(np.asarray(a, dtype=float) for a in (rate, per, nper, pv, fv, w))
    )
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        total = _pmt(r, n, p, f, w)
        interest = _fv(r, k - 1.0, total, p, w) * r
        interest = np.where(w == 1, interest / (1.0 + r), interest)
        interest = np.where((w == 1) & (k == 1), 0.0, interest)
    return _ufunc_like(interest, rate, per, nper, pv, fv, when)


def ppmt(rate, per, nper, pv, fv=0.0, when="end"):
    """Principal part of the level payment in period ``per``.

    Parameters
    ----------
    rate : float or array_like
        Interest rate per period [fraction].
    per : int or array_like
        Payment number, 1 for the first [-].
    nper : float or array_like
        Number of payments [periods].
    pv : float or array_like
        Present value: the amount borrowed is positive [currency].
    fv : float or array_like, optional
        Value left after the last payment [currency]; default 0.
    when : {'end', 'begin', 0, 1} or array_like, optional
        Payments at the end (0, default) or the beginning (1) of each period.

    Returns
    -------
    float or numpy.ndarray
        Principal repaid in period ``per`` [currency], negative for a
        borrower: ``pmt - ipmt``.

    References
    ----------
    .. [1] OASIS, *OpenDocument v1.2, Part 2: Recalculated Formula
       (OpenFormula) Format*, 2011, sec. 6.12 (PPMT).

    Examples
    --------
    >>> round(ppmt(0.0824 / 12, 12, 12, 2500), 2)
    -216.26
    """
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        result = np.asarray(pmt(rate, nper, pv, fv, when)) - np.asarray(
            ipmt(rate, per, nper, pv, fv, when)
        )
    return _ufunc_like(result, rate, per, nper, pv, fv, when)


# ---------------------------------------------------------------------------
# annuities and rates
# ---------------------------------------------------------------------------
def annuity_factor(rate, n):
    """Present value of 1 a year for ``n`` years, first at the end of year 1.

    Parameters
    ----------
    rate : float or array_like
        Discount rate [fraction per year].
    n : float or array_like
        Number of yearly amounts [yr].

    Returns
    -------
    float or numpy.ndarray
        :math:`(1 - (1+r)^{-n}) / r`, or n where r = 0 [yr].

    References
    ----------
    .. [1] R. A. Brealey, S. C. Myers and F. Allen, *Principles of Corporate
       Finance*, 10th ed., McGraw-Hill, 2011, ch. 2.

    Examples
    --------
    >>> round(annuity_factor(0.08, 10), 6)
    6.710081
    >>> annuity_factor([0.0, 0.08], 10).round(6).tolist()
    [10.0, 6.710081]
    """
    r, k = np.broadcast_arrays(np.asarray(rate, dtype=float), np.asarray(n, dtype=float))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        zero = r == 0
        safe = np.where(zero, 1.0, r)
        # 1 - (1+r)^-k as -expm1(-k log1p(r)) where r > -1: exact for rates too small for 1 + r to tell from 1
        head = np.where(r > -1.0, -np.expm1(-k * np.log1p(np.where(r > -1.0, r, 0.0))), 1.0 - (1.0 + r) ** -k)
        factor = np.where(zero, k, head / safe)
    return _ufunc_like(factor, rate, n)


def capital_recovery_factor(rate, n):
    """Level yearly amount for ``n`` years whose present value is 1.

    Parameters
    ----------
    rate : float or array_like
        Discount rate [fraction per year].
    n : float or array_like
        Number of yearly amounts [yr].

    Returns
    -------
    float or numpy.ndarray
        :math:`1 / \\mathrm{annuity\\_factor}(r, n) = r / (1 - (1+r)^{-n})`
        [yr⁻¹]; 1/n where r = 0. Equals ``-pmt(rate, n, 1)``.

    References
    ----------
    .. [1] R. A. Brealey, S. C. Myers and F. Allen, *Principles of Corporate
       Finance*, 10th ed., McGraw-Hill, 2011, ch. 6.

    Examples
    --------
    >>> round(capital_recovery_factor(0.08, 10), 6)
    0.149029
    """
    with np.errstate(divide="ignore"):
        result = 1.0 / np.asarray(annuity_factor(rate, n), dtype=float)
    return _ufunc_like(result, rate, n)


def equivalent_annual_value(npv_value, rate, n):
    """Level yearly amount over ``n`` years with the same NPV.

    Parameters
    ----------
    npv_value : float or array_like
        Net present value at t = 0 [currency].
    rate : float or array_like
        Discount rate [fraction per year].
    n : float or array_like
        Number of years over which it is spread [yr].

    Returns
    -------
    float or numpy.ndarray
        ``npv_value / annuity_factor(rate, n)`` [currency yr⁻¹], received at
        the end of each of years 1 .. n.

    References
    ----------
    .. [1] R. A. Brealey, S. C. Myers and F. Allen, *Principles of Corporate
       Finance*, 10th ed., McGraw-Hill, 2011, ch. 6 (equivalent annual cash
       flow).

    Examples
    --------
    >>> round(equivalent_annual_value(3065.22, 0.08, 4), 3)
    925.454
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        result = np.asarray(npv_value, dtype=float) / np.asarray(annuity_factor(rate, n))
    return _ufunc_like(result, npv_value, rate, n)


def fisher_real_rate(nominal, inflation):
    """Real rate from a nominal rate and inflation (Fisher equation).

    Parameters
    ----------
    nominal : float or array_like
        Nominal rate [fraction per year].
    inflation : float or array_like
        General inflation [fraction per year].

    Returns
    -------
    float or numpy.ndarray
        :math:`(1 + i) / (1 + \\pi) - 1` [fraction per year].

    References
    ----------
    .. [1] I. Fisher, *The Theory of Interest*, Macmillan, 1930, ch. 2.

    Examples
    --------
    >>> round(fisher_real_rate(0.08, 0.02), 5)
    0.05882
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        result = (1.0 + np.asarray(nominal, dtype=float)) / (1.0 + np.asarray(inflation, dtype=float)) - 1.0
    return _ufunc_like(result, nominal, inflation)


def fisher_nominal_rate(real, inflation):
    """Nominal rate from a real rate and inflation (Fisher equation).

    Parameters
    ----------
    real : float or array_like
        Real rate [fraction per year].
    inflation : float or array_like
        General inflation [fraction per year].

    Returns
    -------
    float or numpy.ndarray
        :math:`(1 + i_{real})(1 + \\pi) - 1` [fraction per year].

    References
    ----------
    .. [1] I. Fisher, *The Theory of Interest*, Macmillan, 1930, ch. 2.

    Examples
    --------
    >>> round(fisher_nominal_rate(0.05, 0.02), 4)
    0.071
    """
    result = (1.0 + np.asarray(real, dtype=float)) * (1.0 + np.asarray(inflation, dtype=float)) - 1.0
    return _ufunc_like(result, real, inflation)


# ---------------------------------------------------------------------------
# paybacks and funding need
# ---------------------------------------------------------------------------
def payback(flows, rate=None):
    """Simple or discounted payback: when the cumulative flow turns non-negative.

    Parameters
    ----------
    flows : array_like, shape (years,) or (cases, years)
        Net cash flow of each year [currency]; costs negative, receipts
        positive; ``flows[..., 0]`` at t = 0.
    rate : float or array_like, shape (cases,), optional
        Discount rate [fraction per year]. None (default) gives the simple,
        undiscounted payback.

    Returns
    -------
    year : float or numpy.ndarray, shape (cases,)
        First year index t at which the cumulative (discounted) flow is >= 0,
        searched from the first year it is negative [yr]. 0 if the cumulative
        flow is never negative; NaN if it never recovers.
    years : float or numpy.ndarray, shape (cases,)
        The crossing interpolated linearly within year t,
        ``t - 1 + deficit / flow_t`` where ``deficit`` is minus the
        cumulative flow at t - 1 [yr]; 0 and NaN as for ``year``.

    Notes
    -----
    The flow of year t is taken to arrive evenly over that year for the
    interpolation, although it is discounted as if at the end of the year.

    References
    ----------
    .. [1] R. A. Brealey, S. C. Myers and F. Allen, *Principles of Corporate
       Finance*, 10th ed., McGraw-Hill, 2011, ch. 5 (payback and discounted
       payback).

    Examples
    --------
    >>> payback([-40_000, 5_000, 8_000, 12_000, 30_000])
    (4.0, 3.5)
    >>> year, years = payback([-40_000, 5_000, 8_000, 12_000, 30_000], rate=0.08)
    >>> year, round(years, 3)
    (4.0, 3.861)
    """
    f, one = _flows_2d(flows)
    rows, years_n = f.shape
    if rate is None:
        flow = f
    else:
        r = _rates(rate, None if one else rows)
        flow = f * discount_factors(r.reshape(-1) if r.ndim else r, years_n)
        one = one and r.ndim == 0
    year = np.full(flow.shape[0], np.nan)
    crossing = np.full(flow.shape[0], np.nan)
    if years_n:
        cum = np.cumsum(flow, axis=1)
        negative = cum < 0
        ever = negative.any(axis=1)
        start = np.argmax(negative, axis=1)
        t = np.arange(years_n)
        recovered = (cum >= 0) & (t > start[:, np.newaxis])
        found = ever & recovered.any(axis=1)
        at = np.argmax(recovered, axis=1)
        rows_idx = np.flatnonzero(found)
        at_f = at[rows_idx]
        deficit = -cum[rows_idx, at_f - 1]
        with np.errstate(divide="ignore", invalid="ignore"):
            crossing[rows_idx] = at_f - 1 + deficit / flow[rows_idx, at_f]
        year[rows_idx] = at_f
        year[~ever] = 0.0
        crossing[~ever] = 0.0
    if one:
        return float(year[0]), float(crossing[0])
    return year, crossing


def peak_funding(flows):
    """Largest cumulative shortfall, and the year it occurs.

    Parameters
    ----------
    flows : array_like, shape (years,) or (cases, years)
        Net cash flow of each year [currency]; costs negative, receipts
        positive; ``flows[..., 0]`` at t = 0.

    Returns
    -------
    need : float or numpy.ndarray, shape (cases,)
        ``max(0, -min_t cumulative flow)``, undiscounted [currency].
    year : int or numpy.ndarray of int, shape (cases,)
        Year index of the (first) minimum of the cumulative flow [yr].

    References
    ----------
    .. [1] R. A. Brealey, S. C. Myers and F. Allen, *Principles of Corporate
       Finance*, 10th ed., McGraw-Hill, 2011, ch. 5.

    Examples
    --------
    >>> peak_funding([-2500, -300, 400, 1200, 1500])
    (2800.0, 1)
    """
    f, one = _flows_2d(flows)
    if f.shape[1] == 0:
        raise ValueError("flows must hold at least one year")
    cum = np.cumsum(f, axis=1)
    year = np.argmin(cum, axis=1)
    need = np.maximum(0.0, -np.take_along_axis(cum, year[:, np.newaxis], axis=1)[:, 0])
    if one:
        return float(need[0]), int(year[0])
    return need, year
