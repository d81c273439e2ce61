"""A recursion that scales: stepped once on year patterns instead of row by row.

A line that refers to itself through a lag is stepped year by year over every row of a chunk
(:mod:`tea.model.evaluate`), and its result is an ordinary (rows, years) array, so every line after it
loses the cheap per-row amount x year pattern form (:mod:`tea.model.separable`). Where the recursion is
linear and homogeneous in itself and in outside lines that are all one per-row amount times a year pattern
(growth standing uncut until a harvest takes it: last year's stand x (1 - last year's harvest) + this
year's growth), the chunk's result is that amount times the recursion stepped once on the patterns. The
degree of the formula is checked from its expression with the chunk's values; anything else falls back
to stepping every row. Same numbers up to the rounding of a different order of multiplications.
"""

from __future__ import annotations

from typing import Any, Callable

import numpy as np

from tea.model import expr as E
from tea.model import separable as S
from tea.model.declare import Def, Model

_ZERO = "zero"  # the degree of a constant 0: homogeneous of any degree


def _degree(n: E.Node, member: tuple[str, str], model: Model, degree_of: dict) -> Any:
    """The degree of a formula in the recursion's own line and the outside lines that scale with one per-row
    amount (1), in nothing that scales (0), ``_ZERO`` for a constant 0, or None where it is no linear form."""
    if isinstance(n, E.Const):
        return _ZERO if isinstance(n.value, (int, float)) and n.value == 0 else 0
    if isinstance(n, (E.Constant, E.Input, E.Year)):
        return 0
    if isinstance(n, E.Ref):
        key = model.get(n).key
        return 1 if key == member else degree_of.get(key)
    kids: list[Any] = []
    if isinstance(n, E.Lag) and isinstance(n.k, int):
        kids = [_degree(n.x, member, model, degree_of), _degree(n.fill, member, model, degree_of)]
        return _same(kids)
    if isinstance(n, E.Bin):
        a, b = _degree(n.a, member, model, degree_of), _degree(n.b, member, model, degree_of)
        if a is None or b is None:
            return None
        if n.op in ("+", "-"):
            return _same([a, b])
        if n.op == "*":
            if _ZERO in (a, b):
                return _ZERO
            return a + b if a + b <= 1 else None
        if n.op == "/":
            return a if b == 0 else None
        return 0 if a in (0, _ZERO) and b in (0, _ZERO) else None
    if isinstance(n, E.Not):
        return 0 if _degree(n.a, member, model, degree_of) in (0, _ZERO) else None
    if isinstance(n, E.Call) and n.fn == "where":
        c = _degree(n.args[0], member, model, degree_of)
        if c not in (0, _ZERO):
            return None
        return _same([_degree(a, member, model, degree_of) for a in n.args[1:]])
    if isinstance(n, E.Call):
        return 0 if all(_degree(a, member, model, degree_of) in (0, _ZERO) for a in n.args) else None
    return None


def _same(degrees: list[Any]) -> Any:
    found = {d for d in degrees if d != _ZERO}
    if None in found or len(found) > 1:
        return None
    return found.pop() if found else _ZERO


def scaled_recursion(model: Model, env: Any, d: Def, f: Callable[[Any, int], Any], make_env: Callable) -> Any:
    """A one-line recursion linear in itself and in outside lines that are one per-row amount times a year
    pattern (the same amount for all of them), whose other parts are shared by the rows: stepped once on the
    patterns and kept as that amount times the result (e.g. growth standing uncut until a harvest takes it).
    None where the chunk's values do not allow it (the recursion is then stepped row by row)."""
    member = d.key
    coef = None
    degree_of: dict[tuple[str, str], int] = {}
    mini: dict[tuple[str, str], Any] = {}
    for n in E.walk(d.expr):
        if isinstance(n, E.Input):
            v = env.inputs.get(n.path)
            if isinstance(v, np.ndarray) and v.ndim and v.shape[0] != 1:
                return None  # an input that differs by row inside the recursion
        if not isinstance(n, E.Ref):
            continue
        key = model.get(n).key
        if key == member or key in degree_of:
            continue
        v = env.values[key]
        if isinstance(v, S.Sep) and v.made is None and len(v.terms) == 1:
            c, p = v.terms[0]
            c = np.asarray(c, dtype=float)
            if coef is None:
                coef = c
            elif c is not coef and not (c.shape == coef.shape and np.array_equal(c, coef)):
                return None
            degree_of[key], mini[key] = 1, np.asarray(p, dtype=float).reshape(1, -1)
            continue
        a = np.asarray(S.num(S.dense(v)))
        if a.ndim == 2 and a.shape[0] != 1:
            return None
        degree_of[key], mini[key] = 0, a
    if coef is None or _degree(d.expr, member, model, degree_of) != 1:
        return None
    small = make_env(env.inputs, env.years, 1)
    small.values.update(mini)
    small.stepped[member] = np.zeros((env.years, 1))
    for s in range(env.years):
        small.stepped[member][s:s + 1] = f(small, s)
    return S.Sep([(coef, np.ascontiguousarray(small.stepped[member].T))], env.rows, env.years)
