"""The README's two commands and CI's script stay in step."""

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _commands() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    return re.findall(r"```bash\n(.*?)\n```", text, flags=re.S)


def test_readme_has_exactly_two_commands():
    commands = _commands()
    assert len(commands) == 2, commands
    assert all("\n" not in c for c in commands)


def test_ci_runs_the_readme_test_command():
    test_command = _commands()[1]
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert test_command in ci.splitlines()
    assert "pytest" in test_command
