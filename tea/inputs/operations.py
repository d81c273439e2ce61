"""Operations by year: the ``[[operations]]`` section of a case, read and laid out year by year.

Each operation names the year or years it falls in (``year = 1``, ``years = [2, 5]``, or ``every = 5`` from
``from = 5``, optionally ``until``), its cost per ha, the diesel it burns, the N it applies and the lime (limestone or dolomite) it spreads. The loader lays
them out as three lists by year from year 0 (``schedule.*_by_year``), which the model reads; an operation after
a row's stand life is dropped there.

>>> ops, problems = parse("operations", [{"name": "lime", "every": 5, "from": 5, "cost_per_ha": 80.0}], "c.toml")
>>> problems, by_year(ops)["schedule.cost_per_ha_by_year"][:11]
([], [0.0, 0.0, 0.0, 0.0, 0.0, 80.0, 0.0, 0.0, 0.0, 0.0, 80.0])
>>> by_year(ops)["schedule.n_kg_per_ha_by_year"]
[0.0]
"""

from __future__ import annotations

import json
import math
from typing import Any, Mapping

from tea.core.errors import Problem
from tea.core.safe_text import toml_value
from tea.inputs import units

#: the last year an operation may fall in: the longest stand life a case may have
HORIZON = 60

#: amount keys of an operation: template with unit slots -> schedule key it adds to
AMOUNTS = {
    "cost_per_{ha}": "schedule.cost_per_ha_by_year",
    "diesel_{l}_per_{ha}": "schedule.diesel_l_per_ha_by_year",
    "n_{kg}_per_{ha}": "schedule.n_kg_per_ha_by_year",
    "limestone_{t}_per_{ha}": "schedule.limestone_t_per_ha_by_year",
    "dolomite_{t}_per_{ha}": "schedule.dolomite_t_per_ha_by_year",
}
TIMING = ("year", "years", "every", "from", "until")


def _spelled() -> dict[str, tuple[str, str, float]]:
    out = {}
    for template, target in AMOUNTS.items():
        for spelling, factor in units.spellings(template).items():
            out[spelling] = (units.spell(template), target, factor)
    return out


def _whole(v: Any) -> bool:
    return isinstance(v, int) and not isinstance(v, bool)


def parse(section: str, table: Any, source: str) -> tuple[list[dict[str, Any]] | None, list[Problem]]:
    """Check an ``[[operations]]`` array; return it in canonical units (metric spellings) and the problems."""
    problems: list[Problem] = []
    if not isinstance(table, list) or not all(isinstance(op, Mapping) for op in table):
        return None, [Problem(source, section, "expected [[operations]] tables (one per operation), got "
                              f"{toml_value(table)}")]
    spelled = _spelled()
    out = []
    for i, op in enumerate(table, start=1):
        where = f"{section}[{i}]"
        bad = lambda key, message: problems.append(Problem(source, f"{where}.{key}", message))  # noqa: E731
        item: dict[str, Any] = {"name": str(op.get("name", f"operation {i}"))}
        for key, value in op.items():
            if key == "name":
                if not isinstance(value, str):
                    bad(key, f"expected text, got {toml_value(value)}")
            elif key in TIMING:
                if key == "years":
                    if not (isinstance(value, list) and value and all(_whole(v) and 0 <= v <= HORIZON for v in value)):
                        bad(key, f"expected a list of whole years 0..{HORIZON}, got {toml_value(value)}")
                        continue
                    twice = sorted({int(v) for v in value if value.count(v) > 1})
                    if twice:
                        bad(key, f"year {twice[0]} is listed twice; list each year once (an operation done twice "
                                 "in a year is one with twice the amounts)")
                        continue
                elif not (_whole(value) and (1 if key == "every" else 0) <= value <= HORIZON):
                    bad(key, f"expected a whole number {'1' if key == 'every' else '0'}..{HORIZON}, "
                             f"got {toml_value(value)}")
                    continue
                item[key] = value
            elif key in spelled:
                name, _, factor = spelled[key]
                if isinstance(value, bool) or not isinstance(value, (int, float)) or not math.isfinite(value) \
                        or value < 0:
                    bad(key, f"expected a number >= 0, got {toml_value(value)}")
                    continue
                if name in item:
                    bad(key, f"given twice (also as {name}); give it once")
                    continue
                item[name] = float(value) * factor
            else:
                bad(key, "unknown key; expected name, year, years, every (with from, until), "
                         + ", ".join(units.spell(t) for t in AMOUNTS))
        ways = [k for k in ("year", "years", "every") if k in op]
        if len(ways) != 1:
            bad("year", "give exactly one of year = N, years = [..] or every = N (with from = N)")
        elif ways[0] != "every" and ("from" in op or "until" in op):
            bad("from", "from and until go with every = N")
        if not any(key in spelled for key in op):  # an amount given but wrong is reported above, not again here
            bad("cost_per_ha", "an operation needs a cost, diesel or N amount")
        out.append(item)
    # the order operations are listed in changes nothing: kept in one order (the case hash ignores it)
    out.sort(key=lambda item: json.dumps(item, sort_keys=True))
    return (out if not problems else None), problems


def years_of(op: Mapping[str, Any]) -> list[int]:
    """The years an operation falls in, up to :data:`HORIZON`."""
    if "year" in op:
        return [int(op["year"])]
    if "years" in op:
        return sorted({int(y) for y in op["years"]})
    start = int(op.get("from", op["every"]))
    end = min(int(op.get("until", HORIZON)), HORIZON)
    return list(range(start, end + 1, int(op["every"])))


def by_year(ops: list[Mapping[str, Any]]) -> dict[str, list[float]]:
    """The schedule lists (years 0..HORIZON) of cost, diesel and N the operations add up to."""
    lists = {target: [0.0] * (HORIZON + 1) for target in AMOUNTS.values()}
    for op in ops:
        for year in years_of(op):
            for template, target in AMOUNTS.items():
                lists[target][year] += float(op.get(units.spell(template), 0.0))
    for target, listed in lists.items():  # up to the last year with an amount (0 after it)
        last = max((i for i, v in enumerate(listed) if v), default=0)
        lists[target] = listed[: last + 1]
    return lists
