"""Verdicts on a built circuit, before any equation is set up.

The public entry points are :func:`diagnose` (every finding, as
:class:`~circuitode.errors.Diagnostic` values) and :func:`verify` (raise the
first error), both in ``topology.py``.  The checks live by idea:
``element_checks.py`` (names, values, couplings), ``nodes.py`` (ground,
unconnected nodes, floating parts), ``loops.py`` (shorted sources, capacitor
loops, inductor cut sets), ``dc.py`` (why a DC steady state is not unique);
``graphs.py`` answers their graph queries and ``_words.py`` words names.
"""
from .topology import diagnose, verify

__all__ = ["diagnose", "verify"]
