"""Case files: load TOML, merge the crop preset, convert units, validate everything at once.

A case is one field, one crop and one deal. :func:`load_case` reads it, lays the
crop preset under the case's own values, converts every quantity to canonical
units (ha, t, kg, km, l, GJ; see :mod:`tea.inputs.units`) and checks every key against
:mod:`tea.inputs.schema`. Every problem is collected, each naming the file, the key
path and what was expected, and raised together as one :class:`~tea.core.errors.CaseError`.
Legal but unusual values become warnings on the case.
"""

from __future__ import annotations

import difflib
import hashlib
import json
import math
import re
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Mapping

from tea.methods import finance
from tea.inputs import published
from tea.inputs import rules, schema, site, units
from tea.inputs.rules import COMMON_CURRENCIES, currency_problem, harvest_energy_problem  # noqa: F401
from tea.core.errors import NOT_GIVEN, UNUSUAL, CaseError, Notice, Problem, read_refused, unreadable
from tea.core.safe_text import SHOWN_LIMIT, clip, toml_value
from tea.inputs.crops import (PLANTING_PRICE, PLANTING_RATE, PLANTING_UNIT, Preset, load_preset,  # noqa: F401
                              preset_for, preset_names, scaled as _scale)

YIELD_CEILING_T_DM_PER_HA = schema.YIELD_CEILING_T_DM_PER_HA

#: a numeric guard, not a model coefficient: no case number means anything
#: beyond 10^12 in size (money per ha, units per ha, years), and below it every
#: sum and product of the ledger stays far inside the float range
MAGNITUDE_LIMIT = 1e12



# ----------------------------------------------------------------------------- the case
@dataclass(frozen=True)
class Case:
    """A validated case: canonical values by dotted key path.

    ``origin[path]`` says where each value came from (``case``, ``preset``,
    ``default`` or ``derived``) and ``notes[path]`` its source note.
    """

    source: str
    values: Mapping[str, Any]
    origin: Mapping[str, str]
    notes: Mapping[str, str]
    warnings: tuple[Notice, ...] = ()
    given_spelling: Mapping[str, str] = field(default_factory=dict)

    def __getitem__(self, path: str) -> Any:
        return self.values[path]

    @property
    def name(self) -> str:
        return self.values["case.name"]

    @property
    def currency(self) -> str:
        return self.values["case.currency"]

    @property
    def unit_system(self) -> str:
        return self.values["case.units"]

    @property
    def area_ha(self) -> float:
        return self.values["field.area_ha"]

    @property
    def stand_life(self) -> int:
        return self.values["finance.stand_life_years"]

    @property
    def preset(self) -> Preset:
        return load_preset(self.values["crop.preset"])

    @property
    def price_basis(self) -> str:
        """``"t_dm"`` or ``"gj"``: which price the case gave."""
        return "gj" if self.values.get("revenue.price_per_gj") is not None else "t_dm"

    @property
    def crop_words(self) -> str:
        """The crop in words, harvested as this case harvests it (:meth:`Preset.described`)."""
        return self.preset.described(self.values["harvest.interval_years"])

    @property
    def price_unit(self) -> str:
        """What the biomass price is per, in words: ``"t DM"`` (a tonne of dry matter) or ``"GJ"``."""
        return "GJ" if self.price_basis == "gj" else "t DM"

    @property
    def real_discount_rate(self) -> float:
        """The real rate the ledger is discounted at (Fisher equation for a nominal rate)."""
        r = self.values["finance.discount_rate"]
        if self.values["finance.rate_basis"] == "nominal":
            return float(finance.fisher_real_rate(r, self.values["finance.inflation"]))
        return r

    @property
    def hash(self) -> str:
        """SHA-256 (first 16 hex digits) of the resolved canonical values."""
        blob = json.dumps(self.values, sort_keys=True, separators=(",", ":"), default=str)
        return hashlib.sha256(blob.encode()).hexdigest()[:16]

    def replace(self, **changes: Any) -> "Case":
        """A copy with some canonical values changed, e.g. ``replace(**{"revenue.price_per_t_dm": 90})``.

        The changed values are validated like a case file's; the result keeps its origin notes.
        """
        raw = self.given()
        for path, value in changes.items():
            section, _, key = path.partition(".")
            raw.setdefault(section, {})[key] = value
        return load_mapping(raw, source=self.source)

    def given(self) -> dict[str, dict[str, Any]]:
        """The values the case file itself gave, canonical, nested by section."""
        out = _nest({p: v for p, v in self.values.items() if self.origin.get(p) == "case" and "." in p})
        for section in EXTENSION_SECTIONS:
            if section in self.values:
                out[section] = self.values[section]
        return out


def case_header(case: Case) -> dict[str, Any]:
    """The keys every JSON output of a case opens with (tying it to its inputs)."""
    from tea import __version__

    return {
        "case": case.name,
        "case_hash": case.hash,
        "tool_version": __version__,
        "currency": case.currency,
        "per": "ha",
        "demo_data": bool(case["case.demo"]),
    }


def _nest(flat: Mapping[str, Any]) -> dict[str, dict[str, Any]]:
    out: dict[str, dict[str, Any]] = {}
    for path, value in flat.items():
        section, _, key = path.partition(".")
        out.setdefault(section, {})[key] = value
    return out


# ----------------------------------------------------------------------------- loading
def load_case(path: str | Path) -> Case:
    """Load and validate a case file (TOML, or a workbook written by `tea`).

    Raises
    ------
    CaseError
        listing every problem, each with the file, key path and what was expected.
    """
    path = Path(path)
    source = str(path)
    if path.is_dir():
        raise CaseError([Problem(source, "", read_refused(IsADirectoryError()))])
    if not path.exists():
        raise CaseError([Problem(source, "", "file not found")])
    if path.suffix.lower() == ".xlsx":
        return _load_workbook(path, source)
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise unreadable(source, exc) from None
    kind = next((what for magic, what in _NOT_CASES.items() if data.startswith(magic)), None)
    if kind is not None:
        raise CaseError([Problem(source, "", f"not a case file: it is {kind}; expected a case file (TOML text, "
                                             ".toml) or a workbook tea wrote (.xlsx)")])
    try:
        text = data.decode("utf-8")
    except UnicodeDecodeError as exc:
        raise CaseError([Problem(source, "", not_utf8(data, exc.start))]) from None
    return load_text(text.replace("\r\n", "\n").replace("\r", "\n"), source=source)  # line ends as text mode reads them




def _count_planting_material(values: dict, origin: dict, notes: dict, warnings: list, preset: Preset, system: str,
                             source: str) -> None:
    """The preset's rate of planting material in the unit the case counts it in (its own ``planting_unit``, else
    the preset's in the case's unit system: seed in pounds in a US customary case), so that the rate and the
    unit price are in one unit; and a warning where a US customary case prices seed without naming the unit,
    which the price is then read in."""
    unit, own = values.get(PLANTING_UNIT), preset.values.get(PLANTING_UNIT)
    if origin.get(PLANTING_RATE) == "preset":
        values[PLANTING_RATE] = preset.planting_rate_in(unit)
        if values[PLANTING_RATE] != preset.values.get(PLANTING_RATE):
            notes[PLANTING_RATE] += f"; counted in {unit}: {preset.values[PLANTING_RATE]:g} {own} per ha"
    if origin.get(PLANTING_UNIT) == "preset" and unit != own:
        notes[PLANTING_UNIT] += f"; a US customary case counts the preset's {own} in pounds"
        if origin.get(PLANTING_PRICE) == "case":
            warnings.append(Notice(source, "establishment.planting_unit_price",
                                   f"read as a price per {unit}, the unit a US customary case counts this seed in; "
                                   f"give planting_unit = \"{own}\" if the price is per {own.split()[0]}",
                                   path=PLANTING_PRICE))


#: the first bytes of files a case is not, and what they are (the formats' published signatures)
_NOT_CASES = {
    b"%PDF-": "a PDF document",
    b"PK\x03\x04": "a zip archive (a workbook is one: give it its .xlsx ending)",
    b"\x89PNG\r\n\x1a\n": "a PNG picture",
    b"\xff\xd8\xff": "a JPEG picture",
    b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1": "an old Office file (.xls, .doc)",
}


def not_utf8(data: bytes, start: int) -> str:
    r"""Where the first byte that is not UTF-8 (at ``start``) sits in ``data``: line and column, the column
    counted in characters.

    >>> not_utf8(b'a = 1\nname = "Caf\xe9"\n', 17)
    'cannot read the file: not UTF-8 text: line 2, column 12 holds the byte 0xe9; save the file as UTF-8'
    """
    line_start = data.rfind(b"\n", 0, start) + 1
    line = data.count(b"\n", 0, start) + 1
    column = len(data[line_start:start].decode("utf-8")) + 1
    return (f"cannot read the file: not UTF-8 text: line {line}, column {column} holds the byte "
            f"0x{data[start]:02x}; save the file as UTF-8")


def _load_workbook(path: Path, source: str) -> Case:
    """A workbook's inputs sheet as a case: every problem at once (wrong cells, and what the loader finds in
    the rest), each naming its cell."""
    from tea.inputs.workbook_reader import CellErrors, read_with_cells  # only when a workbook is read back

    try:
        mapping, cells = read_with_cells(path)
        first: list[Problem] = []
    except CellErrors as exc:
        mapping, cells, first = exc.mapping, exc.cells, list(exc.problems)
    try:
        case = load_mapping(mapping, source=source)
    except CaseError as exc:
        told = {p.key.split(" (")[0] for p in first}
        more = [Problem(p.source, f"{p.key} ({cells[p.key]})" if p.key in cells else p.key, p.message)
                for p in exc.problems if p.key not in told]
        raise CaseError(first + more) from None
    if first:
        raise CaseError(first)
    return case


def load_text(text: str, source: str = "<case>") -> Case:
    """Load and validate a case from TOML text."""
    text = text.removeprefix("\ufeff")  # a byte-order mark some editors put first
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise CaseError([Problem(source, "", f"malformed TOML: {exc}{_quote_line(text, str(exc))}")]) from None
    except RecursionError:
        raise CaseError([Problem(source, "", "malformed TOML: arrays or tables nested too deeply "
                                 "(a case needs at most a few levels)")]) from None
    except ValueError:  # a whole number of thousands of digits, past Python's conversion limit
        raise CaseError([Problem(source, "", "malformed TOML: a number too long to read (thousands of digits)")]) \
            from None
    return load_mapping(data, source=source)


def _quote_line(text: str, message: str) -> str:
    """The offending line of a TOML error, quoted on the same output line."""
    m = re.search(r"at line (\d+)", message)
    if not m:
        return ""
    lines = text.splitlines()
    n = int(m.group(1))
    if not 1 <= n <= len(lines):
        return ""
    line = lines[n - 1].strip()
    return f": {json.dumps(line[:80])}" if line else ""


_spelling_index = schema.spelling_index
_alias_index = schema.alias_index


def _key_text(name: str) -> str:
    """A section or key name as written in TOML: bare if it can be, else quoted with visible escapes.

    Keeps each problem on one line whatever the name holds (newlines, control characters, nothing).
    """
    return name if re.fullmatch(r"[A-Za-z0-9_-]{1,80}", name) else clip(json.dumps(name), SHOWN_LIMIT)


_suggest = schema.suggest


def _suggest_key(word: str, section: str) -> str:
    """The nearest key of a section, named in both unit systems (``area_ha`` or ``area_acre``);
    without a near one, the keys the section takes."""
    index = {**_spelling_index().get(section, {}), **_alias_index().get(section, {})}
    close = difflib.get_close_matches(word, list(index), n=1, cutoff=0.5)
    if not close:
        return f"; [{section}] takes " + ", ".join(k.name for k in schema.keys_in(section))
    k, _ = index[close[0]]
    template = next((t for t in (k.template, *k.aliases) if close[0] in units.spellings(t)), k.template)
    names = list(dict.fromkeys(units.spell(template, system) for system in units.SYSTEMS))
    return "; did you mean " + " or ".join(repr(n) for n in names) + "?"


def _expected(k: schema.Key, system: str = "metric", currency: str = "") -> str:
    if k.kind == "enum":
        return "one of " + ", ".join(k.choices)
    if k.kind == "bool":
        return "true or false"
    if k.kind == "str":
        return "a text string"
    what = {"float": "a number", "int": "a whole number", "list": "a list of numbers"}[k.kind]
    unit = k.unit_text(system, currency)
    return f"{what}" + (f" [{unit}]" if unit else "")


def _type_error(k: schema.Key, value: Any, system: str = "metric", currency: str = "") -> str | None:
    """Why ``value`` has the wrong type for ``k``, or None (units as ``system`` and ``currency`` spell them)."""
    is_num = isinstance(value, (int, float)) and not isinstance(value, bool)

    def too_big() -> str:
        return f"expected {_expected(k, system, currency)} of size at most {MAGNITUDE_LIMIT:g}, got {toml_value(value)}"

    if k.kind == "float":
        if not is_num:
            return f"expected {_expected(k, system, currency)}, got {toml_value(value)}"
        if isinstance(value, float) and not math.isfinite(value):
            return f"expected a finite number, got {toml_value(value)}"
        if abs(value) > MAGNITUDE_LIMIT:  # exact for any int: no conversion to float
            return too_big()
    elif k.kind == "int":
        if isinstance(value, float) and value.is_integer():
            return too_big() if abs(value) > MAGNITUDE_LIMIT else None
        if not (isinstance(value, int) and not isinstance(value, bool)):
            return f"expected a whole number, got {toml_value(value)}"
        if abs(value) > MAGNITUDE_LIMIT:
            return too_big()
    elif k.kind in ("str", "enum"):
        if not isinstance(value, str):
            return f"expected {_expected(k, system, currency)}, got {toml_value(value)}"
        if k.kind == "enum" and value not in k.choices:
            return f"expected one of {', '.join(k.choices)}, got {toml_value(value)}" + _suggest(value, k.choices)
    elif k.kind == "bool":
        if not isinstance(value, bool):
            return f"expected true or false, got {toml_value(value)}"
    elif k.kind == "list":
        if not isinstance(value, list) or not value:
            return f"expected a non-empty list of numbers, got {toml_value(value)}"
        for v in value:
            if isinstance(v, bool) or not isinstance(v, (int, float)) or \
                    (isinstance(v, float) and not math.isfinite(v)) or abs(v) > MAGNITUDE_LIMIT:
                return f"expected a list of finite numbers, got {toml_value(value)}"
    return None


def _range_error(k: schema.Key, value: Any, factor: float, system: str, typed: Any = None) -> str | None:
    """Why a canonical ``value`` is outside the key's physical range, or None.

    Bounds are shown in the unit the case used (``factor`` converts to canonical); ``typed`` is the value as
    the case wrote it (``70``, not ``70.0``), where known.
    """
    if k.kind not in ("float", "int", "list") or (k.lo is None and k.hi is None):
        return None
    items = value if isinstance(value, list) else [value]
    shown = (lambda x: x / factor) if factor not in (0.0, 1.0) else (lambda x: x)
    for v in items:
        if k.lo is not None and (v < k.lo or (k.lo_open and v == k.lo)):
            sign = ">" if k.lo_open else ">="
            return f"must be {sign} {shown(k.lo):g}, got {shown(v):g}"
        if k.hi is not None and (v > k.hi or (k.hi_open and v == k.hi)):
            sign = "<" if k.hi_open else "<="
            unit = " (as a fraction: 0.2 means 20 %)" if k.unit.startswith("fraction") and k.hi == 1.0 else ""
            if k.unit.startswith("fraction"):  # a percentage typed as a whole number: the entries above the bound
                # shown as written in the case file, or (a number read from a table cell) in its shortest form
                show = toml_value if typed is not None else _shortest
                typed = value if typed is None else typed
                above = lambda x: x > k.hi or (k.hi_open and x == k.hi)  # noqa: E731 - fails the upper bound
                meant = [round(x / 100, 12) if above(x) else x for x in (typed if isinstance(typed, list) else [typed])]
                if all(not above(x) and (k.lo is None or x >= k.lo) for x in meant):
                    written = show(meant if isinstance(typed, list) else meant[0])
                    return (f"must be {sign} {shown(k.hi):g}, got {shown(v):g}; it looks like a percentage: "
                            f"write fractions, {written} for {show(typed)}")
            return f"must be {sign} {shown(k.hi):g}{unit}, got {shown(v):g}"
    return None


def _shortest(value: Any) -> str:
    """A number or list of numbers in its shortest form (40, not 40.0)."""
    if isinstance(value, list):
        return "[" + ", ".join(_shortest(v) for v in value) + "]"
    return f"{value:g}"


def load_mapping(data: Mapping[str, Any], source: str = "<case>") -> Case:
    """Validate a case given as nested mappings (the parsed TOML).

    Every problem is collected; a :class:`CaseError` lists them all.
    """
    problems: list[Problem] = []
    warnings: list[Notice] = []

    def bad(key: str, message: str) -> None:
        problems.append(Problem(source, key, message))

    values: dict[str, Any] = {}
    origin: dict[str, str] = {}
    notes: dict[str, str] = {}
    spelled: dict[str, str] = {}
    typed: dict[str, Any] = {}  # key path -> the value as the case wrote it (for an error's hint)
    factors: dict[str, float] = {}
    rejected: dict[str, str] = {}  # key path -> spelling of a value refused (reported once, not again as missing)
    misplaced: set[str] = set()  # key paths found in the wrong section (reported there, not again as missing)
    fresh_given = False

    index, aliases = _spelling_index(), _alias_index()
    if not isinstance(data, Mapping):
        raise CaseError([Problem(source, "", "expected a TOML document of [sections]")])

    # 1. the case's own keys: known, well typed, one spelling each (a wrong one told in the case's currency)
    case_table = data.get("case")
    given_currency = case_table.get("currency") if isinstance(case_table, Mapping) else None
    given_currency = given_currency if isinstance(given_currency, str) and not currency_problem(given_currency) else ""
    for section, table in data.items():
        if section in EXTENSION_SECTIONS:
            parsed, found = _parse_extension(section, table, source)
            problems.extend(found)
            if parsed is not None:
                values[section] = parsed
                origin[section] = "case"
                notes[section] = "case file"
            continue
        if section not in index:
            every = schema.SECTIONS + EXTENSION_SECTIONS
            bad(_key_text(section), "unknown section" + _suggest(section, every) + f" (sections: {', '.join(every)})")
            close = difflib.get_close_matches(section, schema.SECTIONS, n=1, cutoff=0.5)
            if close and isinstance(table, Mapping):  # its keys were meant for [close]: not reported again as missing
                misplaced.update(k.path for k in schema.keys_in(close[0]))
            continue
        if not isinstance(table, Mapping):
            bad(section, f"expected a [{section}] table of keys, got {toml_value(table)}")
            rejected.update({k.path: k.name for k in schema.keys_in(section)})
            continue
        for key, value in table.items():
            path = f"{section}.{_key_text(key)}"
            hit = index[section].get(key) or aliases.get(section, {}).get(key)
            if hit is None:
                elsewhere = [s for s in index if key in index[s]]
                hint = f"; it belongs in [{elsewhere[0]}]" if elsewhere else _suggest_key(key, section)
                bad(path, "unknown key" + hint)
                if elsewhere:
                    misplaced.add(index[elsewhere[0]][key][0].path)
                continue
            k, factor = hit
            if k.path in values or k.path in rejected:
                bad(path, f"given twice (also as {k.section}.{spelled.get(k.path) or rejected[k.path]}); give it once")
                continue
            us = key == units.spell(k.template, "us_customary") != units.spell(k.template)
            why = _type_error(k, value, "us_customary" if us else "metric", given_currency)
            if why:
                bad(path, why)
                rejected[k.path] = key
                continue
            typed[k.path] = value
            if k.kind == "int":
                value = int(value)
            elif k.kind == "float":  # 150 and 150.0 are one value: one case, one hash
                value = float(value)
            elif k.kind == "list":
                value = [float(v) for v in value]
            if key in aliases.get(section, {}) and k.path == "yield.mature_t_dm_per_ha":
                fresh_given = True
            values[k.path] = _scale(value, factor)
            origin[k.path] = "case"
            notes[k.path] = "case file"
            spelled[k.path] = key
            factors[k.path] = factor

    if isinstance(values.get("operations"), list):  # [[operations]] laid out by year for the model
        from tea.inputs import operations
        for path, listed in operations.by_year(values["operations"]).items():
            if path in values:
                bad(path, "given both as [[operations]] and as a list; give one")
                continue
            values[path], origin[path], notes[path] = listed, "operations", "case file, [[operations]]"

    system = values.get("case.units", "metric") if values.get("case.units") in units.SYSTEMS else "metric"
    currency = values.get("case.currency") if isinstance(values.get("case.currency"), str) else ""

    # 2. the crop preset under the case's values
    preset = None
    preset_name = values.get("crop.preset")
    if isinstance(preset_name, str):
        found = preset_for(preset_name)
        if found is None:
            bad("crop.preset", f"unknown crop preset {toml_value(preset_name)}; "
                f"expected one of {', '.join(preset_names())} "
                "or a crop name `tea presets` lists" + _suggest(preset_name, preset_names()))
        else:
            preset = load_preset(found)
            if found != preset_name:  # a crop name: the preset that models it, and the name kept for the outputs
                values["crop.preset"] = found
                notes["crop.preset"] = f"case file ({preset_name})"
                if "crop.name" not in values:
                    values["crop.name"], origin["crop.name"], notes["crop.name"] = preset_name, "case", "case file"
    if preset is not None:
        for path, value in preset.values_in(system).items():
            if path not in values:
                values[path] = value
                origin[path] = "preset"
                notes[path] = f"preset {preset.name}: {preset.sources[path]}"
        _count_planting_material(values, origin, notes, warnings, preset, system, source)

    # 3. fresh-weight yield to dry matter
    if fresh_given and "yield.fresh_moisture" not in rejected:
        m = values.get("yield.fresh_moisture")
        if m is None:
            bad("yield.fresh_moisture", "missing value: a mature yield given as fresh tonnes needs its moisture content "
                "(wet-basis fraction, e.g. 0.5)")
        elif 0.0 <= m < 1.0:
            values["yield.mature_t_dm_per_ha"] *= 1.0 - m
            notes["yield.mature_t_dm_per_ha"] = f"case file, fresh yield at {m:.0%} moisture"

    # 4. defaults, derived values and missing ones
    for k in schema.KEYS:
        if k.path in values or k.path in rejected or k.path in misplaced:
            continue
        if k.default is schema.REQUIRED:
            bad(f"{k.section}.{units.spell(k.template, system)}",  # named as the case's unit system spells it
                f"missing value: expected {_expected(k, system, currency)}")
        elif k.default is schema.PRESET:
            if preset is not None:  # without a preset, the crop.preset problem says it all
                bad(f"{k.section}.{units.spell(k.template, system)}",
                    f"missing value: preset {preset.name} does not set it; expected {_expected(k, system, currency)}")
        elif k.default is schema.DERIVED:
            pass  # below, once climate and soil are known
        else:
            values[k.path], notes[k.path] = schema.default_in(k, system)
            origin[k.path] = "default"
            if k.path == "field.current_margin_per_ha":
                warnings.append(Notice(source, f"field.{units.spell(k.template, system)}",
                                       "not given; the current use is taken to earn 0 a year", path=k.path,
                                       kind=NOT_GIVEN))
    _derive(values, origin, notes, problems, source)

    # 5. physical ranges
    for k in schema.KEYS:
        v = values.get(k.path)
        if v is None or k.path in {p.key for p in problems}:
            continue
        why = _range_error(k, v, factors.get(k.path, 1.0), system, typed.get(k.path))
        if why:
            bad(spelled.get(k.path) and f"{k.section}.{spelled[k.path]}" or k.path, why)
            rejected[k.path] = spelled.get(k.path, k.name)
            continue
        warn_hi = k.usual_hi(str(values.get("case.currency", "")))
        for item in v if isinstance(v, list) else [v]:
            if k.kind in ("float", "int") and (
                (k.warn_lo is not None and item < k.warn_lo) or (warn_hi is not None and item > warn_hi)
            ):
                # in the spelling and unit the case used (or its unit system's, for preset values)
                spelling = spelled.get(k.path) or units.spell(k.template, system)
                f = factors.get(k.path) or units.spellings(k.template).get(spelling, 1.0)
                lo = None if k.warn_lo is None else k.warn_lo / f
                hi = None if warn_hi is None else warn_hi / f
                unit = k.unit_text(system, str(values.get("case.currency", "")))
                expected = f"{'' if lo is None else f'{lo:g}'}..{'' if hi is None else f'{hi:g}'}"
                warnings.append(Notice(source, f"{k.section}.{spelling}", f"{item / f:g} is unusual (expected "
                                       f"{expected}{f' [{unit}]' if unit else ''})", path=k.path, kind=UNUSUAL,
                                       value=item / f, low=lo, high=hi, unit=unit or None, check=True))

    # 6. the site climate: the yield estimate when none is given, a warning above it
    site.apply(values, origin, notes, problems, warnings, source, spelled)

    # 7. rules that tie keys together
    rate = values.get("loan.rate")
    if isinstance(rate, float) and rate != 0.0 and 1.0 + rate == 1.0 and "loan.rate" not in rejected:
        # the annuity and the interest lines cannot tell it from 0, but would divide by it
        values["loan.rate"] = 0.0
        warnings.append(Notice(source, "loan.rate", f"{rate:g} is too small to change any payment (1 + rate rounds "
                               "to 1); taken as 0, an interest-free loan", path="loan.rate"))
    rules.cross_checks(values, problems, warnings, source, spelled, set(rejected) | misplaced, origin)
    if not problems:
        rules.spec_checks(values, warnings, source)

    if problems:
        raise CaseError(_dedupe(problems))
    return Case(source, values, origin, notes, tuple(warnings), spelled)


EXTENSION_SECTIONS = ("sensitivity", "risk", "operations")


def _parse_extension(section: str, table: Any, source: str) -> tuple[Any, list[Problem]]:
    """Validate an extension section with its module's ``parse(section, table, source)``.

    It returns the normalised (JSON-able) content and a list of problems.
    """
    if section == "operations":
        from tea.inputs import operations
        return operations.parse(section, table, source)
    try:
        from tea.inputs import riskspec
    except ImportError:
        return None, [Problem(source, section, "this version of tea does not read this section")]
    return riskspec.parse(section, table, source)


def _dedupe(problems: list[Problem]) -> list[Problem]:
    seen, out = set(), []
    for p in problems:
        if (p.key, p.message) not in seen:
            seen.add((p.key, p.message))
            out.append(p)
    return out


def _derive(values, origin, notes, problems, source) -> None:
    """Fill DERIVED keys from published tables (SOC_ref, land-use factors, input factors)."""
    climate, soil = values.get("field.climate"), values.get("field.soil")
    known_site = climate in schema.CLIMATES and soil in schema.SOILS

    def put(path: str, value: float, note: str) -> None:
        if path not in values:
            values[path] = value
            origin[path] = "derived"
            notes[path] = note

    if "carbon.soc_ref_t_c_per_ha" not in values and known_site:
        try:
            put("carbon.soc_ref_t_c_per_ha", published.soc_ref_t_c_per_ha(climate, soil),
                f"IPCC 2006 Vol.4 Ch.2 Table 2.3, {climate}, {soil}")
        except KeyError:
            problems.append(Problem(source, "carbon.soc_ref_t_c_per_ha",
                                    f"missing value: IPCC Table 2.3 has no default for {climate} on {soil}; "
                                    "give the reference stock [t C/ha]"))
    use = values.get("field.current_use")
    if climate in schema.CLIMATES and use in schema.LAND_USES:
        f_lu, f_mg, f_i = published.land_use_factors(use, climate)
        for name, f in (("f_lu", f_lu), ("f_mg", f_mg), ("f_i", f_i)):
            put(f"carbon.current_{name}", f, f"IPCC 2006 Vol.4 Tables 5.5/6.2, {use}, {climate}")
        biomass, cf, why = published.prior_biomass_t_dm_per_ha(use, climate)
        put("carbon.prior_biomass_t_dm_per_ha", biomass, why + f"; {use}, {climate}")
        crop_use = values.get("carbon.crop_land_use")
        if crop_use in schema.LAND_USES:
            under = published.crop_land_use(crop_use, use)
            f_lu, f_mg, f_i = published.land_use_factors(under, climate)
            for name, f in (("f_lu", f_lu), ("f_mg", f_mg), ("f_i", f_i)):
                put(f"carbon.crop_{name}", f, f"IPCC 2006 Vol.4 Table 5.5 (Ch.6 rule for cropland converted to "
                    f"perennial grass) / Table 6.2, {under} after {use}, {climate}")
    factors = published.default_input_factors()
    for path, key in (
        ("carbon.diesel_kg_co2_per_l", "diesel_kg_co2_per_l"),
        ("carbon.n_manufacture_kg_co2e_per_kg", "fertiliser_n_kg_co2e_per_kg_n"),
        ("carbon.p2o5_manufacture_kg_co2e_per_kg", "fertiliser_p2o5_kg_co2e_per_kg_p2o5"),
        ("carbon.k2o_manufacture_kg_co2e_per_kg", "fertiliser_k2o_kg_co2e_per_kg_k2o"),
        ("carbon.haul_kg_co2e_per_t_km", "road_haulage_kg_co2e_per_t_km"),
    ):
        entry = factors[key]
        put(path, entry["value"], entry["source"])
    for k in schema.KEYS:
        if k.default is schema.DERIVED and k.path not in values and not any(p.key == k.path for p in problems):
            if not known_site or use not in schema.LAND_USES:
                continue  # the climate/soil/use problem is reported already
            if k.path.startswith("carbon.crop_f_") and crop_use not in schema.LAND_USES:
                continue  # the missing or wrong crop land use (or preset) is reported already
            problems.append(Problem(source, k.path, f"missing value: expected {_expected(k)}"))
