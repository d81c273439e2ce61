"""The internal rate of return over arrays of years, with the rule for when it is defined.

Flows follow :mod:`tea.methods.finance`: costs negative, receipts positive,
``flows[..., 0]`` at t = 0, shaped ``(years,)`` or ``(cases, years)``.

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
"""

from __future__ import annotations

import math
from collections.abc import Sequence

import numpy as np

from tea.methods._arrays import _flows_2d
from tea.methods.roots import _COUNT_BLOCK, _positive_roots, _unique_root

__all__ = ["irr", "irr_scalar", "irr_explained", "irr_by_rule", "irr_rule_explained", "sign_changes", "cumulative_sign_changes"]

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
# Safeguarded Newton steps, at most, before the rows not yet converged are bisected.
_NEWTON_STEPS = 20
# Geometric bisection steps for the (rare) rows still not converged: enough to
# narrow any bracket within the float range to the float resolution.
_BISECTION_STEPS = 64
# Rows solved together: keeps the working vectors in the processor cache.
_CHUNK_ROWS = 16384
# Rows per block when transposing (cases, years) to (years, cases).
_TRANSPOSE_ROWS = 512


def _transpose(f: np.ndarray) -> np.ndarray:
    """(cases, years) -> (years, cases) with each year contiguous: a view where the cases are already
    the inner axis in memory, else a copy in cache-sized blocks."""
    rows, years = f.shape
    if f.strides[0] == f.itemsize and f.dtype == float:
        return f.T
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
    skip = outside if skip is None else skip | outside
    return _iterate(g, z, lo, hi, skip)


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
            predicted = step * step * step <= (tol / _PREDICTION_MARGIN) * (last * last)
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


def _irr_block(f: np.ndarray, norstrom: bool = False) -> np.ndarray:
    """IRR of each row of a (cases, years) block; NaN where not unique (with ``norstrom``, where it is
    not unique and Norström's criterion does not give the one positive rate either)."""
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
    forward = solve & (at_zero > 0)
    if norstrom:  # Norström's rows (a cost first, a positive end) are solved with the forward ones
        forward[_norstrom_rows(t, ~solve)] = True
    forward = np.flatnonzero(forward)
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
    if norstrom:
        # a unique rate outside double precision (rare): Norström's criterion may still give one
        left = solve & np.isnan(out)
        cand = _norstrom_rows(t, left) if left.any() else left[:0]
        if cand.size:
            g = np.take(t, cand, axis=1)
            g /= np.abs(g).max(axis=0)
            out[cand] = 1.0 / _solve_unit(g) - 1.0
    return out


def _norstrom_rows(t: np.ndarray, todo: np.ndarray) -> np.ndarray:
    """The columns of t (years, cases) among ``todo`` that start with a cost, end with a positive
    running total and whose running total changes sign once (Norström's criterion): exactly one rate
    is positive, solved in z = 1/(1+r) on (0, 1) as the forward rows of the unique-rate rule are."""
    if not todo.any():
        return np.flatnonzero(todo)
    cum = np.empty_like(t)  # the running total year by year, one row of cases at a time (as cumsum adds)
    cum[0] = t[0]
    for k in range(1, t.shape[0]):
        np.add(cum[k - 1], t[k], out=cum[k])
    cand = np.flatnonzero(todo & (cum[-1] > 0) & (t[0] < 0))  # the cheap tests first
    if cand.size == 0:
        return cand
    return cand[_sign_structure(np.take(cum, cand, axis=1))[0] == 1]


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
    then Newton steps with a bisection safeguard on the sign bracket [5]_,
    each row set aside as soon as its step is within the tolerance, and a
    geometric bisection for any row left after 20 steps. The rate is accurate to about
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
        for start, stop in _blocks(f.shape[0]):
            out[start:stop] = _irr_block(f[start:stop])
    return out


def _blocks(rows: int) -> list[tuple[int, int]]:
    """(start, stop) of blocks of at most _CHUNK_ROWS rows, of equal size (no small remainder)."""
    count = max(1, -(-rows // _CHUNK_ROWS))
    size = -(-rows // count)
    return [(start, min(start + size, rows)) for start in range(0, rows, size)] if rows else []


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
        if step <= tol or (newton and step * step * step <= (tol / _PREDICTION_MARGIN) * (last * last)):
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


# ---------------------------------------------------------------------------
# The IRR rule with Norström's criterion
# ---------------------------------------------------------------------------
def cumulative_sign_changes(flows):
    """Sign changes of the cumulative cash flow (zeros skipped), per row.

    >>> int(cumulative_sign_changes([-100, 60, 60, -10]))
    1
    """
    f, one = _flows_2d(flows)
    out = sign_changes(np.cumsum(f, axis=1))
    return out if not one else int(np.asarray(out).reshape(-1)[0])


def irr_by_rule(flows):
    """The IRR under the project's rule: the unique rate in (-100 %, inf) where there is one
    (:func:`irr`), else, where the cumulative cash flow changes sign exactly once and ends
    positive, the one positive rate (Norström's criterion); else undefined (NaN).

    A removal cost at the end of a stand usually gives the flows a second sign change, so
    Descartes' rule no longer promises one rate; the cumulative cash flow, though, still
    goes from negative to positive once, and Norström (1972) showed that then exactly one
    rate is positive: that is the IRR reported. Other (negative) rates may exist:
    :func:`irr_rule_explained` names them.

    Parameters
    ----------
    flows : array_like, shape (years,) or (cases, years)

    Returns
    -------
    float or ndarray (cases,)

    References
    ----------
    .. [1] C. J. Norström, "A sufficient condition for a unique nonnegative internal rate
       of return", *Journal of Financial and Quantitative Analysis* 7(3), 1835-1839, 1972.

    Examples
    --------
    A stand with a removal cost (numpy-financial's ``irr`` returns the same root):

    >>> round(float(irr_by_rule([-1000, 400, 400, 400, 400, -150])), 6)
    0.185813
    """
    f, one = _flows_2d(flows)
    # block by block, on one transposed copy of each block: the unique rate, then Norström's rows
    rates = np.empty(f.shape[0])
    with np.errstate(all="ignore"):
        for start, stop in _blocks(f.shape[0]):
            rates[start:stop] = _irr_block(f[start:stop], norstrom=True)
    return float(rates[0]) if one else rates


def irr_rule_explained(flows) -> tuple[float, str | None, str | None]:
    """(rate, why undefined or None, a note on the rule when Norström's criterion decides)."""
    v = np.asarray(flows, dtype=float)
    rate, reason = irr_explained(v)
    if reason is None:
        return rate, None, None
    by_rule = float(irr_by_rule(v))
    if math.isnan(by_rule):
        return math.nan, reason, None
    others = [r for r in _other_rates(v) if abs(r - by_rule) > 1e-6 * (1 + abs(r))]
    note = ("the cumulative cash flow changes sign once, so exactly one rate is positive (Norström's criterion)"
            + (f"; other rates making NPV zero: {', '.join(_pct(r) for r in others)}" if others else ""))
    return by_rule, None, note


def _other_rates(v: np.ndarray) -> list[float]:
    with np.errstate(all="ignore"):
        roots = _positive_roots(v)
    return [] if roots is None else sorted(float(r) for r in 1.0 / roots - 1.0)
