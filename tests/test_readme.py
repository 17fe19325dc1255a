"""The README's quick start stays true: two commands, and CI runs the second."""

from __future__ import annotations

from pathlib import Path

README = Path(__file__).parent.parent / "README.md"
CI = Path(__file__).parent.parent / ".ci" / "run"


def quick_start() -> list[str]:
    return [line.removeprefix("    $ ") for line in README.read_text().splitlines() if line.startswith("    $ ")]


def test_quick_start_has_two_commands() -> None:
    commands = quick_start()
    assert len(commands) == 2
    assert commands[0].startswith("pip install . && mergecheck ")
    assert commands[1].startswith('pip install ".[test]" && pytest')


def test_ci_runs_the_readme_test_command() -> None:
    assert "sed -n 's/^    \\$ //p' README.md | sed -n 2p" in CI.read_text()
