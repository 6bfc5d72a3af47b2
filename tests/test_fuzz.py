"""Fixed-seed slice of the fuzz suite (tests/fuzzing.py): no input reaches 'internal
error', none hangs, every exit code is a documented one.  bench/fuzz_run.py runs the
same generators for ≥ 100,000 cases."""
import random

import pytest
from hypothesis import given, settings

from fuzzing import DOCUMENTED_EXIT_CODES, EXAMPLES, mutate, netlists, run_case, shorten_window

MUTATION_CASES = 1200
RUN_CASES = 40
MODES_CASES = 100


def _assert_clean(results):
    bad = [(r, text[:200]) for r, text in results if r[0] not in DOCUMENTED_EXIT_CODES]
    assert not bad, bad[:3]


def test_mutated_examples_check_cleanly(tmp_path):
    rng = random.Random(20261202)
    texts = [p.read_text(encoding="utf-8") for p in EXAMPLES]
    results = []
    for _ in range(MUTATION_CASES):
        text = mutate(rng.choice(texts), rng)
        results.append((run_case(text, tmp_path, "check"), text))
    _assert_clean(results)
    codes = {r[0] for r, _ in results}
    assert 2 in codes and 0 in codes  # the fuzzer reaches both accepted and refused input


def test_mutated_examples_run_cleanly(tmp_path):
    rng = random.Random(7)
    texts = [p.read_text(encoding="utf-8") for p in EXAMPLES if "cable" not in p.name]
    results = []
    for _ in range(RUN_CASES):
        text = shorten_window(mutate(rng.choice(texts), rng))
        results.append((run_case(text, tmp_path, "run"), text))
    _assert_clean(results)


def test_mutated_examples_modes_cleanly(tmp_path):
    rng = random.Random(11)
    texts = [p.read_text(encoding="utf-8") for p in EXAMPLES if "cable" not in p.name]
    results = []
    for _ in range(MODES_CASES):
        text = mutate(rng.choice(texts), rng)
        results.append((run_case(text, tmp_path, "modes"), text))
    _assert_clean(results)


@settings(max_examples=300)
@given(text=netlists())
def test_generated_netlists_check_cleanly(tmp_path_factory, text):
    folder = tmp_path_factory.mktemp("gen", numbered=True)
    code, first_line = run_case(text, folder, "check")
    assert code in DOCUMENTED_EXIT_CODES, (code, first_line, text)


@settings(max_examples=40)
@given(text=netlists())
def test_generated_netlists_run_cleanly(tmp_path_factory, text):
    folder = tmp_path_factory.mktemp("genrun", numbered=True)
    code, first_line = run_case(shorten_window(text), folder, "run")
    assert code in DOCUMENTED_EXIT_CODES, (code, first_line, text)
