"""Verdicts on a built circuit, before any equation is set up.

The public entry points are :func:`diagnose` (every finding, as
:class:`~circuitode.errors.Diagnostic` values) and :func:`verify` (raise the
first error).  Graph queries (``graphs.py``) and the per-element checks
(``element_checks.py``) are their helpers.
"""
from .topology import diagnose, verify

__all__ = ["diagnose", "verify"]
