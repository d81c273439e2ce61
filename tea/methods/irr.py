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
from tea.methods.roots import _positive_roots, _unique_root
from tea.methods.unit_root import _TINY_LEAD, _solve_unit, _solve_unit_scalar, _start

__all__ = ["irr", "irr_scalar", "irr_explained", "irr_by_rule", "irr_rule_explained", "sign_changes", "cumulative_sign_changes"]

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
    if 2 * cand.size >= cum.shape[1]:  # most columns: counted in place, no gathered copy
        return cand[_sign_structure(cum)[0][cand] == 1]
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
    then Newton steps with a bisection safeguard on the sign bracket [5]_
    (the first three in single precision, which do not narrow the bracket),
    each row set aside as soon as its step, or the next step its last two
    predict, is within the tolerance, and a geometric bisection for any row
    left after 20 steps. The rate is accurate to about 1e-13 * (1 + r). One
    case (1-D input) goes to :func:`irr_scalar`, the same method in plain
    Python floats (without the single-precision steps).

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


def irr_explained(flows: Sequence[float] | np.ndarray, instead: str = "see MIRR") -> tuple[float, str | None]:
    """Internal rate of return of one case, with the reason when it is undefined.

    Parameters
    ----------
    flows : sequence of float or numpy.ndarray, shape (years,)
        Net cash flow of each year [currency]; costs negative, receipts
        positive; ``flows[0]`` at t = 0.
    instead : str
        What the reader should judge by where several rates (or a rate
        touched without a sign change) leave the IRR undefined, ending the
        reason: the MIRR of the same flows by default; the caller names the
        figure it shows (e.g. the NPV of an incremental flow, whose MIRR it
        does not show).

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
    (nan, 'the net flows are never positive (no year brings in more than it costs)')
    """
    v = np.asarray(flows, dtype=float)
    if v.ndim != 1:
        raise ValueError(f"flows must be one case shaped (years,), got shape {v.shape}")
    if not np.isfinite(v).all():
        return math.nan, "the flows contain a missing or infinite value"
    if not (v != 0).any():
        return math.nan, "the flows are all zero"
    if not (v < 0).any():
        return math.nan, "the net flows are never negative (no year costs more than it brings in)"
    if not (v > 0).any():
        return math.nan, "the net flows are never positive (no year brings in more than it costs)"
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
        return math.nan, f"NPV touches zero at {listed} without changing sign; {instead}"
    return math.nan, f"{len(distinct)} rates make NPV zero ({listed}); {instead}"


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


def irr_rule_explained(flows, instead: str = "see MIRR") -> tuple[float, str | None, str | None]:
    """(rate, why undefined or None, a note on the rule when Norström's criterion decides); ``instead`` as for
    :func:`irr_explained`."""
    v = np.asarray(flows, dtype=float)
    rate, reason = irr_explained(v, instead)
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
