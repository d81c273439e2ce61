"""Shared fixtures: where the data and demo cases are, and ways to run the command line.

``run_cli`` calls :func:`tea.cli.main` in this process and captures what it
prints and its exit status (argparse's ``SystemExit`` included); ``run_module``
runs ``python -m tea`` as a separate process, as a user would.
"""

from __future__ import annotations

import contextlib
import io
import json
import os
import subprocess
import sys
import tomllib
from dataclasses import dataclass
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
TESTS_DIR = Path(__file__).resolve().parent
DATA_DIR = TESTS_DIR / "data"
CASES_DIR = ROOT / "cases"
DEMO_CASES = tuple(sorted(CASES_DIR.glob("*.toml")))
DEMO_IDS = tuple(p.stem for p in DEMO_CASES)


@dataclass(frozen=True)
class CliResult:
    """What one run of the command line did."""

    code: int
    out: str
    err: str

    @property
    def text(self) -> str:
        return self.out + self.err

    @property
    def err_lines(self) -> list[str]:
        return [line for line in self.err.splitlines() if line.strip()]


def run_cli(argv: list[str], cwd: Path | None = None) -> CliResult:
    """Run ``tea.cli.main(argv)`` in-process; capture stdout, stderr and the exit status."""
    from tea.cli import main as cli

    out, err = io.StringIO(), io.StringIO()
    here = Path.cwd()
    try:
        if cwd is not None:
            os.chdir(cwd)
        with contextlib.redirect_stdout(out), contextlib.redirect_stderr(err):
            try:
                code = cli.main([str(a) for a in argv])
            except SystemExit as exc:  # argparse: --version, --help, usage errors
                code = exc.code if isinstance(exc.code, int) else (0 if exc.code is None else 2)
    finally:
        os.chdir(here)
    return CliResult(int(code), out.getvalue(), err.getvalue())


def run_module(argv: list[str], cwd: Path | None = None, timeout: float = 120) -> CliResult:
    """Run ``python -m tea ARGV`` as a subprocess."""
    env = dict(os.environ)
    env.pop("TEA_DEBUG", None)
    proc = subprocess.run(
        [sys.executable, "-m", "tea", *[str(a) for a in argv]],
        capture_output=True, text=True, cwd=cwd or ROOT, env=env, timeout=timeout,
    )
    return CliResult(proc.returncode, proc.stdout, proc.stderr)


def toml_value(v) -> str:
    """One value as TOML (floats by their shortest repr, which round-trips exactly)."""
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, str):  # JSON string escapes are TOML basic-string escapes; TOML also bars raw DEL
        return json.dumps(v, ensure_ascii=False).replace("\x7f", "\\u007f")
    if isinstance(v, float):
        return repr(v) if v == v and abs(v) != float("inf") else ("nan" if v != v else ("inf" if v > 0 else "-inf"))
    if isinstance(v, list):
        return "[" + ", ".join(toml_value(x) for x in v) + "]"
    if isinstance(v, dict):
        return "{ " + ", ".join(f"{toml_key(k)} = {toml_value(x)}" for k, x in v.items()) + " }"
    return str(v)


def toml_key(k: str) -> str:
    """A key as TOML: bare if it can be, quoted otherwise."""
    bare = k and all(c.isascii() and (c.isalnum() or c in "_-") for c in k)
    return k if bare else toml_value(k)


def to_toml(data: dict) -> str:
    """A case mapping (sections of keys) as TOML text; non-table top-level values come first."""
    lines = [f"{toml_key(k)} = {toml_value(v)}" for k, v in data.items() if not isinstance(v, dict)]
    for section, table in data.items():
        if isinstance(table, dict):
            lines.append(f"[{toml_key(section)}]")
            lines += [f"{toml_key(key)} = {toml_value(value)}" for key, value in table.items()]
            lines.append("")
    return "\n".join(lines) + "\n"


def copy_case(data: dict) -> dict:
    """A deep-enough copy of a case mapping (sections and lists copied)."""
    import copy

    return copy.deepcopy(data)


@pytest.fixture(scope="session")
def data_dir() -> Path:
    return DATA_DIR


@pytest.fixture(scope="session")
def cases_dir() -> Path:
    return CASES_DIR


@pytest.fixture
def cli():
    """The in-process command line: ``cli(["run", path])`` -> CliResult."""
    return run_cli


@pytest.fixture
def cli_subprocess():
    """The command line as a separate process: ``cli_subprocess(["--version"])`` -> CliResult."""
    return run_module


@pytest.fixture(params=DEMO_CASES, ids=DEMO_IDS)
def demo_path(request) -> Path:
    """Each demo case file in turn."""
    return request.param


@pytest.fixture(scope="session")
def demo_texts() -> dict[str, str]:
    """TOML text of every demo case, by file stem."""
    return {p.stem: p.read_text(encoding="utf-8") for p in DEMO_CASES}


@pytest.fixture(scope="session")
def demo_mappings(demo_texts) -> dict[str, dict]:
    """Parsed TOML of every demo case, by file stem (copy before changing)."""
    return {name: tomllib.loads(text) for name, text in demo_texts.items()}
