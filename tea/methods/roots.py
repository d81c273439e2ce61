"""Counting the positive real roots of polynomials, row by row: what decides whether an IRR is unique.

Descartes' rule of signs on intervals of (0, inf) mapped onto (0, inf) (the
Vincent-Collins-Akritas test), then companion-matrix eigenvalues for the rows
it leaves undecided. See :mod:`tea.methods.irr` for the rule these serve.

References
----------
.. [1] G. E. Collins and A. G. Akritas, "Polynomial real root isolation using
   Descartes' rule of signs", *Proc. 1976 ACM Symposium on Symbolic and
   Algebraic Computation*, 272-275, 1976. doi:10.1145/800205.806346
.. [2] A. Edelman and H. Murakami, "Polynomial roots from companion matrix
   eigenvalues", *Mathematics of Computation* 64(210), 763-776, 1995.
   doi:10.1090/S0025-5718-1995-1262279-2
"""

from __future__ import annotations

import functools
import math

import numpy as np

# An eigenvalue whose imaginary part is below this fraction of its modulus is
# taken as real: in double precision such a pair cannot be told apart from a
# repeated real root.
_REAL_ROOT_RTOL = 1e-7
# Rows left to the eigenvalue count are counted only if their nonzero flows
# span less than this ratio: the eigenvalues of the companion matrix are
# accurate relative to the largest coefficient, so much smaller ones cannot be
# resolved. (irr_explained lists roots under the same rule.)
_COUNT_RANGE = 1e10

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
