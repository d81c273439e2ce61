"""The expression vocabulary in which the model is written once.

Every ledger line, model parameter and decision figure of `tea` is one
declaration whose formula is an expression tree built from the nodes below
(see :mod:`tea.model.definition`). Nothing here computes: the numpy
evaluator (:mod:`tea.model.evaluate`), the spreadsheet formulas
(:mod:`tea.model.formulas`), the printed formulas and the dependency tree
(:mod:`tea.model.explain`) all read the same trees.

The vocabulary
--------------
* references: case inputs ``I.yield_.mature_t_dm_per_ha`` (a dotted key path;
  a trailing underscore avoids a Python keyword), other declarations
  ``L.sold_t_dm``, named published constants (:func:`const`), the year
  ``t`` (0 = planting);
* arithmetic ``+ - * / **``, comparisons ``< <= > >= == !=`` (1 or 0),
  ``&`` and ``|`` on conditions, :func:`where`, :func:`minimum`,
  :func:`maximum`, :func:`given` / :func:`or_default` for optional inputs;
* time: :func:`lag` (the value k years earlier), :func:`window_sum` (the sum
  over the last n years, this one included), :func:`cumsum` (running total
  from year 0), :func:`by_year` (a list input read by year);
* over the years of a row: :func:`total`, :func:`at_year`, :func:`npv`,
  :func:`lowest`, :func:`year_of_lowest`, :func:`first_year`;
* :func:`lookup` of a published table by label, and :func:`method` for a
  published method that is no formula of lines (IRR, MIRR).

A line may refer to itself or to lines that refer back to it only through a
:func:`lag` of one year or more (a loan balance, a loss carried forward); the
evaluator then steps through the years. Shapes follow numpy broadcasting:
a row-level value is ``(rows, 1)``, a yearly one ``(rows, years)``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Callable, Iterator

__all__ = [
    "Node", "Const", "Constant", "Input", "Ref", "Year", "Bin", "Not", "Call", "Lag", "WindowSum", "CumSum",
    "ByYear", "Reduce", "Lookup", "Method", "Slope", "I", "L", "F", "t", "NOTHING", "const", "mod", "sign",
    "exp", "slope", "abs_", "where", "minimum", "maximum", "given",
    "or_default", "lag", "lead", "window_sum", "cumsum", "by_year", "total", "at_year", "npv", "lowest",
    "highest", "year_of_lowest", "first_year", "lookup", "method", "wrap", "children", "walk",
]


class Node:
    """A node of an expression tree. Operators build new nodes; nothing is computed."""

    __slots__ = ()
    __hash__ = object.__hash__  # nodes are compared by identity in caches

    def __add__(self, o): return Bin("+", self, wrap(o))
    def __radd__(self, o): return Bin("+", wrap(o), self)
    def __sub__(self, o): return Bin("-", self, wrap(o))
    def __rsub__(self, o): return Bin("-", wrap(o), self)
    def __mul__(self, o): return Bin("*", self, wrap(o))
    def __rmul__(self, o): return Bin("*", wrap(o), self)
    def __truediv__(self, o): return Bin("/", self, wrap(o))
    def __rtruediv__(self, o): return Bin("/", wrap(o), self)
    def __pow__(self, o): return Bin("**", self, wrap(o))
    def __rpow__(self, o): return Bin("**", wrap(o), self)
    def __neg__(self): return Bin("-", Const(0.0), self)
    def __lt__(self, o): return Bin("<", self, wrap(o))
    def __le__(self, o): return Bin("<=", self, wrap(o))
    def __gt__(self, o): return Bin(">", self, wrap(o))
    def __ge__(self, o): return Bin(">=", self, wrap(o))
    def __eq__(self, o): return Bin("==", self, wrap(o))  # type: ignore[override]
    def __ne__(self, o): return Bin("!=", self, wrap(o))  # type: ignore[override]
    def __and__(self, o): return Bin("&", self, wrap(o))
    def __rand__(self, o): return Bin("&", wrap(o), self)
    def __or__(self, o): return Bin("|", self, wrap(o))
    def __ror__(self, o): return Bin("|", wrap(o), self)
    def __invert__(self): return Not(self)

    def __bool__(self):
        raise TypeError("an expression has no truth value; use where(...) or & / |")


@dataclass(frozen=True, eq=False)
class Const(Node):
    """A plain number or label written in a formula (only 0, 1, small counts and labels)."""

    value: Any


@dataclass(frozen=True, eq=False)
class Constant(Node):
    """A named published constant: its value, unit and source (a defined name in the workbook)."""

    name: str
    value: float
    unit: str
    doc: str
    source: str


@dataclass(frozen=True, eq=False)
class Input(Node):
    """A case input by dotted key path (``yield.mature_t_dm_per_ha``)."""

    path: str


@dataclass(frozen=True, eq=False)
class Ref(Node):
    """Another declaration by name: a line or parameter (``space="line"``) or a figure (``"figure"``)."""

    name: str
    space: str = "line"


@dataclass(frozen=True, eq=False)
class Year(Node):
    """The year of the row: 0 at planting, 1..stand life after."""


@dataclass(frozen=True, eq=False)
class Bin(Node):
    op: str
    a: Node
    b: Node


@dataclass(frozen=True, eq=False)
class Not(Node):
    a: Node


@dataclass(frozen=True, eq=False)
class Call(Node):
    """A function of the vocabulary: ``where``, ``minimum``, ``maximum``, ``given``, ``exp``."""

    fn: str
    args: tuple[Node, ...]


@dataclass(frozen=True, eq=False)
class Lag(Node):
    """The value ``k`` years earlier; before year 0, ``fill`` (a node, read in the same year).

    ``k`` is a whole number or a row-level node.
    """

    x: Node
    k: Any
    fill: Node


@dataclass(frozen=True, eq=False)
class WindowSum(Node):
    """Sum of a line over the last ``n`` years, this one included."""

    x: Ref
    n: Node


@dataclass(frozen=True, eq=False)
class CumSum(Node):
    """Running total of a line from year 0."""

    x: Ref


@dataclass(frozen=True, eq=False)
class ByYear(Node):
    """A list input read by year: item ``t - start`` (``default`` before the list and after it ends)."""

    x: Input
    start: int
    default: float
    hold_last: bool = False  # after the list ends, its last item (else ``default``)


@dataclass(frozen=True, eq=False)
class Reduce(Node):
    """A value over the years of a row.

    ``kind``: ``total`` (sum), ``at`` (the value in year ``arg``), ``npv``
    (discounted at rate ``arg``, year 0 undiscounted), ``lowest``,
    ``year_of_lowest`` (first year of the lowest value), ``first_year`` (first
    year a condition holds; none: not a number).
    """

    kind: str
    x: Node
    arg: Node | None = None


@dataclass(frozen=True, eq=False)
class Lookup(Node):
    """A published table read by label: column ``column`` of the row whose key is ``keys`` joined by a space."""

    table: str
    column: str
    keys: tuple[Node, ...]


@dataclass(frozen=True, eq=False)
class Slope(Node):
    """The change of a declaration per unit of a case input (its derivative), found from the formulas."""

    of: Ref
    wrt: Input


@dataclass(frozen=True, eq=False)
class Method(Node):
    """A published method that is no formula of lines (e.g. IRR): see :data:`tea.model.methods.METHODS`."""

    name: str
    args: tuple[Node, ...]
    sheet: tuple[tuple[str, Node], ...] = ()  # extra values only the spreadsheet rendering uses


# ----------------------------------------------------------------------------- building
def wrap(x: Any) -> Node:
    """A node for a plain Python value."""
    if isinstance(x, Node):
        return x
    if isinstance(x, bool):
        return Const(1.0 if x else 0.0)
    if isinstance(x, (int, float)):
        return Const(float(x))
    if isinstance(x, str):
        return Const(x)
    raise TypeError(f"cannot use {x!r} in an expression")


class _Inputs:
    """``I.section.key`` -> :class:`Input` (``I.yield_`` for the section ``yield``)."""

    def __init__(self, section: str | None = None):
        self._section = section

    def __getattr__(self, name: str):
        if name.startswith("__"):
            raise AttributeError(name)
        name = name.rstrip("_")
        if self._section is None:
            return _Inputs(name)
        return Input(f"{self._section}.{name}")


class _Refs:
    """``L.name`` -> a line or parameter, ``F.name`` -> a figure (:class:`Ref`)."""

    def __init__(self, space: str):
        self._space = space

    def __getattr__(self, name: str) -> Ref:
        if name.startswith("__"):
            raise AttributeError(name)
        return Ref(name, self._space)


I = _Inputs()
L = _Refs("line")
F = _Refs("figure")
t = Year()
#: "no value" (a blank cell in the workbook; not a number in the engine)
NOTHING = Const(float("nan"))


def const(name: str, value: float, unit: str, doc: str, source: str) -> Constant:
    """A named published constant (shown as a defined name in the workbook, with its source)."""
    return Constant(name, float(value), unit, doc, source)


def where(cond, a, b) -> Node:
    """``a`` where ``cond`` holds, else ``b``."""
    return Call("where", (wrap(cond), wrap(a), wrap(b)))


def minimum(a, b) -> Node:
    return Call("minimum", (wrap(a), wrap(b)))


def maximum(a, b) -> Node:
    return Call("maximum", (wrap(a), wrap(b)))


def exp(a) -> Node:
    return Call("exp", (wrap(a),))


def abs_(a) -> Node:
    """|a| (named with an underscore: abs is Python's)."""
    return Call("abs", (wrap(a),))


def mod(a, b) -> Node:
    """Remainder of a / b (b > 0), as a spreadsheet's MOD."""
    return Call("mod", (wrap(a), wrap(b)))


def sign(a) -> Node:
    return Call("sign", (wrap(a),))


def given(x: Input) -> Node:
    """1 where an optional input is given, 0 where it is left out."""
    return Call("given", (wrap(x),))


def or_default(x: Input, default) -> Node:
    """An optional input, or ``default`` where it is left out."""
    return Call("or_default", (wrap(x), wrap(default)))


def lag(x, k=1, fill=0.0) -> Node:
    """The value ``k`` years earlier; before year 0, ``fill`` (a number, or a node read in the same year)."""
    return Lag(wrap(x), k if isinstance(k, int) else wrap(k), wrap(fill))


def lead(x, k=1, fill=0.0) -> Node:
    """The value ``k`` years later; after the last year, ``fill``."""
    if not isinstance(k, int) or k < 1:
        raise TypeError("lead() takes a whole number of years >= 1")
    return Lag(wrap(x), -k, wrap(fill))


def window_sum(x: Ref, n) -> Node:
    if not isinstance(x, Ref):
        raise TypeError("window_sum takes a line (L.name)")
    return WindowSum(x, wrap(n))


def cumsum(x: Ref) -> Node:
    if not isinstance(x, Ref):
        raise TypeError("cumsum takes a line (L.name)")
    return CumSum(x)


def by_year(x: Input, start: int = 1, default: float = 1.0, hold_last: bool = False) -> Node:
    """Item ``t - start`` of a list input; ``default`` outside the list (or its last item after it, if ``hold_last``)."""
    if not isinstance(x, Input):
        raise TypeError("by_year takes a list input (I.section.key)")
    return ByYear(x, int(start), float(default), bool(hold_last))


def total(x) -> Node:
    """Sum over the years of the row."""
    return Reduce("total", wrap(x))


def at_year(x, year) -> Node:
    """The value in a given year (a whole number or a row-level expression such as the stand life)."""
    return Reduce("at", wrap(x), wrap(year))


def npv(x, rate) -> Node:
    """Sum of x (1 + rate)^-t over the years (year 0 undiscounted)."""
    return Reduce("npv", wrap(x), wrap(rate))


def lowest(x) -> Node:
    """The lowest value over the years (values that are "no value" left out)."""
    return Reduce("lowest", wrap(x))


def highest(x) -> Node:
    """The highest value over the years (values that are "no value" left out)."""
    return Reduce("highest", wrap(x))


def year_of_lowest(x) -> Node:
    return Reduce("year_of_lowest", wrap(x))


def first_year(cond: Ref) -> Node:
    """First year a condition line holds; not a number where it never does."""
    if not isinstance(cond, Ref):
        raise TypeError("first_year takes a line (L.name)")
    return Reduce("first_year", cond)


def lookup(table: str, column: str, *keys) -> Node:
    return Lookup(table, column, tuple(wrap(k) for k in keys))


def method(name: str, *args, **sheet) -> Node:
    """A published method by name (see :data:`tea.model.methods.METHODS`); ``sheet`` values serve its
    spreadsheet rendering only (e.g. a sign-change count)."""
    return Method(name, tuple(wrap(a) for a in args), tuple((k, wrap(v)) for k, v in sheet.items()))


def slope(of: Ref, wrt: Input) -> Node:
    """d(of)/d(wrt): how much a declaration moves per unit of an input, from the formulas (exact where linear)."""
    if not isinstance(of, Ref) or not isinstance(wrt, Input):
        raise TypeError("slope takes a declaration (L.name or F.name) and an input (I.section.key)")
    return Slope(of, wrt)


# ----------------------------------------------------------------------------- walking
def children(node: Node) -> tuple[Node, ...]:
    """The direct sub-expressions of a node."""
    if isinstance(node, Bin):
        return (node.a, node.b)
    if isinstance(node, Not):
        return (node.a,)
    if isinstance(node, Call):
        return node.args
    if isinstance(node, Method):
        return node.args + tuple(v for _, v in node.sheet)
    if isinstance(node, Slope):
        return (node.of, node.wrt)
    if isinstance(node, Lookup):
        return node.keys
    if isinstance(node, Lag):
        return (node.x, node.fill) + ((node.k,) if isinstance(node.k, Node) else ())
    if isinstance(node, WindowSum):
        return (node.x, node.n)
    if isinstance(node, (CumSum, ByYear)):
        return (node.x,)
    if isinstance(node, Reduce):
        return (node.x,) + ((node.arg,) if node.arg is not None else ())
    return ()


def walk(node: Node) -> Iterator[Node]:
    """Every node of a tree, depth first."""
    stack = [node]
    while stack:
        n = stack.pop()
        yield n
        stack.extend(reversed(children(n)))


def walk_values(node: Node) -> Iterator[Node]:
    """Every node a value depends on, depth first: as :func:`walk`, without a method's spreadsheet-only values."""
    stack = [node]
    while stack:
        n = stack.pop()
        yield n
        kids = n.args if isinstance(n, Method) else children(n)
        stack.extend(reversed(kids))


def refs(node: Node) -> set[tuple[str, str]]:
    return {(n.space, n.name) for n in walk(node) if isinstance(n, Ref)}


def inputs(node: Node) -> set[str]:
    """The case inputs a value depends on."""
    return {n.path for n in walk_values(node) if isinstance(n, Input)}


def constants(node: Node) -> dict[str, Constant]:
    return {n.name: n for n in walk(node) if isinstance(n, Constant)}


def transform(node: Node, fn: Callable[[Node], Node | None]) -> Node:
    """A copy of a tree with ``fn`` applied bottom-up (``fn`` returns a replacement or None)."""
    kids = children(node)
    if kids:
        new = tuple(transform(k, fn) for k in kids)
        if any(a is not b for a, b in zip(new, kids)):
            node = _rebuild(node, new)
    out = fn(node)
    return node if out is None else out


def _rebuild(node: Node, kids: tuple[Node, ...]) -> Node:
    if isinstance(node, Bin):
        return Bin(node.op, kids[0], kids[1])
    if isinstance(node, Not):
        return Not(kids[0])
    if isinstance(node, Call):
        return Call(node.fn, kids)
    if isinstance(node, Method):
        n = len(node.args)
        return Method(node.name, kids[:n], tuple((k, v) for (k, _), v in zip(node.sheet, kids[n:])))
    if isinstance(node, Slope):
        return Slope(kids[0], kids[1])
    if isinstance(node, Lookup):
        return Lookup(node.table, node.column, kids)
    if isinstance(node, Lag):
        return Lag(kids[0], kids[2] if isinstance(node.k, Node) else node.k, kids[1])
    if isinstance(node, WindowSum):
        return WindowSum(kids[0], kids[1])
    if isinstance(node, CumSum):
        return CumSum(kids[0])
    if isinstance(node, ByYear):
        return ByYear(kids[0], node.start, node.default, node.hold_last)
    if isinstance(node, Reduce):
        return Reduce(node.kind, kids[0], kids[1] if len(kids) > 1 else None)
    raise TypeError(type(node).__name__)
