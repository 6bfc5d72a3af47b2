"""Choosing an integrator from the eigenvalues of the configurations a run visits.

The rule, in order:

1. **exact** when the inputs have exact linear generators (all circuitode
   sources do) and the largest configuration has at most
   :data:`EXACT_MAX_STATES` states: the matrix exponential is exact at every
   output time whatever the stiffness, and costs one dense (n+q)³ exponential
   per segment and step length.
2. Otherwise a **stiff** implicit method when the stiffness ratio
   max|Re λ| / min|Re λ| over the eigenvalues with nonzero real part exceeds
   :data:`STIFF_RATIO` (common practice: explicit methods waste their steps on
   the fast modes long after they have decayed; Hairer & Wanner, *Solving ODEs
   II*, ch. IV.1): ``bdf`` when the system is large (its sparse LU per order
   change is cheaper), ``radau`` otherwise.
3. Otherwise adaptive explicit Dormand–Prince, ``rk45``.
"""
from __future__ import annotations

from typing import Iterable

import numpy as np

__all__ = ["choose_method", "stiffness_ratio", "EXACT_MAX_STATES", "STIFF_RATIO"]

EXACT_MAX_STATES = 400
STIFF_RATIO = 1e3


def stiffness_ratio(eigenvalues) -> float:
    """max|Re λ| / min|Re λ| over eigenvalues whose |Re λ| exceeds 1e-12·max|λ|; 1 if none."""
    lam = np.asarray(eigenvalues, dtype=complex).reshape(-1)
    if lam.size == 0:
        return 1.0
    decay = np.abs(lam.real)
    decay = decay[decay > 1e-12 * max(np.max(np.abs(lam)), np.finfo(float).tiny)]
    if decay.size == 0:
        return 1.0
    return float(decay.max() / decay.min())


def choose_method(eigenvalue_sets: Iterable, inputs_generable: bool = True,
                  step: float | None = None) -> tuple[str, str]:
    """Pick an integrator name and say why.

    Parameters
    ----------
    eigenvalue_sets : iterable of arrays of eigenvalues (1/s), one per configuration.
    inputs_generable : whether every source has an exact linear generator.
    step : the output step, s, if the user gave one (only quoted in the reason).

    Returns
    -------
    (name, reason) : a key of ``METHODS`` and one sentence naming the figures used.

    Examples
    --------
    >>> choose_method([[-1e6, -10.0]], True)[0]
    'exact'
    >>> choose_method([[-1e6, -10.0]], False)[0]
    'radau'
    """
    sets = [np.asarray(s, dtype=complex).reshape(-1) for s in eigenvalue_sets]
    n_max = max((s.size for s in sets), default=0)
    everything = np.concatenate(sets) if sets else np.zeros(0, dtype=complex)
    ratio = stiffness_ratio(everything)
    fastest = float(np.max(np.abs(everything))) if everything.size else 0.0
    figures = (f"{len(sets)} configuration(s), up to {n_max} states, "
               f"fastest |λ| = {fastest:.3g} 1/s, stiffness ratio {ratio:.3g}")
    if step is not None:
        figures += f", output step {step:.3g} s (h·|λ|max = {step * fastest:.3g})"
    if inputs_generable and n_max <= EXACT_MAX_STATES:
        return "exact", (f"exact: linear time-invariant segments with generable inputs "
                         f"and at most {EXACT_MAX_STATES} states ({figures})")
    why_not_exact = ("inputs without an exact generator" if not inputs_generable
                     else f"more than {EXACT_MAX_STATES} states")
    if ratio > STIFF_RATIO:
        name = "bdf" if n_max > EXACT_MAX_STATES else "radau"
        return name, (f"{name}: stiff (ratio above {STIFF_RATIO:g}) and {why_not_exact} "
                      f"({figures})")
    return "rk45", f"rk45: not stiff (ratio at most {STIFF_RATIO:g}) and {why_not_exact} ({figures})"
