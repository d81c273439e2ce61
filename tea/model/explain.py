"""Where a number comes from: a figure or line of one case, its formula, its inputs and what it rests on.

:func:`explain` reads the one declaration of a figure or line and gives,
for one case:

* its value (in a year, or every year of a line);
* its formula in symbols (names of lines and inputs) and in words (their labels);
* the case inputs it uses, with value, unit, origin (case file, preset,
  looked up, default) and source; the named constants with their sources;
* the lines it rests on, as a tree to the depth asked.

"Uses" means: can move it in this case. A branch of a formula the case does
not take (the autumn moisture under a late-winter harvest), a term multiplied
by zero in every year (the credit buffer when no credit price is given) or
one side of a minimum or maximum that never wins is left out, and listed
apart as "in the formula, no effect in this case". Nothing here is written
per line: it all follows from the declarations.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

from tea.inputs import schema
from tea.inputs.case import Case
from tea.model import expr as E
from tea.model.declare import Def, Model
from tea.model.definition import MODEL
from tea.model.evaluate import LIST_KEYS, _Compiler, _Env, _column, evaluate, plan
from tea.model.separable import dense, num
from tea.model.slopes import expanded

ORIGINS = {"case": "case file", "preset": "preset", "derived": "looked up", "default": "default",
           "estimated": "site climate"}
_INFIX = {"+": " + ", "-": " - ", "*": " × ", "/": " / ", "**": "^", "<": " < ", "<=": " ≤ ", ">": " > ",
          ">=": " ≥ ", "==": " = ", "!=": " ≠ ", "&": " and ", "|": " or "}
_PREC = {"|": 0, "&": 1, "<": 2, "<=": 2, ">": 2, ">=": 2, "==": 2, "!=": 2, "+": 3, "-": 3, "*": 4, "/": 4, "**": 5}


@dataclass
class InputUse:
    path: str
    value: Any
    unit: str
    origin: str
    source: str
    meaning: str


@dataclass
class Node:
    """One declaration in the tree: what it is, its value, its formula and what it rests on."""

    name: str
    kind: str
    label: str
    unit: str
    meaning: str
    source: str
    value: Any
    symbols: str
    words: str
    inputs: list[str]
    constants: list[str]
    children: list["Node"] = field(default_factory=list)
    more: int = 0  # children not shown (depth reached)


@dataclass
class Explanation:
    case: str
    case_hash: str
    year: int | None
    root: Node
    inputs: list[InputUse]
    constants: list[dict[str, Any]]
    unused_inputs: list[str]
    no_value: str | None = None  # why the figure or line has no value in this case (None: it has one)

    def to_dict(self) -> dict[str, Any]:
        def node(n: Node) -> dict[str, Any]:
            return {"name": n.name, "kind": n.kind, "label": n.label, "unit": n.unit, "meaning": n.meaning,
                    "source": n.source, "value": _plain(n.value), "formula": n.symbols, "in_words": n.words,
                    "inputs": n.inputs, "constants": n.constants, "depends_on": [node(c) for c in n.children],
                    "not_shown": n.more}
        return {"case": self.case, "case_hash": self.case_hash, "year": self.year, "explains": node(self.root),
                "inputs": [vars(i) | {"value": _plain(i.value)} for i in self.inputs],
                "constants": self.constants, "in_formula_no_effect_here": self.unused_inputs,
                "no_value": self.no_value}


def _plain(v: Any) -> Any:
    if isinstance(v, np.ndarray):
        return [_plain(x) for x in v.tolist()]
    if isinstance(v, (float, np.floating)):
        return None if not np.isfinite(v) else float(v)
    if isinstance(v, (np.integer,)):
        return int(v)
    return v


def resolve(name: str, model: Model = MODEL, year: int | None = None) -> Def:
    """A figure or line by name; ``figure:NAME`` or ``line:NAME`` where both exist (a figure by
    default, the line when a year is given)."""
    m = expanded(model)
    space, _, bare = name.rpartition(":")
    if space:
        space = "figure" if space == "figure" else "line"
        return m.get((space, bare))
    order = ("line", "figure") if year is not None else ("figure", "line")
    for s in order:
        if (s, name) in m:
            return m.get((s, name))
    names = sorted({d.name for d in m if d.show})
    import difflib

    near = difflib.get_close_matches(name, names, n=3)
    hint = f"; did you mean {', '.join(near)}?" if near else ""
    raise KeyError(f"no figure or line named {name!r}{hint} (`tea explain CASE --list` lists them)")


class _Demand:
    """Which years of which declarations, and which inputs, can move a value, given the case's own values.

    A demand is a mask of years. A product demands each factor where the other is not zero; a
    where() its branch where the condition picks it, and the condition; a lag the years k before; a running total or window the years it sums; a value
    in a given year that year only; a total every year. Sums, comparisons and methods demand all
    their operands where they are demanded. What it finds is a superset of what can move the value;
    :func:`_moving` keeps the inputs that do.
    """

    def __init__(self, model: Model, env: _Env, years: int):
        self.model = model
        self.env = env
        self.years = years
        self.compiler = _Compiler(model)
        self.cache: dict[int, np.ndarray] = {}
        self.masks: dict[tuple[str, str], np.ndarray] = {}
        self.inputs: set[str] = set()
        self.t = np.arange(years)[None, :]

    def value(self, n: E.Node) -> np.ndarray:
        v = self.cache.get(id(n))
        if v is None:
            v = np.asarray(dense(self.compiler.compile(n)(self.env)))
            v = v.reshape(1, 1) if v.ndim == 0 else v.reshape(1, -1) if v.ndim == 1 else v
            self.cache[id(n)] = v = v[:1]
        return v

    def _on(self, v: np.ndarray) -> np.ndarray:
        """Where a value is not zero (labels and NaN count as not zero), as a year mask."""
        if v.dtype.kind in "USO":
            return np.ones((1, self.years), bool)
        f = v.astype(float)
        return np.broadcast_to((f != 0) | np.isnan(f), (1, self.years))

    def run(self, root: Def) -> None:
        todo = [root.key]
        self.masks[root.key] = np.ones((1, self.years), bool)
        while todo:
            key = todo.pop()
            d = self.model.get(key)
            mask = self.masks[key] if d.kind == "line" else np.ones((1, self.years), bool)
            for ref_key, m in self.node(d.expr, mask, d.kind == "line"):
                old = self.masks.get(ref_key)
                new = m if old is None else (old | m)
                if old is None or bool((new & ~old).any()):
                    self.masks[ref_key] = new
                    todo.append(ref_key)

    def node(self, n: E.Node, m: np.ndarray, yearly: bool):  # noqa: C901 - one rule per node type
        """Demands of node n where mask m holds: yields (declaration key, year mask); records inputs."""
        if not m.any():
            return
        ALL = np.ones((1, self.years), bool)
        if isinstance(n, E.Input):
            self.inputs.add(n.path)
            return
        if isinstance(n, E.Ref):
            d = self.model.get(n)
            yield d.key, (m if d.kind == "line" else ALL)
            return
        if isinstance(n, (E.Const, E.Constant, E.Year)):
            return
        if isinstance(n, E.Bin) and n.op in ("*", "/", "&", "|"):
            a, b = self.value(n.a), self.value(n.b)
            if n.op == "*" or n.op == "&":  # where both are zero, a change that moves both moves the product
                on_a, on_b = self._on(a), self._on(b)
                both_off = ~on_a & ~on_b
                ma, mb = m & (on_b | both_off), m & (on_a | both_off)
            elif n.op == "/":
                ma, mb = m, m & self._on(a)
            else:
                ma, mb = m & ~self._on(b), m & ~self._on(a)
            yield from self.node(n.a, ma, yearly)
            yield from self.node(n.b, mb, yearly)
            return
        if isinstance(n, E.Call) and n.fn == "where":
            c = self._on(self.value(n.args[0]))
            yield from self.node(n.args[1], m & c, yearly)
            yield from self.node(n.args[2], m & ~c, yearly)
            yield from self.node(n.args[0], m, yearly)
            return
        if isinstance(n, E.Call) and n.fn in ("minimum", "maximum"):
            # both sides: a step of a whole-number input can make the losing side win
            yield from self.node(n.args[0], m, yearly)
            yield from self.node(n.args[1], m, yearly)
            return
        if isinstance(n, E.Call) and n.fn == "given":
            return
        if isinstance(n, E.Call) and n.fn == "or_default":
            g = np.broadcast_to(~np.isnan(self.value(n.args[0]).astype(float)), (1, self.years))
            yield from self.node(n.args[0], m & g, yearly)
            yield from self.node(n.args[1], m & ~g, yearly)
            return
        if isinstance(n, E.Lag):
            if isinstance(n.k, int):
                k = n.k
                read = np.zeros_like(m)  # the years x is read in: t - k for each demanded t
                if 0 <= k < self.years:
                    read[:, : self.years - k] = m[:, k:]
                elif -self.years < k < 0:
                    read[:, -k:] = m[:, : self.years + k]
                outside = (self.t < k) if k >= 0 else (self.t >= self.years + k)
                yield from self.node(n.x, read, yearly)
                yield from self.node(n.fill, m & outside, yearly)
            else:
                yield from self.node(n.x, self._up_to(m), yearly)
                yield from self.node(n.fill, m, yearly)
                yield from self.node(n.k, ALL, False)
            return
        if isinstance(n, (E.WindowSum, E.CumSum)):
            yield from self.node(n.x, self._up_to(m), yearly)
            if isinstance(n, E.WindowSum):
                yield from self.node(n.n, ALL, False)
            return
        if isinstance(n, E.Reduce):
            if n.kind == "at":
                y = self.value(n.arg).astype(float).reshape(-1)[0]
                at = np.zeros((1, self.years), bool)
                if np.isfinite(y) and 0 <= y < self.years:
                    at[0, int(y)] = True
                yield from self.node(n.x, at, True)
            else:
                yield from self.node(n.x, ALL, True)
            if n.arg is not None:
                yield from self.node(n.arg, ALL, False)
            return
        if isinstance(n, E.Method):
            for a in n.args:
                yield from self.node(a, ALL, True)
            return
        for c in E.children(n):
            yield from self.node(c, m, yearly)

    def _up_to(self, m: np.ndarray) -> np.ndarray:
        """Every year up to the last demanded one."""
        last = np.flatnonzero(m[0])
        out = np.zeros_like(m)
        if last.size:
            out[0, : last[-1] + 1] = True
        return out


# ----------------------------------------------------------------------------- formulas in print
def symbols(n: E.Node, model: Model) -> str:
    return _text(n, model, words=False)


def words(n: E.Node, model: Model) -> str:
    return _text(n, model, words=True)


def _input_words(path: str) -> str:
    k = schema.BY_PATH.get(path)
    if k is None:
        return path
    doc = k.doc.split(". ")[0].rstrip(".")
    return doc[0].lower() + doc[1:] if doc[:2] != doc[:2].upper() else doc


def _text(n: E.Node, model: Model, words: bool, parent: int = -1) -> str:  # noqa: C901
    t = lambda x, p=-1: _text(x, model, words, p)  # noqa: E731
    if isinstance(n, E.Const):
        if isinstance(n.value, str):
            return f'"{n.value}"'
        if n.value != n.value:
            return "no value"
        return f"{n.value:g}"
    if isinstance(n, E.Constant):
        return n.doc.lower() if words else n.name
    if isinstance(n, E.Input):
        return f"[{_input_words(n.path)}]" if words else n.path
    if isinstance(n, E.Ref):
        d = model.get(n)
        return f"[{d.label.lower()}]" if words else (f"{d.name}" if d.kind != "figure" else f"figure {d.name}")
    if isinstance(n, E.Year):
        return "the year" if words else "t"
    if isinstance(n, E.Bin):
        p = _PREC[n.op]
        text = f"{t(n.a, p)}{_INFIX[n.op]}{t(n.b, p + (1 if n.op in ('-', '/', '**') else 0))}"
        if isinstance(n.a, E.Const) and n.a.value == 0.0 and n.op == "-":
            text = f"-{t(n.b, 6)}"
        return f"({text})" if p < parent else text
    if isinstance(n, E.Not):
        return f"not {t(n.a, 6)}"
    if isinstance(n, E.Call):
        args = [t(a) for a in n.args]
        if n.fn == "where":
            return (f"({args[1]} if {args[0]}, else {args[2]})" if words else f"where({args[0]}, {args[1]}, {args[2]})")
        if n.fn == "given":
            return f"{args[0]} is given" if words else f"given({args[0]})"
        if n.fn == "or_default":
            return f"{args[0]}, or {args[1]} if not given" if words else f"or_default({args[0]}, {args[1]})"
        return f"{n.fn}({', '.join(args)})"
    if isinstance(n, E.Lag):
        k = n.k if isinstance(n.k, int) else t(n.k)
        return (f"{t(n.x, 6)} {k} year(s) before" if words else f"lag({t(n.x)}, {k})")
    if isinstance(n, E.WindowSum):
        return (f"sum of {t(n.x)} over the last {t(n.n)} years" if words else f"window_sum({t(n.x)}, {t(n.n)})")
    if isinstance(n, E.CumSum):
        return f"running total of {t(n.x)}" if words else f"cumsum({t(n.x)})"
    if isinstance(n, E.ByYear):
        return f"{t(n.x)} for the year" if words else f"by_year({t(n.x)})"
    if isinstance(n, E.Reduce):
        kind = {"total": "total", "at": "at_year", "npv": "npv", "lowest": "lowest", "highest": "highest",
                "year_of_lowest": "year_of_lowest", "first_year": "first_year"}[n.kind]
        if words:
            phrase = {"total": "sum over the years of", "at": "in year", "npv": "present value of",
                      "lowest": "lowest value of", "highest": "highest value of", "year_of_lowest": "year of the lowest", "first_year": "first year of"}
            if n.kind == "at":
                return f"{t(n.x)} in year {t(n.arg)}"
            if n.kind == "npv":
                return f"present value of {t(n.x)} at {t(n.arg)}"
            return f"{phrase[n.kind]} {t(n.x)}"
        return f"{kind}({t(n.x)}" + (f", {t(n.arg)})" if n.arg is not None else ")")
    if isinstance(n, E.Lookup):
        keys = ", ".join(t(k) for k in n.keys)
        return (f"{n.column} of the published table {n.table} for {keys}" if words
                else f"lookup({n.table}.{n.column}, {keys})")
    if isinstance(n, E.Method):
        return f"{n.name}({', '.join(t(a) for a in n.args)})"
    return type(n).__name__


# ----------------------------------------------------------------------------- the explanation
def explain(case: Case, name: str, year: int | None = None, depth: int = 2, model: Model = MODEL) -> Explanation:
    """The explanation of one figure or line of a case (see the module docstring)."""
    m = expanded(model)
    root_def = resolve(name, model, year)
    if year is not None:
        if root_def.kind != "line":
            raise ValueError(f"{root_def.name} is a figure: one value per case, no --year")
        if not 0 <= year <= case.stand_life:
            raise ValueError(f"--year must be 0..{case.stand_life} (the stand life), got {year}")
    wanted = m.closure([root_def])
    p = plan(model, tuple(d.name for d in wanted if d.kind == "figure"),
             tuple(d.name for d in wanted if d.kind != "figure"))
    years = case.stand_life + 1
    cols = {path: _column(path, case.values.get(path), 1) for path in p.inputs}
    values = p.run(cols, years, 1)
    env = _Env(cols, years, 1)
    env.values = values
    demand = _Demand(m, env, years)
    demand.run(root_def)
    demanded = {k for k, mask in demand.masks.items() if mask.any()}

    def value_of(d: Def) -> Any:
        v = np.asarray(num(dense(values[d.key])))
        if d.kind != "line":
            return v.reshape(-1)[0]
        row = np.broadcast_to(v, (1, years))[0]
        return row[year] if year is not None else row

    def refs_of(d: Def) -> list[Def]:
        return [x for x in m.deps(d) if x.key in demanded]

    def build(d: Def, level: int, seen: set) -> Node:
        own = sorted(p for p in E.inputs(d.expr) if p in demand.inputs)
        node = Node(d.name, d.kind, d.label, d.unit, d.doc, d.source, value_of(d), symbols(d.expr, m),
                    words(d.expr, m), own, sorted(E.constants(d.expr)))
        kids = refs_of(d)
        if level >= depth:
            node.more = len(kids)
            return node
        for k in kids:
            if k.key in seen:
                continue
            node.children.append(build(k, level + 1, seen | {d.key}))
        return node

    if _whole_number(root_def, m):  # a year or a count: the inputs that move what it is read from
        direct, basis = _basis(root_def, m)
        all_inputs = (direct & demand.inputs).union(*(_moving(model, case, b, demand.inputs) for b in basis))
    else:
        all_inputs = _moving(model, case, root_def, demand.inputs)
    all_dead: set[str] = set(demand.inputs) - all_inputs
    consts: dict[str, E.Constant] = {}
    for key in demanded:
        d = m.get(key)
        all_dead |= E.inputs(d.expr)
        consts.update(E.constants(d.expr))
    uses = [InputUse(path, case.values.get(path), _unit(path, case), ORIGINS.get(case.origin.get(path, ""), "default"),
                     case.notes.get(path, ""), schema.BY_PATH[path].doc if path in schema.BY_PATH else "")
            for path in sorted(all_inputs)]
    no_value = None
    if _blank(value_of(root_def)):
        no_value = _why_no_value(root_def, m, demand, value_of, case, year)
    return Explanation(case.name, case.hash, year, build(root_def, 0, set()), uses,
                       [{"name": c.name, "value": c.value, "unit": c.unit, "meaning": c.doc, "source": c.source}
                        for c in sorted(consts.values(), key=lambda c: c.name)],
                       sorted(all_dead - all_inputs), no_value)


# ----------------------------------------------------------------------------- a value that is not there
def _blank(v: Any) -> bool:
    """No value: "no value" (NaN) in the year asked for, or in every year of the stand."""
    a = np.asarray(v, dtype=object).reshape(-1)
    return a.size > 0 and all(isinstance(x, (float, np.floating)) and np.isnan(x) for x in a)


def _is_nothing(n: E.Node) -> bool:
    return isinstance(n, E.Const) and isinstance(n.value, float) and np.isnan(n.value)


def _why_no_value(d: Def, m: Model, demand: "_Demand", value_of, case: Case, year: int | None,
                  depth: int = 0) -> str:
    """Why a declaration has no value in this case, in words: no loan; a condition of its formula that leaves it
    blank in every year asked for; or the line it is read from having none."""
    computed = value_of

    def value_of(x: Def) -> Any:  # a declaration the case never needed computed (a branch not taken): unknown
        try:
            return computed(x)
        except KeyError:
            return None

    def on(n: E.Node) -> np.ndarray | None:  # where a condition holds, over the years asked for
        try:
            return np.broadcast_to(np.asarray(demand.value(n), dtype=float) != 0, years.shape)
        except (KeyError, TypeError, ValueError):
            return None

    closure = {x.key for x in m.closure([d])}
    drawn = value_of(m.line("loan_amount")) if ("line", "loan_amount") in closure else None
    if drawn is not None and drawn == 0:
        return ("the case draws no loan (loan drawn at planting: 0; share of the establishment cost borrowed: "
                f"{case.values.get('loan.share_of_establishment', 0):g}), so there is no debt to service or cover")
    years = np.zeros((1, demand.years), bool)
    if d.kind != "line":
        years[:, 0] = True  # one value: a condition of it is the same in every column
        when = "in this case"
    elif year is None:
        years[:, : case.stand_life + 1] = True
        when = "in any year of the stand"
    else:
        years[:, year] = True
        when = f"in year {year}"
    for n in E.walk(d.expr):
        if not (isinstance(n, E.Call) and n.fn == "where" and (_is_nothing(n.args[1]) or _is_nothing(n.args[2]))):
            continue
        cond = on(n.args[0])
        if cond is None:
            continue
        blank_when = ~cond if _is_nothing(n.args[2]) else cond
        if not (blank_when | ~years).all():
            continue
        parts = _conjuncts(n.args[0]) if _is_nothing(n.args[2]) else [n.args[0]]
        failing = [c for c in parts if on(c) is not None and not (on(c) & years).any()]
        said = " and ".join(words(c, m) for c in (failing or parts))
        verb = ("is never met" if year is None and d.kind == "line" else "is not met") if _is_nothing(n.args[2]) \
            else "holds"
        return f"its formula leaves it blank unless {words(n.args[0], m)}: {said} {verb} {when}" \
            if _is_nothing(n.args[2]) else f"its formula leaves it blank where {said}, which {verb} {when}"
    if depth < 3:
        for n in E.walk(d.expr):
            at = None
            if isinstance(n, E.Reduce) and n.kind == "at" and isinstance(n.x, E.Ref):
                try:
                    at = float(np.asarray(demand.value(n.arg), dtype=float).reshape(-1)[0])
                except (KeyError, TypeError, ValueError):
                    continue
                dep, got = m.get(n.x), value_of(m.get(n.x))
                row = np.asarray(got if got is not None else []).reshape(-1)
                if not (np.isfinite(at) and 0 <= at < row.size):
                    continue
                at = int(at)
                blank = _blank(row[at])
            elif isinstance(n, E.Ref):
                dep = m.get(n)
                got = value_of(dep)
                blank = got is not None and _blank(got)
            else:
                continue
            if blank:
                why = _why_no_value(dep, m, demand, value_of, case, at if at is not None else year, depth + 1)
                where_ = f"in year {at}" if at is not None else ("" if dep.kind != "line" else when)
                return f"it is read from {dep.name} ({dep.label}), which has no value {where_}: {why}".replace(
                    "value : ", "value: ")
    return "its formula gives no value for this case's inputs"


def _conjuncts(n: E.Node) -> list[E.Node]:
    """The parts of a condition joined by "and"."""
    if isinstance(n, E.Bin) and n.op == "&":
        return _conjuncts(n.a) + _conjuncts(n.b)
    return [n]


#: a change of an input, either way: this share of its value (plus a small absolute step, so zeros move)
CHANGE = 0.01


def _perturbed(case: Case, path: str) -> list[Any]:
    """An input changed either way: numbers by :data:`CHANGE`, whole numbers by one, labels to every other choice."""
    v = case.values.get(path)
    k = schema.BY_PATH.get(path)
    if k is None or v is None:
        return []
    if k.kind == "enum":
        return [c for c in k.choices if c != v]
    if k.kind == "bool":
        return [not v]
    if k.kind == "int":
        return [x for x in (v - 1, v + 1) if (k.lo is None or x >= k.lo) and (k.hi is None or x <= k.hi)]
    if k.kind == "list":
        return [[x * (1 + CHANGE) for x in v], [x * (1 - CHANGE) for x in v]]
    step = abs(float(v)) * CHANGE + 1e-6
    return [v + step, v - step]


def _moving(model: Model, case: Case, d: Def, candidates: set[str]) -> set[str]:
    """The candidate inputs whose change moves a value: one batch of the evaluator, a row per change."""
    rows: list[tuple[str, Any]] = [(path, v) for path in sorted(candidates) for v in _perturbed(case, path)]
    if not rows:
        return set()
    n = len(rows) + 1
    values: dict[str, Any] = {}
    for path in {p for p, _ in rows}:
        base = case.values.get(path)
        col = [base] + [v if p == path else base for p, v in rows]
        if path in LIST_KEYS:
            width = max(len(x) for x in col)
            values[path] = np.array([list(x) + [np.nan] * (width - len(x)) for x in col], dtype=float)
        elif isinstance(base, str):
            values[path] = np.array(col, dtype=object).astype(str)
        else:
            values[path] = np.array(col, dtype=float)
    batch = dict(case.values)
    batch.update(values)
    if d.kind == "figure":
        got = evaluate(batch, figures=(d.name,), model=model, rows=n).figures[d.name]
        base, moved = got[:1], got[1:]
        changed = ~(np.isclose(moved, base, rtol=1e-12, atol=1e-12) | (np.isnan(moved) & np.isnan(base)))
    else:
        years = int(np.max(batch["finance.stand_life_years"])) + 1
        got = evaluate(batch, lines=(d.name,), model=model, rows=n, years=years).lines[d.name]
        base, moved = got[:1, : case.stand_life + 1], got[1:, : case.stand_life + 1]
        same = np.isclose(moved, base, rtol=1e-12, atol=1e-12) | (np.isnan(moved) & np.isnan(base))
        changed = ~same.all(axis=1)
    return {p for (p, _), c in zip(rows, changed) if c}


def _whole_number(d: Def, model: Model) -> bool:
    """A figure that is a year or a count found by a search (its value moves in steps, never a little)."""
    nodes = list(E.walk_values(d.expr))
    searched = any(isinstance(n, E.Reduce) and n.kind in ("first_year", "year_of_lowest") for n in nodes)
    counted = any(isinstance(n, E.Reduce) and n.kind == "total" and isinstance(n.x, E.Ref)
                  and _boolean(model.get(n.x).expr) for n in nodes)
    divides = any(isinstance(n, E.Bin) and n.op == "/" for n in nodes)
    return (searched or counted) and not divides


def _basis(d: Def, model: Model) -> tuple[set[str], list[Def]]:
    """What a whole-number figure is read from: the inputs its conditions read directly, and the
    lines they compare (followed through conditions and searches to lines that carry amounts)."""
    direct: set[str] = set()
    basis: dict[tuple[str, str], Def] = {}
    stack, seen = [d], set()
    while stack:
        x = stack.pop()
        if x.key in seen:
            continue
        seen.add(x.key)
        direct |= E.inputs(x.expr)
        for ref in (n for n in E.walk_values(x.expr) if isinstance(n, E.Ref)):
            dep = model.get(ref)
            if _boolean(dep.expr) or (dep.kind == "figure" and _whole_number(dep, model)):
                stack.append(dep)
            elif dep.kind == "line":
                basis[dep.key] = dep
    return direct, list(basis.values())


def _boolean(n: E.Node) -> bool:
    return (isinstance(n, E.Bin) and n.op in ("<", "<=", ">", ">=", "==", "!=", "&", "|")) or isinstance(n, E.Not)


def _unit(path: str, case: Case) -> str:
    k = schema.BY_PATH.get(path)
    return k.unit_text("metric", case.currency) if k is not None else ""


def listing(model: Model = MODEL) -> list[tuple[str, str, str]]:
    """Every figure and ledger line that can be explained: (kind, name, label)."""
    m = expanded(model)
    return [(d.kind, d.name, d.label) for d in m if d.show and d.kind in ("figure", "line")]


__all__ = ["explain", "Explanation", "resolve", "listing", "LIST_KEYS"]
