"""Discounting, rates of return, loan payments and paybacks over arrays of years.

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

Rule for the internal rate of return
------------------------------------
The IRR is the rate ``r`` in (-1, inf) at which the NPV is zero. With
:math:`x = 1/(1+r)`, which maps (-1, inf) onto (0, inf), the NPV is the
polynomial :math:`\\sum_t v_t x^t`. By Descartes' rule of signs the number of
its positive roots, counted with multiplicity, is the number of sign changes
in the flows (zeros ignored) or less than that by an even number. Hence:

* no sign change: no IRR;
* one sign change (the usual stand: costs first, receipts later): exactly one
  IRR, found by a safeguarded Newton iteration;
* an even number of sign changes (for instance a final-year removal cost
  that turns the last net flow negative): zero or at least two roots, never
  exactly one, so the IRR is undefined;
* an odd number of three or more: one or at least three roots. They are
  counted by Descartes' rule on intervals of (-1, inf), mapped onto
  (0, inf) (the Vincent-Collins-Akritas test [3]_): first r > 0 and r < 0,
  then 15 narrower intervals for rows not decided, and from companion-matrix
  eigenvalues [4]_ for the rare rows still undecided. The IRR is reported only
  when exactly one root lies in (-1, inf).

Where the IRR is undefined, ``irr`` returns NaN and ``irr_explained`` says why;
``mirr`` is defined for any flows with both signs. Roots are counted with
multiplicity, so a rate at which NPV only touches zero without changing sign
(a double root) is never reported as a unique IRR. The interval test is exact
except where a transformed coefficient is too close to zero for its sign to be
sure, and then defers to the eigenvalues. There, an eigenvalue whose imaginary
part is below 1e-7 of its modulus counts as real (in double precision such a
pair cannot be told from a double root), and rows whose nonzero flows span
more than ten orders of magnitude are reported as undefined: the eigenvalues
are accurate relative to the largest coefficient and cannot resolve the roots
that much smaller ones decide.

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

import functools
import math
from collections.abc import Sequence

import numpy as np

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

# --- numerical settings of the IRR solver (not model coefficients) ---------
# Stop when a step changes z = 1/(1+r) (or 1+r) by at most this fraction of z:
# the rate is then accurate to about 1e-13 * (1 + r).
_STEP_RTOL = 1e-13
# Newton steps taken by every row before the convergence mask is looked at.
_NEWTON_STEPS = 4
# Further safeguarded Newton steps, at most, for the rows not yet converged.
_EXTRA_NEWTON_STEPS = 16
# Geometric bisection steps for the (rare) rows still not converged: enough to
# narrow any bracket within the float range to the float resolution.
_BISECTION_STEPS = 64
# Rows solved together: keeps the working vectors in the processor cache.
_CHUNK_ROWS = 32768
# Rows per block when transposing (cases, years) to (years, cases).
_TRANSPOSE_ROWS = 512
# An eigenvalue whose imaginary part is below this fraction of its modulus is
# taken as real: in double precision such a pair cannot be told apart from a
# repeated real root.
_REAL_ROOT_RTOL = 1e-7
# Rows left to the eigenvalue count are counted only if their nonzero flows
# span less than this ratio: the eigenvalues of the companion matrix are
# accurate relative to the largest coefficient, so much smaller ones cannot be
# resolved. (irr_explained lists roots under the same rule.)
_COUNT_RANGE = 1e10
# Rows whose first nonzero coefficient (in the orientation solved) is below
# this fraction of the largest have roots outside double precision.
_TINY_LEAD = 1e-300

# Breakpoints x = 1/(1+r) of the partitions of (0, inf) on which roots are
# counted by Descartes' rule: first split at r = 0 only, then, for rows left
# undecided, finer (exact binary fractions; r from +300 % to -94 %).
_COUNT_BREAKS_COARSE = (1.0,)
_COUNT_BREAKS = (0.25, 0.5, 0.625, 0.75, 0.8125, 0.875, 0.9375, 1.0, 1.125, 1.25, 1.5, 2.0, 4.0, 16.0)
# A transformed coefficient within this many units of rounding (n eps times
# the sum of the magnitudes of its terms) of zero has an uncertain sign.
_SIGN_GUARD = 64.0
# Multiply-adds per matrix product of the root-count transform, and rows
# handled at a time.
_COUNT_BLOCK = 200_000
_COUNT_ROWS = 128

_WHEN = {"end": 0, "begin": 1, 0: 0, 1: 1}


# ---------------------------------------------------------------------------
# input helpers
# ---------------------------------------------------------------------------
def _flows_2d(flows, name: str = "flows") -> tuple[np.ndarray, bool]:
    """Return flows as a float (cases, years) array and whether input was 1-D."""
    arr = np.asarray(flows, dtype=float)
    if arr.ndim == 1:
        return arr[np.newaxis, :], True
    if arr.ndim == 2:
        return arr, False
    raise ValueError(
        f"{name} must be shaped (years,) or (cases, years), got {arr.ndim} dimensions"
    )


def _rates(rate, cases: int | None, name: str = "rate") -> np.ndarray:
    """Return a rate as a float array broadcastable against (cases,).

    ``cases`` is None for a single flow row: any number of rates is then
    allowed, one result per rate.
    """
    arr = np.asarray(rate, dtype=float)
    if arr.ndim > 1 or (arr.ndim == 1 and cases is not None and arr.shape[0] not in (1, cases)):
        raise ValueError(
            f"{name} must be a scalar or shaped (cases,) = ({cases},), got shape {arr.shape}"
        )
    return arr


def _ufunc_like(result: np.ndarray, *args):
    """Python float when every argument is a scalar, else the array."""
    if all(np.ndim(a) == 0 for a in args):
        return float(result)
    return result


def _when_code(when):
    if isinstance(when, str) or np.ndim(when) == 0:
        try:
            return _WHEN[when if isinstance(when, str) else int(when)]
        except (KeyError, TypeError, ValueError):
            raise ValueError(f"when must be 'end' (0) or 'begin' (1), got {when!r}") from None
    codes = np.asarray([_when_code(w) for w in np.ravel(when)])
    return codes.reshape(np.shape(when))


# ---------------------------------------------------------------------------
# discounting
# ---------------------------------------------------------------------------
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
def _transpose(f: np.ndarray) -> np.ndarray:
    """(cases, years) -> C-contiguous (years, cases), copied in cache-sized blocks."""
    rows, years = f.shape
    t = np.empty((years, rows))
    for start in range(0, rows, _TRANSPOSE_ROWS):
        t[:, start : start + _TRANSPOSE_ROWS] = f[start : start + _TRANSPOSE_ROWS].T
    return t


def _sign_structure(t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Per column of t (years, cases): sign changes (zeros ignored), first nonzero < 0."""
    neg = t < 0
    years, m = t.shape
    if t.all():  # no zeros
        flips = (neg[1:] != neg[:-1]).view(np.uint8)
        counter = np.uint8 if years <= 256 else np.int64
        return flips.sum(axis=0, dtype=counter).astype(np.int64), neg[0].copy()
    changes = np.zeros(m, dtype=np.int64)
    last = np.zeros(m)  # sign of the last nonzero flow so far; 0 before the first
    first = np.zeros(m)
    for k in range(years):
        s = np.sign(t[k])
        changes += (s * last) < 0
        np.copyto(last, s, where=s != 0)
        np.copyto(first, s, where=first == 0)
    return changes, first < 0


def sign_changes(flows):
    """Number of sign changes along the year axis, zeros ignored.

    Parameters
    ----------
    flows : array_like, shape (years,) or (cases, years)
        Net cash flows [currency]; finite values.

    Returns
    -------
    int or numpy.ndarray of int, shape (cases,)
        Count of sign changes between consecutive nonzero flows [-].

    Notes
    -----
    The count bounds the number of internal rates of return (Descartes' rule
    of signs [1]_).

    References
    ----------
    .. [1] D. R. Curtiss, "Recent extensions of Descartes' rule of signs",
       *Annals of Mathematics* 19(4), 251-278, 1918. doi:10.2307/1967494

    Examples
    --------
    >>> sign_changes([-100, 0, 50, 60, -10])
    2
    >>> sign_changes([[-1, 2], [3, 4]]).tolist()
    [1, 0]
    """
    f, one = _flows_2d(flows)
    if f.shape[1] == 0:
        counts = np.zeros(f.shape[0], dtype=np.int64)
    else:
        counts = _sign_structure(_transpose(f))[0].astype(np.int64)
    return int(counts[0]) if one else counts


# ---------------------------------------------------------------------------
# IRR: vectorised solver
# ---------------------------------------------------------------------------
def _horner(g: np.ndarray, z: np.ndarray, p: np.ndarray, d: np.ndarray | None) -> None:
    """Evaluate c(z) = sum_k g[k] z^k (into p) and c'(z) (into d) column-wise."""
    years = g.shape[0]
    np.copyto(p, g[years - 1])
    if d is not None:
        d.fill(0.0)
    for k in range(years - 2, -1, -1):
        if d is not None:
            np.multiply(d, z, out=d)
            np.add(d, p, out=d)
        np.multiply(p, z, out=p)
        np.add(p, g[k], out=p)


def _newton(g, z, lo, hi, steps):
    """Safeguarded Newton steps on c(z), c < 0 below the root and c > 0 above.

    ``lo`` and ``hi`` (updated in place) bracket the root. A Newton step that
    would leave the bracket (which includes a non-positive derivative, since
    the iterate is always one end of it) is replaced by bisection [5]_.
    Returns the final iterate and the size of the last step.
    """
    p = np.empty_like(z)
    d = np.empty_like(z)
    new = np.empty_like(z)
    off = np.empty(z.shape, dtype=bool)
    for _ in range(steps):
        _horner(g, z, p, d)
        below = p < 0
        np.copyto(lo, z, where=below)
        np.logical_not(below, out=below)
        np.copyto(hi, z, where=below)
        np.divide(p, d, out=p)
        np.subtract(z, p, out=new)
        np.less(new, lo, out=off)
        off |= ~(new <= hi)
        np.add(lo, hi, out=p)
        p *= 0.5
        np.copyto(new, p, where=off)
        z, new = new, z
    return z, np.abs(z - new)


def _geometric_bisection(g, lo, hi, steps):
    """Bisect on log z between lo > 0 (c < 0) and hi (c > 0); return the root."""
    p = np.empty_like(lo)
    for _ in range(steps):
        mid = np.sqrt(lo) * np.sqrt(hi)  # no underflow of lo * hi
        _horner(g, mid, p, None)
        below = p < 0
        np.copyto(lo, mid, where=below)
        np.copyto(hi, mid, where=~below)
        hi[p == 0] = mid[p == 0]
        lo[p == 0] = mid[p == 0]
    return np.sqrt(lo) * np.sqrt(hi)


def _wide_matmul(a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """``a @ b`` for a small ``a`` and a wide ``b``, in column blocks of ``b``.

    Each block stays below the size at which BLAS libraries start threads,
    which on a busy machine can stall for milliseconds.
    """
    out = np.empty((a.shape[0], b.shape[1]))
    step = max(1, _COUNT_BLOCK // max(1, a.shape[0] * a.shape[1]))
    for j in range(0, b.shape[1], step):
        out[:, j : j + step] = a @ b[:, j : j + step]
    return out


def _start(receipts, receipt_time, receipt_time2, costs, cost_time, cost_time2, lib):
    """Starting z from the moments of the receipts and costs among the coefficients.

    With u = ln z, the present value of a group of coefficients with sum S,
    mean time m and variance of time s2 is S z^m exp(s2 u^2 / 2) to second
    order (its cumulant expansion). Equating receipts and costs gives
    u = (ln(-C/R) + u^2 (s2_C - s2_R) / 2) / (m_R - m_C), solved from the
    two-flow value u0 = ln(-C/R) / (m_R - m_C) by two fixed-point steps.
    ``lib`` is numpy or math; the arguments may share any common factor.
    """
    mean_r = receipt_time / receipts
    mean_c = cost_time / costs
    spread = 0.5 * ((cost_time2 / costs - mean_c * mean_c) - (receipt_time2 / receipts - mean_r * mean_r))
    span = mean_r - mean_c
    a = lib.log(-costs / receipts)
    u = a / span
    u = (a + spread * u * u) / span
    u = (a + spread * u * u) / span
    return lib.exp(u)


def _solve_unit(g: np.ndarray) -> np.ndarray:
    """Root in (0, 1) of each column polynomial of g (shape (years, cases)).

    Entry ``g[k, j]`` is the coefficient of z**k of case j, scaled so that
    the largest is 1 in magnitude and signed so that c(0+) < 0 < c(1), with
    exactly one root in (0, 1).
    """
    years, m = g.shape
    # Lower end of the bracket: a root of sum_k g_k z^k whose first nonzero
    # coefficient is g_j is at least |g_j| / (|g_j| + max|g_k|) (Cauchy's
    # bound on the reversed polynomial), with max|g_k| = 1 after scaling;
    # half of it is below the root, where c < 0.
    lead = g[0].copy()
    none = np.flatnonzero(lead == 0)
    if none.size:
        gz = g[:, none]
        lead[none] = gz[np.argmax(gz != 0, axis=0), np.arange(none.size)]
    # A first coefficient > 0 (the negative lowest-order ones underflowed in
    # the scaling) or below _TINY_LEAD: outside double precision.
    outside = (lead > 0) | (np.abs(lead) < _TINY_LEAD)
    lead = np.abs(lead)
    lo = 0.5 * lead / (lead + 1.0)
    hi = np.ones(m)
    # Start: the moments (sum, mean time, variance of time) of the receipts
    # and of the costs among the coefficients, from sums of g and |g|.
    t = np.arange(years, dtype=float)
    weights = np.vstack([np.ones(years), t, t * t])
    plain = _wide_matmul(weights, g)
    size = _wide_matmul(weights, np.abs(g))
    with np.errstate(divide="ignore", invalid="ignore", over="ignore", under="ignore"):
        receipts = 0.5 * (size + plain)
        costs = 0.5 * (plain - size)
        z = _start(receipts[0], receipts[1], receipts[2], costs[0], costs[1], costs[2], np)
    np.copyto(z, 0.5, where=~((z > lo) & (z < 1.0)))

    z, dz = _newton(g, z, lo, hi, _NEWTON_STEPS)
    # Convergence mask: the rows not converged take further steps, one at a
    # time, as a shrinking subset; any still left are bisected.
    todo = np.flatnonzero(~(dz <= _STEP_RTOL * z))
    for _ in range(_EXTRA_NEWTON_STEPS):
        if todo.size == 0:
            break
        los, his = lo[todo], hi[todo]
        zs, dzs = _newton(g[:, todo], z[todo], los, his, 1)
        z[todo], lo[todo], hi[todo] = zs, los, his
        todo = todo[~(dzs <= _STEP_RTOL * zs)]
    if todo.size:
        z[todo] = _geometric_bisection(g[:, todo], lo[todo], hi[todo], _BISECTION_STEPS)
    z[outside] = np.nan
    return z


def _positive_roots(row: np.ndarray) -> np.ndarray | None:
    """Roots in x > 0 of sum_t v_t x^t (sorted); None if they cannot be computed."""
    nz = np.flatnonzero(row)
    if nz.size < 2:
        return np.empty(0)
    size = np.abs(row[nz])
    if size.min() * _COUNT_RANGE < size.max():
        return None
    coef = row[nz[0] : nz[-1] + 1]
    counts, roots = _count_positive_roots(coef[np.newaxis, :], keep=True)
    if counts[0] < 0:
        return None
    return np.sort(roots[0])


def _eigvals_stack(stack: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Eigenvalues of a stack of matrices, and which ones could be computed."""
    try:
        return np.linalg.eigvals(stack), np.ones(stack.shape[0], dtype=bool)
    except np.linalg.LinAlgError:
        eig = np.zeros(stack.shape[:2], dtype=complex)
        ok = np.zeros(stack.shape[0], dtype=bool)
        for i, matrix in enumerate(stack):
            try:
                eig[i] = np.linalg.eigvals(matrix)
                ok[i] = True
            except np.linalg.LinAlgError:
                pass
        return eig, ok


def _count_positive_roots(coef: np.ndarray, keep: bool = False):
    """Count the real roots x > 0 of each row polynomial sum_k coef[k] x^k.

    ``coef`` is (rows, degree + 1) with nonzero first and last entries. The
    roots are the eigenvalues of the companion matrix [4]_; where dividing by
    the leading coefficient overflows, those of the reversed polynomial are
    used and inverted. Returns the counts (-1 where the eigenvalues could not
    be computed) and, if ``keep``, each row's positive real roots.
    """
    rows, width = coef.shape
    degree = width - 1
    counts = np.full(rows, -1, dtype=np.int64)
    kept: list = [None] * rows
    if degree < 1:
        counts[:] = 0
        return counts, [np.empty(0) for _ in range(rows)]
    with np.errstate(all="ignore"):
        c = coef / np.max(np.abs(coef), axis=1, keepdims=True)
        companion = np.zeros((rows, degree, degree))
        companion[:, np.arange(1, degree), np.arange(degree - 1)] = 1.0
        companion[:, :, -1] = -c[:, :-1] / c[:, -1:]
        flip = ~np.isfinite(companion[:, :, -1]).all(axis=1)
        if flip.any():
            rev = c[flip, ::-1]
            companion[flip, :, -1] = -rev[:, :-1] / rev[:, -1:]
        usable = np.isfinite(companion[:, :, -1]).all(axis=1)
    idx = np.flatnonzero(usable)
    if idx.size == 0:
        return counts, kept
    eig, ok = _eigvals_stack(companion[idx])
    with np.errstate(all="ignore"):
        eig = np.where(flip[idx][:, np.newaxis], 1.0 / eig, eig)
        real = (np.abs(eig.imag) <= _REAL_ROOT_RTOL * np.abs(eig)) & (eig.real > 0)
    counts[idx[ok]] = real[ok].sum(axis=1)
    if keep:
        for j, i in enumerate(idx):
            if ok[j]:
                kept[i] = eig[j].real[real[j]]
    return counts, kept


@functools.lru_cache(maxsize=128)
def _interval_maps(n: int, breaks: tuple[float, ...]) -> np.ndarray:
    """Matrix (n, intervals * n) of the Möbius maps of a root-count partition.

    The intervals of x run from 0 to inf, cut at ``breaks``. For an interval
    (a, b), column block i holds the coefficients in u
    of :math:`(a + b u)^t (1 + u)^{n-1-t}`, so that the row of flows times the
    block gives :math:`q(u) = (1+u)^{n-1} p((a + b u)/(1 + u))`, whose roots
    u > 0 are the roots of p in (a, b); for (a, inf) it is
    :math:`q(u) = p(a + u)`. All entries are >= 0.
    """
    poly = np.polynomial.polynomial
    edges = (0.0,) + breaks + (math.inf,)
    blocks = []
    for a, b in zip(edges[:-1], edges[1:]):
        block = np.zeros((n, n))
        for t in range(n):
            if math.isinf(b):
                coef = poly.polypow([a, 1.0], t)
            else:
                coef = poly.polymul(poly.polypow([a, b], t), poly.polypow([1.0, 1.0], n - 1 - t))
            block[t, : len(coef)] = coef
        blocks.append(block)
    return np.concatenate(blocks, axis=1)


def _count_by_intervals(f: np.ndarray, breaks: tuple[float, ...]) -> np.ndarray:
    """Number of roots x > 0 of each row polynomial, or -1 where undecided.

    The positive axis is cut into intervals at ``breaks``; on each,
    the sign changes V of the Möbius-transformed coefficients bound the number
    of roots, with the same parity (Descartes' rule of signs, as used in the
    Vincent-Collins-Akritas method [2]_). Where every interval has V <= 1 the
    count is exact: the sum of the V. A row is undecided where some interval
    has V >= 2 or a transformed coefficient is too close to zero, given its
    rounding error, for its sign to be sure.
    """
    rows, n = f.shape
    maps = _interval_maps(n, breaks)
    cols = maps.shape[1]
    intervals = cols // n
    guard = _SIGN_GUARD * n * np.finfo(float).eps
    # Each matrix product is kept below the size at which BLAS libraries
    # start threads (which stall on a busy machine).
    sub = max(1, _COUNT_BLOCK // (n * cols))
    count = np.empty(rows, dtype=np.int64)
    for start in range(0, rows, _COUNT_ROWS):
        part = f[start : start + _COUNT_ROWS]
        part = part / np.abs(part).max(axis=1, keepdims=True)
        size = np.abs(part)
        m = part.shape[0]
        coef = np.empty((m, cols))
        bound = np.empty((m, cols))
        for i in range(0, m, sub):
            np.matmul(part[i : i + sub], maps, out=coef[i : i + sub])
            np.matmul(size[i : i + sub], maps, out=bound[i : i + sub])
        undecided = ((np.abs(coef) <= guard * bound) & (bound > 0)).any(axis=1)
        # Exact zeros (bound 0) arise only at the ends of a coefficient row,
        # from leading or trailing zero flows, so adjacent signs suffice.
        sign = np.sign(coef).reshape(m * intervals, n)
        flips = (sign[:, 1:] * sign[:, :-1]) < 0
        changes = np.count_nonzero(flips, axis=1).reshape(m, intervals)
        undecided |= (changes >= 2).any(axis=1)
        got = changes.sum(axis=1)
        got[undecided] = -1
        count[start : start + m] = got
    return count


def _unique_root(f: np.ndarray) -> np.ndarray:
    """True for rows (finite, some nonzero) with exactly one root in x > 0.

    Decided on intervals by Descartes' rule, first split at r = 0, then on
    finer intervals; rows left undecided are counted from companion-matrix
    eigenvalues.
    """
    count = _count_by_intervals(f, _COUNT_BREAKS_COARSE)
    undecided = np.flatnonzero(count < 0)
    if undecided.size:
        count[undecided] = _count_by_intervals(f[undecided], _COUNT_BREAKS)
    unique = count == 1
    undecided = np.flatnonzero(count < 0)
    if undecided.size:
        unique[undecided] = _unique_by_eigenvalues(f[undecided])
    return unique


def _unique_by_eigenvalues(f: np.ndarray) -> np.ndarray:
    """True for rows (finite, some nonzero) with exactly one root in x > 0."""
    rows, years = f.shape
    nonzero = f != 0
    first = np.argmax(nonzero, axis=1)
    last = years - 1 - np.argmax(nonzero[:, ::-1], axis=1)
    degree = last - first
    size = np.abs(f)
    smallest = np.where(nonzero, size, np.inf).min(axis=1)
    countable = smallest * _COUNT_RANGE >= size.max(axis=1)
    unique = np.zeros(rows, dtype=bool)
    degree = np.where(countable, degree, 0)
    for deg in np.unique(degree):
        if deg < 1:
            continue
        sel = np.flatnonzero(degree == deg)
        cols = first[sel, np.newaxis] + np.arange(deg + 1)
        coef = np.take_along_axis(f[sel], cols, axis=1)
        counts, _ = _count_positive_roots(coef)
        unique[sel] = counts == 1
    return unique


def _irr_block(f: np.ndarray) -> np.ndarray:
    """IRR of each row of a (cases, years) block; NaN where not unique."""
    rows, years = f.shape
    out = np.full(rows, np.nan)
    if years < 2 or rows == 0:
        return out
    t = _transpose(f)
    total = t.sum(axis=0)  # NPV at r = 0; NaN or inf in a row make it non-finite
    changes, first_negative = _sign_structure(t)
    finite = np.isfinite(total)
    if not finite.all():
        bad = np.flatnonzero(~finite)
        tb = t[:, bad]
        big = np.isfinite(tb).all(axis=0)  # finite flows whose sum overflowed
        if big.any():
            tb = tb[:, big]
            total[bad[big]] = (tb / np.abs(tb).max(axis=0)).sum(axis=0)
            finite[bad[big]] = True
    solve = finite & (changes == 1)
    odd = finite & (changes >= 3) & (changes % 2 == 1)
    if odd.any():
        idx = np.flatnonzero(odd)
        solve[idx[_unique_root(f[idx])]] = True
    sign = np.where(first_negative, 1.0, -1.0)
    # Signed so that the costs come first: NPV(0) > 0 means r > 0.
    at_zero = total * sign
    forward = np.flatnonzero(solve & (at_zero > 0))
    # For r < 0 the root is solved in y = 1 + r in (0, 1): coefficients reversed.
    backward = np.flatnonzero(solve & (at_zero < 0))
    out[solve & (at_zero == 0)] = 0.0
    for idx, reverse in ((forward, False), (backward, True)):
        if idx.size == 0:
            continue
        g = np.take(t, idx, axis=1, mode="clip")
        signs = sign[idx]
        if reverse:
            g = g[::-1]
            signs = -signs
        g *= signs / np.maximum(g.max(axis=0), -g.min(axis=0))
        z = _solve_unit(g)
        out[idx] = z - 1.0 if reverse else (1.0 - z) / z
    return out


def irr(flows):
    """Internal rate of return, where it is unique.

    Parameters
    ----------
    flows : array_like, shape (years,) or (cases, years)
        Net cash flow of each year [currency]; costs negative, receipts
        positive; ``flows[..., 0]`` at t = 0.

    Returns
    -------
    float or numpy.ndarray, shape (cases,)
        The rate r in (-1, inf) with NPV(r) = 0 [fraction per year]; NaN where
        no such rate or several exist, and for rows holding NaN or inf.

    Notes
    -----
    With :math:`x = 1/(1+r)` the NPV is :math:`\\sum_t v_t x^t`. Rows with one
    sign change (zeros ignored) have exactly one root (Descartes' rule of
    signs [2]_). Rows with an even number are undefined (zero or at least two
    roots). Rows with an odd number of three or more are kept when exactly one
    root lies in x > 0, counted by Descartes' rule on intervals [3]_ (split at
    r = 0, then finer where undecided) or, for rows still undecided, from the
    companion-matrix eigenvalues [4]_; see the module notes.

    Each kept row is scaled to a largest flow of 1 and solved on the unit
    interval, in x when the undiscounted sum of the flows says r > 0 and in
    y = 1 + r otherwise, so that the polynomial is evaluated (by Horner's
    rule, one whole column of cases at a time) only at arguments in (0, 1].
    The start is the root of a two-flow approximation (all costs at their mean
    time, all receipts at theirs), corrected for the spread of each around
    its mean time (second-order cumulant expansion of the present values);
    then a fixed number of Newton steps with a bisection safeguard on the
    sign bracket [5]_, further steps for the rows not yet converged, and a
    geometric bisection for any row left. The rate is accurate to about
    1e-13 * (1 + r). One case (1-D input) goes to
    :func:`irr_scalar`, the same method in plain Python floats.

    Rates closer to -100 % than the float resolution round to -1.0. A row
    whose first nonzero flow (last, when r < 0) is below 1e-300 of its largest
    has a root outside double precision and gives NaN.

    References
    ----------
    .. [1] L. J. Gitman, *Principles of Managerial Finance, Brief*, 3rd ed.,
       Addison-Wesley, 2003, p. 348.
    .. [2] D. R. Curtiss, "Recent extensions of Descartes' rule of signs",
       *Annals of Mathematics* 19(4), 251-278, 1918. doi:10.2307/1967494
    .. [3] G. E. Collins and A. G. Akritas, "Polynomial real root isolation
       using Descartes' rule of signs", *Proc. 1976 ACM Symposium on Symbolic
       and Algebraic Computation*, 272-275, 1976. doi:10.1145/800205.806346
    .. [4] A. Edelman and H. Murakami, "Polynomial roots from companion matrix
       eigenvalues", *Mathematics of Computation* 64(210), 763-776, 1995.
       doi:10.1090/S0025-5718-1995-1262279-2
    .. [5] W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge
       University Press, 2007, sec. 9.4.

    Examples
    --------
    Invest 100, then withdraw 39, 59, 55 and 20:

    >>> round(irr([-100, 39, 59, 55, 20]), 5)
    0.28095

    Two cases at once; in the second a late cost turns the net flow negative
    again, two rates give NPV = 0 and none is reported:

    >>> irr([[-100, 0, 0, 74], [-100, 230, -132, 0]]).round(4).tolist()
    [-0.0955, nan]
    """
    f, one = _flows_2d(flows)
    if one:
        return irr_scalar(f[0])
    out = np.empty(f.shape[0])
    with np.errstate(all="ignore"):
        for start in range(0, f.shape[0], _CHUNK_ROWS):
            stop = min(start + _CHUNK_ROWS, f.shape[0])
            out[start:stop] = _irr_block(f[start:stop])
    return out


# ---------------------------------------------------------------------------
# IRR: one case, pure Python
# ---------------------------------------------------------------------------
def _solve_unit_scalar(seq, lo, z):
    """Pure-Python twin of ``_solve_unit`` for one case.

    ``seq`` lists the coefficients of c(z), signed and scaled as in
    ``_solve_unit``, from the highest power down (so Horner's rule runs
    straight along it); ``lo`` is the lower end of the bracket and ``z`` the
    start.
    """
    hi = 1.0
    head, rest = seq[0], seq[1:]
    for _ in range(_NEWTON_STEPS + _EXTRA_NEWTON_STEPS):
        p = head
        d = 0.0
        for c in rest:
            d = d * z + p
            p = p * z + c
        if p == 0.0:
            return z
        if p < 0.0:
            lo = z
        else:
            hi = z
        try:
            new = z - p / d
        except ZeroDivisionError:
            new = math.nan
        if not lo <= new <= hi:
            new = 0.5 * (lo + hi)
        if abs(new - z) <= _STEP_RTOL * new:
            return new
        z = new
    for _ in range(_BISECTION_STEPS):
        mid = math.sqrt(lo) * math.sqrt(hi)
        p = head
        for c in rest:
            p = p * mid + c
        if p == 0.0:
            return mid
        if p < 0.0:
            lo = mid
        else:
            hi = mid
    return math.sqrt(lo) * math.sqrt(hi)


def irr_scalar(flows: Sequence[float] | np.ndarray) -> float:
    """Internal rate of return of one case, fast for short flow lists.

    Same rule and result as :func:`irr` on a 1-D array (to about 1e-13), in
    plain Python floats: for one stand of 10-40 years this avoids the fixed
    cost of numpy calls.

    Parameters
    ----------
    flows : sequence of float or numpy.ndarray, shape (years,)
        Net cash flow of each year [currency]; costs negative, receipts
        positive; ``flows[0]`` at t = 0.

    Returns
    -------
    float
        The unique rate r in (-1, inf) with NPV(r) = 0 [fraction per year], or
        NaN if there is none or more than one, or the flows hold NaN or inf.

    See Also
    --------
    irr : the vectorised version, whose Notes describe the method.
    irr_explained : the rate and, when there is none, the reason.

    References
    ----------
    .. [1] W. H. Press et al., *Numerical Recipes*, 3rd ed., Cambridge
       University Press, 2007, sec. 9.4.

    Examples
    --------
    >>> round(irr_scalar([-100, 100, 0, 7]), 5)
    0.06206
    >>> irr_scalar([100, 50])
    nan
    """
    if isinstance(flows, np.ndarray):
        if flows.ndim != 1:
            raise ValueError(f"flows must be one case shaped (years,), got shape {flows.shape}")
        v = flows.astype(float, copy=False).tolist()
    else:
        v = [float(x) for x in flows]
    n = len(v)
    if n < 2:
        return math.nan
    # One pass: sign changes (zeros ignored), largest magnitude, first and
    # last nonzero flows, and the sums and year-weighted sums of each sign.
    biggest = receipts = receipt_time = receipt_time2 = costs = cost_time = cost_time2 = 0.0
    changes = 0
    first = last = 0.0
    for t, x in enumerate(v):
        if x > 0.0:
            receipts += x
            receipt_time += t * x
            receipt_time2 += t * t * x
            if last < 0.0:
                changes += 1
            if x > biggest:
                biggest = x
        elif x < 0.0:
            costs += x
            cost_time += t * x
            cost_time2 += t * t * x
            if last > 0.0:
                changes += 1
            if -x > biggest:
                biggest = -x
        elif x != 0.0:  # NaN
            return math.nan
        else:
            continue
        if first == 0.0:
            first = x
        last = x
    if biggest == math.inf or changes == 0 or changes % 2 == 0:
        return math.nan
    if changes >= 3 and not _unique_root(np.asarray(v)[np.newaxis, :])[0]:
        return math.nan
    sign = 1.0 if first < 0.0 else -1.0  # makes the first nonzero flow a cost
    total = receipts + costs
    if not math.isfinite(total):  # finite flows whose sum overflowed
        total = math.fsum(x / biggest for x in v)
    at_zero = sign * total  # NPV at r = 0, costs first
    if at_zero == 0.0:
        return 0.0
    forward = at_zero > 0.0  # r > 0: solve in x = 1/(1+r), else in y = 1 + r
    # Coefficients signed and scaled exactly as irr does, highest power first:
    # x^t has sign * v_t; y^k has -sign * v_(n-1-k).
    factor = (sign if forward else -sign) / biggest
    seq = [x * factor for x in (reversed(v) if forward else v)]
    lead = 0.0
    for c in reversed(seq):
        if c != 0.0:
            lead = c
            break
    if not (lead < 0.0 and -lead >= _TINY_LEAD):  # outside double precision
        return math.nan
    lo = 0.5 * -lead / (1.0 - lead)  # see _solve_unit
    # Moments of the receipts and costs among the oriented coefficients (up to
    # a common factor): the power of y is k = n - 1 - t.
    if not forward:
        top = n - 1
        receipt_time2 = top * top * receipts - 2 * top * receipt_time + receipt_time2
        cost_time2 = top * top * costs - 2 * top * cost_time + cost_time2
        receipt_time, cost_time = top * receipts - receipt_time, top * costs - cost_time
    if factor < 0.0:
        receipts, receipt_time, receipt_time2, costs, cost_time, cost_time2 = (
            costs, cost_time, cost_time2, receipts, receipt_time, receipt_time2)
    try:
        z = _start(receipts, receipt_time, receipt_time2, costs, cost_time, cost_time2, math)
    except (ZeroDivisionError, ValueError, OverflowError):
        z = 0.5
    if not lo < z < 1.0:
        z = 0.5
    z = _solve_unit_scalar(seq, lo, z)
    return (1.0 - z) / z if forward else z - 1.0


def _pct(rate: float) -> str:
    return f"{100.0 * rate:.1f} %"


def irr_explained(flows: Sequence[float] | np.ndarray) -> tuple[float, str | None]:
    """Internal rate of return of one case, with the reason when it is undefined.

    Parameters
    ----------
    flows : sequence of float or numpy.ndarray, shape (years,)
        Net cash flow of each year [currency]; costs negative, receipts
        positive; ``flows[0]`` at t = 0.

    Returns
    -------
    rate : float
        As :func:`irr_scalar` [fraction per year].
    reason : str or None
        None when the rate is unique; otherwise a short sentence for the
        reader, naming the rates that make NPV zero when there are several.

    Notes
    -----
    The rates listed for flows with several roots are the companion-matrix
    eigenvalues [2]_ x > 0, as r = 1/x - 1, rounded to 0.1 %; rates that agree
    to 1e-6 are one repeated root.

    References
    ----------
    .. [1] D. R. Curtiss, "Recent extensions of Descartes' rule of signs",
       *Annals of Mathematics* 19(4), 251-278, 1918. doi:10.2307/1967494
    .. [2] A. Edelman and H. Murakami, "Polynomial roots from companion matrix
       eigenvalues", *Mathematics of Computation* 64(210), 763-776, 1995.
       doi:10.1090/S0025-5718-1995-1262279-2

    Examples
    --------
    >>> irr_explained([-100, 230, -132])
    (nan, '2 rates make NPV zero (10.0 %, 20.0 %); see MIRR')
    >>> irr_explained([-10, -5])
    (nan, 'the flows never change sign (all costs)')
    """
    v = np.asarray(flows, dtype=float)
    if v.ndim != 1:
        raise ValueError(f"flows must be one case shaped (years,), got shape {v.shape}")
    if not np.isfinite(v).all():
        return math.nan, "the flows contain a missing or infinite value"
    if not (v != 0).any():
        return math.nan, "the flows are all zero"
    if not (v < 0).any():
        return math.nan, "the flows never change sign (all receipts)"
    if not (v > 0).any():
        return math.nan, "the flows never change sign (all costs)"
    rate = irr_scalar(v)
    if not math.isnan(rate):
        return rate, None
    with np.errstate(all="ignore"):
        roots = _positive_roots(v)
        if roots is None:
            return math.nan, (
                "the flows span more than ten orders of magnitude, too many to "
                "count the rates that make NPV zero"
            )
        rates = sorted(float(r) for r in 1.0 / roots - 1.0)
    if not rates:
        return math.nan, "no rate in (-100 %, inf) makes NPV zero"
    # Roots that agree to 1e-6 are one repeated root split by rounding.
    distinct = [rates[0]]
    for r in rates[1:]:
        if abs(r - distinct[-1]) > 1e-6 * (1.0 + abs(r)):
            distinct.append(r)
    listed = ", ".join(_pct(r) for r in distinct)
    if len(distinct) == 1:
        return math.nan, f"NPV touches zero at {listed} without changing sign; see MIRR"
    return math.nan, f"{len(distinct)} rates make NPV zero ({listed}); see MIRR"


# ---------------------------------------------------------------------------
# MIRR
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
