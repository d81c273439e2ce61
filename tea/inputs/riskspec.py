"""The [sensitivity] and [risk] sections of a case file: parsed, checked, normalised.

:func:`parse` is called by the case loader for each of the two sections. It
returns the section's content in a normalised, JSON-able form (canonical key
paths, canonical metric units, only what the case gave) and a list of
:class:`~tea.core.errors.Problem`, each naming the file, the key path inside the
section (e.g. ``risk.inputs.yield.mature_t_dm_per_ha.high``) and what was
expected. The normalised form parses again to itself, so ``Case.replace``
can feed it back.

Inputs are named by their case key, in any spelling the case file accepts
(``yield.mature_t_dm_per_ha`` or ``yield.mature_short_ton_dm_per_acre``),
either quoted (``"yield.mature_t_dm_per_ha" = {...}``) or as nested TOML tables
(``[risk.inputs.yield.mature_t_dm_per_ha]``). Values are given in the unit the
spelling names. Two inputs stand for several keys at once:

* ``establishment.cost_multiplier``: multiplies every year-0 establishment
  cost (site preparation, weed control, planting material price, planting
  operation, fertiliser, fencing) and so also the replanting cost; base 1.
* ``establishment.success_probability``: 1 - ``establishment.failure_probability``.

Sensitivity section::

    [sensitivity]
    default_share = 0.2          # inputs without a declared range move by +/- 20 % of their base
    inputs = ["yield.mature_t_dm_per_ha", ...]   # optional: default the nine key inputs
    [sensitivity.ranges]
    "finance.stand_life_years" = { low = 15, high = 25 }
    [sensitivity.surface]        # break-even surface, NPV over a grid of two inputs
    x = "revenue.price_per_t_dm"
    y = "yield.mature_t_dm_per_ha"
    x_low = 60.0                 # optional bounds; default base -/+ 50 %
    points = 11

Risk section::

    [risk]
    draws = 10000                # default draws (the command line may override)
    seed = 1
    failure_event = true         # draw establishment failure (replanting, late ramp-up)
    [risk.inputs.yield.mature_t_dm_per_ha]
    dist = "triangular"
    low = 9.0
    mode = 13.0
    high = 16.0
    [[risk.correlations]]
    inputs = ["yield.mature_t_dm_per_ha", "revenue.price_per_t_dm"]
    rank = -0.3                  # Spearman rank correlation

Distributions: ``uniform`` (low, high), ``triangular`` (low, mode, high),
``normal`` (mean, sd; optional low, high truncate it) and ``lognormal``
(mean and sd of the quantity itself, not of its logarithm; optional low, high).
"""

from __future__ import annotations

import math
import re
from typing import Any, Mapping

import numpy as np

from tea.inputs import schema
from tea.core.errors import Problem
from tea.core.safe_text import toml_value

#: +/- share of the base value an input moves by when the case declares no range
#: (a reporting convention, not a model coefficient)
DEFAULT_SHARE = 0.2
#: the break-even surface spans base -/+ this share of each input by default
SURFACE_SHARE = 0.5
#: grid points along each axis of the break-even surface by default
SURFACE_POINTS = 11
#: draws of a Monte Carlo run when neither the case nor the command line says
DEFAULT_DRAWS = 10_000
#: seed of a Monte Carlo run when neither the case nor the command line says
DEFAULT_SEED = 12345
#: a truncated normal or lognormal must keep at least this share of its mass
#: between its bounds (below it, sampling by rejection would be slow and the
#: distribution is almost surely a typing error)
MIN_TRUNCATED_MASS = 1e-3
MAX_DRAWS = 20_000_000
MAX_SURFACE_POINTS = 101

COST_MULTIPLIER = "establishment.cost_multiplier"
SUCCESS = "establishment.success_probability"
#: the keys the establishment cost multiplier scales
ESTABLISHMENT_COST_KEYS = (
    "establishment.site_preparation_per_ha",
    "establishment.weed_control_per_ha",
    "establishment.planting_unit_price",
    "establishment.planting_operation_per_ha",
    "establishment.fertiliser_per_ha",
    "establishment.fencing_other_per_ha",
)
#: inputs standing for several keys: path -> (lo, hi, unit text, doc)
PSEUDO_INPUTS: dict[str, tuple[float, float | None, str, str]] = {
    COST_MULTIPLIER: (0.0, None, "x", "multiplier on every establishment cost"),
    SUCCESS: (0.0, 1.0, "fraction", "1 - establishment.failure_probability"),
}
#: "revenue.price" in the key-input list means the case's own price key
PRICE = "revenue.price"
#: the key inputs a sensitivity run moves by default, in this order
KEY_INPUTS = (
    "yield.mature_t_dm_per_ha",
    PRICE,
    COST_MULTIPLIER,
    SUCCESS,
    "finance.discount_rate",
    "costs.haul_distance_km",
    "finance.stand_life_years",
    "carbon.credit_price_per_t_co2e",
    "field.current_margin_per_ha",
)
LABELS = {
    "yield.mature_t_dm_per_ha": "Mature yield",
    "revenue.price_per_t_dm": "Biomass price",
    "revenue.price_per_gj": "Biomass price",
    COST_MULTIPLIER: "Establishment cost",
    SUCCESS: "Establishment success",
    "finance.discount_rate": "Discount rate",
    "costs.haul_distance_km": "Haul distance",
    "finance.stand_life_years": "Stand life",
    "carbon.credit_price_per_t_co2e": "Carbon price",
    "field.current_margin_per_ha": "Current-use margin",
    "carbon.crop_f_lu": "SOC factor under the stand",
    "carbon.soc_rate_t_c_per_ha_per_year": "SOC rate",
}
#: sections whose keys cannot be varied between variants of one case
FIXED_SECTIONS = ("case", "crop")

DISTRIBUTIONS: dict[str, tuple[tuple[str, ...], tuple[str, ...]]] = {
    # name: (required parameters, optional parameters)
    "uniform": (("low", "high"), ()),
    "triangular": (("low", "mode", "high"), ()),
    "normal": (("mean", "sd"), ("low", "high")),
    "lognormal": (("mean", "sd"), ("low", "high")),
}
_SPEC_WORDS = {"dist", "low", "high", "mode", "mean", "sd"}
SENSITIVITY_KEYS = ("default_share", "inputs", "ranges", "surface")
SURFACE_KEYS = ("x", "y", "x_low", "x_high", "y_low", "y_high", "points")
RISK_KEYS = ("draws", "seed", "failure_event", "inputs", "correlations")


# ----------------------------------------------------------------------------- key resolution
class InputKey:
    """A resolved input: canonical path, what it is, and its unit factor.

    ``key`` is the schema key (None for the two pseudo-inputs); ``factor``
    turns a value in the given spelling into canonical units.
    """

    def __init__(self, path: str, key: schema.Key | None, factor: float):
        self.path = path
        self.key = key
        self.factor = factor

    @property
    def integer(self) -> bool:
        return self.key is not None and self.key.kind == "int"

    @property
    def bounds(self) -> tuple[float | None, float | None, bool, bool]:
        """Physical range (lo, hi, lo_open, hi_open) of the canonical value."""
        if self.key is None:
            lo, hi, _, _ = PSEUDO_INPUTS[self.path]
            return lo, hi, False, False
        k = self.key
        if k.path == "yield.mature_t_dm_per_ha":
            # no schema bound, but a physical ceiling the loader enforces for every crop
            from tea.inputs.schema import YIELD_CEILING_T_DM_PER_HA

            return k.lo, YIELD_CEILING_T_DM_PER_HA, k.lo_open, False
        return k.lo, k.hi, k.lo_open, k.hi_open

    def unit_text(self, system: str = "metric", currency: str = "") -> str:
        """The unit as shown to people, e.g. ``EUR/t DM``, ``t DM/ha/yr``, ``yr``."""
        if self.key is None:
            return PSEUDO_INPUTS[self.path][2]
        k = self.key
        text = k.unit_text(system, currency)
        if "{t}_dm" in k.template:
            word = "short ton" if system == "us_customary" else "t"
            text = re.sub(rf"(^|/){word}(?=/|$)", rf"\g<1>{word} DM", text, count=1)
        if k.name.endswith("per_gj") and "GJ" not in text:
            text = f"{text}/GJ"
        if not text and k.name.endswith("_years"):
            text = "yr"
        return text


def _spelling_index():
    return schema.spelling_index()


def _suggest(word: str, candidates) -> str:
    return schema.suggest(word, candidates)


def resolve(name: str) -> tuple[InputKey | None, str | None]:
    """Resolve an input name (``section.key`` in any accepted spelling).

    Returns the input, or None and the reason it is not a variable input.
    """
    if not isinstance(name, str) or "." not in name:
        return None, f"expected a case key as section.key (e.g. yield.mature_t_dm_per_ha), got {toml_value(name)}"
    if name in PSEUDO_INPUTS:
        return InputKey(name, None, 1.0), None
    section, _, key = name.partition(".")
    index = _spelling_index()
    if section not in index:
        return None, f"{toml_value(name)}: unknown section {toml_value(section)}" + _suggest(section, list(index))
    hit = index[section].get(key)
    if hit is None:
        extra = [p.partition(".")[2] for p in PSEUDO_INPUTS if p.startswith(section + ".")]
        return None, f"{toml_value(name)}: unknown key" + _suggest(key, list(index[section]) + extra)
    k, factor = hit
    if section in FIXED_SECTIONS or k.kind not in ("float", "int"):
        return None, f"{k.path} cannot be varied: only numeric keys outside [case] and [crop] can"
    return InputKey(k.path, k, factor), None


def _flatten(table: Mapping[str, Any], is_leaf) -> list[tuple[str, Any]]:
    """Input tables as (dotted name, spec): quoted dotted keys or nested tables."""
    out: list[tuple[str, Any]] = []
    for name, value in table.items():
        if "." in name or not isinstance(value, Mapping) or is_leaf(value):
            out.append((name, value))
        else:
            for key, spec in value.items():
                out.append((f"{name}.{key}", spec))
    return out


def _is_number(v: Any) -> bool:
    return isinstance(v, (int, float)) and not isinstance(v, bool) and math.isfinite(v)


def _range_message(inp: InputKey, canonical: float) -> str | None:
    """Why a canonical value is outside the input's physical range, in the spelled unit."""
    lo, hi, lo_open, hi_open = inp.bounds
    shown = (lambda x: x / inp.factor) if inp.factor not in (0.0, 1.0) else (lambda x: x)
    if lo is not None and (canonical < lo or (lo_open and canonical == lo)):
        return f"must be {'>' if lo_open else '>='} {shown(lo):g}, got {shown(canonical):g}"
    if hi is not None and (canonical > hi or (hi_open and canonical == hi)):
        return f"must be {'<' if hi_open else '<='} {shown(hi):g}, got {shown(canonical):g}"
    return None


# ----------------------------------------------------------------------------- parse
def parse(section: str, table: Any, source: str) -> tuple[Any, list[Problem]]:
    """Validate and normalise a [sensitivity] or [risk] table.

    Parameters
    ----------
    section : str
        ``"sensitivity"`` or ``"risk"``.
    table : mapping
        The parsed TOML table (or an earlier normalised value).
    source : str
        File name, for the problems.

    Returns
    -------
    normalised : dict or None
        JSON-able content with canonical key paths and units; None if the
        table is not a table at all.
    problems : list of Problem
        Every problem found, each with its key path.

    Examples
    --------
    A triangular mature yield given per acre in short tons, normalised to t/ha:

    >>> spec, problems = parse("risk", {"inputs": {"yield": {"mature_short_ton_dm_per_acre": {
    ...     "dist": "triangular", "low": 4.0, "mode": 6.0, "high": 8.0}}}}, "case.toml")
    >>> problems, round(spec["inputs"]["yield.mature_t_dm_per_ha"]["mode"], 4)
    ([], 13.4503)
    >>> parse("risk", spec, "case.toml") == (spec, [])
    True
    >>> _, problems = parse("risk", {"inputs": {"yield.site_factor": {"dist": "uniform", "low": 0.5, "high": 2.5}}},
    ...                     "case.toml")
    >>> print(problems[0])
    case.toml: risk.inputs.yield.site_factor.high: must be <= 2, got 2.5
    """
    if not isinstance(table, Mapping):
        return None, [Problem(source, section, f"expected a [{section}] table, got {toml_value(table)}")]
    if section == "sensitivity":
        return _parse_sensitivity(table, source)
    if section == "risk":
        return _parse_risk(table, source)
    return None, [Problem(source, section, "unknown section")]


def _unknown_keys(table: Mapping[str, Any], allowed, where: str, source: str) -> list[Problem]:
    out = []
    for key in table:
        if key not in allowed:
            out.append(Problem(source, f"{where}.{key}", "unknown key" + _suggest(key, allowed)
                               + f" (expected one of {', '.join(allowed)})"))
    return out


def _parse_sensitivity(table: Mapping[str, Any], source: str) -> tuple[dict, list[Problem]]:
    problems = _unknown_keys(table, SENSITIVITY_KEYS, "sensitivity", source)
    bad = lambda key, msg: problems.append(Problem(source, key, msg))  # noqa: E731
    out: dict[str, Any] = {}

    if "default_share" in table:
        share = table["default_share"]
        if not _is_number(share) or not 0.0 < share < 1.0:
            bad("sensitivity.default_share", f"expected a share between 0 and 1 (0.2 means +/- 20 %), got {toml_value(share)}")
        else:
            out["default_share"] = float(share)

    if "inputs" in table:
        given = table["inputs"]
        if not isinstance(given, list) or not given:
            bad("sensitivity.inputs", f"expected a non-empty list of case keys, got {toml_value(given)}")
        else:
            names: list[str] = []
            for i, name in enumerate(given):
                inp, why = resolve(name)
                if inp is None:
                    bad(f"sensitivity.inputs[{i}]", why)
                elif inp.path in names:
                    bad(f"sensitivity.inputs[{i}]", f"{name} is listed twice")
                else:
                    names.append(inp.path)
            out["inputs"] = names

    if "ranges" in table:
        ranges_t = table["ranges"]
        if not isinstance(ranges_t, Mapping):
            bad("sensitivity.ranges", f"expected a table of inputs with low and high, got {toml_value(ranges_t)}")
        else:
            ranges: dict[str, dict[str, float]] = {}
            for name, spec in _flatten(ranges_t, lambda v: bool(set(v) & {"low", "high"})):
                where = f"sensitivity.ranges.{name}"
                inp, why = resolve(name)
                if inp is None:
                    bad(where, why)
                    continue
                if inp.path in ranges:
                    bad(where, "given twice (in two spellings); give it once")
                    continue
                parsed = _parse_low_high(inp, spec, where, source, problems)
                if parsed is not None:
                    ranges[inp.path] = parsed
            listed = out.get("inputs")
            if listed is not None:
                for path in ranges:
                    if path not in listed:
                        bad(f"sensitivity.ranges.{path}", "has a range but is not in sensitivity.inputs; add it there")
            out["ranges"] = ranges

    if "surface" in table:
        surf = table["surface"]
        if not isinstance(surf, Mapping):
            bad("sensitivity.surface", f"expected a table with x, y and optional bounds, got {toml_value(surf)}")
        else:
            out["surface"] = _parse_surface(surf, source, problems)
    return out, problems


def _parse_low_high(inp: InputKey, spec: Any, where: str, source: str, problems: list[Problem]):
    bad = lambda key, msg: problems.append(Problem(source, key, msg))  # noqa: E731
    if not isinstance(spec, Mapping):
        bad(where, f"expected {{ low = ..., high = ... }}, got {toml_value(spec)}")
        return None
    n_before = len(problems)
    problems.extend(_unknown_keys(spec, ("low", "high"), where, source))
    values = {}
    for side in ("low", "high"):
        v = spec.get(side)
        if v is None:
            bad(f"{where}.{side}", f"missing value: expected a number [{inp.unit_text()}]")
            continue
        if not _is_number(v):
            bad(f"{where}.{side}", f"expected a finite number, got {toml_value(v)}")
            continue
        if inp.integer and not float(v).is_integer():
            bad(f"{where}.{side}", f"expected a whole number, got {toml_value(v)}")
            continue
        canonical = float(v) * inp.factor
        why = _range_message(inp, canonical)
        if why:
            bad(f"{where}.{side}", why)
            continue
        values[side] = int(round(canonical)) if inp.integer else canonical
    if len(problems) > n_before:
        return None
    if not values["low"] < values["high"]:
        bad(f"{where}.high", f"must be above low ({toml_value(spec['low'])}), got {toml_value(spec['high'])}")
        return None
    return values


def _parse_surface(surf: Mapping[str, Any], source: str, problems: list[Problem]) -> dict[str, Any]:
    bad = lambda key, msg: problems.append(Problem(source, key, msg))  # noqa: E731
    problems.extend(_unknown_keys(surf, SURFACE_KEYS, "sensitivity.surface", source))
    out: dict[str, Any] = {}
    axes: dict[str, InputKey] = {}
    for axis in ("x", "y"):
        if axis in surf:
            inp, why = resolve(surf[axis])
            if inp is None:
                bad(f"sensitivity.surface.{axis}", why)
            else:
                out[axis] = inp.path
                axes[axis] = inp
    if "x" in out and out.get("x") == out.get("y"):
        bad("sensitivity.surface.y", "must differ from x")
    for axis in ("x", "y"):
        for side in ("low", "high"):
            name = f"{axis}_{side}"
            if name not in surf:
                continue
            v = surf[name]
            if axis not in axes:
                if axis not in surf:
                    bad(f"sensitivity.surface.{name}", f"needs {axis} = \"section.key\" to say which input it bounds")
                continue
            if not _is_number(v):
                bad(f"sensitivity.surface.{name}", f"expected a finite number, got {toml_value(v)}")
                continue
            canonical = float(v) * axes[axis].factor
            why = _range_message(axes[axis], canonical)
            if why:
                bad(f"sensitivity.surface.{name}", why)
                continue
            out[name] = canonical
        lo, hi = out.get(f"{axis}_low"), out.get(f"{axis}_high")
        if lo is not None and hi is not None and not lo < hi:
            bad(f"sensitivity.surface.{axis}_high", f"must be above {axis}_low")
    if "points" in surf:
        n = surf["points"]
        if isinstance(n, bool) or not isinstance(n, int) or not 3 <= n <= MAX_SURFACE_POINTS:
            bad("sensitivity.surface.points", f"expected a whole number from 3 to {MAX_SURFACE_POINTS}, got {toml_value(n)}")
        else:
            out["points"] = int(n)
    return out


def _parse_risk(table: Mapping[str, Any], source: str) -> tuple[dict, list[Problem]]:
    problems = _unknown_keys(table, RISK_KEYS, "risk", source)
    bad = lambda key, msg: problems.append(Problem(source, key, msg))  # noqa: E731
    out: dict[str, Any] = {}
    if "draws" in table:
        n = table["draws"]
        if isinstance(n, bool) or not isinstance(n, int) or not 1 <= n <= MAX_DRAWS:
            bad("risk.draws", f"expected a whole number from 1 to {MAX_DRAWS:,}, got {toml_value(n)}")
        else:
            out["draws"] = int(n)
    if "seed" in table:
        s = table["seed"]
        if isinstance(s, bool) or not isinstance(s, int) or s < 0:
            bad("risk.seed", f"expected a whole number >= 0, got {toml_value(s)}")
        else:
            out["seed"] = int(s)
    if "failure_event" in table:
        f = table["failure_event"]
        if not isinstance(f, bool):
            bad("risk.failure_event", f"expected true or false, got {toml_value(f)}")
        else:
            out["failure_event"] = f

    inputs: dict[str, dict[str, Any]] = {}
    spelled: dict[str, str] = {}
    if "inputs" in table:
        inputs_t = table["inputs"]
        if not isinstance(inputs_t, Mapping):
            bad("risk.inputs", f"expected a table of inputs, each with a distribution, got {toml_value(inputs_t)}")
        else:
            for name, spec in _flatten(inputs_t, lambda v: bool(set(v) & _SPEC_WORDS)):
                where = f"risk.inputs.{name}"
                inp, why = resolve(name)
                if inp is None:
                    bad(where, why)
                    continue
                if inp.path in inputs or inp.path in spelled:
                    bad(where, "given twice (in two spellings); give it once")
                    continue
                spelled[inp.path] = name
                parsed = _parse_distribution(inp, spec, where, source, problems)
                if parsed is not None:
                    inputs[inp.path] = parsed
        out["inputs"] = inputs

    if "correlations" in table:
        corr_t = table["correlations"]
        if not isinstance(corr_t, list):
            bad("risk.correlations", "expected a list of { inputs = [a, b], rank = r } ([[risk.correlations]] tables)")
        else:
            out["correlations"] = _parse_correlations(corr_t, inputs, spelled, source, problems)
    return out, problems


def _parse_distribution(inp: InputKey, spec: Any, where: str, source: str, problems: list[Problem]):
    bad = lambda key, msg: problems.append(Problem(source, key, msg))  # noqa: E731
    if not isinstance(spec, Mapping):
        bad(where, f"expected a table with dist and its parameters, got {toml_value(spec)}")
        return None
    dist = spec.get("dist")
    if dist is None:
        bad(f"{where}.dist", f"missing value: expected one of {', '.join(DISTRIBUTIONS)}")
        return None
    if dist not in DISTRIBUTIONS:
        bad(f"{where}.dist", f"expected one of {', '.join(DISTRIBUTIONS)}, got {toml_value(dist)}"
            + (_suggest(dist, DISTRIBUTIONS) if isinstance(dist, str) else ""))
        return None
    required, optional = DISTRIBUTIONS[dist]
    allowed = ("dist", *required, *optional)
    n_before = len(problems)
    problems.extend(_unknown_keys(spec, allowed, where, source))
    out: dict[str, Any] = {"dist": dist}
    for name in (*required, *optional):
        if name not in spec:
            if name in required:
                bad(f"{where}.{name}", f"missing value: a {dist} distribution needs {', '.join(required)}")
            continue
        v = spec[name]
        if not _is_number(v):
            bad(f"{where}.{name}", f"expected a finite number, got {toml_value(v)}")
            continue
        canonical = float(v) * inp.factor
        if name != "sd":
            why = _range_message(inp, canonical)
            if why:
                bad(f"{where}.{name}", why)
                continue
        out[name] = canonical
    if len(problems) > n_before:
        return None
    lo, hi = out.get("low"), out.get("high")
    if lo is not None and hi is not None and not lo < hi:
        bad(f"{where}.high", f"must be above low ({toml_value(spec['low'])}), got {toml_value(spec['high'])}")
        return None
    if dist == "triangular" and not lo <= out["mode"] <= hi:
        bad(f"{where}.mode", f"must lie between low and high ({toml_value(spec['low'])}..{toml_value(spec['high'])}), got {toml_value(spec['mode'])}")
        return None
    if dist in ("normal", "lognormal"):
        if not out["sd"] > 0:
            bad(f"{where}.sd", f"must be > 0, got {toml_value(spec['sd'])}")
            return None
        if dist == "lognormal":
            if not out["mean"] > 0:
                bad(f"{where}.mean", f"a lognormal quantity is positive: mean must be > 0, got {toml_value(spec['mean'])}")
                return None
            if lo is not None and lo < 0:
                bad(f"{where}.low", f"a lognormal quantity is positive: low must be >= 0, got {toml_value(spec['low'])}")
                return None
        mass = truncated_mass(out, *effective_bounds(inp, out))
        if mass < MIN_TRUNCATED_MASS:
            bad(where, f"the bounds keep only {mass:.2g} of the {dist} distribution's probability; "
                "widen them or move the mean")
            return None
    return out


def _parse_correlations(items: list, inputs: Mapping[str, Any], spelled: Mapping[str, str],
                        source: str, problems: list[Problem]) -> list[dict[str, Any]]:
    bad = lambda key, msg: problems.append(Problem(source, key, msg))  # noqa: E731
    out: list[dict[str, Any]] = []
    pairs: set[tuple[str, str]] = set()
    for i, item in enumerate(items):
        where = f"risk.correlations[{i}]"
        if not isinstance(item, Mapping):
            bad(where, f"expected {{ inputs = [a, b], rank = r }}, got {toml_value(item)}")
            continue
        problems.extend(_unknown_keys(item, ("inputs", "rank"), where, source))
        names, rank = item.get("inputs"), item.get("rank")
        if not isinstance(names, list) or len(names) != 2:
            bad(f"{where}.inputs", f"expected two input names, got {toml_value(names)}")
            continue
        paths = []
        for j, name in enumerate(names):
            inp, why = resolve(name)
            if inp is None:
                bad(f"{where}.inputs[{j}]", why)
            elif inp.path not in spelled:
                bad(f"{where}.inputs[{j}]", f"{name} has no distribution in [risk.inputs]; give it one first")
            else:
                paths.append(inp.path)
        if not _is_number(rank) or not -1.0 < rank < 1.0:
            bad(f"{where}.rank", f"expected a rank correlation strictly between -1 and 1, got {toml_value(rank)}")
            continue
        if len(paths) != 2:
            continue
        if paths[0] == paths[1]:
            bad(f"{where}.inputs", "needs two different inputs")
            continue
        pair = tuple(sorted(paths))
        if pair in pairs:
            bad(f"{where}.inputs", f"the pair {paths[0]}, {paths[1]} is correlated twice")
            continue
        pairs.add(pair)
        out.append({"inputs": paths, "rank": float(rank)})
    if out and all(c["inputs"][0] in inputs and c["inputs"][1] in inputs for c in out):
        names = sorted({p for c in out for p in c["inputs"]})
        matrix = normal_score_correlation(names, out)
        if np.linalg.eigvalsh(matrix).min() <= 0:
            bad("risk.correlations", "the rank correlations cannot hold together (their matrix is not positive "
                "definite); weaken some of them")
    return out


# ----------------------------------------------------------------------------- shared helpers
def effective_bounds(inp: InputKey, dist: Mapping[str, Any]) -> tuple[float, float]:
    """Sampling bounds: the declared ones, within the input's physical range."""
    lo_p, hi_p, _, _ = inp.bounds
    lo = dist.get("low", -math.inf)
    hi = dist.get("high", math.inf)
    if lo_p is not None:
        lo = max(lo, lo_p)
    if hi_p is not None:
        hi = min(hi, hi_p)
    if dist["dist"] == "lognormal":
        lo = max(lo, 0.0)
    return lo, hi


def lognormal_parameters(mean: float, sd: float) -> tuple[float, float]:
    """(mu, sigma) of log X for a lognormal X with the given mean and sd.

    sigma² = ln(1 + sd²/mean²), mu = ln(mean) - sigma²/2 (moments of the
    lognormal distribution; N. L. Johnson, S. Kotz and N. Balakrishnan,
    *Continuous Univariate Distributions*, vol. 1, 2nd ed., Wiley, 1994, ch. 14).

    >>> mu, sigma = lognormal_parameters(1.0, 0.5)
    >>> round(mu, 6), round(sigma, 6)
    (-0.111572, 0.472381)
    """
    sigma2 = math.log1p((sd / mean) ** 2)
    return math.log(mean) - 0.5 * sigma2, math.sqrt(sigma2)


def _phi(x: float) -> float:
    """Standard normal distribution function, via the error function."""
    if x == math.inf:
        return 1.0
    if x == -math.inf:
        return 0.0
    return 0.5 * math.erfc(-x / math.sqrt(2.0))


def truncated_mass(dist: Mapping[str, Any], lo: float, hi: float) -> float:
    """Probability a normal or lognormal keeps between ``lo`` and ``hi``."""
    if dist["dist"] == "normal":
        m, s = dist["mean"], dist["sd"]
        return _phi((hi - m) / s) - _phi((lo - m) / s)
    mu, sigma = lognormal_parameters(dist["mean"], dist["sd"])
    a = -math.inf if lo <= 0 else (math.log(lo) - mu) / sigma
    b = math.inf if hi == math.inf else (math.log(hi) - mu) / sigma
    return _phi(b) - _phi(a)


def normal_score_correlation(names: list[str], correlations: list[Mapping[str, Any]]) -> np.ndarray:
    """Pearson correlation of the normal scores that gives the wanted rank correlations.

    For a bivariate normal pair, Spearman's rho_s and Pearson's r satisfy
    r = 2 sin(pi rho_s / 6) (K. Pearson, 1907; W. H. Kruskal, "Ordinal measures
    of association", J. Amer. Statist. Assoc. 53, 814-861, 1958).
    """
    k = len(names)
    where = {n: i for i, n in enumerate(names)}
    matrix = np.eye(k)
    for c in correlations:
        i, j = where[c["inputs"][0]], where[c["inputs"][1]]
        matrix[i, j] = matrix[j, i] = 2.0 * math.sin(math.pi * c["rank"] / 6.0)
    return matrix


def label(path: str) -> str:
    """A short label of an input for tables and charts."""
    return LABELS.get(path, path)
