"""Declarations: one per ledger line, model parameter and decision figure.

A declaration (:class:`Def`) names a quantity, gives its unit, group, label and
meaning, the published source of its method where it has one, and its
formula as an expression (:mod:`tea.model.expr`). :class:`Model` holds them
all and is the only thing the evaluator, the workbook, ``tea explain`` and the
generated docs read.

Three kinds:

* ``line``: one value per year and row (shape ``(rows, years)``), per ha;
  shown in the ledger unless ``show=False`` (a working line, shown only in the
  workbook and by ``tea explain``);
* ``param``: one value per row, used by lines (the real discount rate, the
  moisture at the chosen harvest time);
* ``figure``: one value per row, a decision figure reported to the user.

Lines and parameters share one namespace (``L.name``), figures another
(``F.name``), so a figure may carry the name of the line it totals.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Iterable, Iterator

from tea.model import expr as E

KINDS = ("line", "param", "figure")


@dataclass(frozen=True)
class Def:
    """One declaration of the model."""

    name: str
    kind: str
    unit: str  # "money" is the case's currency: "money/ha", "t DM/ha", "fraction", "flag", ...
    group: str
    label: str  # short label for tables
    doc: str  # what it means, in words
    expr: E.Node
    source: str = ""  # the published method or table, where there is one
    scales: bool = False  # figures: per ha, multiplied by the area for the whole field
    show: bool = True  # lines: part of the ledger (False: a working line)

    @property
    def key(self) -> tuple[str, str]:
        return (space(self.kind), self.name)


def space(kind: str) -> str:
    """The namespace of a kind: lines and parameters share one, figures have their own."""
    return "figure" if kind == "figure" else "line"


def line(name, unit, group, label, doc, expr, source="", show=True) -> Def:
    return Def(name, "line", unit, group, label, doc, E.wrap(expr), source, False, show)


def param(name, unit, group, label, doc, expr, source="") -> Def:
    return Def(name, "param", unit, group, label, doc, E.wrap(expr), source)


def figure(name, unit, group, label, doc, expr, source="", scales=False) -> Def:
    return Def(name, "figure", unit, group, label, doc, E.wrap(expr), source, scales)


class Model:
    """The declarations of the model, in the order they are shown.

    Lookup by namespace and name: ``model.line("sold_t_dm")``,
    ``model.figure("npv")``; :meth:`get` resolves a :class:`~tea.model.expr.Ref`.
    """

    __hash__ = object.__hash__

    def __init__(self, defs: Iterable[Def]):
        self._defs: list[Def] = []
        self._by_key: dict[tuple[str, str], Def] = {}
        for d in defs:
            self.add(d)

    def add(self, d: Def) -> None:
        if d.kind not in KINDS:
            raise ValueError(f"{d.name}: kind must be one of {KINDS}, got {d.kind!r}")
        if d.key in self._by_key:
            raise ValueError(f"{d.kind} {d.name!r} is declared twice")
        self._defs.append(d)
        self._by_key[d.key] = d

    def with_defs(self, extra: Iterable[Def]) -> "Model":
        """A copy of the model with more declarations (e.g. a line added in a test)."""
        return Model([*self._defs, *extra])

    def __iter__(self) -> Iterator[Def]:
        return iter(self._defs)

    def __len__(self) -> int:
        return len(self._defs)

    def __contains__(self, key: tuple[str, str]) -> bool:
        return key in self._by_key

    def get(self, ref: E.Ref | tuple[str, str]) -> Def:
        key = (ref.space, ref.name) if isinstance(ref, E.Ref) else ref
        try:
            return self._by_key[key]
        except KeyError:
            kind = "figure" if key[0] == "figure" else "line or parameter"
            raise KeyError(f"no {kind} named {key[1]!r} in the model") from None

    def line(self, name: str) -> Def:
        return self.get(("line", name))

    def figure(self, name: str) -> Def:
        return self.get(("figure", name))

    def of_kind(self, kind: str) -> list[Def]:
        return [d for d in self._defs if d.kind == kind]

    @property
    def ledger_lines(self) -> list[Def]:
        """The lines of the ledger (JSON, DataFrame), in order."""
        return [d for d in self._defs if d.kind == "line" and d.show]

    @property
    def figures(self) -> list[Def]:
        """The decision figures reported to the user, in order (hidden working figures left out)."""
        return [d for d in self._defs if d.kind == "figure" and d.show]

    def deps(self, d: Def, sheet: bool = False) -> list[Def]:
        """The declarations a declaration's value refers to directly (``sheet``: also those its
        spreadsheet formula alone uses)."""
        seen: dict[tuple[str, str], Def] = {}
        for n in (E.walk(d.expr) if sheet else E.walk_values(d.expr)):
            if isinstance(n, E.Ref):
                dep = self.get(n)
                seen.setdefault(dep.key, dep)
        return list(seen.values())

    def closure(self, names: Iterable[Def], sheet: bool = False) -> list[Def]:
        """Every declaration the given ones need, themselves included, in declaration order."""
        need: dict[tuple[str, str], Def] = {}
        stack = list(names)
        while stack:
            d = stack.pop()
            if d.key in need:
                continue
            need[d.key] = d
            stack.extend(self.deps(d, sheet))
        return [d for d in self._defs if d.key in need]

    def inputs(self) -> set[str]:
        """Every case input the model reads."""
        return {p for d in self._defs for p in E.inputs(d.expr)}

    def check(self) -> None:
        """Every reference resolves; no formula refers to itself in the same year (only through a lag)."""
        for d in self._defs:
            for n in E.walk(d.expr):
                if isinstance(n, E.Ref):
                    self.get(n)


def renamed(d: Def, **changes) -> Def:
    return replace(d, **changes)


__all__ = ["Def", "Model", "line", "param", "figure", "space", "KINDS", "field"]
