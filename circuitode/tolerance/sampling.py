"""Sampling of component tolerances: the parameter table of a batch.

Every sampler first draws points of the unit cube ``[0, 1)^k`` (one column per
toleranced parameter) and then maps each column through the inverse
cumulative distribution of that parameter's spread, so Monte Carlo, Latin
hypercube and Sobol designs all share one mapping:

* ``uniform``: relative deviation ``d = r (2 u - 1)``, bounded by ± r;
* ``normal``: ``d = (r / 3) Φ⁻¹`` of a standard normal truncated at ± 3 σ,
  i.e. σ = tolerance / 3, truncated at ± tolerance (common practice).

The sampled value is ``nominal · (1 + d)``.  Corners take every ± extreme
(``d = ± r``), ``2^k`` rows, refused above 16 toleranced parameters.

Everything is seeded: the same seed, sampler and sample count give the same
table bit for bit, independent of how the table is later cut into chunks.
"""
from __future__ import annotations

import re
import warnings
from dataclasses import dataclass
from typing import Iterable, Mapping

import numpy as np
from scipy.stats import qmc, truncnorm

from ..model import Circuit, Spread
from ..errors import CircuitodeError

__all__ = [
    "SAMPLERS",
    "DISTRIBUTIONS",
    "MAX_CORNER_PARAMETERS",
    "SampleTable",
    "parse_spread_override",
    "spreads_with_overrides",
    "unit_design",
    "deviations_from_unit",
    "draw_samples",
]

#: Sampler names accepted by :func:`draw_samples`.
SAMPLERS = ("mc", "lhs", "sobol", "corners")
#: Distribution words a spread may carry.
DISTRIBUTIONS = ("normal", "uniform")
#: Above this many toleranced parameters, corners (2^k runs) are refused.
MAX_CORNER_PARAMETERS = 16

# Normal spreads are truncated at ± 3 σ (σ = tolerance / 3): common practice.
_TRUNCATION_SIGMAS = 3.0


@dataclass(frozen=True)
class SampleTable:
    """The sampled parameters of a whole batch.

    names : (k,) parameter names, in the circuit's spread order.
    nominal : (k,) nominal SI values.
    relative : (k,) tolerances as fractions (0.05 for ± 5 %).
    distributions : (k,) "normal" or "uniform".
    deviations : (N, k) relative deviations d, value = nominal · (1 + d).
    sampler : the sampler's name.  seed : the seed used.
    note : a sentence for the user when the sampler changed the request
    (e.g. corners give 2^k rows whatever sample count was asked), else "".
    """

    names: tuple[str, ...]
    nominal: np.ndarray
    relative: np.ndarray
    distributions: tuple[str, ...]
    deviations: np.ndarray
    sampler: str
    seed: int
    note: str = ""

    @property
    def count(self) -> int:
        """Number of samples N."""
        return int(self.deviations.shape[0])

    @property
    def values(self) -> np.ndarray:
        """(N, k) sampled SI values."""
        return self.nominal[None, :] * (1.0 + self.deviations)

    def rows(self, start: int, stop: int) -> dict[str, np.ndarray]:
        """Parameter name → (stop - start,) SI values for samples ``start:stop``."""
        block = self.nominal[None, :] * (1.0 + self.deviations[start:stop])
        return {name: block[:, j].copy() for j, name in enumerate(self.names)}


_OVERRIDE = re.compile(
    r"^\s*(?P<name>[A-Za-z_][A-Za-z0-9_]*(?:\.[A-Za-z_][A-Za-z0-9_]*)?)\s*=\s*(?:±|\+-|\+/-)?\s*"
    r"(?P<number>[0-9]*\.?[0-9]+(?:[eE][+-]?[0-9]+)?)\s*(?P<percent>%)?"
    r"\s*(?P<dist>[A-Za-z]+)?\s*$"
)


def parse_spread_override(text: str) -> tuple[str, float, str | None]:
    """Read one command-line override such as ``R_pre=5%`` or ``C_link=20% uniform``.

    Returns (name, relative fraction, distribution or None).  A bare number
    without ``%`` is read as a fraction (``0.05``).  Raises CircuitodeError with
    the accepted forms when the text does not fit.
    """
    m = _OVERRIDE.match(text)
    if not m:
        raise CircuitodeError(
            f"cannot read the tolerance override {text!r}; write NAME=5% "
            "or NAME=5% uniform (or normal)"
        )
    value = float(m.group("number"))
    relative = value / 100.0 if m.group("percent") else value
    dist = m.group("dist")
    if dist is not None and dist.lower() not in DISTRIBUTIONS:
        raise CircuitodeError(
            f"unknown distribution {dist!r} in {text!r}; use one of {', '.join(DISTRIBUTIONS)}"
        )
    if not 0.0 <= relative < 1.0:
        raise CircuitodeError(
            f"tolerance {text!r} must lie between 0 % and 100 % (exclusive) "
            "so that every sampled value keeps its sign"
        )
    return m.group("name"), relative, (dist.lower() if dist else None)


def spreads_with_overrides(
    circuit: Circuit, overrides: Iterable[str] | Mapping[str, str] | None = None
) -> dict[str, Spread]:
    """The circuit's spreads with command-line overrides applied, in a stable order.

    overrides : strings ``NAME=5%`` (or a mapping NAME → "5%").  Only a
    parameter whose value feeds an element (it has a spread in the netlist,
    or a recipe uses it) can be overridden; others are refused with a message.
    A zero tolerance removes the parameter from the batch.
    """
    spreads = dict(circuit.spreads)
    if overrides is None:
        overrides = ()
    if isinstance(overrides, Mapping):
        overrides = [f"{k}={v}" for k, v in overrides.items()]
    used = set()
    for recipe in circuit.recipes.values():
        used |= set(getattr(recipe, "names", ()))
    for text in overrides:
        name, relative, dist = parse_spread_override(text)
        old = spreads.get(name)
        if old is None:
            if name not in circuit.parameters:
                known = ", ".join(sorted(circuit.parameters)) or "none"
                raise CircuitodeError(
                    f"--tol names {name!r}, which is not a parameter of this circuit "
                    f"(parameters: {known})"
                )
            if name not in used:
                raise CircuitodeError(
                    f"parameter {name!r} has no tolerance in the netlist, so no element "
                    f"value is tied to it for sampling; give it one in the file "
                    f"(e.g. 'param {name} = ... ± 5 %') and override it from there"
                )
            spreads[name] = Spread(name, float(circuit.parameters[name]), relative, dist or "normal")
        else:
            spreads[name] = Spread(name, old.nominal, relative, dist or old.distribution)
    out = {}
    for name, s in spreads.items():
        if s.relative <= 0.0:
            continue
        if s.distribution not in DISTRIBUTIONS:
            raise CircuitodeError(
                f"spread of {name!r} has unknown distribution {s.distribution!r}; "
                f"use one of {', '.join(DISTRIBUTIONS)}"
            )
        out[name] = s
    return out


def _qmc_engine(kind, k: int, seed: int):
    rng = np.random.default_rng(seed)
    try:
        return kind(d=k, rng=rng)
    except TypeError:  # scipy < 1.15 calls it seed
        return kind(d=k, seed=rng)


def unit_design(k: int, n: int, sampler: str, seed: int) -> np.ndarray:
    """(n, k) points of the unit cube for the sampler "mc", "lhs" or "sobol".

    Sobol points are scrambled; their balance is best for n a power of two
    (other n are accepted, the points are the first n of the sequence).
    """
    if sampler == "mc":
        return np.random.default_rng(seed).random((n, k))
    if sampler == "lhs":
        return _qmc_engine(qmc.LatinHypercube, k, seed).random(n)
    if sampler == "sobol":
        engine = _qmc_engine(qmc.Sobol, k, seed)
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", UserWarning)
            return engine.random(n)
    raise CircuitodeError(f"unknown sampler {sampler!r}; use one of {', '.join(SAMPLERS)}")


def deviations_from_unit(u: np.ndarray, relative: np.ndarray, distributions: tuple[str, ...]) -> np.ndarray:
    """Map unit-cube points (N, k) to relative deviations (N, k) column by distribution."""
    u = np.asarray(u, dtype=float)
    relative = np.asarray(relative, dtype=float)
    is_normal = np.array([d == "normal" for d in distributions], dtype=bool)
    uniform_dev = relative * (2.0 * u - 1.0)
    # Inverse CDF of the standard normal truncated at ± 3 σ, scaled by σ = r / 3.
    z = truncnorm.ppf(np.clip(u, 0.0, 1.0), -_TRUNCATION_SIGMAS, _TRUNCATION_SIGMAS)
    normal_dev = (relative / _TRUNCATION_SIGMAS) * z
    return np.where(is_normal[None, :], normal_dev, uniform_dev)


def _corner_signs(k: int) -> np.ndarray:
    """(2^k, k) array of ±1: row i holds the bits of i (bit j set → + for column j)."""
    rows = np.arange(2**k, dtype=np.int64)[:, None]
    bits = (rows >> np.arange(k, dtype=np.int64)[None, :]) & 1
    return np.where(bits == 1, 1.0, -1.0)


def draw_samples(
    spreads: Mapping[str, Spread], samples: int, sampler: str = "lhs", seed: int = 0
) -> SampleTable:
    """Draw the batch's parameter table.

    spreads : name → Spread (see :func:`spreads_with_overrides`).
    samples : N, the number of samples (ignored by "corners", which gives 2^k).
    sampler : "mc" (Monte Carlo), "lhs" (Latin hypercube), "sobol", "corners".
    seed : integer seed; the same arguments give the same table.
    """
    if sampler not in SAMPLERS:
        raise CircuitodeError(f"unknown sampler {sampler!r}; use one of {', '.join(SAMPLERS)}")
    names = tuple(spreads)
    k = len(names)
    if k == 0:
        raise CircuitodeError(
            "this circuit has no component tolerances to sample; add '± 5 %' to a "
            "value or a param line, or pass --tol NAME=5%"
        )
    nominal = np.array([spreads[n].nominal for n in names], dtype=float)
    relative = np.array([spreads[n].relative for n in names], dtype=float)
    dists = tuple(spreads[n].distribution for n in names)
    note = ""
    if sampler == "corners":
        if k > MAX_CORNER_PARAMETERS:
            raise CircuitodeError(
                f"corners would need 2^{k} = {2**k:,} runs for {k} toleranced parameters; "
                f"the limit is {MAX_CORNER_PARAMETERS} parameters — use --sampler lhs or sobol"
            )
        deviations = _corner_signs(k) * relative[None, :]
        if samples and samples != 2**k:
            note = f"corners: {2**k} runs (every ± extreme of {k} parameters), not {samples}"
    else:
        if int(samples) < 1:
            raise CircuitodeError(f"the number of samples must be at least 1, not {samples}")
        u = unit_design(k, int(samples), sampler, int(seed))
        deviations = deviations_from_unit(u, relative, dists)
    return SampleTable(names, nominal, relative, dists, deviations, sampler, int(seed), note)
