"""The README keeps its promises: one job paragraph, exactly two quickstart commands,
and CI runs the README's test command."""

from __future__ import annotations

import re

from conftest import REPO


def _quickstart_commands() -> list[str]:
    text = (REPO / "README.md").read_text(encoding="utf-8")
    section = text.split("## Quickstart", 1)[1].split("\n## ", 1)[0]
    block = re.search(r"```bash\n(.*?)```", section, re.S)
    assert block, "the quickstart holds a bash code block"
    return [ln for ln in block.group(1).splitlines() if ln.strip()]


def test_readme_opens_with_the_job_paragraph():
    text = (REPO / "README.md").read_text(encoding="utf-8")
    first = text.split("\n\n")[1]
    assert not first.startswith("#") and "stethoscope" in first and "not a diagnosis" in first


def test_quickstart_has_exactly_two_commands_and_ci_runs_the_test_one():
    commands = _quickstart_commands()
    assert len(commands) == 2
    assert "eddyphone demo" in commands[0]
    assert "pytest" in commands[1]
    ci = (REPO / ".ci" / "run").read_text(encoding="utf-8")
    assert commands[1] in ci.splitlines()
