"""Yearly values held as sums of per-row amounts times shared year patterns.

Most ledger lines are a per-row amount (a yield, a price, a rent: shape
``(rows, 1)``) times a year pattern shared by every row of a batch (a ramp-up,
the harvest years, the stand years: ``(1, years)``), or a sum of such terms.
:class:`Sep` keeps them in that form, ``sum_i c_i p_i``, so a line costs work
per row rather than per row and year; sums, products with row or year values,
lags, running totals, totals over the years and present values stay in the
form, and anything else turns the value into an ordinary ``(rows, years)``
array (:func:`dense`: one matrix product). The results are the same numbers
as the plain array arithmetic, up to the rounding of a different order of
additions.
"""

from __future__ import annotations

from typing import Any

import numpy as np

#: more terms than this and a value is made dense (the product would no longer be cheaper)
MAX_TERMS = 16


class Sep:
    """sum_i coef_i (rows or 1, 1) x pattern_i (1, years)."""

    __slots__ = ("terms", "rows", "years", "made")

    def __init__(self, terms: list[tuple[Any, np.ndarray]], rows: int, years: int):
        self.terms = terms
        self.rows = rows
        self.years = years
        self.made: np.ndarray | None = None  # the dense array, once made

    @property
    def shape(self) -> tuple[int, int]:
        return (self.rows, self.years)

    @property
    def ndim(self) -> int:
        return 2


def _is_row(a: Any) -> bool:
    """A per-row value: (rows, 1)."""
    return isinstance(a, np.ndarray) and a.ndim == 2 and a.shape[1] == 1


def _is_pattern(a: Any) -> bool:
    """A value shared by the rows: (1, years) with years > 1."""
    return isinstance(a, np.ndarray) and a.ndim == 2 and a.shape[0] == 1 and a.shape[1] > 1


def _scalar(a: Any) -> bool:
    return not isinstance(a, (np.ndarray, Sep)) or (isinstance(a, np.ndarray) and a.size == 1 and a.ndim < 2)


def dense(x: Any) -> Any:
    """An ordinary array of a value (a :class:`Sep` becomes (rows, years) by one matrix product)."""
    if not isinstance(x, Sep):
        return x
    if x.made is None:
        if not x.terms:  # every term cancelled
            x.made = np.zeros((x.rows, x.years))
        elif len(x.terms) == 1:
            c, p = x.terms[0]
            x.made = np.multiply(c, p)
        else:
            coefs = np.empty((x.rows, len(x.terms)))
            for i, (c, _) in enumerate(x.terms):
                coefs[:, i:i + 1] = c
            x.made = _product(coefs, np.vstack([p for _, p in x.terms]))
    return x.made


def dense_by_year(x: Any) -> Any:
    """A value as an ordinary (rows, years) array whose years are the outer axis in memory (the
    transpose of a C-ordered (years, rows) array), made by one matrix product from a :class:`Sep`
    not yet made dense; anything else as :func:`dense` gives it."""
    if not isinstance(x, Sep) or x.made is not None or not x.terms or x.rows < PRODUCT_ROWS:
        return dense(x)
    coefs = np.empty((len(x.terms), x.rows))
    for i, (c, _) in enumerate(x.terms):
        coefs[i] = np.reshape(c, -1)
    patterns = np.ascontiguousarray(np.vstack([p for _, p in x.terms]).T)  # (years, terms)
    out = np.empty((x.years, x.rows))
    for start in range(0, x.rows, PRODUCT_ROWS):
        np.matmul(patterns, coefs[:, start:start + PRODUCT_ROWS], out=out[:, start:start + PRODUCT_ROWS])
    return out.T


#: rows of one matrix product: small enough that the BLAS library computes it on the calling thread (its
#: threads cost more to wake than such a product takes, and on a shared machine they wait for a core)
PRODUCT_ROWS = 2048


def _product(coefs: np.ndarray, patterns: np.ndarray) -> np.ndarray:
    """coefs (rows, terms) @ patterns (terms, years), in blocks of rows."""
    rows = coefs.shape[0]
    if rows <= PRODUCT_ROWS:
        return coefs @ patterns
    out = np.empty((rows, patterns.shape[1]))
    for start in range(0, rows, PRODUCT_ROWS):
        np.matmul(coefs[start:start + PRODUCT_ROWS], patterns, out=out[start:start + PRODUCT_ROWS])
    return out


def _merge(terms: list[tuple[Any, np.ndarray]]) -> list[tuple[Any, np.ndarray]]:
    """Fewer terms, same sum: terms on one amount (the same array, or any plain number) add their
    patterns; then terms on one pattern add their amounts; all-zero patterns go."""
    by_coef: dict[int, list] = {}
    for c, p in terms:
        if isinstance(c, np.ndarray) and c.size > 1:
            key, amount, pat = id(c), c, p
        else:
            key, amount, pat = -1, 1.0, np.multiply(np.asarray(c, dtype=float).reshape(-1)[0], p)
        slot = by_coef.get(key)
        if slot is None:
            by_coef[key] = [amount, pat]
        else:
            slot[1] = slot[1] + pat
    by_pattern: dict[int, list] = {}
    for c, p in by_coef.values():
        if not p.any():
            continue
        slot = by_pattern.get(id(p))
        if slot is None:
            by_pattern[id(p)] = [c, p]
        else:
            slot[0] = slot[0] + c
    return [(c, p) for c, p in by_pattern.values()]


def _terms(x: Any, years: int) -> list[tuple[Any, np.ndarray]] | None:
    """A value as terms, or None when it is a dense (rows, years) array."""
    if isinstance(x, Sep):
        return x.terms
    if _scalar(x) or _is_row(x):
        return [(x, _ones(years))]
    if _is_pattern(x):
        return [(1.0, _float(x))]
    return None


def _float(p: np.ndarray) -> np.ndarray:
    return p if p.dtype == float else p.astype(float)


_ONES: dict[int, np.ndarray] = {}


def _ones(years: int) -> np.ndarray:
    p = _ONES.get(years)
    if p is None:
        p = _ONES[years] = np.ones((1, years))
    return p


def _make(terms, rows: int, years: int) -> Any:
    terms = _merge(terms)
    s = Sep(terms, rows, years)
    return dense(s) if len(terms) > MAX_TERMS else s


def _rows_of(*xs: Any) -> int:
    n = 1
    for x in xs:
        if isinstance(x, Sep):
            n = max(n, x.rows)
        elif isinstance(x, np.ndarray) and x.ndim == 2:
            n = max(n, x.shape[0])
    return n


def _years_of(*xs: Any) -> int:
    for x in xs:
        if isinstance(x, Sep):
            return x.years
    for x in xs:
        if isinstance(x, np.ndarray) and x.ndim == 2 and x.shape[1] > 1:
            return x.shape[1]
    return 1


def num(x: Any) -> Any:
    """A flag (bool) as numbers 0 and 1; anything else as it is. Flags are kept as bool (one byte a
    value) for the comparisons, ands and first-year searches they mostly meet, and made numbers where
    arithmetic needs them (numpy adds two bools as a logical or, and will not subtract them)."""
    if isinstance(x, np.ndarray) and x.dtype == bool:
        return x.astype(float)
    if isinstance(x, np.bool_):
        return float(x)
    return x


_ARITHMETIC = frozenset(("+", "-", "*", "/", "**"))


def binop(op: str, a: Any, b: Any, ufunc) -> Any:
    """``a op b`` keeping the separable form where it stays exact and cheaper."""
    if op in _ARITHMETIC:
        a, b = num(a), num(b)
    sa, sb = isinstance(a, Sep), isinstance(b, Sep)
    if not (sa or sb):
        if op == "*" and ((_is_row(a) and a.shape[0] > 1 and _is_pattern(b))
                          or (_is_row(b) and b.shape[0] > 1 and _is_pattern(a))):
            row, pat = (a, b) if _is_row(a) else (b, a)
            return Sep([(_float(row), _float(pat))], row.shape[0], pat.shape[1])
        return ufunc(a, b)
    rows, years = _rows_of(a, b), _years_of(a, b)
    if op in ("+", "-"):
        ta, tb = _terms(a, years), _terms(b, years)
        if ta is None or tb is None:
            return ufunc(dense(a), dense(b))
        if op == "-":
            tb = [(c, -p) for c, p in tb]  # negate the pattern: the amount stays the same array
        return _make(ta + tb, rows, years)
    if op == "*":
        if sa and sb:
            if len(a.terms) * len(b.terms) > MAX_TERMS:
                return ufunc(dense(a), dense(b))
            return _make([(ca * cb, pa * pb) for ca, pa in a.terms for cb, pb in b.terms], rows, years)
        s, o = (a, b) if sa else (b, a)
        if _scalar(o) or _is_row(o):
            o = np.asarray(o, dtype=float) if isinstance(o, np.ndarray) else o
            return _make([(c * o, p) for c, p in s.terms], rows, years)
        if _is_pattern(o):
            o = _float(o)
            return _make([(c, p * o) for c, p in s.terms], rows, years)
        return ufunc(dense(a), dense(b))
    if op in (">", "!=", "<=", "==") and sa and _scalar(b) and float(np.asarray(b)) == 0.0:
        got = _compare_nonnegative(a, op)
        if got is not None:
            return got
    if op == "/" and sa and not sb:
        if _scalar(b) or _is_row(b):
            return _make([(c / b, p) for c, p in a.terms], rows, years)
        if _is_pattern(b):
            return _make([(c, p / b) for c, p in a.terms], rows, years)
    return ufunc(dense(a), dense(b))


def extreme(x: Sep, fn: str) -> Any:
    """maximum(x, 0) or minimum(x, 0) of a one-term value c p: c+ p+ + c- p- (or c+ p- + c- p+)."""
    if len(x.terms) != 1:
        return None
    c, p = x.terms[0]
    c = np.asarray(c, dtype=float)
    cp, cn, pp, pn = np.maximum(c, 0), np.minimum(c, 0), np.maximum(p, 0), np.minimum(p, 0)
    pairs = [(cp, pp), (cn, pn)] if fn == "maximum" else [(cp, pn), (cn, pp)]
    return _make([(a, b) for a, b in pairs], x.rows, x.years)


def _compare_nonnegative(x: Sep, op: str) -> np.ndarray | None:
    """``x op 0`` for a sum of non-negative terms whose amounts are, term by term, all positive or all
    zero: then it holds in the same years for every row, a (1, years) pattern. None otherwise."""
    live = []
    for c, p in x.terms:
        ca = np.asarray(c, dtype=float)
        if np.any(p < 0) or np.any(ca < 0) or np.isnan(ca).any():
            return None
        if np.all(ca > 0):
            live.append(p > 0)
        elif not np.all(ca == 0):
            return None
    positive = np.logical_or.reduce(live) if live else np.zeros((1, x.years), dtype=bool)
    return positive if op in (">", "!=") else ~positive


def shift(x: Sep, k: int, fill: Any = 0.0) -> Any:
    """x k years later; before year k, ``fill`` (0, a row value, or a separable value read in the same year)."""
    out = []
    for c, p in x.terms:
        q = np.zeros_like(p, dtype=float)
        if 0 <= k < p.shape[1]:
            q[:, k:] = p[:, : p.shape[1] - k]
        elif -p.shape[1] < k < 0:
            q[:, : p.shape[1] + k] = p[:, -k:]
        out.append((c, q))
    shifted = Sep(out, x.rows, x.years)
    if _scalar(fill) and float(np.asarray(fill)) == 0.0:
        return shifted
    head = np.zeros((1, x.years))
    if k >= 0:
        head[:, :k] = 1.0
    else:
        head[:, x.years + k:] = 1.0
    terms = _terms(fill, x.years)
    if terms is None:  # a dense fill: only its first k years count
        return dense(shifted) + np.asarray(fill) * head
    return _make(out + [(c, p * head) for c, p in terms], max(x.rows, _rows_of(fill)), x.years)


def window(x: Sep, k: int) -> Sep:
    """Sum over the last k years, this one included, term by term."""
    out = []
    for c, p in x.terms:
        run = np.cumsum(p, axis=1)
        before = np.zeros_like(run)
        if k < run.shape[1]:
            before[:, k:] = run[:, : run.shape[1] - k]
        out.append((c, run - before))
    return Sep(out, x.rows, x.years)


def cumsum(x: Sep) -> Sep:
    return Sep([(c, np.cumsum(p, axis=1)) for c, p in x.terms], x.rows, x.years)


def total(x: Sep) -> np.ndarray:
    return _column(sum(np.multiply(c, p.sum(axis=1, keepdims=True)) for c, p in x.terms), x.rows)


def npv(x: Sep, factors: np.ndarray) -> np.ndarray | None:
    """sum over the years of x times shared discount factors (1, years); None where they differ by row."""
    if factors.shape[0] != 1:
        return None
    return _column(sum(np.multiply(c, (p * factors).sum(axis=1, keepdims=True)) for c, p in x.terms), x.rows)


def at(x: Sep, year: np.ndarray) -> np.ndarray | None:
    """x in a year, the same for every row or one per row: each term's amount times its pattern in that
    year (no row of years made dense); NaN where a row's year is not a year of x. None for a shared year
    outside the years (the caller's rule for it applies)."""
    y = np.asarray(year, dtype=float)
    if y.size == 1:
        if not np.isfinite(y.flat[0]) or not 0 <= y.flat[0] < x.years:
            return None
        i = int(y.flat[0])
        return _column(sum(np.multiply(c, p[:, i:i + 1]) for c, p in x.terms), x.rows)
    y = np.broadcast_to(y.reshape(-1, 1), (x.rows, 1))
    ok = np.isfinite(y) & (y >= 0) & (y < x.years)
    idx = np.where(ok, y, 0).astype(np.int64).reshape(-1)
    got = sum((np.multiply(c, p[0, idx].reshape(-1, 1)) for c, p in x.terms), np.zeros((x.rows, 1)))
    return np.where(ok, got, np.nan)


def column(x: Sep, s: int) -> np.ndarray:
    """Year s of x, (rows, 1)."""
    return _column(sum(np.multiply(c, p[:, s:s + 1]) for c, p in x.terms), x.rows)


def _column(v: Any, rows: int) -> np.ndarray:
    a = np.asarray(v, dtype=float)
    a = a.reshape(1, 1) if a.ndim == 0 else a.reshape(-1, 1)
    return np.broadcast_to(a, (rows, 1)) if a.shape[0] != rows else a
