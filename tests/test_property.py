"""Property-based tests of the case loader: bad input is refused cleanly, never with a crash.

Starting from the demo cases (inputs only), hypothesis deletes keys and
sections, inserts unknown ones, puts wrong types, NaN, infinities, huge,
tiny and negative numbers, random text and wrong nesting in, and feeds
garbage TOML text to the loader the command line uses. Every input must
either load, and then compute through the ledger and the figures with a
finite NPV, or raise exactly :class:`tea.CaseError` whose every problem has a
source, a key path (or the whole file) and a one-line message. Nothing else
may escape. A sample of bad cases is also written to files and run through
:func:`tea.cli.main`. ``derandomize=True`` makes every run draw the same
examples.
"""

from __future__ import annotations

import copy
import datetime as dt
import math
import tempfile
import tomllib
from pathlib import Path

import hypothesis.strategies as st
from hypothesis import HealthCheck, given, settings

import tea
import tea.inputs.schema
import tea.inputs.units
from tea.inputs import schema
from tea.inputs.case import load_mapping, load_text
from tea.core.errors import CaseError

from conftest import DEMO_CASES, run_cli, to_toml

SOURCE = "generated.toml"
TEXTS = {p.stem: p.read_text(encoding="utf-8") for p in DEMO_CASES}
BASES = {stem: tomllib.loads(text) for stem, text in TEXTS.items()}
STEMS = sorted(BASES)
SPELLINGS = {s: sorted({sp for k in schema.keys_in(s) for t in (k.template, *k.aliases)
                        for sp in tea.inputs.units.spellings(t)}) for s in schema.SECTIONS}
ALL_SPELLINGS = sorted((s, sp) for s, names in SPELLINGS.items() for sp in names)
WHOLE_FILE = ("malformed TOML", "expected a TOML document")

COMMON = dict(deadline=None, derandomize=True, database=None,
              suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large, HealthCheck.filter_too_much])

# ------------------------------------------------------------------------------ values
SPECIAL_NUMBERS = [0, 0.0, -0.0, 1, -1, 0.5, 1.0, 1.5, 2, -0.5, 100.0, 1e6, 1e12, 1e13, -1e12, 1e300, -1e300,
                   1e-300, 5e-324, 2**63, -(2**63), 10**30, math.nan, math.inf, -math.inf]

numbers = st.one_of(
    st.sampled_from(SPECIAL_NUMBERS),
    st.floats(allow_nan=True, allow_infinity=True),
    st.floats(min_value=-2.0, max_value=2.0),
    st.integers(),
    st.integers(min_value=-5, max_value=70),
)
texts = st.text(max_size=12)
scalars = st.one_of(numbers, texts, st.booleans(), st.dates(), st.times(),
                    st.datetimes(min_value=dt.datetime(1, 1, 2), max_value=dt.datetime(9999, 12, 30)))
junk = st.one_of(
    scalars,
    st.lists(st.one_of(numbers, texts, st.booleans()), max_size=6),
    st.dictionaries(texts, scalars, max_size=3),
)
key_names = st.one_of(texts, st.sampled_from([sp for _, sp in ALL_SPELLINGS]).map(lambda s: s + "_x"),
                      st.sampled_from(["area_hectares", "haul_distance_furlongs", "mature_t_dm_per_hectare",
                                       "price_per_tonne", "stand_life", "rate_basis", "name", ""]))


def _valid_value(k: schema.Key):
    """A strategy of values of the key's type, mostly inside its range (so that many cases load)."""
    lo = -1e6 if k.lo is None else k.lo
    hi = 1e6 if k.hi is None else k.hi
    if k.kind == "float":
        return st.one_of(st.floats(min_value=lo, max_value=hi), st.sampled_from([lo, hi]))
    if k.kind == "int":
        return st.integers(min_value=int(max(lo, -100)), max_value=int(min(hi, 80)))
    if k.kind == "enum":
        return st.sampled_from(k.choices)
    if k.kind == "bool":
        return st.booleans()
    if k.kind == "list":
        return st.lists(st.floats(min_value=lo, max_value=hi), min_size=1, max_size=30)
    return texts


# ------------------------------------------------------------------------------ mutations
def _tables(data):
    return [s for s, t in data.items() if isinstance(t, dict)]


def _keyed(data):
    return [(s, k) for s in _tables(data) for k in data[s]]


@st.composite
def _mutate(draw, data, ops):
    op = draw(st.sampled_from(ops))
    tables, keyed = _tables(data), _keyed(data)
    if op == "delete_key" and keyed:
        s, k = draw(st.sampled_from(keyed))
        del data[s][k]
    elif op == "delete_section" and data:
        del data[draw(st.sampled_from(sorted(data)))]
    elif op == "unknown_key":
        section = draw(st.sampled_from(tables or list(schema.SECTIONS)))
        data.setdefault(section, {})
        if isinstance(data[section], dict):
            data[section][draw(key_names)] = draw(junk)
    elif op == "unknown_section":
        data[draw(st.one_of(texts, st.sampled_from(["fields", "finanse", "cost", "harvests", "risk", "sensitivity"])))] \
            = draw(st.one_of(st.dictionaries(key_names, junk, max_size=3), junk))
    elif op == "replace_value" and keyed:
        s, k = draw(st.sampled_from(keyed))
        data[s][k] = draw(junk)
    elif op == "set_schema_key":
        s, k = draw(st.sampled_from(ALL_SPELLINGS))
        if not isinstance(data.get(s), dict):
            data[s] = {}
        data[s][k] = draw(junk)
    elif op == "valid_value":
        key = draw(st.sampled_from(schema.KEYS))
        if key.path != "crop.preset":
            if not isinstance(data.get(key.section), dict):
                data[key.section] = {}
            spelling = draw(st.sampled_from(sorted(key.spellings())))
            data[key.section][spelling] = draw(_valid_value(key))
    elif op == "scale_number":
        nums = [(s, k) for s, k in keyed
                if isinstance(data[s][k], (int, float)) and not isinstance(data[s][k], bool)]
        if nums:
            s, k = draw(st.sampled_from(nums))
            data[s][k] = data[s][k] * draw(st.sampled_from([-1, 0, 0.5, 2, 10, 1e6, 1e-6, 1e15, -1e15]))
    elif op == "move_key" and keyed and len(tables) > 1:
        s, k = draw(st.sampled_from(keyed))
        dst = draw(st.sampled_from([t for t in tables if t != s]))
        data[dst][k] = data[s].pop(k)
    elif op == "nest" and tables:
        s = draw(st.sampled_from(tables))
        if draw(st.booleans()) or not data[s]:
            data[s] = {"inner": data[s]}
        else:
            k = draw(st.sampled_from(sorted(data[s])))
            data[s][k] = {k: data[s][k]}
    elif op == "section_scalar" and tables:
        data[draw(st.sampled_from(tables))] = draw(junk)
    return data


ALL_OPS = ["delete_key", "delete_section", "unknown_key", "unknown_section", "replace_value", "set_schema_key",
           "valid_value", "scale_number", "move_key", "nest", "section_scalar"]


@st.composite
def mutated_cases(draw, ops=ALL_OPS, min_ops=1, max_ops=4):
    data = copy.deepcopy(BASES[draw(st.sampled_from(STEMS))])
    for _ in range(draw(st.integers(min_value=min_ops, max_value=max_ops))):
        draw(_mutate(data, ops))
    return data


@st.composite
def garbage_texts(draw):
    text = TEXTS[draw(st.sampled_from(STEMS))]
    op = draw(st.sampled_from(["truncate", "insert", "delete", "replace_line", "duplicate_line", "random",
                               "swap_equals", "replace_value_text"]))
    lines = text.splitlines()
    if op == "truncate":
        return text[: draw(st.integers(0, len(text)))]
    if op == "insert":
        at = draw(st.integers(0, len(text)))
        return text[:at] + draw(st.text(min_size=1, max_size=8)) + text[at:]
    if op == "delete":
        at = draw(st.integers(0, len(text) - 1))
        return text[:at] + text[at + draw(st.integers(1, 40)):]
    if op == "replace_line":
        i = draw(st.integers(0, len(lines) - 1))
        lines[i] = draw(st.text(max_size=30))
        return "\n".join(lines)
    if op == "duplicate_line":
        i = draw(st.integers(0, len(lines) - 1))
        return "\n".join(lines[: i + 1] + [lines[i]] + lines[i + 1:])
    if op == "swap_equals":
        return text.replace(" = ", draw(st.sampled_from([": ", " == ", " ", "="])), draw(st.integers(1, 5)))
    if op == "replace_value_text":
        i = draw(st.integers(0, len(lines) - 1))
        if " = " in lines[i]:
            key = lines[i].split(" = ")[0]
            lines[i] = f"{key} = " + draw(st.sampled_from(
                ["nan", "inf", "-inf", "+inf", "1e400", "-1e400", "0x1F", "0o7", "1_000", "true", "[]", "{}",
                 "[1, 'a']", "1979-05-27T07:32:00Z", "'text'", "-0.0", "9999999999999999999999", "{ a = 1 }"]))
        return "\n".join(lines)
    return draw(st.text(max_size=200))


# ------------------------------------------------------------------------------ the property
def _check_outcome(load, data=None) -> str:
    """Load; a loaded case must compute with a finite NPV; a refused one must say why, cleanly."""
    try:
        case = load()
    except CaseError as exc:
        assert type(exc) is CaseError  # exactly the input error, not a subclass or another error
        assert exc.problems
        for p in exc.problems:
            assert p.source == SOURCE
            assert isinstance(p.message, str) and p.message.strip()
            assert isinstance(p.key, str)
            if not p.key:
                assert p.message.startswith(WHOLE_FILE), p
            assert "\n" not in str(p), repr(str(p))
        return "refused"
    frame = tea.build_ledger(case)
    res = tea.summarise(case, frame)
    assert res["npv"] is not None and math.isfinite(res["npv"]), (res["npv"], data)
    assert len(frame) == case.stand_life + 1
    return "loaded"


@settings(max_examples=500, **COMMON)
@given(mutated_cases())
def test_mutated_mappings(data):
    _check_outcome(lambda: load_mapping(data, source=SOURCE), data)


@settings(max_examples=300, **COMMON)
@given(mutated_cases(ops=["valid_value", "scale_number", "valid_value", "delete_key"], max_ops=5))
def test_mostly_valid_mappings_compute(data):
    # most of these load: the ledger and the figures must then compute with a finite NPV
    _check_outcome(lambda: load_mapping(data, source=SOURCE), data)


@settings(max_examples=300, **COMMON)
@given(garbage_texts())
def test_garbage_text(text):
    _check_outcome(lambda: load_text(text, source=SOURCE), text)


@settings(max_examples=100, **COMMON)
@given(mutated_cases())
def test_mutated_mappings_as_toml_text(data):
    # the same mutations through TOML text, as a case file would arrive
    _check_outcome(lambda: load_text(to_toml(data), source=SOURCE), data)


def test_demo_cases_load_as_the_property_expects():
    # the starting points themselves load and compute (so mutations start from a good case)
    for stem in STEMS:
        assert _check_outcome(lambda: load_mapping(copy.deepcopy(BASES[stem]), source=SOURCE)) == "loaded"


# ------------------------------------------------------------------------------ through the command line
REQUIRED_NUMBERS = [k for k in schema.KEYS if k.default is schema.REQUIRED and k.kind == "float"]
FRACTIONS = [k for k in schema.KEYS if k.unit == "fraction" and k.hi == 1.0]


@st.composite
def surely_bad(draw):
    """A mutated demo case with at least one problem the loader must report."""
    data = draw(mutated_cases(ops=[op for op in ALL_OPS if op != "section_scalar"], min_ops=0, max_ops=2))
    kind = draw(st.sampled_from(["unknown_key", "wrong_type", "out_of_range", "unknown_section", "missing"]))
    if kind == "unknown_key":
        section = draw(st.sampled_from(schema.SECTIONS))
        data[section] = data[section] if isinstance(data.get(section), dict) else {}
        data[section]["zz_" + draw(st.text(alphabet="abcdefgh_", max_size=6))] = draw(junk)
    elif kind == "wrong_type":
        k = draw(st.sampled_from(REQUIRED_NUMBERS))
        data[k.section] = data[k.section] if isinstance(data.get(k.section), dict) else {}
        for spelling in k.spellings():
            data[k.section].pop(spelling, None)
        data[k.section][k.name] = draw(st.text(max_size=5))
    elif kind == "out_of_range":
        k = draw(st.sampled_from(FRACTIONS))
        data[k.section] = data[k.section] if isinstance(data.get(k.section), dict) else {}
        data[k.section][k.name] = draw(st.floats(min_value=1.01, max_value=1e6))
    elif kind == "unknown_section":
        data["zz_" + draw(st.text(alphabet="abcdefgh", max_size=6))] = {"x": 1}
    else:
        k = draw(st.sampled_from([k for k in schema.KEYS if k.default is schema.REQUIRED]))
        data[k.section] = data[k.section] if isinstance(data.get(k.section), dict) else {}
        for spelling in k.spellings():
            data[k.section].pop(spelling, None)
    return data


@settings(max_examples=20, **COMMON)
@given(surely_bad())
def test_bad_cases_through_the_cli(data):
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "generated_bad.toml"
        path.write_text(to_toml(data), encoding="utf-8")
        for command in ("check", "run"):
            res = run_cli([command, str(path)])
            assert res.code == 2, res.text
            assert "Traceback" not in res.text and "internal error" not in res.text
            assert res.err_lines
            assert all(line.startswith(f"error: {path}") for line in res.err_lines), res.err
            assert res.out == ""
