"""How the evaluator takes the rows of a batch: in chunks, rows that share their year patterns together.

A Monte Carlo draws stand lives and establishment failures per row; rows with one stand life and
one ramp-up share every year pattern, so a chunk of them keeps its lines separable (per-row amount x
shared pattern) where a chunk of mixed rows would make them dense. :func:`order` finds such groups
(when there are few) and the chunks within them; :func:`same` reads a column that is constant over
a chunk as one value.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from tea.inputs import schema

Array = np.ndarray

#: case keys whose values shape the year patterns or pick branches: rows that share them are evaluated together
GROUP_KINDS = frozenset({"int", "list", "enum", "bool", "str"})
GROUP_KEYS = frozenset(k.path for k in schema.KEYS if k.kind in GROUP_KINDS)
#: rows of a batch per group at least, on average, for grouping to pay
GROUP_ROWS = 1024


def same(c: Array) -> Array:
    """A chunk's column as one row where every row holds the same value (NaN padding included), so that
    the chunk's lines keep their separable form and its branches are taken once."""
    if c.shape[0] <= 1:
        return c
    first = c[:1]
    equal = c == first
    if c.dtype.kind == "f":
        equal |= np.isnan(c) & np.isnan(first)
    return first if equal.all() else c


def _codes(c: Array) -> Array:
    """Group number of each row of a per-row column (numbers, labels or a NaN-padded list)."""
    if c.dtype.kind == "f":
        c = np.where(np.isnan(c), -np.inf, c)
    code = np.unique(c[:, 0], return_inverse=True)[1].reshape(-1)
    for j in range(1, c.shape[1]):  # item by item: the groups so far split by the item's values
        values, item = np.unique(c[:, j], return_inverse=True)
        code = np.unique(code * len(values) + item.reshape(-1), return_inverse=True)[1].reshape(-1)
    return code


def order(cols: dict[str, Any], per_row: set[str], n: int, chunk_rows: int) -> tuple[Array | None, list]:
    """The order in which to take the rows and the (start, stop) of each chunk in it.

    Where the rows vary in a stand life, a list or a choice (a Monte Carlo of stand lives and failure
    events) and fall into few groups of equal such values, the rows of a group are taken together
    (a stable order), so that each chunk keeps the shared year patterns of its group; else in order.
    """
    plain = (None, [(start, min(start + chunk_rows, n)) for start in range(0, n, chunk_rows)])
    keys = sorted(p for p in per_row if p in GROUP_KEYS)
    if not keys or n < 2 * GROUP_ROWS:
        return plain
    codes = [_codes(cols[p]) for p in keys]
    order = np.lexsort(codes[::-1])
    change = np.zeros(n, dtype=bool)
    for c in codes:
        sc = c[order]
        change[1:] |= sc[1:] != sc[:-1]
    edges = [0, *np.flatnonzero(change).tolist(), n]
    if len(edges) - 1 > n // GROUP_ROWS:
        return plain
    chunks = []
    for g0, g1 in zip(edges[:-1], edges[1:]):
        count = -(-(g1 - g0) // chunk_rows)
        size = -(-(g1 - g0) // count)
        chunks.extend((start, min(start + size, g1)) for start in range(g0, g1, size))
    return order, chunks


__all__ = ["order", "same", "GROUP_KEYS", "GROUP_ROWS"]
