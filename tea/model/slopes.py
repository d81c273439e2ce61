"""Slopes: how much a declaration moves per unit of a case input, derived from the formulas.

``slope(F.npv, I.revenue.price_per_t_dm)`` in a declaration becomes a
reference to a generated declaration whose formula is the derivative of
``npv``'s formula, built by the usual rules (sum, product, quotient, chain
rule through lines, lags and totals; a condition or a comparison has slope 0
away from its switch points). The generated declarations are working lines
and hidden figures: the evaluator computes them like any other and the
workbook writes them as formulas, so a break-even that divides by a slope
recomputes live in the sheet. Where a quantity is linear in the input (NPV
in the price or the mature yield), value - NPV / slope is its exact root.
"""

from __future__ import annotations

from functools import lru_cache

from tea.model import expr as E
from tea.model.declare import Def, Model
from tea.model.methods import METHODS

ZERO = E.Const(0.0)
ONE = E.Const(1.0)


def _is(node: E.Node, value: float) -> bool:
    return isinstance(node, E.Const) and isinstance(node.value, float) and node.value == value


def _add(a: E.Node, b: E.Node) -> E.Node:
    if _is(a, 0.0):
        return b
    if _is(b, 0.0):
        return a
    return E.Bin("+", a, b)


def _sub(a: E.Node, b: E.Node) -> E.Node:
    if _is(b, 0.0):
        return a
    return E.Bin("-", a, b)


def _mul(a: E.Node, b: E.Node) -> E.Node:
    if _is(a, 0.0) or _is(b, 0.0):
        return ZERO
    if _is(a, 1.0):
        return b
    if _is(b, 1.0):
        return a
    return E.Bin("*", a, b)


def _div(a: E.Node, b: E.Node) -> E.Node:
    if _is(a, 0.0):
        return ZERO
    return E.Bin("/", a, b)


def slope_name(d: Def, wrt: str) -> str:
    return f"slope_of_{d.name}_per_{wrt.replace('.', '_')}"


class _Deriver:
    def __init__(self, model: Model, wrt: str):
        self.model = model
        self.wrt = wrt
        self.made: dict[tuple[str, str], E.Node] = {}  # key of a def -> Ref to its slope, or ZERO
        self.new: list[Def] = []
        self.named: set[str] = set()  # the names the formulas in self.new refer to

    def ref(self, ref: E.Ref) -> E.Node:
        d = self.model.get(ref)
        if d.key in self.made:
            return self.made[d.key]
        name = slope_name(d, self.wrt)
        out = E.Ref(name, ref.space)
        self.made[d.key] = out  # before recursing: a line that lags itself refers to its own slope
        dexpr = self.d(d.expr)
        if _is(dexpr, 0.0) and not self._refers_to(dexpr, name):
            self.made[d.key] = ZERO
            # a recursive reference made earlier stays valid: declare the slope as 0
            if name in self.named:
                self._add(self._def(d, name, ZERO))
            return self.made[d.key]
        self._add(self._def(d, name, dexpr))
        return out

    def _add(self, d: Def) -> None:
        self.new.append(d)
        self.named.update(n.name for n in E.walk(d.expr) if isinstance(n, E.Ref))

    def _def(self, d: Def, name: str, dexpr: E.Node) -> Def:
        unit = f"({d.unit}) per unit of {self.wrt}"
        return Def(name, d.kind, unit, "slopes", f"Slope of {d.label.lower()} per {self.wrt}",
                   f"Change of {d.name} per unit of {self.wrt} (derivative of its formula).", dexpr,
                   show=False)

    @staticmethod
    def _refers_to(node: E.Node, name: str) -> bool:
        return any(isinstance(n, E.Ref) and n.name == name for n in E.walk(node))

    def d(self, n: E.Node) -> E.Node:  # noqa: C901 - one rule per node type
        if isinstance(n, (E.Const, E.Constant, E.Year, E.Lookup, E.ByYear)):
            if isinstance(n, E.ByYear) and n.x.path == self.wrt:
                raise NotImplementedError(f"slope per a list input ({self.wrt})")
            return ZERO
        if isinstance(n, E.Input):
            return ONE if n.path == self.wrt else ZERO
        if isinstance(n, E.Ref):
            return self.ref(n)
        if isinstance(n, E.Not):
            return ZERO
        if isinstance(n, E.Bin):
            if n.op in ("<", "<=", ">", ">=", "==", "!=", "&", "|"):
                return ZERO
            da, db = self.d(n.a), self.d(n.b)
            if n.op == "+":
                return _add(da, db)
            if n.op == "-":
                return _sub(da, db) if not _is(da, 0.0) or _is(db, 0.0) else E.Bin("-", ZERO, db)
            if n.op == "*":
                return _add(_mul(da, n.b), _mul(n.a, db))
            if n.op == "/":
                if _is(db, 0.0):
                    return _div(da, n.b)
                return _div(_sub(_mul(da, n.b), _mul(n.a, db)), _mul(n.b, n.b))
            if n.op == "**":
                if _is(db, 0.0):
                    return _mul(_mul(n.b, E.Bin("**", n.a, E.Bin("-", n.b, ONE))), da)
                raise NotImplementedError(f"slope of a power with a varying exponent, per {self.wrt}")
        if isinstance(n, E.Call):
            args = n.args
            if n.fn == "where":
                da, db = self.d(args[1]), self.d(args[2])
                if _is(da, 0.0) and _is(db, 0.0):
                    return ZERO
                return E.Call("where", (args[0], da, db))
            if n.fn in ("minimum", "maximum"):
                da, db = self.d(args[0]), self.d(args[1])
                if _is(da, 0.0) and _is(db, 0.0):
                    return ZERO
                pick = (args[0] <= args[1]) if n.fn == "minimum" else (args[0] >= args[1])
                return E.Call("where", (pick, da, db))
            if n.fn == "exp":
                return _mul(n, self.d(args[0]))
            if n.fn == "or_default":
                dx, dd = self.d(args[0]), self.d(args[1])
                if _is(dx, 0.0) and _is(dd, 0.0):
                    return ZERO
                return E.Call("where", (E.Call("given", (args[0],)), dx, dd))
            if n.fn in ("given", "sign", "mod"):
                return ZERO
            if n.fn == "abs":
                return _mul(E.Call("sign", (args[0],)), self.d(args[0]))
            raise NotImplementedError(f"slope of {n.fn}()")
        if isinstance(n, E.Lag):
            dx, dfill = self.d(n.x), self.d(n.fill)
            if _is(dx, 0.0) and _is(dfill, 0.0):
                return ZERO
            return E.Lag(dx, n.k, dfill)
        if isinstance(n, E.WindowSum):
            dx = self.d(n.x)
            return ZERO if _is(dx, 0.0) else E.WindowSum(dx, n.n)
        if isinstance(n, E.CumSum):
            dx = self.d(n.x)
            return ZERO if _is(dx, 0.0) else E.CumSum(dx)
        if isinstance(n, E.Reduce):
            if n.arg is not None and not _is(self.d(n.arg), 0.0):
                raise NotImplementedError(f"slope of {n.kind}() whose year or rate moves with {self.wrt}")
            if n.kind in ("total", "at", "npv"):
                dx = self.d(n.x)
                return ZERO if _is(dx, 0.0) else E.Reduce(n.kind, dx, n.arg)
            if _is(self.d(n.x), 0.0):
                return ZERO
            raise NotImplementedError(f"slope of {n.kind}()")
        if isinstance(n, E.Method):
            m = METHODS[n.name]
            ds = [self.d(a) for a in n.args]
            moving = [i for i, x in enumerate(ds) if not _is(x, 0.0)]
            if not moving:
                return ZERO
            if len(moving) == 1 and moving[0] in m.linear:
                i = moving[0]
                return E.Method(n.name, tuple(ds[i] if j == i else a for j, a in enumerate(n.args)))
            raise NotImplementedError(f"slope of method {n.name} per {self.wrt}")
        if isinstance(n, E.Slope):
            raise NotImplementedError("slope of a slope")
        raise TypeError(type(n).__name__)


def expand(model: Model) -> Model:
    """The model with every :class:`~tea.model.expr.Slope` replaced by a reference to a generated declaration."""
    derivers: dict[str, _Deriver] = {}
    out: list[Def] = []

    def swap(node: E.Node) -> E.Node | None:
        if isinstance(node, E.Slope):
            der = derivers.setdefault(node.wrt.path, _Deriver(model, node.wrt.path))
            return der.ref(node.of)
        return None

    for d in model:
        new_expr = E.transform(d.expr, swap)
        out.append(d if new_expr is d.expr else Def(d.name, d.kind, d.unit, d.group, d.label, d.doc, new_expr,
                                                     d.source, d.scales, d.show))
    for der in derivers.values():
        out.extend(der.new)
    return Model(out)


@lru_cache(maxsize=8)
def expanded(model: Model) -> Model:
    return expand(model)
