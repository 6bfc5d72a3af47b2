"""The README's promises that a script can check: the quick-start commands,
the safety caution, and that CI runs the README's test command verbatim."""
import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _shell_blocks(text: str) -> list[str]:
    return [b.strip() for b in re.findall(r"```sh\n(.*?)```", text, flags=re.S)]


def test_quick_start_has_two_one_line_commands():
    quick = README.split("## Quick start", 1)[1].split("\n## ", 1)[0]
    blocks = _shell_blocks(quick)
    assert len(blocks) == 2
    assert all("\n" not in b for b in blocks)
    assert "circuitode run netlists/" in blocks[0]
    assert "pytest" in blocks[1]


def test_ci_runs_the_readme_test_command_verbatim():
    quick = README.split("## Quick start", 1)[1].split("\n## ", 1)[0]
    test_command = _shell_blocks(quick)[1]
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert f"TEST_COMMAND='{test_command}'" in ci


def test_demo_netlist_of_the_quick_start_exists():
    quick = README.split("## Quick start", 1)[1].split("\n## ", 1)[0]
    demo = re.search(r"circuitode run (\S+\.cnet)", quick).group(1)
    assert (ROOT / demo).is_file()


def test_readme_carries_the_safety_caution():
    safety = README.split("## Safety", 1)[1].split("\n## ", 1)[0].lower()
    assert "local electrical codes" in safety and "licensed practice" in safety
    assert "stored-energy" in safety or "stored energy" in safety


def test_readme_python_example_runs(tmp_path):
    import subprocess
    import sys

    code = re.search(r"## Python API.*?```python\n(.*?)```", README, flags=re.S).group(1)
    script = tmp_path / "example.py"
    script.write_text(code.replace('"lc.csv"', repr(str(tmp_path / "lc.csv"))), encoding="utf-8")
    proc = subprocess.run([sys.executable, str(script)], cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert proc.returncode == 0, proc.stderr
    assert (tmp_path / "lc.csv").is_file()
    # the first printed line is the peak output voltage as (value, unit)
    assert proc.stdout.splitlines()[0].endswith("'V')")


def test_readme_netlist_is_the_one_the_walkthrough_runs():
    # the inline netlist of "The netlist language" is netlists/precharge.cnet from its circuit line on,
    # and the walkthrough runs that same file
    section = README.split("## The netlist language", 1)[1].split("\n## ", 1)[0]
    inline = re.search(r"```\n(.*?)```", section, flags=re.S).group(1).strip("\n")
    walkthrough = README.split("## Walkthrough", 1)[1].split("\n## ", 1)[0]
    ran = re.search(r"\$ circuitode run (\S+\.cnet)", walkthrough).group(1)
    text = (ROOT / ran).read_text(encoding="utf-8")
    assert inline == text[text.index('circuit "'):].strip("\n")
