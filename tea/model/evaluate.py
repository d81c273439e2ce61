"""The numpy evaluator: the declared model over many rows (cases, draws, fields) and years at once.

:func:`evaluate` takes case values (canonical, by key path; any of them may
be an array with one value per row) and returns the requested figures,
``(rows,)`` each, and lines, ``(rows, years)`` each. It evaluates only the
declarations those need (found from the formulas), in chunks of rows sized
to stay in the processor's cache, so memory stays flat however many rows
there are. A batch always has ``rows`` rows, whether or not any model input
varies between them.

Lines that refer to themselves through a lag (a loan balance) are stepped
through the years together; every other declaration is one vectorised numpy
expression.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable, Iterable, Mapping, Sequence

import numpy as np

from tea.inputs import published, schema
from tea.model import expr as E
from tea.model.declare import Def, Model
from tea.model.definition import MODEL
from tea.model import chunks as chunked
from tea.model import separable as S
from tea.model.order import components, edges, same_year_order
from tea.model.methods import METHODS
from tea.model.linear import scaled_recursion
from tea.model.slopes import expanded

#: elements of one yearly array of a chunk: 2**19 float64 = 4 MB: most lines are per-row amounts times
#: shared year patterns (separable.py), so a chunk is mostly small arrays; fewer, larger chunks cost less Python
CACHE_ELEMENTS = 1 << 19
#: case keys holding a list (read by year)
LIST_KEYS = frozenset(k.path for k in schema.KEYS if k.kind == "list")

Array = np.ndarray
Fn = Callable[["_Env"], Any]
D = S.dense


class _Values(dict):
    """Computed declarations by key; a declaration not yet computed is computed when first read
    (``fill``), so that a branch or factor the chunk's values make irrelevant is never computed."""

    __slots__ = ("fill",)

    def __init__(self, fill: Callable[[tuple[str, str]], None] | None = None):
        super().__init__()
        self.fill = fill

    def __missing__(self, key):
        if self.fill is None:
            raise KeyError(key)
        self.fill(key)
        return dict.__getitem__(self, key)


class _Env:
    """What a chunk's formulas read: inputs, computed declarations, the year row."""

    __slots__ = ("inputs", "values", "stepped", "t", "years", "rows", "cache")

    def __init__(self, inputs: dict[str, Any], years: int, rows: int):
        self.inputs = inputs
        self.values: dict[tuple[str, str], Array] = _Values()
        self.stepped: dict[tuple[str, str], Array] = {}  # members of a recursion being stepped: (years, rows)
        self.t = np.arange(years, dtype=float)[None, :]
        self.years = years
        self.rows = rows
        self.cache: dict[int, Any] = {}


# ----------------------------------------------------------------------------- input columns
def _column(path: str, value: Any, rows: int) -> Any:
    """One input as a 2-D column: (rows or 1, 1) numbers or labels; a list input (rows or 1, items)."""
    if path in LIST_KEYS:
        if value is None:
            return np.empty((1, 0))
        a = np.asarray(value, dtype=float)
        return a.reshape(1, -1) if a.ndim <= 1 else a
    if value is None:
        return np.full((1, 1), np.nan)
    a = np.asarray(value)
    if a.dtype.kind in "US" or a.dtype == object:
        a = a.astype(str)
    elif a.dtype.kind == "b":
        a = a.astype(float)
    elif a.dtype.kind in "iu":
        a = a.astype(float)
    return a.reshape(-1, 1) if a.ndim else a.reshape(1, 1)


def batch_rows(values: Mapping[str, Any]) -> int:
    """Rows of a batch of case values: the length of its per-row arrays (1 when none varies)."""
    n = 1
    for path, v in values.items():
        if isinstance(v, np.ndarray) and v.ndim >= 1 and (path not in LIST_KEYS or v.ndim == 2):
            if v.shape[0] != 1:
                if n != 1 and v.shape[0] != n:
                    raise ValueError(f"{path}: {v.shape[0]} rows where other inputs have {n}")
                n = v.shape[0]
    return n


# ----------------------------------------------------------------------------- compiling
_BIN: dict[str, Callable[[Any, Any], Any]] = {
    "+": np.add, "-": np.subtract, "*": np.multiply, "/": np.divide, "**": np.power,
    "<": np.less, "<=": np.less_equal, ">": np.greater, ">=": np.greater_equal,
    "==": np.equal, "!=": np.not_equal, "&": np.logical_and, "|": np.logical_or,
}


def _pick(x: Any, shape: tuple[int, ...]) -> Any:
    """One branch of a where() every element takes, shaped as the condition would broadcast it."""
    if isinstance(x, S.Sep):
        return x
    a = np.asarray(x)
    return np.broadcast_to(a, np.broadcast_shapes(a.shape, shape)) if a.ndim or len(shape) else a


def _uniform(a: Array) -> bool:
    return a.size <= 1 or bool((a == a.flat[0]).all())


def _full(x: Any, env: _Env) -> Array:
    """A line's value as (rows or 1, years) (a separable value stays so)."""
    if isinstance(x, S.Sep):
        return x
    a = np.asarray(x)
    if a.ndim < 2:
        a = a.reshape(1, 1) if a.ndim == 0 else a.reshape(1, -1)
    return np.broadcast_to(a, (a.shape[0], env.years)) if a.shape[1] == 1 else a


def _label_join(parts: list[Any]) -> Array:
    arrays = np.broadcast_arrays(*(np.asarray(p).astype(str) for p in parts))
    out = arrays[0]
    for a in arrays[1:]:
        out = np.char.add(np.char.add(out, " "), a)
    return np.atleast_2d(out)


def _lookup(table: str, column: str, keys: Array) -> Array:
    data = published.tables()[table]
    index = {k: i for i, k in enumerate(data["keys"])}
    values = data["columns"][column]
    uniq, inverse = np.unique(keys, return_inverse=True)
    missing = [u for u in uniq if u not in index]
    if missing:
        raise KeyError(f"{table}: no row for {', '.join(map(repr, missing))}; rows: {', '.join(data['keys'])}")
    picked = [values[index[u]] for u in uniq]
    arr = np.array(picked, dtype=float if all(isinstance(v, (int, float)) for v in picked) else str)
    return arr[inverse.reshape(-1)].reshape(keys.shape)


def _by_year(a: Array, t: Array, start: int, default: float, hold_last: bool) -> Array:
    rows, items = a.shape
    if items == 0:
        return np.full((1, t.shape[1]), default)
    idx = (t - start).astype(np.int64)  # (1, years)
    length = np.sum(~np.isnan(a), axis=1, keepdims=True)  # lists are NaN-padded at their end
    top = np.maximum(length - 1, 0)
    got = np.take_along_axis(a, np.clip(np.broadcast_to(idx, (rows, idx.shape[1])), 0, top), axis=1)
    inside = (idx >= 0) & ((idx < length) | (hold_last & (length > 0)))
    got = np.where(np.isnan(got), default, got)
    return np.where(inside, got, default)


#: rows per block of a running total: its year-major copy (years x rows float64) stays in the core's cache
CUMSUM_BLOCK = 2048


def _cumsum(x: Array) -> Array:
    """Running total along the years: the same additions in the same order as ``np.cumsum(x, axis=1)``
    (so the same result to the bit), made year by year on a year-major copy of a block of rows at a time,
    each year one contiguous vector: about three times faster than numpy's loop over short rows."""
    x = np.asarray(x)
    if x.ndim != 2 or x.shape[0] < 64 or x.dtype.kind not in "fiub":
        return np.cumsum(x, axis=1)
    rows, years = x.shape
    dtype = np.result_type(x.dtype, np.int64) if x.dtype.kind in "iub" else x.dtype
    out = np.empty(x.shape, dtype=dtype)
    buf = np.empty((years, min(CUMSUM_BLOCK, rows)), dtype=dtype)
    for start in range(0, rows, CUMSUM_BLOCK):
        block = x[start:start + CUMSUM_BLOCK]
        tb = buf[:, :block.shape[0]]
        np.copyto(tb, block.T)
        for k in range(1, years):
            np.add(tb[k - 1], tb[k], out=tb[k])
        out[start:start + block.shape[0]] = tb.T
    return out


def _shift(x: Array, k: int, fill: Array) -> Array:
    """x k years later (k < 0: |k| years earlier, a lead); ``fill`` where the years run out."""
    years = x.shape[1]
    rows = max(x.shape[0], fill.shape[0])
    out = np.array(np.broadcast_to(fill, (rows, years)), dtype=float)
    if 0 <= k < years:
        out[:, k:] = np.broadcast_to(x[:, : years - k], (rows, years - k))
    elif -years < k < 0:
        out[:, : years + k] = np.broadcast_to(x[:, -k:], (rows, years + k))
    return out


def _gather(x: Array, idx: Array) -> tuple[Array, Array]:
    """x at year index idx (rows, years), and where idx is inside the years."""
    rows = max(x.shape[0], idx.shape[0])
    xi = np.broadcast_to(x, (rows, x.shape[1]))
    ii = np.broadcast_to(idx, (rows, idx.shape[1]))
    ok = (ii >= 0) & (ii < x.shape[1])
    got = np.take_along_axis(xi, np.clip(ii, 0, x.shape[1] - 1), axis=1)
    return got, ok


def _reduce(kind: str, x: Array, arg: Any, env: _Env) -> Array:
    x = _full(x, env)
    if isinstance(x, S.Sep):
        got = None
        if kind == "total":
            got = S.total(x)
        elif kind == "npv":
            rate = np.asarray(arg, dtype=float)
            if rate.size == 1:
                got = S.npv(x, (1.0 + rate.reshape(1, 1)) ** -env.t)
        elif kind == "at":
            got = S.at(x, arg)
        if got is not None:
            return got
        x = S.dense(x)
    if x.dtype == bool:
        if kind == "first_year":
            first = np.argmax(x, axis=1)
            return np.where(x[np.arange(x.shape[0]), first], first.astype(float), np.nan)[:, None]
        x = x.astype(float)
    if kind == "total":
        if x.ndim == 2 and x.dtype == np.float64:
            # the years of each row added in order; np.sum's reduction over short rows is several times slower
            return np.einsum("ij->i", x)[:, None]
        return np.sum(x, axis=1, keepdims=True)
    if kind == "npv":
        return np.sum(x * (1.0 + np.asarray(arg, dtype=float)) ** -env.t, axis=1, keepdims=True)
    if kind == "at":
        year = np.broadcast_to(np.asarray(arg, dtype=float).reshape(-1, 1), (x.shape[0], 1))
        ok = np.isfinite(year) & (year >= 0) & (year < x.shape[1])
        got = np.take_along_axis(x, np.where(ok, year, 0).astype(np.int64), axis=1)
        return np.where(ok, got, np.nan)
    filled = np.where(np.isnan(x), np.inf, x)
    if kind == "lowest":
        low = filled.min(axis=1, keepdims=True)
        return np.where(np.isinf(low) & np.all(np.isnan(x), axis=1, keepdims=True), np.nan, low)
    if kind == "highest":
        high = np.where(np.isnan(x), -np.inf, x).max(axis=1, keepdims=True)
        return np.where(np.all(np.isnan(x), axis=1, keepdims=True), np.nan, high)
    if kind == "year_of_lowest":
        none = np.all(np.isnan(x), axis=1, keepdims=True)
        return np.where(none, np.nan, np.argmin(filled, axis=1)[:, None].astype(float))
    if kind == "first_year":
        hit = (x > 0) | (x < 0)  # not zero and not "no value" (no temporary array of magnitudes)
        first = np.argmax(hit, axis=1)
        found = hit[np.arange(hit.shape[0]), first]
        return np.where(found, first.astype(float), np.nan)[:, None]
    raise ValueError(f"unknown reduction {kind!r}")


class _Compiler:
    """Turns expression trees into closures over a chunk's environment."""

    def __init__(self, model: Model):
        self.model = model

    def _product(self, n: E.Bin, fa: Fn, fb: Fn) -> Fn:
        """a * b; where a factor made of case inputs and constants alone (a tax rate, a share, a number
        of reserve years) is zero for the whole chunk, the other is not computed: the product is that
        zero (which also spares the lines only the other factor needs)."""
        mul = np.multiply
        if _governing(n.b):
            def product_b(env):
                b = fb(env)
                z = _zero(b)
                return z if z is not None else S.binop("*", fa(env), b, mul)
            return product_b
        if _governing(n.a):
            def product_a(env):
                a = fa(env)
                z = _zero(a)
                return z if z is not None else S.binop("*", a, fb(env), mul)
            return product_a
        return lambda env: S.binop("*", fa(env), fb(env), mul)

    def compile(self, n: E.Node) -> Fn:  # noqa: C901 - one case per node type
        if isinstance(n, E.Const):
            v = n.value
            return lambda env: v
        if isinstance(n, E.Constant):
            v = n.value
            return lambda env: v
        if isinstance(n, E.Input):
            path = n.path
            return lambda env: env.inputs[path]
        if isinstance(n, E.Ref):
            key = self.model.get(n).key
            return lambda env: env.values[key]
        if isinstance(n, E.Year):
            return lambda env: env.t
        if isinstance(n, E.Bin):
            fa, fb, op, name = self.compile(n.a), self.compile(n.b), _BIN[n.op], n.op
            if name == "*":
                return self._product(n, fa, fb)
            return lambda env: S.binop(name, fa(env), fb(env), op)
        if isinstance(n, E.Not):
            fa = self.compile(n.a)
            return lambda env: np.logical_not(D(fa(env)))
        if isinstance(n, E.Call):
            fs = [self.compile(a) for a in n.args]
            fn = n.fn
            if fn == "where":
                c, a, b = fs

                def where(env, c=c, a=a, b=b):
                    cond = np.asarray(D(c(env)))
                    if _uniform(cond):  # every row and year takes one branch: evaluate that one only
                        return _pick(a(env) if cond.flat[0] else b(env), cond.shape)
                    return np.where(cond, D(a(env)), D(b(env)))
                return where
            if fn in ("minimum", "maximum"):
                a, b = fs
                op = np.minimum if fn == "minimum" else np.maximum
                zero_b = isinstance(n.args[1], E.Const) and n.args[1].value == 0.0

                def extreme(env, a=a, b=b, op=op, fn=fn, zero_b=zero_b):
                    x = a(env)
                    if zero_b and isinstance(x, S.Sep):
                        got = S.extreme(x, fn)
                        if got is not None:
                            return got
                    return op(D(x), D(b(env)))
                return extreme
            if fn in ("exp", "sign", "abs", "log"):
                (a,) = fs
                op = {"exp": np.exp, "sign": np.sign, "abs": np.abs, "log": np.log}[fn]
                return lambda env: op(S.num(D(a(env))))
            if fn == "mod":
                a, b = fs
                return lambda env: np.mod(S.num(D(a(env))), S.num(D(b(env))))
            if fn == "given":
                (a,) = fs
                is_list = isinstance(n.args[0], E.Input) and n.args[0].path in LIST_KEYS

                def given(env, a=a, is_list=is_list):
                    x = np.asarray(D(a(env)), dtype=float)
                    if is_list:
                        return np.any(~np.isnan(x), axis=1, keepdims=True) if x.shape[1] else np.zeros((1, 1), bool)
                    return ~np.isnan(x)
                return given
            if fn == "or_default":
                a, d = fs
                return lambda env: (lambda x: np.where(np.isnan(x), D(d(env)), x))(np.asarray(D(a(env)), dtype=float))
            raise ValueError(f"unknown function {fn!r}")
        if isinstance(n, E.Lag):
            fx, ffill = self.compile(n.x), self.compile(n.fill)
            if isinstance(n.k, E.Node):
                fk = self.compile(n.k)

                def lag_var(env):
                    x = D(_full(fx(env), env))
                    k = np.asarray(fk(env), dtype=float)
                    if _uniform(k):
                        return _shift(x, int(k.flat[0]), D(_full(ffill(env), env)))
                    idx = (env.t - k).astype(np.int64)
                    got, ok = _gather(x, idx)
                    return np.where(ok, got, D(_full(ffill(env), env)))
                return lag_var
            k = int(n.k)

            def lag(env, fx=fx, ffill=ffill, k=k):
                x = _full(fx(env), env)
                if isinstance(x, S.Sep):
                    return S.shift(x, k, ffill(env))
                return _shift(D(x), k, D(_full(ffill(env), env)))
            return lag
        if isinstance(n, E.WindowSum):
            fx, fn_ = self.compile(n.x), self.compile(n.n)

            def window(env):
                x = _full(fx(env), env)
                k = np.asarray(fn_(env), dtype=float)
                if _uniform(k):  # the same window for every row: a shift
                    if isinstance(x, S.Sep):
                        return S.window(x, int(k.flat[0]))
                    c = _cumsum(x)
                    return c - _shift(c, int(k.flat[0]), np.zeros((1, 1)))
                c = _cumsum(D(x))
                idx = (env.t - k).astype(np.int64)
                before, ok = _gather(c, idx)
                return c - np.where(ok, before, 0.0)
            return window
        if isinstance(n, E.CumSum):
            fx = self.compile(n.x)
            def cum(env, fx=fx):
                x = _full(fx(env), env)
                return S.cumsum(x) if isinstance(x, S.Sep) else _cumsum(x)
            return cum
        if isinstance(n, E.ByYear):
            fx = self.compile(n.x)
            start, default, hold = n.start, n.default, n.hold_last
            return lambda env: _by_year(np.asarray(fx(env), dtype=float), env.t, start, default, hold)
        if isinstance(n, E.Reduce):
            fx = self.compile(n.x)
            farg = self.compile(n.arg) if n.arg is not None else (lambda env: None)
            kind = n.kind
            return lambda env: _reduce(kind, fx(env), farg(env), env)
        if isinstance(n, E.Lookup):
            fkeys = [self.compile(k) for k in n.keys]
            table, column = n.table, n.column
            return lambda env: _lookup(table, column, _label_join([f(env) for f in fkeys]))
        if isinstance(n, E.Method):
            m = METHODS[n.name]
            fargs = [self.compile(a) for a in n.args]
            yearly = [_is_yearly(self.model, a) for a in n.args]

            def call(env, m=m, fargs=fargs, yearly=yearly):
                # a line kept separable is made dense year-major ((years, rows), handed over as its
                # (rows, years) view): a method working year by year over the rows (IRR) reads it as is
                args = [S.num(S.dense_by_year(_full(f(env), env)) if y else D(f(env))) for f, y in zip(fargs, yearly)]
                if any(y for y in yearly):
                    rows = max(np.asarray(a).shape[0] for a in args if np.ndim(a) == 2)
                    args = [np.broadcast_to(a, (rows, env.years)) if y else a for a, y in zip(args, yearly)]
                return m.numpy(*args)
            return call
        raise TypeError(f"cannot evaluate {type(n).__name__}")


def _zero(x: Any) -> Any:
    """x as a float array where it is a number or row or year value that is zero throughout (not a
    dense (rows, years) array: that check would cost a pass), else None."""
    if isinstance(x, np.ndarray):
        if x.ndim <= 2 and (x.ndim < 2 or x.shape[0] == 1 or x.shape[1] == 1) and x.dtype.kind in "fiub" \
                and not x.any():
            return x if x.dtype.kind == "f" else x.astype(float)
        return None
    if isinstance(x, (float, int)) and x == 0:
        return float(x)
    return None


def _all_zero(x: Array) -> bool:
    """Whether a value (numbers, any shape) is zero throughout; not a number is not zero."""
    return x.dtype.kind in "fiub" and not x.any()


def _governing(n: E.Node) -> bool:
    """Whether a factor is made of case inputs and constants alone (no line, no year)."""
    return all(isinstance(x, (E.Input, E.Const, E.Constant, E.Bin, E.Not)) or (isinstance(x, E.Call) and x.fn in (
        "where", "minimum", "maximum", "given", "or_default", "abs", "sign")) for x in E.walk(n))


def _is_yearly(model: Model, n: E.Node) -> bool:
    """Whether an argument is a line (one value per year) rather than a row-level value."""
    return isinstance(n, E.Ref) and model.get(n).kind == "line"


# ----------------------------------------------------------------------------- recursion
class _StepCompiler(_Compiler):
    """Closures (env, year) -> the value of one year, for lines that refer to themselves through a lag.

    The years are stepped in year-major layout: a year of a value is a contiguous (1, rows) row of its
    transposed (years, rows) array (members in ``env.stepped``, anything else transposed once and
    cached), so that each step reads and writes whole cache lines. Row-level values are (1, rows),
    year patterns give (1, 1), so the shapes broadcast as in the whole-array evaluation.
    """

    def __init__(self, model: Model, members: set[tuple[str, str]]):
        super().__init__(model)
        self.members = members
        self.whole = _Compiler(model)

    def _inside(self, n: E.Node) -> bool:
        return any(isinstance(x, E.Ref) and self.model.get(x).key in self.members for x in E.walk(n))

    def _whole(self, n: E.Node) -> Callable[[_Env], Any]:
        """A part of a formula outside the recursion, over all years, computed once per chunk."""
        f = self.whole.compile(n)
        node_id = id(n)

        def whole(env):
            v = env.cache.get(node_id)
            if v is None:
                v = env.cache[node_id] = S.num(np.asarray(D(f(env))))
            return v
        return whole

    def _branch(self, n: E.Call) -> Callable[[_Env], bool | None]:
        """For a where() whose condition lies outside the recursion: True or False when every row and
        year of the chunk takes the same branch (only that one is then computed, year by year), else None."""
        if self._inside(n.args[0]):
            return lambda env: None
        cond = self._whole(n.args[0])
        key = (id(n), "branch")

        def branch(env):
            got = env.cache.get(key)
            if got is None:
                c = cond(env)
                got = env.cache[key] = (bool(c.flat[0]) if _uniform(c) else None,)
            return got[0]
        return branch

    def at_zero(self, n: E.Node) -> Callable[[_Env], Any]:  # noqa: C901
        """The formula over all years with the recursion's own lines read as zero: where every member
        is zero so, stepping the years gives zero throughout (by induction over the years)."""
        if not self._inside(n):
            return self._whole(n)
        if isinstance(n, E.Ref):
            return lambda env: 0.0
        if isinstance(n, E.Bin):
            fa, fb, op = self.at_zero(n.a), self.at_zero(n.b), _BIN[n.op]
            return lambda env: op(fa(env), fb(env))
        if isinstance(n, E.Not):
            fa = self.at_zero(n.a)
            return lambda env: np.logical_not(fa(env))
        if isinstance(n, E.Call) and n.fn in ("where", "minimum", "maximum", "sign", "exp", "abs", "or_default"):
            fs = [self.at_zero(a) for a in n.args]
            if n.fn == "where":
                branch = self._branch(n)

                def where_at_zero(env):
                    took = branch(env)
                    return (fs[1] if took else fs[2])(env) if took is not None else \
                        np.where(fs[0](env), fs[1](env), fs[2](env))
                return where_at_zero
            if n.fn == "or_default":
                return lambda env: (lambda x: np.where(np.isnan(x), fs[1](env), x))(
                    np.asarray(fs[0](env), dtype=float))
            op = {"minimum": np.minimum, "maximum": np.maximum, "sign": np.sign, "exp": np.exp, "abs": np.abs}[n.fn]
            return lambda env: op(*(f(env) for f in fs))
        if isinstance(n, E.Lag) and isinstance(n.k, int) and n.k >= 1:
            fx, ffill, k = self.at_zero(n.x), self.at_zero(n.fill), n.k
            return lambda env: _shift(D(_full(fx(env), env)), k, D(_full(ffill(env), env)))
        raise ValueError(f"{type(n).__name__} cannot take part in a formula that refers to itself through a lag")

    def step(self, n: E.Node) -> Callable[[_Env, int], Any]:  # noqa: C901
        if not self._inside(n):
            whole = self._whole(n)
            key = (id(n), "by year")

            def outside(env, s, whole=whole, key=key):
                v = env.cache.get(key)
                if v is None:
                    v = whole(env)
                    if v.ndim == 2:  # (rows or 1, years or 1) -> (years or 1, rows or 1)
                        v = np.ascontiguousarray(v.T)
                    env.cache[key] = v
                return v[s:s + 1] if v.ndim == 2 and v.shape[0] > 1 else v
            return outside
        if isinstance(n, E.Ref):
            key = self.model.get(n).key
            return lambda env, s: env.stepped[key][s:s + 1]
        if isinstance(n, E.Bin):
            fa, fb, op = self.step(n.a), self.step(n.b), _BIN[n.op]
            return lambda env, s: op(fa(env, s), fb(env, s))
        if isinstance(n, E.Not):
            fa = self.step(n.a)
            return lambda env, s: np.logical_not(fa(env, s))
        if isinstance(n, E.Call) and n.fn in ("where", "minimum", "maximum", "sign", "exp", "abs", "or_default"):
            fs = [self.step(a) for a in n.args]
            if n.fn == "where":
                branch = self._branch(n)

                def where_by_year(env, s):
                    took = branch(env)
                    return (fs[1] if took else fs[2])(env, s) if took is not None else \
                        np.where(fs[0](env, s), fs[1](env, s), fs[2](env, s))
                return where_by_year
            if n.fn == "or_default":
                return lambda env, s: (lambda x: np.where(np.isnan(x), fs[1](env, s), x))(
                    np.asarray(fs[0](env, s), dtype=float))
            op = {"minimum": np.minimum, "maximum": np.maximum, "sign": np.sign, "exp": np.exp, "abs": np.abs}[n.fn]
            return lambda env, s: op(*(f(env, s) for f in fs))
        if isinstance(n, E.Lag) and isinstance(n.k, int) and n.k >= 1:
            fx, ffill, k = self.step(n.x), self.step(n.fill), n.k
            return lambda env, s: fx(env, s - k) if s - k >= 0 else ffill(env, s)
        raise ValueError(f"{type(n).__name__} cannot take part in a formula that refers to itself through a lag")


@dataclass
class _Step:
    defs: list[Def]
    fns: list[Callable]
    stepped: bool
    zero: list[Callable] = ()  # a recursion's formulas over all years with its own lines read as zero


class Plan:
    """What to evaluate, in which order, for a set of wanted declarations of a model."""

    def __init__(self, model: Model, wanted: Iterable[tuple[str, str]]):
        self.model = expanded(model)
        wanted = list(wanted)
        self.wanted = wanted
        defs = self.model.closure(self.model.get(k) for k in wanted)
        self.inputs = sorted({p for d in defs for p in E.inputs(d.expr)})
        compiler = _Compiler(self.model)
        self.steps: list[_Step] = []
        for comp in components(self.model, defs):
            keys = {d.key for d in comp}
            recursive = len(comp) > 1 or any(k in keys for k, _ in edges(self.model, comp[0]))
            if not recursive:
                self.steps.append(_Step(comp, [compiler.compile(comp[0].expr)], False))
                continue
            bad = [d.name for d in comp if d.kind != "line"]
            if bad:
                raise ValueError(f"only lines may refer to themselves through a lag: {', '.join(bad)}")
            ordered = same_year_order(self.model, comp)
            sc = _StepCompiler(self.model, keys)
            self.steps.append(_Step(ordered, [sc.step(d.expr) for d in ordered], True,
                                    [sc.at_zero(d.expr) for d in ordered]))
        self.step_of = {d.key: step for step in self.steps for d in step.defs}

    def run(self, inputs: dict[str, Any], years: int, rows: int) -> dict[tuple[str, str], Array]:
        """The wanted declarations (and those they needed) of one chunk, each computed when first read."""
        env = _Env(inputs, years, rows)
        env.values.fill = lambda key: self._fill(env, key)
        try:
            with np.errstate(all="ignore"):
                for key in self.wanted:
                    env.values[key]
        finally:
            env.values.fill = None  # no reference cycle: the chunk's arrays go as soon as it is done
        return env.values

    def _fill(self, env: _Env, key: tuple[str, str]) -> None:
        step = self.step_of[key]
        if not step.stepped:
            d = step.defs[0]
            env.values[d.key] = _shape(d, step.fns[0](env), env)
            return
        if len(step.defs) == 1:
            scaled = scaled_recursion(self.model, env, step.defs[0], step.fns[0], _Env)
            if scaled is not None:
                env.values[step.defs[0].key] = scaled
                return
        # a recursion whose lines are all zero when their own earlier values are zero (no loan, no
        # working-capital line) is zero in every year: checked over all years at once, member by member
        if all(_all_zero(np.asarray(D(f(env)))) for f in step.zero):
            zero = np.zeros((1, env.years))
            for d in step.defs:
                env.values[d.key] = _full(zero, env)
            return
        years, rows = env.years, env.rows
        for d in step.defs:
            env.stepped[d.key] = np.zeros((years, rows))
        for s in range(years):
            for d, f in zip(step.defs, step.fns):
                env.stepped[d.key][s:s + 1] = f(env, s)
        for d in step.defs:
            env.values[d.key] = np.ascontiguousarray(env.stepped.pop(d.key).T)


def _shape(d: Def, v: Any, env: _Env) -> Array:
    if isinstance(v, S.Sep):
        return v
    a = np.asarray(v)  # a flag stays bool: 1 byte a value, and S.num makes it a number where one is needed
    if a.ndim < 2:
        a = a.reshape(1, 1) if a.ndim == 0 else a.reshape(-1, 1)
    if d.kind == "line":
        return _full(a, env)
    if a.shape[1] != 1:
        raise ValueError(f"{d.kind} {d.name} must have one value per row, got {a.shape[1]} per row")
    return a


# ----------------------------------------------------------------------------- the public entry
_PLANS: dict[tuple, Plan] = {}


def plan(model: Model, figures: Sequence[str] = (), lines: Sequence[str] = ()) -> Plan:
    key = (model, tuple(figures), tuple(lines))
    p = _PLANS.get(key)
    if p is None:
        wanted = [("figure", f) for f in figures] + [("line", n) for n in lines]
        p = _PLANS[key] = Plan(model, wanted)
    return p


@dataclass
class Evaluated:
    """What :func:`evaluate` returns: figures ``(rows,)`` and lines ``(rows, years)`` by name."""

    figures: dict[str, Array]
    lines: dict[str, Array]

    @property
    def rows(self) -> int:
        for v in (*self.figures.values(), *self.lines.values()):
            return v.shape[0]
        return 0


def evaluate(values: Mapping[str, Any], figures: Sequence[str] = (), lines: Sequence[str] = (), *,
             model: Model = MODEL, rows: int | None = None, years: int | None = None,
             chunk_rows: int | None = None, progress: Callable[[int], None] | None = None) -> Evaluated:
    """Figures ``(rows,)`` and lines ``(rows, years)`` of the model for a batch of case values.

    Parameters
    ----------
    values : mapping
        Canonical case values by key path; a value may be an array with one
        entry per row (labels as arrays of str; a list input as a 2-D array,
        NaN-padded, one row per row).
    figures, lines : sequences of names
        What to return; a line also answers to its parameter name.
    rows : int, optional
        Rows of the batch; by default the length of the per-row arrays (1 when none).
    years : int, optional
        Year columns; by default the longest stand life + 1.
    chunk_rows : int, optional
        Rows evaluated together; by default as many as keep a yearly array
        within :data:`CACHE_ELEMENTS`.
    progress : callable, optional
        Called with the number of rows done after each chunk.
    """
    p = plan(model, tuple(figures), tuple(lines))
    n = batch_rows(values) if rows is None else int(rows)
    life = np.asarray(values["finance.stand_life_years"])
    if years is None:
        years = int(np.max(life)) + 1
    cols = {path: _column(path, values.get(path), n) for path in p.inputs}
    per_row = {path for path, c in cols.items() if c.shape[0] > 1}
    for path in per_row:
        if cols[path].shape[0] != n:
            raise ValueError(f"{path}: {cols[path].shape[0]} rows in a batch of {n}")
    if chunk_rows is None:
        chunk_rows = max(1, CACHE_ELEMENTS // max(years, 1))
    order, chunks = chunked.order(cols, per_row, n, chunk_rows)
    out = Evaluated({}, {})
    for start, stop in chunks:
        at = slice(start, stop) if order is None else order[start:stop]
        sub = {path: (chunked.same(c[at]) if path in per_row else c) for path, c in cols.items()}
        got = p.run(sub, years, stop - start)
        for space, names, shape in (("figure", figures, (stop - start, 1)), ("line", lines, (stop - start, years))):
            target = out.figures if space == "figure" else out.lines
            for name in names:
                v = np.broadcast_to(D(got[(space, name)]), shape)
                if name not in target:  # allocated with the first chunk's kind of value (numbers or labels)
                    full = (n,) if space == "figure" else (n, years)
                    target[name] = np.empty(full, dtype=float if v.dtype.kind in "fiub" else object)
                target[name][at] = v[:, 0] if space == "figure" else v
        if progress is not None:
            progress(stop - start)
    return out


__all__ = ["evaluate", "Evaluated", "plan", "Plan", "batch_rows", "CACHE_ELEMENTS", "LIST_KEYS"]
