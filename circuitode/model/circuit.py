"""The :class:`Circuit`: a built, numeric circuit that every stage after the netlist reads.

It gathers the elements (:mod:`circuitode.model.elements`) in file order, the
couplings, the analysis window, records and requirements
(:mod:`circuitode.model.run_settings`, :mod:`circuitode.model.probes`), and
the parameters with their spreads and recipes.  All numbers are SI floats
(Ω, F, H, V, A, s, Hz, rad).  Component tolerances are kept aside in
``spreads``; ``recipes`` say how each element value that depends on a spread
parameter is recomputed from sampled parameters.  The lookups here (by name,
nodes, graph, kinds, inputs, state names) are cached views, never new facts.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import TYPE_CHECKING, Mapping

if TYPE_CHECKING:
    import networkx as nx

from .elements import Capacitor, Coupling, CurrentSource, Diode, Element, Inductor, Switch, TwoTerminal, VoltageSource
from .probes import Probe
from .run_settings import Analysis, Recipe, Requirement, Spread

__all__ = ["Circuit"]


@dataclass(frozen=True)
class Circuit:
    """A built, numeric circuit.

    elements : two-terminal elements in file order.  couplings : inductor couplings.
    ground : the reference node's name.  parameters : nominal value of every `param`
    and of every inline-toleranced value (by element name).  spreads : tolerances by
    parameter name.  recipes : (element name, field) → expression over parameter
    names, for each element value that depends on a spread; field is a dataclass
    field name such as "resistance", or "waveform.amplitude" for a source field.
    parameter_units : unit of each `param` in evaluation order ("" plain number,
    None when its expression gives no unit of the language).
    """

    title: str
    ground: str | None
    elements: tuple[TwoTerminal, ...]
    couplings: tuple[Coupling, ...] = ()
    analysis: Analysis | None = None
    records: tuple[Probe, ...] = ()
    requirements: tuple[Requirement, ...] = ()
    parameters: Mapping[str, float] = field(default_factory=dict)
    spreads: Mapping[str, Spread] = field(default_factory=dict)
    recipes: Mapping[tuple[str, str], Recipe] = field(default_factory=dict)
    source_file: str | None = None
    parameter_units: Mapping[str, str | None] = field(default_factory=dict)

    # -- lookups ---------------------------------------------------------
    @cached_property
    def by_name(self) -> dict[str, Element]:
        table: dict[str, Element] = {}
        for e in (*self.elements, *self.couplings):
            table.setdefault(e.name, e)
        return table

    def element(self, name: str) -> Element:
        return self.by_name[name]

    @cached_property
    def nodes(self) -> tuple[str, ...]:
        """Node names, ground first (if declared), then in order of first appearance."""
        seen: dict[str, None] = {}
        if self.ground is not None:
            seen[self.ground] = None
        for e in self.elements:
            seen.setdefault(e.first, None)
            seen.setdefault(e.second, None)
        return tuple(seen)

    @cached_property
    def graph(self) -> nx.MultiGraph:
        """Nodes are node names; one edge per two-terminal element, key = element name,
        attribute ``element`` holds the element."""
        import networkx as nx  # loads slowly; only the graph checks need it

        g = nx.MultiGraph()
        g.add_nodes_from(self.nodes)
        for e in self.elements:
            g.add_edge(e.first, e.second, key=e.name, element=e)
        return g

    def of_kind(self, kind: type) -> tuple:
        return tuple(e for e in self.elements if isinstance(e, kind))

    @property
    def capacitors(self) -> tuple[Capacitor, ...]:
        return self.of_kind(Capacitor)

    @property
    def inductors(self) -> tuple[Inductor, ...]:
        return self.of_kind(Inductor)

    @property
    def switches(self) -> tuple[Switch, ...]:
        return self.of_kind(Switch)

    @property
    def sources(self) -> tuple[VoltageSource | CurrentSource, ...]:
        return tuple(e for e in self.elements if isinstance(e, (VoltageSource, CurrentSource)))

    diodes = property(lambda self: self.of_kind(Diode), doc="The diodes, in file order.")

    @property
    def inputs(self) -> tuple:
        """The state space's inputs in order: the sources, then each diode's drop."""
        return self.sources + self.diodes

    @cached_property
    def state_names(self) -> tuple[str, ...]:
        """State variables in order: every capacitor voltage, then every inductor current."""
        return tuple(f"voltage across {c.name}" for c in self.capacitors) + tuple(
            f"current through {l.name}" for l in self.inductors
        )

    @cached_property
    def state_units(self) -> tuple[str, ...]:
        return ("V",) * len(self.capacitors) + ("A",) * len(self.inductors)
