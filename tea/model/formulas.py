"""Spreadsheet formulas of the declared model, for any workbook layout.

:func:`formula` renders one declaration as the formula of one cell: a line
in a given year, or a parameter or figure. The workbook's layout is an
argument (:class:`Layout`): where each declaration's cell of each year sits,
the year row, the defined name of each input and constant, the columns of
the published tables. Years down the rows or across the columns, one sheet
or several: the declarations do not change.

Rendering rules
---------------
* a reference to a line in the same year is that line's cell of the year; a
  :func:`~tea.model.expr.lag` reads the cell k years before (the fill before
  year 0); a running total or window is a SUM (SUMIFS for a window whose
  length is an input) over the line's row: no volatile function (OFFSET,
  INDIRECT) anywhere;
* a list input read by year is INDEX into its cells, with COUNT for its length;
* a condition used as a value is 1 or 0 (``IF(cond,1,0)``);
* "no value" (not a number in the engine) is an error inside a formula,
  so that it propagates as NaN does, and a blank text (``""``) in the cell
  itself: every cell whose value may be "no value" is wrapped in
  ``IFERROR(...,"")``;
* US-English function names and comma separators (what a file stores);
  named constants instead of numbers typed in formulas.
"""

from __future__ import annotations

import math
from typing import Protocol

from tea.model import expr as E
from tea.model.declare import Def, Model
from tea.model.methods import METHODS
from tea.model.slopes import expanded


class Layout(Protocol):
    """Where things sit in a workbook (absolute references, sheet-qualified where needed)."""

    #: the last year the sheet has a column (or row) for
    last_year: int

    def cell(self, key: tuple[str, str], year: int | None) -> str:
        """The cell of a declaration (``key`` = (space, name)) in a year, or of a row-level one (year None)."""

    def row(self, key: tuple[str, str], first: int, last: int) -> str:
        """The range of a line's cells over years first..last."""

    def year(self, year: int) -> str:
        """The cell holding the year number of a column (or row)."""

    def years(self) -> str:
        """The range of all year cells, 0..last_year."""

    def input(self, path: str) -> str:
        """The defined name of an input's cell (or the range of a list input)."""

    def constant(self, name: str) -> str:
        """The defined name of a named constant."""

    def table(self, table: str, column: str | None) -> str:
        """The range of a published table's column (None: its key column)."""


_PREC = {"|": 0, "&": 0, "<": 1, "<=": 1, ">": 1, ">=": 1, "==": 1, "!=": 1, "+": 2, "-": 2, "*": 3, "/": 3, "**": 4}
_SHEET_OP = {"==": "=", "!=": "<>", "**": "^"}
_BOOLEAN_OPS = {"<", "<=", ">", ">=", "==", "!=", "&", "|"}


def _number(v: float) -> str:
    if math.isnan(v):
        return "NA()"
    if v == int(v) and abs(v) < 1e15:
        return str(int(v))
    return repr(float(v))


class Renderer:
    """Renders the expressions of one model for one layout."""

    def __init__(self, model: Model, layout: Layout):
        self.model = expanded(model)
        self.layout = layout
        self._maybe_nothing: dict[tuple[str, str], bool] = {}

    # -- what a cell holds
    def formula(self, d: Def, year: int | None = None) -> str:
        """The formula of a declaration's cell (without the leading ``=``)."""
        if d.kind == "line" and year is None:
            raise ValueError(f"line {d.name} needs a year")
        if d.kind != "line":
            year = None
        body = self.render(d.expr, year)
        if _is_boolean(d.expr):  # a comparison with "no value" is false, as in the engine
            body = f"IF({body},1,0)"
            return f"IFERROR({body},0)" if self.may_be_nothing(d) else body
        if self.may_be_nothing(d):
            body = f'IFERROR({body},"")'
        return body

    def may_be_nothing(self, d: Def) -> bool:
        """Whether a declaration's formula may meet "no value" (NaN) for some case."""
        key = d.key
        if key not in self._maybe_nothing:
            self._maybe_nothing[key] = False  # a line that lags itself: assume not, unless shown otherwise
            self._maybe_nothing[key] = self._node_nothing(d.expr)
        return self._maybe_nothing[key]

    def _gives_nothing(self, d: Def) -> bool:
        """Whether a declaration's own value may be "no value" (a condition is then false, not empty)."""
        return self.may_be_nothing(d) and not _is_boolean(d.expr)

    def _node_nothing(self, n: E.Node) -> bool:
        if isinstance(n, E.Const):
            return isinstance(n.value, float) and math.isnan(n.value)
        if isinstance(n, E.Reduce) and n.kind in ("at", "lowest", "highest", "year_of_lowest", "first_year"):
            return True
        if isinstance(n, E.Method) and n.name in ("irr", "mirr"):
            return True
        if isinstance(n, E.Ref):
            return self._gives_nothing(self.model.get(n))
        if isinstance(n, E.Call) and n.fn in ("given", "or_default"):
            return False
        if isinstance(n, E.Input):
            return _optional(n.path)
        return any(self._node_nothing(c) for c in E.children(n))

    # -- expressions
    def render(self, n: E.Node, year: int | None) -> str:  # noqa: C901 - one case per node type
        lay = self.layout
        if isinstance(n, E.Const):
            if isinstance(n.value, str):
                return '"' + n.value.replace('"', '""') + '"'
            return _number(n.value)
        if isinstance(n, E.Constant):
            return lay.constant(n.name)
        if isinstance(n, E.Input):
            if _optional(n.path):  # an optional input left blank is "no value", as in the engine, not 0
                return f"IF(ISNUMBER({lay.input(n.path)}),{lay.input(n.path)},NA())"
            return lay.input(n.path)
        if isinstance(n, E.Ref):
            d = self.model.get(n)
            if d.kind == "line":
                if year is None:
                    raise ValueError(f"line {d.name} is used where one value per row is wanted: use a total or at_year")
                return lay.cell(d.key, year)
            return lay.cell(d.key, None)
        if isinstance(n, E.Year):
            if year is None:
                raise ValueError("the year t is used where one value per row is wanted")
            return lay.year(year)
        if isinstance(n, E.Bin):
            if n.op in ("&", "|"):
                return f"{'AND' if n.op == '&' else 'OR'}({self.render(n.a, year)},{self.render(n.b, year)})"
            a = self._operand(n.a, n.op, year, right=False)
            b = self._operand(n.b, n.op, year, right=True)
            return f"{a}{_SHEET_OP.get(n.op, n.op)}{b}"
        if isinstance(n, E.Not):
            return f"NOT({self.render(n.a, year)})"
        if isinstance(n, E.Call):
            raw = n.fn in ("given", "or_default")  # these read an optional input's cell as it is
            r = [lay.input(a.path) if raw and i == 0 and isinstance(a, E.Input) else self.render(a, year)
                 for i, a in enumerate(n.args)]
            fn = n.fn
            if fn == "where":
                return f"IF({r[0]},{r[1]},{r[2]})"
            if fn in ("minimum", "maximum"):
                return f"{'MIN' if fn == 'minimum' else 'MAX'}({r[0]},{r[1]})"
            if fn in ("exp", "sign", "abs", "log"):
                return f"{ {'exp': 'EXP', 'sign': 'SIGN', 'abs': 'ABS', 'log': 'LN'}[fn] }({r[0]})"
            if fn == "mod":
                return f"MOD({r[0]},{r[1]})"
            if fn == "given":
                if isinstance(n.args[0], E.Input) and _is_list(n.args[0].path):
                    return f"(COUNT({r[0]})>0)"
                return f"ISNUMBER({r[0]})"
            if fn == "or_default":
                return f"IF(ISNUMBER({r[0]}),{r[0]},{r[1]})"
            raise ValueError(f"no spreadsheet form for {fn}()")
        if isinstance(n, E.Lag):
            if isinstance(n.k, int):
                if year is None:
                    raise ValueError("lag() needs a year")
                inside = 0 <= year - n.k <= lay.last_year
                return self.render(n.x, year - n.k) if inside else self.render(n.fill, year)
            x = self._ref(n.x, "lag() by a varying number of years")
            k = self.render(n.k, None)
            t = lay.year(year)
            return (f"IF({t}-{k}>=0,INDEX({lay.row(x.key, 0, lay.last_year)},{t}-{k}+1),"
                    f"{self.render(n.fill, year)})")
        if isinstance(n, E.WindowSum):
            x = self._ref(n.x, "window_sum()")
            if isinstance(n.n, E.Const):
                k = int(n.n.value)
                return f"SUM({lay.row(x.key, max(0, year - k + 1), year)})"
            k = self.render(n.n, None)
            t = lay.year(year)
            return f'SUMIFS({lay.row(x.key, 0, lay.last_year)},{lay.years()},">"&({t}-{k}),{lay.years()},"<="&{t})'
        if isinstance(n, E.CumSum):
            x = self._ref(n.x, "cumsum()")
            return f"SUM({lay.row(x.key, 0, year)})"
        if isinstance(n, E.ByYear):
            lst = lay.input(n.x.path)
            t = lay.year(year)
            d = _number(n.default)
            idx = f"{t}-{n.start}+1" if n.start else f"{t}+1"
            if n.hold_last:
                inner = f"INDEX({lst},MIN({idx},COUNT({lst})))"
            else:
                inner = f"IF({idx}<=COUNT({lst}),INDEX({lst},{idx}),{d})"
            return f"IF({t}<{n.start},{d},{inner})"
        if isinstance(n, E.Reduce):
            return self._reduce(n)
        if isinstance(n, E.Lookup):
            key = "&\" \"&".join(self.render(k, year) for k in n.keys)
            return f"INDEX({lay.table(n.table, n.column)},MATCH({key},{lay.table(n.table, None)},0))"
        if isinstance(n, E.Method):
            return METHODS[n.name].sheet(self, n)
        raise TypeError(f"no spreadsheet form for {type(n).__name__}")

    def _operand(self, n: E.Node, op: str, year: int | None, right: bool) -> str:
        text = self.render(n, year)
        if isinstance(n, E.Bin) and n.op not in ("&", "|"):
            inner, outer = _PREC[n.op], _PREC[op]
            if inner < outer or (right and inner == outer and op in ("-", "/", "**")) or (op == "**" and inner == outer):
                return f"({text})"
        return text

    def _ref(self, n: E.Node, what: str) -> Def:
        if not isinstance(n, E.Ref):
            raise ValueError(f"{what} takes a line in a workbook")
        return self.model.get(n)

    def _reduce(self, n: E.Reduce) -> str:
        lay = self.layout
        x = self._ref(n.x, f"{n.kind}()")
        whole = lay.row(x.key, 0, lay.last_year)
        if n.kind == "total":
            return f"SUM({whole})"
        if n.kind == "npv":
            rate = self.render(n.arg, None)
            return f"{lay.cell(x.key, 0)}+NPV({rate},{lay.row(x.key, 1, lay.last_year)})"
        if n.kind == "at":
            return f"INDEX({whole},{self._operand(n.arg, '+', None, False)}+1)"
        if n.kind == "lowest":
            return f"IF(COUNT({whole})>0,MIN({whole}),NA())"
        if n.kind == "highest":
            return f"IF(COUNT({whole})>0,MAX({whole}),NA())"
        if n.kind == "year_of_lowest":
            return f"IF(COUNT({whole})>0,INDEX({lay.years()},MATCH(MIN({whole}),{whole},0)),NA())"
        if n.kind == "first_year":
            return f"INDEX({lay.years()},MATCH(1,{whole},0))"
        raise ValueError(f"no spreadsheet form for {n.kind}()")

    def years_to(self, x: E.Node, life: E.Node) -> str:
        """A line's cells over years 0..stand life (the stand life an expression): ``first:INDEX(row, life+1)``."""
        d = self._ref(x, "a range of years")
        lay = self.layout
        return f"{lay.cell(d.key, 0)}:INDEX({lay.row(d.key, 0, lay.last_year)},{self.render(life, None)}+1)"


def _is_boolean(n: E.Node) -> bool:
    return (isinstance(n, E.Bin) and n.op in _BOOLEAN_OPS) or isinstance(n, E.Not) or (
        isinstance(n, E.Call) and n.fn == "given")


def _is_list(path: str) -> bool:
    from tea.model.evaluate import LIST_KEYS

    return path in LIST_KEYS


def _optional(path: str) -> bool:
    """An optional number: a case may leave it out (schema default None)."""
    from tea.inputs import schema

    k = schema.BY_PATH.get(path)
    return k is not None and k.default is None and k.kind in ("float", "int")


__all__ = ["Layout", "Renderer"]
