"""The one root on the unit interval of a polynomial in z, for many polynomials at once or for one.

The internal rate of return (:mod:`tea.methods.irr`) is found as the root
z = 1/(1+r) (or 1+r when r < 0) of the net present value written as a
polynomial whose coefficients are signed and scaled so that c(0+) < 0 < c(1)
with exactly one root in (0, 1). This module solves that: a start from the
moments of the receipts and costs, then safeguarded Newton steps [1]_ with a
geometric bisection for any row still not converged; :func:`_solve_unit` on
columns of an array (one polynomial a column), :func:`_solve_unit_scalar` the
same in plain Python floats for one.

References
----------
.. [1] W. H. Press, S. A. Teukolsky, W. T. Vetterling and B. P. Flannery,
   *Numerical Recipes*, 3rd ed., Cambridge University Press, 2007, sec. 9.4
   (Newton-Raphson with a bracketing safeguard).
"""

from __future__ import annotations

import math

import numpy as np

from tea.methods.roots import _COUNT_BLOCK

# Rows whose first nonzero coefficient (in the orientation solved) is below
# this fraction of the largest have roots outside double precision.
_TINY_LEAD = 1e-300

# --- numerical settings of the IRR solver (not model coefficients) ---------
# Stop when a step changes z = 1/(1+r) (or 1+r) by at most this fraction of z:
# the rate is then accurate to about 1e-13 * (1 + r).
_STEP_RTOL = 1e-13
# ... or when two Newton steps in a row say the next one would be that small: in
# the quadratic regime a step s_k is followed by about s_k^3 / s_(k-1)^2, and
# the rows stop when that prediction is below _STEP_RTOL / _PREDICTION_MARGIN
# of z, one evaluation of the polynomial sooner than by measuring it.
_PREDICTION_MARGIN = 1000.0
# Newton steps in single precision that refine the start before the double-precision ones: from the
# moment start (about 3 % off) three take z to about 1e-4, where single precision stops helping.
_SINGLE_STEPS = 3
# Safeguarded Newton steps, at most, before the rows not yet converged are bisected.
_NEWTON_STEPS = 20
# Geometric bisection steps for the (rare) rows still not converged: enough to
# narrow any bracket within the float range to the float resolution.
_BISECTION_STEPS = 64

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


def _newton(g, z, lo, hi, p, d):
    """One safeguarded Newton step on c(z), c < 0 below the root and c > 0 above.

    ``lo`` and ``hi`` bracket the root; the new bracket is returned with the new
    iterate, the size of the step and whether it was a Newton step. A Newton step that would leave the
    bracket (which includes a non-positive derivative, since the iterate is
    always one end of it) is replaced by bisection [5]_. ``p`` and ``d`` are
    work space.
    """
    _horner(g, z, p, d)
    below = p < 0
    lo = np.where(below, z, lo)
    hi = np.where(below, hi, z)
    np.divide(p, d, out=p)
    np.subtract(z, p, out=p)
    newton = (p >= lo) & (p <= hi)
    new = np.where(newton, p, 0.5 * (lo + hi))
    np.subtract(new, z, out=p)
    return new, np.abs(p, out=p), lo, hi, newton


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
    order (its cumulant expansion). Equating receipts and costs gives the
    quadratic a - b u + s u^2 = 0 with a = ln(-C/R), b = m_R - m_C and
    s = (s2_C - s2_R) / 2, whose root nearer the two-flow value u0 = a / b is
    u = 2a / (b + sign(b) sqrt(b^2 - 4as)) (the form without cancellation);
    where the quadratic has no real root, u0. ``lib`` is numpy or math; the
    arguments may share any common factor.
    """
    mean_r = receipt_time / receipts
    mean_c = cost_time / costs
    spread = 0.5 * ((cost_time2 / costs - mean_c * mean_c) - (receipt_time2 / receipts - mean_r * mean_r))
    span = mean_r - mean_c
    a = lib.log(-costs / receipts)
    disc = span * span - 4.0 * a * spread
    if lib is math:
        return math.exp(2.0 * a / (span + math.copysign(math.sqrt(disc), span)) if disc >= 0.0 else a / span)
    root = np.sqrt(np.maximum(disc, 0.0))
    return np.exp(np.where(disc >= 0.0, 2.0 * a / (span + np.copysign(root, span)), a / span))


def _solve_unit(g: np.ndarray, skip: np.ndarray | None = None) -> np.ndarray:
    """Root in (0, 1) of each column polynomial of g (shape (years, cases)).

    Entry ``g[k, j]`` is the coefficient of z**k of case j, scaled so that
    the largest is 1 in magnitude and signed so that c(0+) < 0 < c(1), with
    exactly one root in (0, 1). Columns marked in ``skip`` are not solved (NaN).
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
    z = _single_precision_steps(g, z, lo, hi, _SINGLE_STEPS)
    skip = outside if skip is None else skip | outside
    return _iterate(g, z, lo, hi, skip)


def _single_precision_steps(g, z, lo, hi, steps):
    """A better start: Newton steps in single precision (half the memory a step reads, about twice as
    fast), enough while z is still far from the root; a step that would leave the bracket (lo, hi) is
    not taken. The bracket is not narrowed from single-precision signs, which near the root may be
    wrong: the double-precision steps that follow keep their safeguard whole."""
    if steps <= 0 or z.size == 0:
        return z
    g32 = g.astype(np.float32)
    z32 = z.astype(np.float32)
    p, d = np.empty_like(z32), np.empty_like(z32)
    with np.errstate(all="ignore"):
        for _ in range(steps):
            _horner(g32, z32, p, d)
            np.divide(p, d, out=p)
            np.subtract(z32, p, out=p)
            np.copyto(z32, p, where=(p > lo) & (p < hi))
    return z32.astype(float)


def _iterate(g, z, lo, hi, skip):
    """Newton steps from z on every column of g not skipped, until each converges; any left after
    the steps allowed are bisected. A column is set aside once converged (its step, or the step its
    last two Newton steps predict, within the tolerance); the columns still working are gathered
    into a narrower array whenever half of those worked on are done."""
    out = np.full(z.shape, np.nan)
    idx = np.arange(z.size)
    pending = ~skip
    p, d = np.empty_like(z), np.empty_like(z)
    last = np.zeros(z.shape)  # the previous step where it was a Newton step, else 0 (no prediction)
    for _ in range(_NEWTON_STEPS):
        z, step, lo, hi, newton = _newton(g, z, lo, hi, p[:z.size], d[:z.size])
        tol = _STEP_RTOL * z
        with np.errstate(over="ignore", under="ignore", invalid="ignore"):
            rel, prev = step / z, last / z  # relative to z: no underflow for a root near 0
            predicted = rel * rel * rel <= (_STEP_RTOL / _PREDICTION_MARGIN) * (prev * prev)
        done = pending & ((step <= tol) | (newton & predicted))
        if done.any():
            out[idx[done]] = z[done]
            pending &= ~done
        left = np.count_nonzero(pending)
        if left == 0:
            return out
        last = np.where(newton, step, 0.0)
        if 2 * left <= pending.size:
            keep = np.flatnonzero(pending)
            g, z, lo, hi, idx, last = g[:, keep], z[keep], lo[keep], hi[keep], idx[keep], last[keep]
            pending = np.ones(keep.size, dtype=bool)
    keep = np.flatnonzero(pending)
    out[idx[keep]] = _geometric_bisection(g[:, keep], lo[keep], hi[keep], _BISECTION_STEPS)
    return out


def _solve_unit_scalar(seq, lo, z):
    """Pure-Python twin of ``_solve_unit`` for one case.

    ``seq`` lists the coefficients of c(z), signed and scaled as in
    ``_solve_unit``, from the highest power down (so Horner's rule runs
    straight along it); ``lo`` is the lower end of the bracket and ``z`` the
    start.
    """
    hi = 1.0
    head, rest = seq[0], seq[1:]
    last = 0.0  # the previous step where it was a Newton step, else 0 (no prediction)
    for _ in range(_NEWTON_STEPS):
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
        newton = lo <= new <= hi
        if not newton:
            new = 0.5 * (lo + hi)
        step, tol = abs(new - z), _STEP_RTOL * new
        rel, prev = step / new, last / new  # relative to z: no underflow for a root near 0
        if step <= tol or (newton and rel * rel * rel <= (_STEP_RTOL / _PREDICTION_MARGIN) * (prev * prev)):
            return new
        last = step if newton else 0.0
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
