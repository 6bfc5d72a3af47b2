"""Eigen-analysis of the state matrix: natural frequency, damping and Q per mode.

For ``dx/dt = A x + B u`` each eigenvalue λ of ``A`` is a natural mode
``e^{λt}``.  Per mode this module reports ωn = |λ| (rad/s and Hz), damping ratio
ζ = −Re λ / |λ|, quality factor Q = 1/(2ζ), time constant 1/|Re λ| and a class
(Nilsson & Riedel, Electric Circuits, ch. 8; Ogata, Modern Control
Engineering, ch. 5), plus which states take part in it.

Classification rule (stated plainly because it is a choice):

* a complex-conjugate pair is reported once, as the pair: *underdamped*
  (Re λ < 0), *undamped* (|Re λ| ≤ ``tolerance``·|λ|) or *growing oscillation*
  (Re λ > 0);
* an eigenvalue with |Im λ| ≤ ``tolerance``·|λ| counts as real.  Two stable real
  eigenvalues that both involve at least one capacitor *and* one inductor state
  (each with participation ≥ ``pair_share``) and that share states are taken as
  one second-order L–C section: *critically damped* when they are equal within
  ``tolerance`` (relative), else *overdamped*, with the section's
  ωn = √(λ1 λ2) and ζ = −(λ1 + λ2) / (2 √(λ1 λ2)) ≥ 1 (the roots of
  s² + 2ζωn s + ωn²; Nilsson & Riedel ch. 8).  Pairs are formed greedily,
  most-overlapping participation first;
* any other real eigenvalue is its own first-order mode: *aperiodic
  (first-order)* when λ < 0 (ζ = 1 by the formula, Q = ½), *growing* when λ > 0,
  *integrating* when λ ≈ 0 (|λ| ≤ ``zero_tolerance`` × ‖A‖₁, i.e. within a
  few hundred rounding errors of the eigenvalue computation; a slow bleeder
  discharge of seconds beside microsecond modes is still a real mode).

Participation of state i in mode k is the participation factor
|l_ik r_ik| / Σ_j |l_jk r_jk| from the left and right eigenvectors (Kundur,
Power System Stability and Control, ch. 12; Pérez-Arriaga, Verghese &
Schweppe, IEEE Trans. PAS, 1982 — both cited from memory).  Unlike raw
eigenvector magnitudes it does not depend on the units of the states (volts
against amperes), so it names the capacitors and inductors that really form
the mode.
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Sequence

import numpy as np
import scipy.linalg

from ..errors import CircuitodeError

__all__ = [
    "ModeAnalysisError",
    "Mode",
    "ConfigurationModes",
    "analyse_modes",
    "circuit_modes",
    "mode_rows",
    "eigen_summary",
    "UNDERDAMPED",
    "UNDAMPED",
    "GROWING_OSCILLATION",
    "CRITICALLY_DAMPED",
    "OVERDAMPED",
    "APERIODIC",
    "GROWING",
    "INTEGRATING",
]

UNDERDAMPED = "underdamped"
UNDAMPED = "undamped"
GROWING_OSCILLATION = "growing oscillation"
CRITICALLY_DAMPED = "critically damped"
OVERDAMPED = "overdamped"
APERIODIC = "aperiodic (first-order)"
GROWING = "growing (unstable)"
INTEGRATING = "integrating (λ = 0)"


class ModeAnalysisError(CircuitodeError):
    """The state matrix or state names handed to the mode analysis are unusable."""


@dataclass(frozen=True)
class Mode:
    """One natural mode (or one pair of eigenvalues reported together).

    eigenvalues : the eigenvalues this mode stands for, 1/s: one for a first-order
        mode; for a complex pair the member with Im λ > 0 and its conjugate; for an
        L–C section with real roots both roots, slower first.
    natural_frequency : ωn, rad/s.  damping_ratio : ζ (dimensionless; NaN for λ = 0).
    quality_factor : Q = 1/(2ζ) (inf when ζ = 0).  time_constant : 1/|Re λ| in s of
        the slowest eigenvalue of the mode (inf when Re λ = 0).
    kind : the class (see the module text).
    participation : ((state name, share), …) sorted by share, shares summing to 1.
    """

    eigenvalues: tuple[complex, ...]
    natural_frequency: float
    damping_ratio: float
    quality_factor: float
    time_constant: float
    kind: str
    participation: tuple[tuple[str, float], ...]

    @property
    def eigenvalue(self) -> complex:
        """The representative eigenvalue (1/s): Im ≥ 0 member of a pair, slower real root."""
        return self.eigenvalues[0]

    @property
    def order(self) -> int:
        """How many eigenvalues the mode covers (1 or 2)."""
        return len(self.eigenvalues)

    @property
    def natural_frequency_hz(self) -> float:
        """ωn / 2π, Hz."""
        return self.natural_frequency / (2 * np.pi)

    @property
    def damped_frequency_hz(self) -> float:
        """|Im λ| / 2π, Hz: the ringing frequency seen on a waveform (0 for real modes)."""
        return abs(self.eigenvalue.imag) / (2 * np.pi)

    def main_states(self, share: float = 0.1) -> tuple[str, ...]:
        """Names of the states with at least ``share`` of the participation."""
        return tuple(name for name, w in self.participation if w >= share)


@dataclass(frozen=True)
class ConfigurationModes:
    """The modes of one switch configuration of a circuit.

    closed : switch states in ``circuit.switches`` order.  description : words such
    as "with K1 closed, K2 open".  first_time : s when the run first reaches it (NaN
    if it depends on a threshold).  cause : what brings it about.
    """

    closed: tuple[bool, ...]
    description: str
    first_time: float
    cause: str
    modes: tuple[Mode, ...]
    states: tuple[str, ...] | None = None  # the configuration's free states (None: not given)
    dependent: tuple[str, ...] = ()  # one sentence per state an ideal switch ties or holds
    note: str = ""  # how the modes were found when not all of them are listed (large circuits)


# --------------------------------------------------------------------------
# Analysis of one matrix
# --------------------------------------------------------------------------


def _checked_matrix(A: Any, state_names: Sequence[str]) -> np.ndarray:
    try:
        A = np.asarray(A, dtype=float)
    except (TypeError, ValueError):
        raise ModeAnalysisError("the state matrix must be a real square array of numbers") from None
    if A.ndim != 2 or A.shape[0] != A.shape[1]:
        raise ModeAnalysisError(f"the state matrix must be square (n, n), got shape {A.shape}")
    if len(state_names) != A.shape[0]:
        raise ModeAnalysisError(
            f"{len(state_names)} state names given for a state matrix of {A.shape[0]} states"
        )
    if not np.all(np.isfinite(A)):
        raise ModeAnalysisError("the state matrix contains NaN or infinite entries")
    return A


def _participation(A: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Eigenvalues (n,) and participation factors (n states, n modes), columns summing to 1."""
    w, vl, vr = scipy.linalg.eig(A, left=True, right=True)
    factors = np.abs(np.conj(vl) * vr)
    total = factors.sum(axis=0, keepdims=True)
    with np.errstate(invalid="ignore", divide="ignore"):
        shares = np.where(total > 0, factors / total, 1.0 / A.shape[0])
    return w, shares


def _state_kinds(state_names: Sequence[str], state_units: Sequence[str] | None) -> np.ndarray:
    """'C' for capacitor voltages, 'L' for inductor currents, '' when unknown."""
    if state_units is not None:
        return np.array(["C" if u == "V" else "L" if u == "A" else "" for u in state_units])
    return np.array(
        ["C" if n.startswith("voltage") else "L" if n.startswith("current") else "" for n in state_names]
    )


def _shares(column: np.ndarray, state_names: Sequence[str]) -> tuple[tuple[str, float], ...]:
    order = np.argsort(-column, kind="stable")
    return tuple((state_names[i], float(column[i])) for i in order)


def _oscillatory(lam: complex, share: np.ndarray, names, tolerance) -> Mode:
    wn = abs(lam)
    if abs(lam.real) <= tolerance * wn:
        zeta, kind = 0.0, UNDAMPED
    else:
        zeta = -lam.real / wn
        kind = UNDERDAMPED if lam.real < 0 else GROWING_OSCILLATION
    return Mode(
        eigenvalues=(complex(lam), complex(np.conj(lam))),
        natural_frequency=float(wn),
        damping_ratio=float(zeta),
        quality_factor=float(np.inf if zeta == 0 else 1 / (2 * zeta)),
        time_constant=float(np.inf if zeta == 0 else 1 / abs(lam.real)),
        kind=kind,
        participation=_shares(share, names),
    )


def _first_order(lam: float, share: np.ndarray, names, zero_scale) -> Mode:
    if abs(lam) <= zero_scale:
        nan = float("nan")
        return Mode((complex(lam),), 0.0, nan, nan, float("inf"), INTEGRATING, _shares(share, names))
    return Mode(
        eigenvalues=(complex(lam),),
        natural_frequency=abs(lam),
        damping_ratio=-lam / abs(lam),
        quality_factor=1 / (2 * (-lam / abs(lam))),
        time_constant=1 / abs(lam),
        kind=APERIODIC if lam < 0 else GROWING,
        participation=_shares(share, names),
    )


def _section(l1: float, l2: float, share: np.ndarray, names, tolerance) -> Mode:
    slow, fast = (l1, l2) if abs(l1) <= abs(l2) else (l2, l1)
    wn = np.sqrt(slow * fast)
    critical = abs(slow - fast) <= tolerance * abs(fast)
    zeta = 1.0 if critical else -(slow + fast) / (2 * wn)
    return Mode(
        eigenvalues=(complex(slow), complex(fast)),
        natural_frequency=float(wn),
        damping_ratio=float(zeta),
        quality_factor=float(1 / (2 * zeta)),
        time_constant=float(1 / abs(slow)),
        kind=CRITICALLY_DAMPED if critical else OVERDAMPED,
        participation=_shares(share, names),
    )


def analyse_modes(
    A: Any,
    state_names: Sequence[str],
    *,
    state_units: Sequence[str] | None = None,
    tolerance: float = 1e-6,
    zero_tolerance: float = 1e-12,
    pair_share: float = 0.02,
    rounding_scale: float | None = None,
) -> tuple[Mode, ...]:
    """Natural modes of ``dx/dt = A x``, lowest natural frequency first.

    Parameters
    ----------
    A : (n, n) state matrix, 1/s.
    state_names : n names, e.g. ``circuit.state_names`` ("voltage across C1" …).
    state_units : n units ("V" capacitor voltage, "A" inductor current); when
        omitted the kind is read from the names ("voltage…" / "current…").
    tolerance : relative size (to |λ|) below which an imaginary or real part counts
        as zero and two real roots count as equal.
    zero_tolerance : an eigenvalue with |λ| ≤ zero_tolerance × ‖A‖₁ counts as λ = 0.
    pair_share : least participation of a capacitor and of an inductor for a real
        eigenvalue to belong to an L–C section (see the module text).
    rounding_scale : 1/s, the size of the terms ``A`` was computed from when larger than
        ``A`` itself (the stiff conductances eliminated to form a configuration's A leave
        rounding of their size); the zero test then uses it instead of ‖A‖₁.

    Returns
    -------
    tuple of :class:`Mode`; empty for a circuit without states.

    Examples
    --------
    A series RLC (R = 4.7 Ω, L = 2 mH, C = 10 µF): ζ = (R/2)√(C/L) ≈ 0.166,
    fn = 1/(2π√(LC)) ≈ 1125 Hz.

    >>> A = [[0.0, 1 / 10e-6], [-1 / 2e-3, -4.7 / 2e-3]]
    >>> (mode,) = analyse_modes(A, ("voltage across C1", "current through L1"))
    >>> mode.kind, round(mode.damping_ratio, 4), round(mode.natural_frequency_hz, 1)
    ('underdamped', 0.1662, 1125.4)
    >>> sorted(mode.main_states())
    ['current through L1', 'voltage across C1']
    """
    A = _checked_matrix(A, state_names)
    n = A.shape[0]
    if n == 0:
        return ()
    names = tuple(state_names)
    if state_units is not None and len(state_units) != n:
        raise ModeAnalysisError(f"{len(state_units)} state units given for a state matrix of {n} states")
    w, shares = _participation(A)
    kinds = _state_kinds(names, state_units)
    scale = max(float(np.linalg.norm(A, 1)), float(np.max(np.abs(w))), float(rounding_scale or 0.0))
    zero_scale = zero_tolerance * scale

    modes: list[Mode] = []
    real_idx: list[int] = []
    for k, lam in enumerate(w):
        if abs(lam.imag) <= tolerance * abs(lam) or abs(lam) <= zero_scale:
            real_idx.append(k)
        elif lam.imag > 0:
            modes.append(_oscillatory(complex(lam), shares[:, k], names, tolerance))

    def lc_share(k: int) -> bool:
        col = shares[:, k]
        return col[kinds == "C"].sum() >= pair_share and col[kinds == "L"].sum() >= pair_share

    candidates = [k for k in real_idx if w[k].real < -zero_scale and lc_share(k)]
    overlaps = sorted(
        (
            (float(np.minimum(shares[:, i], shares[:, j]).sum()), i, j)
            for a, i in enumerate(candidates)
            for j in candidates[a + 1 :]
        ),
        reverse=True,
    )
    paired: set[int] = set()
    for overlap, i, j in overlaps:
        if overlap < pair_share or i in paired or j in paired:
            continue
        paired.update((i, j))
        share = 0.5 * (shares[:, i] + shares[:, j])
        modes.append(_section(w[i].real, w[j].real, share, names, tolerance))
    for k in real_idx:
        if k not in paired:
            modes.append(_first_order(float(w[k].real), shares[:, k], names, zero_scale))
    modes.sort(key=lambda mode: (mode.natural_frequency, mode.eigenvalue.real))
    return tuple(modes)


# --------------------------------------------------------------------------
# Batches and circuits
# --------------------------------------------------------------------------


def eigen_summary(A: Any) -> dict[str, np.ndarray]:
    """Mode figures of a stack of state matrices, vectorised (for tolerance batches).

    Parameters
    ----------
    A : (..., n, n) state matrices, 1/s.

    Returns
    -------
    dict of arrays over the leading axes ``...``:
    ``least_damping_ratio`` — smallest ζ = −Re λ/|λ| over the oscillatory
    eigenvalues (|Im λ| > 1e-6 |λ|), NaN when none oscillate;
    ``ringing_frequency`` — |Im λ|/2π (Hz) of that least-damped eigenvalue (NaN when none);
    ``slowest_time_constant`` — largest 1/|Re λ| (s; inf when some Re λ = 0);
    ``largest_real_part`` — max Re λ (1/s; > 0 means the configuration is unstable);
    and ``eigenvalues`` (..., n) sorted by |λ|.  A matrix containing NaN (a sample the
    batch could not assemble) gets NaN in every entry.
    """
    A = np.asarray(A, dtype=float)
    if A.ndim < 2 or A.shape[-1] != A.shape[-2]:
        raise ModeAnalysisError(f"state matrices must have shape (..., n, n), got {A.shape}")
    failed = ~np.all(np.isfinite(A), axis=(-2, -1))  # samples a batch could not assemble
    w = np.linalg.eigvals(np.where(failed[..., None, None], 0.0, A)).astype(complex)
    w = np.where(failed[..., None], np.nan, w)
    w = np.take_along_axis(w, np.argsort(np.abs(w), axis=-1), axis=-1)
    magnitude = np.abs(w)
    with np.errstate(invalid="ignore", divide="ignore"):
        zeta = np.where(magnitude > 0, -w.real / magnitude, np.nan)
        oscillates = np.abs(w.imag) > 1e-6 * magnitude
        masked = np.where(oscillates, zeta, np.inf)
        pick = np.argmin(masked, axis=-1)[..., None]
        any_osc = np.any(oscillates, axis=-1)
        least = np.where(any_osc, np.take_along_axis(masked, pick, axis=-1)[..., 0], np.nan)
        picked = np.take_along_axis(w, pick, axis=-1)[..., 0]
        ringing = np.where(any_osc, np.abs(picked.imag) / (2 * np.pi), np.nan)
        slowest = np.max(1.0 / np.abs(w.real), axis=-1)
    return {
        "eigenvalues": w,
        "least_damping_ratio": least,
        "ringing_frequency": ringing,
        "slowest_time_constant": slowest,
        "largest_real_part": np.max(w.real, axis=-1),
    }


def circuit_modes(circuit: Any, until: float | None = None, **options: Any) -> list[ConfigurationModes]:
    """Modes of every switch configuration a run of ``circuit`` can reach.

    Parameters
    ----------
    circuit : a built :class:`circuitode.model.circuit.Circuit`.
    until : end of the run, s (default: the circuit's analysis window).
    **options : passed to :func:`analyse_modes` (``tolerance``, ``zero_tolerance``,
        ``pair_share``).

    Returns
    -------
    list of :class:`ConfigurationModes`, in order of first occurrence.
    """
    from ..equations.statespace import assemble, describe_configuration
    from ..model.configurations import reachable_configurations
    from ..transient.sparse_driver import SPARSE_STATES
    from .configuration_states import dependent_words

    if len(circuit.state_names) > SPARSE_STATES:  # a dense eig is O(n³): a few modes, sparsely
        from .sparse_modes import sparse_circuit_modes

        return sparse_circuit_modes(circuit, until)
    out = []
    configurations = list(reachable_configurations(circuit, until))
    systems = [assemble(circuit, configuration.closed) for configuration in configurations]
    # The zero test on the scale of the stiffest configuration: the same parts (a 20 mΩ diode
    # beside a 470 nF capacitor: 1e8 1/s) enter every configuration's elimination, and their
    # rounding (1e8 × 1e-16) is left in a configuration whose own A is small.
    stiffest = max((float(np.linalg.norm(s.A, 1)) for s in systems), default=0.0)
    for configuration, system in zip(configurations, systems):
        # the configuration's own free states: held inductor currents and tied
        # capacitor voltages are no modes (see equations.constraints)
        modes = analyse_modes(system.A_free, system.free_names, state_units=system.free_units,
                              rounding_scale=stiffest, **options)
        out.append(
            ConfigurationModes(
                closed=tuple(configuration.closed),
                description=describe_configuration(circuit, configuration.closed),
                first_time=configuration.first_time,
                cause=configuration.cause,
                modes=modes,
                states=system.free_names,
                dependent=dependent_words(system),
            )
        )
    return out


def mode_rows(modes: Sequence[Mode], configuration: ConfigurationModes | None = None) -> list[dict[str, Any]]:
    """One plain dict per mode, unformatted SI numbers, for a table or a JSON file.

    Keys: eigenvalue_real (1/s), eigenvalue_imag (1/s), order, natural_frequency
    (rad/s), natural_frequency_hz, damped_frequency_hz, damping_ratio, quality_factor,
    time_constant (s), kind, main_states (names with ≥ 10 % participation, largest
    first), and configuration (its description) when one is given.
    """
    rows = []
    for mode in modes:
        row: dict[str, Any] = {}
        if configuration is not None:
            row["configuration"] = configuration.description
        row.update(
            eigenvalue_real=float(mode.eigenvalue.real),
            eigenvalue_imag=float(mode.eigenvalue.imag),
            order=mode.order,
            natural_frequency=mode.natural_frequency,
            natural_frequency_hz=mode.natural_frequency_hz,
            damped_frequency_hz=mode.damped_frequency_hz,
            damping_ratio=mode.damping_ratio,
            quality_factor=mode.quality_factor,
            time_constant=mode.time_constant,
            kind=mode.kind,
            main_states=list(mode.main_states()),
        )
        rows.append(row)
    return rows
