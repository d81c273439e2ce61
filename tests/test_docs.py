"""The README's generated reference matches the code's own tables (tea.docs)."""

from pathlib import Path

from tea.outputs import docs

ROOT = Path(__file__).resolve().parent.parent


def test_readme_reference_is_current():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    assert docs.update(text) == text, "README.md is stale: run `python -m tea.outputs.docs`"


def test_readme_has_exactly_two_setup_commands():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    setup = text.split("## Set-up: two commands", 1)[1].split("\n## ", 1)[0]
    commands = [block for block in setup.split("```sh")[1:]]
    assert len(commands) == 2
    assert "tea run cases/" in commands[0] and "pytest" in commands[1]


def test_ci_runs_the_readme_test_command():
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    setup = text.split("## Set-up: two commands", 1)[1]
    test_command = setup.split("```sh")[2].split("```")[0].strip()
    assert test_command in (ROOT / ".ci" / "run").read_text(encoding="utf-8")
