"""Do two revisions print the same thing?  A guard for refactors.

Checks out each revision in a temporary git worktree, runs the README's
commands and every example through ``check``, ``modes`` and ``run`` with the
current interpreter (each revision's own package first on ``sys.path``), and
compares standard output, standard error and exit code byte for byte.

    .venv/bin/python bench/same_output.py BEFORE [AFTER]

AFTER defaults to the working tree.  Prints one line per command and exits 1
if any differs.  Not a test: a refactor that is meant to change no behaviour
is run through it before it lands (DEVELOPERS.md, "Refactors").
"""
from __future__ import annotations

import difflib
import os
import subprocess
import sys
import tempfile
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def commands(tree: Path) -> list[list[str]]:
    """The commands to compare: the README demo, then every example."""
    cmds = [["run", "netlists/precharge.cnet"]]
    for netlist in sorted((tree / "netlists").glob("*.cnet")):
        rel = str(netlist.relative_to(tree))
        cmds += [["check", rel], ["modes", rel], ["run", rel, "--no-plots", "--out", "out-" + netlist.stem]]
    return cmds


def run_all(tree: Path) -> dict[str, tuple[int, str, str]]:
    env = dict(os.environ, PYTHONPATH=str(tree), COLUMNS="80")
    results = {}
    for cmd in commands(tree):
        proc = subprocess.run([sys.executable, "-m", "circuitode", *cmd], cwd=tree, env=env,
                              capture_output=True, text=True)
        results[" ".join(cmd)] = (proc.returncode, proc.stdout, proc.stderr)
    return results


def checkout(rev: str, into: Path) -> Path:
    subprocess.run(["git", "-C", str(ROOT), "worktree", "add", "-q", "--detach", str(into), rev],
                   check=True)
    return into


def copy_working_tree(into: Path) -> Path:
    """The working tree's files (tracked and new, not ignored), so outputs land outside it."""
    listed = subprocess.run(["git", "-C", str(ROOT), "ls-files", "-co", "--exclude-standard"],
                            check=True, capture_output=True, text=True).stdout.split("\n")
    for rel in filter(None, listed):
        src = ROOT / rel
        if src.is_file():
            (into / rel).parent.mkdir(parents=True, exist_ok=True)
            (into / rel).write_bytes(src.read_bytes())
    return into


def main(argv: list[str]) -> int:
    if not 1 <= len(argv) <= 2:
        print(__doc__)
        return 2
    with tempfile.TemporaryDirectory() as tmp:
        trees = [checkout(argv[0], Path(tmp) / "before")]
        trees.append(checkout(argv[1], Path(tmp) / "after") if len(argv) == 2
                         else copy_working_tree(Path(tmp) / "after"))
        try:
            before, after = (run_all(t) for t in trees)
        finally:
            for t in trees[:1] if len(argv) == 1 else trees:
                subprocess.run(["git", "-C", str(ROOT), "worktree", "remove", "--force", str(t)])
    differ = 0
    for cmd in sorted(set(before) | set(after)):
        same = before.get(cmd) == after.get(cmd)
        print(f"{'same   ' if same else 'DIFFERS'}  circuitode {cmd}")
        if not same:
            differ += 1
            a = "".join(map(str, before.get(cmd, ("missing",)))).splitlines()
            b = "".join(map(str, after.get(cmd, ("missing",)))).splitlines()
            print("\n".join(list(difflib.unified_diff(a, b, "before", "after", lineterm=""))[:40]))
    print(f"{len(before)} commands, {differ} differ")
    return 1 if differ else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
