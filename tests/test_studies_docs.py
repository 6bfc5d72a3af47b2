"""The README's "Design studies" section shows real output: rerun each command it shows and compare."""
from __future__ import annotations

import re
import shlex
from pathlib import Path

import pytest

from circuitode.cli import main

ROOT = Path(__file__).resolve().parents[1]
SECTION = (ROOT / "README.md").read_text(encoding="utf-8").split("## Design studies", 1)[1].split("\n## ", 1)[0]
BLOCKS = re.findall(r"```\n\$ (circuitode .*?)\n(.*?)```", SECTION, flags=re.S)


def test_the_section_shows_a_sweep_and_a_sizing():
    assert [command.split()[1] for command, _ in BLOCKS] == ["size", "sweep", "sweep"]


@pytest.mark.parametrize("command, shown", BLOCKS, ids=[f"{c.split()[1]}-{c.split()[2]}" for c, _ in BLOCKS])
def test_readme_output_is_what_the_command_prints(command, shown, tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(ROOT)
    argv = shlex.split(command)[1:]
    if argv[0] == "sweep":
        argv += ["--out", str(tmp_path / "sweep")]  # the README's folder stays untouched
    code = main(argv)
    printed = capsys.readouterr().out
    assert code == 0
    expected = shown.rstrip("\n").split("\nfiles:")[0]
    assert printed.rstrip("\n").split("\nfiles:")[0] == expected
