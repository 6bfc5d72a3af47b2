"""Shared wording and bookkeeping helpers of the graph checks.

Which configurations to examine, the first configuration per distinct state of
the relevant switches, and element or node names as they appear in messages.
No verdicts here: :mod:`circuitode.checks.nodes`, :mod:`circuitode.checks.loops`
and :mod:`circuitode.checks.dc` use these to word theirs.
"""
from __future__ import annotations

from typing import Iterable, Sequence

from ..model import Circuit, Switch
from ..model.configurations import Configuration, _list, reachable_configurations


def _configurations(circuit: Circuit, configurations: Sequence[Configuration] | None) -> Sequence[Configuration]:
    return reachable_configurations(circuit) if configurations is None else configurations


def _distinct(configurations: Iterable[Configuration], relevant: Sequence[int]) -> list[Configuration]:
    """First configuration for each distinct state of the relevant switches."""
    seen: set[tuple[bool, ...]] = set()
    out = []
    for cfg in configurations:
        key = tuple(cfg.closed[i] for i in relevant)
        if key not in seen:
            seen.add(key)
            out.append(cfg)
    return out


def _names(circuit: Circuit, indices: Iterable[int]) -> tuple[str, ...]:
    return tuple(circuit.elements[i].name for i in indices)


def _where(circuit: Circuit, indices: Sequence[int]):
    return circuit.elements[indices[0]].where if indices else None


def _switches_in(circuit: Circuit, indices: Iterable[int]) -> list[str]:
    return [circuit.elements[i].name for i in indices if isinstance(circuit.elements[i], Switch)]


def _nodes_label(nodes: Sequence[str]) -> str:
    return f"node{'s' if len(nodes) > 1 else ''} {_list(nodes)}"
