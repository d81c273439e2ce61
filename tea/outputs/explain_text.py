"""`tea explain` in the terminal: a figure or line, its formula, its inputs and the tree it rests on."""

from __future__ import annotations

from typing import Any

import numpy as np

from tea.model.explain import Explanation, Node
from tea.core.texts import fitted
from tea.inputs import display, schema, units


def _value(v: Any, unit: str, currency: str) -> str:
    if isinstance(v, np.ndarray):
        shown = ", ".join(_value(x, "", currency) for x in v[:8])
        return f"[{shown}{', ...' if v.size > 8 else ''}] {unit.replace('money', currency)} in years 0, 1, ..."
    if isinstance(v, str):
        return v
    if v is None or (isinstance(v, float) and not np.isfinite(v)):
        return "no value"
    text = display.number(float(v)) if abs(float(v)) >= 1e-3 or v == 0 else f"{float(v):.3g}"
    return f"{text} {unit.replace('money', currency)}".strip()


def _in_system(v: Any, unit: str, currency: str, system: str) -> str:
    """`` (the value in the case's US customary units)`` where they differ from the model's, else ""."""
    if system == "metric" or isinstance(v, (np.ndarray, str)) or v is None or not np.isfinite(float(v)):
        return ""
    factor, shown = display.convert(1.0, unit, system)
    if factor == 1.0 and shown == unit:
        return ""
    return f" ({_value(float(v) * factor, shown, currency)})"


def _plain(value: Any) -> str:
    """An input's value as the model holds it, to six significant figures (a list item by item)."""
    if isinstance(value, list):
        return ", ".join(_plain(x) for x in value)
    return f"{value:.6g}" if isinstance(value, float) else str(value)


def _as_the_case_gives(path: str, value: Any, currency: str, system: str) -> str:
    """`` (the key as a US customary case spells it = its value there, with the unit)`` where that differs from
    the model's key and value, else ""."""
    k = schema.BY_PATH.get(path)
    if system == "metric" or k is None:
        return ""
    spelled, shown = units.in_system(k.template, value, system)
    if spelled == k.name and shown is value:
        return ""
    return f" ({k.section}.{spelled} = {_plain(shown)} {k.unit_text(system, currency)})"


def _node(n: Node, currency: str, indent: str, out: list[str], system: str = "metric") -> None:
    what = "figure" if n.kind == "figure" else ("parameter" if n.kind == "param" else "line")
    out.append(f"{indent}{n.name} ({what}, {n.unit.replace('money', currency)}) = {_value(n.value, n.unit, currency)}"
               + _in_system(n.value, n.unit, currency, system))
    out.append(f"{indent}  {n.label}: {n.meaning}")
    out.append(f"{indent}  formula:  {n.symbols}")
    out.append(f"{indent}  in words: {n.words}")
    if n.source:
        out.append(f"{indent}  method:   {n.source}")
    if n.inputs:
        out.append(f"{indent}  inputs:   {', '.join(n.inputs)}")
    for c in n.children:
        _node(c, currency, indent + "    ", out, system)
    if n.more:
        out.append(f"{indent}    ... {n.more} more below (raise --depth to see them)")


def explain_text(ex: Explanation, currency: str, system: str = "metric", width: int | None = None) -> str:
    """The explanation as text; lines fitted to ``width`` characters (else one line per item)."""
    out = [f"{ex.case} (case hash {ex.case_hash})" + (f", year {ex.year}" if ex.year is not None else ""), ""]
    if system != "metric":
        out[-1:] = ["The formulas work in metric units per ha; a value in brackets is in the case's units.", ""]
    if ex.no_value:
        what = "figure" if ex.root.kind == "figure" else ("line" if ex.year is None else f"line in year {ex.year}")
        out += [f"No value: this {what} has no value in this case, because {ex.no_value}.", ""]
    _node(ex.root, currency, "", out, system)
    if ex.no_value:
        out += ["", "Case inputs whose change would give it a value (a 1 % change, or a step for a whole number "
                "or a choice):"]
    else:
        out += ["", "Case inputs it uses (a 1 % change, or a step for a whole number or a choice, moves it):"]
    for u in ex.inputs:
        out.append(f"  {u.path} = {_plain(u.value)} {u.unit}{_as_the_case_gives(u.path, u.value, currency, system)}"
                   f"  [{u.origin}] {u.source}".rstrip())
    if ex.constants:
        out += ["", "Constants:"]
        out += [f"  {c['name']} = {c['value']:.10g} {c['unit']}: {c['source']}" for c in ex.constants]
    if ex.unused_inputs:
        out += ["", "In the formulas, but no effect in this case (a branch not taken, a zero factor):",
                "  " + ", ".join(ex.unused_inputs)]
    return "\n".join(fitted(line, width) for line in out)
