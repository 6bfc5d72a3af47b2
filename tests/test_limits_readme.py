"""Every number of the README's "Limits and safety of inputs" table is the limit in force
(the refusals themselves are tested in test_input_hardening.py and test_work_bounds.py)."""
import re
from pathlib import Path

from circuitode.checks import bounds
from circuitode.errors import EXCERPT_CHARS
from circuitode.netlist.limits import LARGE_FACTOR, ReadPolicy

README = (Path(__file__).resolve().parent.parent / "README.md").read_text(encoding="utf-8")


def _table() -> dict:
    section = README.split("## Limits and safety of inputs", 1)[1].split("\n## ", 1)[0]
    rows = re.findall(r"^\| (.+?) \| (.+?) \|$", section, flags=re.M)
    return {bound: limit for bound, limit in rows if bound not in ("bound", "---")}


def _first_number(text: str) -> float:
    return float(re.match(r"[\d,.e-]+", text).group(0).replace(",", ""))


def test_every_row_of_the_limits_table_is_the_limit_in_force():
    policy, work = ReadPolicy(), bounds.LIMITS
    expected = {
        "size of a netlist or included file": policy.file_bytes,
        "length of a line": policy.line_chars,
        "bracket nesting in one expression": policy.nesting,
        "operators (`+ - * / ^`) on one line": policy.operators,
        "files included in all": policy.include_files,
        "depth of the include chain": policy.include_depth,
        "output points of a run": work.output_points,
        "waveforms held in memory": 100 * bounds.MEMORY_SHARE,
        "`waveforms.csv`, `samples.csv` and kept waveforms on disk": 100 * bounds.DISK_SHARE,
        "switching events and source corners in the window": work.events,
        "sine periods in the window under a stepping method (all but `exact`)": work.periods,
        "states of a circuit (dense state matrix)": work.states,
        "samples of a batch": work.samples,
        "memory of one batch chunk (samples × states² × 8 bytes × 4)": work.chunk_bytes,
        "two events (switch moves, source corners) closer than": bounds.EVENT_SEPARATION,
        "characters of a line shown in an error": EXCERPT_CHARS,
    }
    table = _table()
    assert set(table) == set(expected)
    for bound, value in expected.items():
        assert abs(_first_number(table[bound]) - value) <= 1e-9 * abs(value), bound


def test_the_allow_large_factor_and_exit_codes_in_the_readme():
    assert f"by {LARGE_FACTOR} (the operator limit by 2)" in README
    scaled = ReadPolicy(allow_large=True).scaled()
    assert scaled.line_chars == 100 * ReadPolicy().line_chars and scaled.operators == 2 * ReadPolicy().operators
    assert "4 the environment (disk\nfull, permission denied, folder locked, scheduler unreachable" in README
