"""The README's quick start stays true: two commands, and CI runs the second."""

from __future__ import annotations

from pathlib import Path

import pytest

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


def test_python_example_runs(monkeypatch: pytest.MonkeyPatch) -> None:
    """The README's Python section, run as written (doctest), from the repository root."""
    import doctest

    monkeypatch.chdir(README.parent)
    result = doctest.testfile(str(README), module_relative=False, optionflags=doctest.ELLIPSIS)
    assert result.attempted >= 10 and result.failed == 0
