"""The ``fit`` command end to end: free some parameters so that the model matches a capture.

The capture is aligned with the nominal model (as ``compare`` does); each
iteration runs one batch of p + 1 samples through the tolerance engine
(:func:`circuitode.tolerance.engine.simulate_chunk`), the parameter values
carried to element values through the netlist's own expressions.  The bounds
are each parameter's tolerance around its nominal value.  After the fit the
capture is aligned again with the fitted model and the fit repeated once, so
that the alignment does not lean on the nominal values.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any, Mapping, Sequence

import numpy as np

from ..errors import CircuitodeError
from .run import load_any

__all__ = ["FitJobResult", "fit_job"]


@dataclass
class FitJobResult:
    """fit : :class:`circuitode.measured.fit.FitResult`.  nominal : name → value.  shift : s."""

    circuit: Any
    quantity: str
    channel: str
    fit: Any
    nominal: dict
    shift: float
    rms_nominal: float
    problems: list[str] = field(default_factory=list)


def _bounds(circuit, names: Sequence[str]):
    nominal, lower, upper = [], [], []
    for name in names:
        spread = circuit.spreads.get(name)
        if spread is None:
            known = ", ".join(sorted(circuit.spreads)) or "none"
            raise CircuitodeError(f"--free {name}: only a parameter with a tolerance can be fitted (its bounds "
                                  f"are the tolerance); parameters with tolerances: {known}")
        if not 0 < spread.relative < 1 or spread.nominal <= 0:
            raise CircuitodeError(f"--free {name}: needs a positive nominal value and a tolerance below 100 %")
        nominal.append(spread.nominal)
        lower.append(spread.nominal * (1 - spread.relative))
        upper.append(spread.nominal * (1 + spread.relative))
    return np.array(nominal), np.array(lower), np.array(upper)


def fit_job(source: Any, *, measured, channel, quantity: str, free: Sequence[str],
            overrides: Mapping[str, Any] | None = None, shift: float | None = None,
            level: float | None = None, method: str = "exact") -> FitJobResult:
    """Fit the parameters ``free`` of a netlist to a capture's channel (see the module notes)."""
    from ..measured.capture import read_capture
    from ..measured.compare import compare_waveforms
    from ..measured.fit import fit_parameters
    from ..netlist.probe_words import probe_from_words
    from ..tolerance.sample_values import check_supported, element_values
    from ..tolerance.engine import simulate_chunk

    circuit = load_any(source, overrides)
    probe = probe_from_words(quantity, circuit, "--as")
    names = list(dict.fromkeys(n.strip() for n in free if n.strip()))
    if not names:
        raise CircuitodeError("--free needs at least one parameter name, e.g. --free L_cab,R_damp")
    nominal, lower, upper = _bounds(circuit, names)
    check_supported(circuit, names)
    capture = read_capture(measured)
    name = capture.channel(channel)

    def run(thetas: np.ndarray):
        waves = simulate_chunk(circuit, element_values(circuit, names, np.atleast_2d(thetas)), [probe],
                               method=method)
        if not np.all(waves.ok):
            raise CircuitodeError("; ".join(waves.problems.values()))
        return waves.t, waves.signals[0]

    def aligned(theta):
        t, y = run(theta[None, :])
        return compare_waveforms(t[0], y[0], capture.t, capture.channels[name], shift=shift, level=level,
                                 unit=probe.unit)

    first = aligned(nominal)
    result = None
    theta, current = nominal, first
    for _ in range(2):  # fit, re-align on the fitted model, fit again
        times = current.t

        def predict(thetas, times=times):
            t, y = run(thetas)
            return np.stack([np.interp(times, t[k], y[k]) for k in range(y.shape[0])])  # p + 1 rows only

        result = fit_parameters(predict, current.measured, names, theta, lower, upper, offset=True)
        theta = np.clip(result.values, lower, upper)
        current = aligned(theta)
    return FitJobResult(circuit, probe.label, name, result, dict(zip(names, nominal)), current.shift,
                        first.rms_error)
