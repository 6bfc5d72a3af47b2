"""Frequency response of the state space: H(jω) = C (jωI − A)⁻¹ B + D, per switch configuration.

One job: from the same ``A, B, C, D`` the transient uses, the complex response of
one output to one input over a grid of frequencies, and the impedance seen at a
node, with the resonances found on the curve and their quality factor.

* The solve is vectorised over frequencies: a stack of (n, n) complex systems,
  solved in chunks of :data:`CHUNK_ELEMENTS` matrix entries so that memory stays
  bounded.  Above :data:`circuitode.transient.sparse_driver.SPARSE_STATES` states
  the curves come from the sparse descriptor equations instead (one sparse LU of
  ``jωE − A`` per frequency, :mod:`.sparse_response`), and the poles that set the
  grid and the pole Q are the few found by sparse shift-invert
  (:mod:`.sparse_modes`): the slowest and the least damped, not all of them.
* Impedance at a node: the independent sources are set to zero (voltage sources
  short, current sources open) and a test current is injected from ground into
  the node; Z = V(node) / I.  Where a current cannot be injected (the node is in
  series with an inductor, so the injection would fix an inductor current) a
  test voltage is applied instead and Z = V / I of that source.
* A resonance is a local maximum of |H| (or a local maximum or minimum of |Z|),
  refined by a bounded scalar search.  Its Q is given twice: from the nearest
  pole pair, Q = |λ| / (2 |Re λ|) (Nilsson & Riedel, Electric Circuits, ch. 14:
  series RLC Q = (1/R)√(L/C), parallel RLC Q = R√(C/L)), and from the curve's
  half-power bandwidth, Q = f₀ / Δf (same chapter; for a dip, Δf between the
  points where |Z| = √2 |Z|min).  The two agree for a lone second-order
  resonance and differ where modes overlap.

A future ``require`` on response figures can read :class:`Resonance` fields.
"""
from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Sequence

import numpy as np
from scipy.optimize import brentq, minimize_scalar
from scipy.signal import find_peaks

from ..errors import CircuitodeError, SingularSystemError
from ..equations.statespace import assemble, describe_configuration
from ..model import Circuit, CurrentSource, NodeVoltage, CurrentThrough
from ..model.configurations import reachable_configurations
from ..model import Dc

__all__ = ["CHUNK_ELEMENTS", "ResponseError", "Resonance", "ResponseCurve", "transfer",
           "find_resonances", "frequency_grid", "grid_from_poles", "circuit_response"]

#: Most complex matrix entries solved at once (bounds memory to ~16 bytes × this).
CHUNK_ELEMENTS = 4_000_000
#: Least prominence of a resonance, in natural-log units of |H| (0.01 ≈ 0.09 dB): rounding ripple on a
#: flat stretch is not a resonance.
PROMINENCE = 0.01
_TEST_SOURCE = "test_source_of_impedance"


class ResponseError(CircuitodeError):
    """A frequency response asked of an input, output or node that does not exist."""


@dataclass(frozen=True)
class Resonance:
    """A peak or dip of a response curve.

    frequency_hz : Hz, where |H| is extreme.  magnitude : |H| there, in the curve's unit.
    kind : "peak" or "dip".
    pole_frequency_hz, pole_q : the nearest pole pair's natural frequency (Hz) and Q = |λ|/(2|Re λ|).
    bandwidth_hz, bandwidth_q : half-power width of the curve (Hz) and f₀/Δf; nan when
        the curve does not reach the half-power level on both sides within the grid.
    """

    frequency_hz: float
    magnitude: float
    kind: str
    pole_frequency_hz: float
    pole_q: float
    bandwidth_hz: float
    bandwidth_q: float


@dataclass(frozen=True)
class ResponseCurve:
    """One response over frequency in one switch configuration.

    label : e.g. "voltage at out / Vin" or "impedance at out".  unit : "V/V", "Ω" …
    frequency_hz : (F,) Hz.  values : (F,) complex.
    configuration : words for the switch states.  closed : the states.
    resonances : peaks and dips found on the curve.
    """

    label: str
    unit: str
    frequency_hz: np.ndarray
    values: np.ndarray
    configuration: str
    closed: tuple[bool, ...]
    resonances: tuple[Resonance, ...]

    @property
    def magnitude(self) -> np.ndarray:
        return np.abs(self.values)

    @property
    def phase_deg(self) -> np.ndarray:
        return np.degrees(np.angle(self.values))


def transfer(A, B, C, D, omega) -> np.ndarray:
    """H(jω) = C (jωI − A)⁻¹ B + D for every ω.

    Parameters
    ----------
    A (n, n), B (n, m), C (p, n), D (p, m) : the state-space matrices.
    omega : (F,) rad/s.

    Returns
    -------
    (F, p, m) complex.
    """
    A, B, C, D = (np.atleast_2d(np.asarray(M, dtype=float)) for M in (A, B, C, D))
    omega = np.atleast_1d(np.asarray(omega, dtype=float))
    n = A.shape[0]
    out = np.empty((omega.size, C.shape[0], B.shape[1]), dtype=complex)
    if n == 0:
        out[:] = D
        return out
    chunk = max(1, CHUNK_ELEMENTS // max(1, n * n))
    eye = np.eye(n)
    for start in range(0, omega.size, chunk):  # loop over chunks of frequencies, not samples
        w = omega[start:start + chunk]
        M = 1j * w[:, None, None] * eye - A
        X = np.linalg.solve(M, np.broadcast_to(B, (w.size, *B.shape)))
        out[start:start + chunk] = C @ X + D
    return out


def frequency_grid(matrices, f_min: float | None = None, f_max: float | None = None,
                   points: int = 801) -> np.ndarray:
    """A log-spaced grid (Hz) unless both bounds are given: two decades either side of the
    oscillatory poles of the state matrices, or of all their poles when none oscillates.

    Oscillatory poles set the range when there are any, so that a parasitic
    pole (a picosecond time constant of an open switch's leakage) does not
    stretch the plot over twelve decades."""
    lam = np.concatenate([np.linalg.eigvals(np.atleast_2d(A)) if np.size(A) else np.zeros(0) for A in matrices])
    return grid_from_poles(lam, f_min, f_max, points)


def grid_from_poles(lam, f_min: float | None = None, f_max: float | None = None,
                    points: int = 801) -> np.ndarray:
    """:func:`frequency_grid` from the poles themselves (1/s, complex), e.g. the few a sparse
    eigensolver found."""
    lam = np.asarray(lam, dtype=complex)
    lam = lam[np.abs(lam) > 0]
    ringing = lam[np.abs(lam.imag) > 1e-9 * np.abs(lam)]
    mags = np.abs(ringing if ringing.size else lam) / (2 * np.pi)
    lo = f_min if f_min is not None else (mags.min() / 100 if mags.size else 1.0)
    hi = f_max if f_max is not None else (mags.max() * 100 if mags.size else 1e6)
    if not (0 < lo < hi):
        raise ResponseError(f"the frequency range must have 0 < lowest < highest; got {lo} Hz to {hi} Hz")
    return np.geomspace(lo, hi, points)


def _half_power_width(f, mag, k, extreme, kind, H_of_f) -> float:
    """Hz between the half-power crossings either side of grid index ``k``, each refined by brentq."""
    level = extreme / np.sqrt(2) if kind == "peak" else extreme * np.sqrt(2)
    beyond = mag < level if kind == "peak" else mag > level
    left = np.nonzero(beyond[:k])[0]
    right = np.nonzero(beyond[k:])[0]
    if not left.size or not right.size:
        return np.nan

    def gap(x: float) -> float:
        return float(np.abs(H_of_f(np.array([np.exp(x)]))[0])) - level

    i, j = left[-1], k + right[0]
    f1 = np.exp(brentq(gap, np.log(f[i]), np.log(f[i + 1]), xtol=1e-12))
    f2 = np.exp(brentq(gap, np.log(f[j - 1]), np.log(f[j]), xtol=1e-12))
    return float(f2 - f1)


def find_resonances(f, H_of_f, A, *, dips: bool = False, poles=None) -> tuple[Resonance, ...]:
    """Local maxima (and with ``dips`` minima) of |H| on the grid ``f`` (Hz), refined.

    ``H_of_f`` maps an (F,) array of Hz to (F,) complex values; ``A`` gives the poles
    (or ``poles`` directly, 1/s, when A is not formed: a large circuit's few found poles).
    Extremes at the ends of the grid are not resonances, nor those less prominent
    than :data:`PROMINENCE` (scipy.signal.find_peaks on ln |H|).
    """
    f = np.asarray(f, dtype=float)
    mag = np.abs(H_of_f(f))
    if poles is not None:
        lam = np.asarray(poles, dtype=complex)
    else:
        lam = np.linalg.eigvals(np.atleast_2d(A)) if np.size(A) else np.array([])
    pairs = lam[lam.imag > 0]
    found = []
    level = np.log(np.maximum(mag, 1e-300))
    kinds = [("peak", find_peaks(level, prominence=PROMINENCE)[0])]
    if dips:
        kinds.append(("dip", find_peaks(-level, prominence=PROMINENCE)[0]))
    for kind, where in kinds:
        sign = -1.0 if kind == "peak" else 1.0
        for k in where:
            lo, hi = np.log(f[k - 1]), np.log(f[k + 1])
            best = minimize_scalar(lambda x: sign * float(np.abs(H_of_f(np.array([np.exp(x)]))[0])),
                                   bounds=(lo, hi), method="bounded", options={"xatol": 1e-10})
            f0 = float(np.exp(best.x))
            extreme = float(np.abs(H_of_f(np.array([f0]))[0]))
            if pairs.size:
                near = pairs[np.argmin(np.abs(np.abs(pairs) - 2 * np.pi * f0))]
                pole_f, pole_q = abs(near) / (2 * np.pi), abs(near) / (2 * abs(near.real)) if near.real else np.inf
            else:
                pole_f, pole_q = np.nan, np.nan
            width = _half_power_width(f, mag, k, extreme, kind, H_of_f)
            found.append(Resonance(f0, extreme, kind, float(pole_f), float(pole_q), width, f0 / width))
    return tuple(sorted(found, key=lambda r: r.frequency_hz))


def _ratio_unit(out_unit: str, in_unit: str) -> str:
    special = {("V", "A"): "Ω", ("A", "V"): "S"}
    return special.get((out_unit, in_unit), f"{out_unit}/{in_unit}")


def _impedance_system(circuit: Circuit, node: str, closed):
    """(A, B, C, D, sign) with one input (the test source) and one output: Z = H when sign is +1,
    Z = −1/H when sign is −1 (a test voltage, H the admittance)."""
    if node not in circuit.nodes or node == circuit.ground:
        raise ResponseError(f"--impedance-at {node!r}: not a node of the circuit other than ground "
                            f"({circuit.ground}); nodes: {', '.join(n for n in circuit.nodes if n != circuit.ground)}")
    from ..model import VoltageSource

    others = tuple(e for e in circuit.elements if e.name != _TEST_SOURCE)
    try:  # inject 1 A from ground into the node: Z = V(node) / I
        test = CurrentSource(_TEST_SOURCE, circuit.ground, node, Dc(0.0))
        ss = assemble(replace(circuit, elements=others + (test,)), closed, [NodeVoltage(node)])
        sign = 1.0
    except SingularSystemError:  # node in series with an inductor: apply a test voltage, Z = V / I
        test = VoltageSource(_TEST_SOURCE, node, circuit.ground, Dc(0.0))
        ss = assemble(replace(circuit, elements=others + (test,)), closed, [CurrentThrough(_TEST_SOURCE)])
        sign = -1.0  # the source's current runs from the node through it: the network draws −i
    col = ss.input_names.index(_TEST_SOURCE)
    return ss.A, ss.B[:, [col]], ss.C, ss.D[:, [col]], sign


def checked_request(circuit: Circuit, source, probe, impedance_at) -> list[str]:
    """The names of the circuit's sources, once the request is known to make sense: a transfer
    (a source that exists and a probe) or an impedance; else a :class:`ResponseError`."""
    if probe is None and impedance_at is None:
        raise ResponseError("ask for a transfer (a source and a quantity) or an impedance at a node")
    names = [s.name for s in circuit.sources]
    if probe is not None and source not in names:
        raise ResponseError(f"--from {source!r}: no independent source of that name; sources: "
                            f"{', '.join(names) or 'none'}")
    return names


def circuit_response(
    circuit: Circuit,
    *,
    source: str | None = None,
    probe=None,
    impedance_at: str | None = None,
    until: float | None = None,
    f_min: float | None = None,
    f_max: float | None = None,
    points: int = 801,
) -> tuple[list[ResponseCurve], list[str]]:
    """Responses of every reachable switch configuration.

    Parameters
    ----------
    source : name of the independent source driving ``probe`` (with ``probe``).
    probe : the output (a linear Probe).
    impedance_at : a node whose impedance to ground is wanted.
    until : s, window whose configurations count.  f_min, f_max : Hz; points : grid size.

    Returns
    -------
    (curves, problems) : the curves (transfer first, then impedance, per configuration)
    and one message per configuration that could not be analysed.
    """
    checked_request(circuit, source, probe, impedance_at)
    from ..transient.sparse_driver import SPARSE_STATES

    if len(circuit.state_names) > SPARSE_STATES:  # dense (n, n) solves per frequency: O(n³) each
        from .sparse_response import sparse_circuit_response

        return sparse_circuit_response(circuit, source=source, probe=probe, impedance_at=impedance_at,
                                       until=until, f_min=f_min, f_max=f_max, points=points)
    curves, problems, found = [], [], []
    for cfg in reachable_configurations(circuit, until):
        words = describe_configuration(circuit, cfg.closed)
        try:
            systems = []
            if probe is not None:
                ss = assemble(circuit, cfg.closed, [probe])
                k = ss.input_names.index(source)
                unit = _ratio_unit(probe.unit, ss.input_units[k])
                systems.append((f"{probe.label} / {source}", unit, ss.A, ss.B[:, [k]], ss.C, ss.D[:, [k]], 1.0, False))
            if impedance_at is not None:
                A, B, C, D, sign = _impedance_system(circuit, impedance_at, cfg.closed)
                systems.append((f"impedance at {impedance_at}", "Ω", A, B, C, D, sign, True))
        except SingularSystemError as exc:
            problems.append(f"{words}: not analysed: {exc}")
            continue
        for system in systems:
            label, _, _, _, C, D, sign, _ = system
            if sign > 0 and label.startswith("impedance") and not (np.any(C) or np.any(D)):
                problems.append(f"{words}: impedance at {impedance_at} is 0 Ω at every frequency: a voltage "
                                "source holds the node (sources are set to zero, so it is a short)")
        found.extend((words, cfg.closed, system) for system in systems)
    if not found:
        return [], problems
    f = frequency_grid([system[2] for _, _, system in found], f_min, f_max, points)  # one grid for all
    for words, closed, (label, unit, A, B, C, D, sign, dips) in sorted(found, key=lambda item: item[2][7]):
        def H_of_f(fr, A=A, B=B, C=C, D=D, sign=sign):
            h = transfer(A, B, C, D, 2 * np.pi * np.asarray(fr))[:, 0, 0]
            return h if sign > 0 else -1.0 / h

        curves.append(ResponseCurve(label, unit, f, H_of_f(f), words, closed,
                                    find_resonances(f, H_of_f, A, dips=dips)))
    return curves, problems
