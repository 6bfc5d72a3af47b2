"""Verdicts on a built :class:`~circuitode.model.circuit.Circuit`, before any solve: every check, run in order.

:func:`diagnose` runs every check and returns every finding;
:func:`verify` raises the :class:`~circuitode.errors.TopologyError` subclass
named by the first error.  The checks themselves live by idea:
:mod:`circuitode.checks.element_checks` (names, values, couplings),
:mod:`circuitode.checks.nodes` (ground, unconnected nodes, floating parts) and
:mod:`circuitode.checks.loops` (shorted sources, capacitor loops, inductor cut
sets, on every reachable switch configuration).

In every diagnostic ``elements`` names the elements involved (loops, cut sets
and floating parts in file order; a coupling fault starts with the coupling; a
node fault ends with the node) and ``where`` is the first one's place in the
netlist (for a duplicate name: the second use).
"""
from __future__ import annotations

from ..errors import (
    BadCouplingError,
    BadValueError,
    CapacitorLoopError,
    Diagnostic,
    DuplicateNameError,
    FloatingPartError,
    InductorCutsetError,
    NoGroundError,
    ShortedSourceError,
    TopologyError,
    UnconnectedNodeError,
)
from ..gc_pause import collector_paused
from ..model import Circuit
from ..model.configurations import enumerate_configurations
from .element_checks import check_couplings, check_duplicate_names, check_values
from .loops import check_capacitor_loops, check_inductor_cutsets, check_shorted_sources
from .nodes import check_floating_parts, check_ground, check_unconnected_nodes

__all__ = ["diagnose", "verify"]

_ERROR_CLASSES: dict[str, type[TopologyError]] = {
    cls.code: cls
    for cls in (
        NoGroundError,
        UnconnectedNodeError,
        FloatingPartError,
        CapacitorLoopError,
        InductorCutsetError,
        ShortedSourceError,
        BadCouplingError,
        BadValueError,
        DuplicateNameError,
    )
}


@collector_paused
def diagnose(circuit: Circuit, until: float | None = None) -> list[Diagnostic]:
    """Run every check and return every finding, errors and warnings.

    Order: names, values, ground, nodes, floating parts, shorted sources,
    capacitor loops, inductor cut sets, couplings; then a warning if the
    switch configurations had to be capped.

    Parameters
    ----------
    circuit : the built circuit.
    until : end of the run, s; defaults to the analysis window.

    Returns
    -------
    list of Diagnostic (severity "error" or "warning").

    Examples
    --------
    >>> from circuitode.model import Capacitor, Circuit, Resistor, VoltageSource
    >>> from circuitode.model import Dc
    >>> c = Circuit("demo", "gnd", (VoltageSource("V1", "in", "gnd", Dc(5.0)),
    ...                             Capacitor("C1", "in", "gnd", 1e-6)))
    >>> [(d.code, d.elements) for d in diagnose(c)]
    [('capacitor-loop', ('V1', 'C1'))]
    """
    configurations, notes = enumerate_configurations(circuit, until)
    out = check_duplicate_names(circuit) + check_values(circuit) + check_ground(circuit)
    out += check_unconnected_nodes(circuit)
    out += check_floating_parts(circuit, configurations)
    out += check_shorted_sources(circuit, configurations)
    out += check_capacitor_loops(circuit, configurations)
    out += check_inductor_cutsets(circuit, configurations)
    out += check_couplings(circuit)
    out += [Diagnostic("configurations-capped", note, (), "the remaining configurations were not checked", "warning")
            for note in notes]
    return out


def verify(circuit: Circuit, until: float | None = None) -> list[Diagnostic]:
    """Raise if the circuit cannot be simulated; otherwise return the warnings.

    Raises
    ------
    TopologyError
        The subclass matching the first error's code (e.g. CapacitorLoopError),
        carrying every error diagnostic in ``diagnostics``.

    Examples
    --------
    >>> from circuitode.model import Circuit, Resistor
    >>> c = Circuit("demo", None, (Resistor("R1", "a", "b", 1.0), Resistor("R2", "a", "b", 2.0)))
    >>> verify(c)
    Traceback (most recent call last):
    ...
    circuitode.errors.NoGroundError: error [no-ground]: no ground (reference) node is declared
      fix: add `ground NAME` naming the reference node (for example one of a, b)
    """
    found = diagnose(circuit, until)
    errors = [d for d in found if d.severity == "error"]
    if errors:
        raise _ERROR_CLASSES.get(errors[0].code, TopologyError)(errors)
    return found
