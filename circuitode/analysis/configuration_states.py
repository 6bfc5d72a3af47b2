"""The states of each switch configuration: which are free and which an ideal switch ties.

One job: for every configuration a run can reach, say how many states are free
there and which are held (inductor currents behind an open ideal switch) or
tied (capacitors paralleled by a closed ideal switch), from the assembled
state space (:mod:`circuitode.equations.constraints`).  ``circuitode check``
and ``circuitode modes`` print it.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from ..errors import CircuitodeError

__all__ = ["ConfigurationStates", "configuration_states", "dependent_words"]


@dataclass(frozen=True)
class ConfigurationStates:
    """description : e.g. "with K1 open".  when : e.g. "from the start".
    free : names of the free states.  dependent : one sentence per state that a
    constraint fixes.  problem : why the configuration cannot be assembled, or ""."""

    description: str
    when: str
    free: tuple[str, ...]
    dependent: tuple[str, ...]
    problem: str = ""


def configuration_states(circuit: Any, until: float | None = None) -> list[ConfigurationStates]:
    """One :class:`ConfigurationStates` per reachable configuration, in order of first use."""
    from ..equations.statespace import assemble, describe_configuration
    from ..model.configurations import reachable_configurations

    out = []
    for cfg in reachable_configurations(circuit, until):
        description = describe_configuration(circuit, cfg.closed)
        try:
            ss = assemble(circuit, cfg.closed)
        except CircuitodeError as exc:
            out.append(ConfigurationStates(description, cfg.when(), (), (), str(exc)))
            continue
        dependent = dependent_words(ss)
        out.append(ConfigurationStates(description, cfg.when(), ss.free_names, tuple(dependent)))
    return out


def dependent_words(ss: Any) -> tuple[str, ...]:
    """One sentence per state that a constraint of StateSpace ``ss`` fixes."""
    dependent = []
    free = set(ss.free_names)
    for nodes, inductors, switches in ss.held_groups:
        held = [f"current through {l}" for l in inductors if f"current through {l}" not in free]
        state = "held at 0 A" if len(inductors) == 1 else "fixed by the other inductor currents (net 0)"
        for name in held:
            dependent.append(f"{name} is {state} while {' and '.join(switches)} "
                             f"{'is' if len(switches) == 1 else 'are'} open")
    for loop in ss.tied_loops:
        caps = [f"voltage across {n}" for n in loop if f"voltage across {n}" in ss.state_names]
        switches = [n for n in loop if f"voltage across {n}" not in ss.state_names]
        for name in caps:
            if name not in free:
                others = " and ".join(c for c in caps if c != name)
                dependent.append(f"{name} is tied to {others} while {' and '.join(switches)} "
                                 f"{'is' if len(switches) == 1 else 'are'} closed")
    return tuple(dependent)
