"""Output integrals of a chunk of samples, accumulated step by step as the engine goes.

The batched counterpart of :mod:`circuitode.transient.window_integrals`: for every sample,
∫ y dt of every assembled output row and ∫ y_a y_b dt for the pairs a figure
needs (y² of each row, v·i of each power probe), exact to rounding with the exact
method whatever the output step (:func:`circuitode.solvers.integrals.moment_operators`).
Over a run of equal steps in one configuration the start states are summed first
(Σ w, Σ w wᵀ), so a block of K steps costs two contractions, not K.
"""
from __future__ import annotations

import numpy as np

from ..solvers.integrals import apply_moments, moment_operators

__all__ = ["ChunkIntegrals", "integral_pairs"]


def integral_pairs(recipe, rows: int) -> np.ndarray:
    """(p, 2) pairs: (j, j) for each of the ``rows`` output rows, then (v, i) per power probe
    of the recipe (("row", r) or ("product", r1, r2), see ``engine.linear_probes``)."""
    pairs = [(j, j) for j in range(rows)] + [(r[1], r[2]) for r in recipe if r[0] == "product"]
    return np.array(pairs, dtype=int).reshape(-1, 2)


class ChunkIntegrals:
    """Running sums of one chunk: linear (N, k) ∫ y dt and products (N, p) ∫ y_a y_b dt.

    pairs : (p, 2) int, see :func:`integral_pairs`.
    """

    def __init__(self, N: int, k: int, pairs: np.ndarray):
        self.pairs = pairs
        self.linear = np.zeros((N, k))
        self.products = np.zeros((N, pairs.shape[0]))

    def fresh(self, idx: np.ndarray, M: np.ndarray, G: np.ndarray, w0: np.ndarray, lengths) -> None:
        """Add, for samples idx, the integrals over ``lengths`` (s, (K,)) from states w0 (K, s)
        of systems M (K, s, s) with outputs G (K, k, s)."""
        if idx.size == 0:
            return
        rho, P = moment_operators(M, lengths, G, self.pairs)
        linear, products = apply_moments(rho, P, w0)
        np.add.at(self.linear, idx, linear)
        np.add.at(self.products, idx, products)

    def operators(self, M: np.ndarray, G: np.ndarray, h: float) -> tuple[np.ndarray, np.ndarray]:
        """(rho (N, k, s), P (N, p, s, s)) of one step h for every sample (cache them)."""
        return moment_operators(M, h, G, self.pairs)

    def steps(self, rho: np.ndarray, P: np.ndarray, starts: np.ndarray, use: np.ndarray,
              samples: np.ndarray | None = None) -> None:
        """Add steps of one length: operators rho, P (R, …) of each sample's configuration,
        start states starts (R, K, s), use (R, K) bool, which steps to count; row i is
        sample samples[i] of the chunk (row i is sample i when samples is None)."""
        rows = np.flatnonzero(use.any(axis=1))
        if rows.size == 0:
            return
        chosen = starts[rows] * use[rows, :, None]                  # (R, K, s)
        first = chosen.sum(axis=1)                                   # Σ w
        second = np.swapaxes(chosen, 1, 2) @ starts[rows]            # Σ w wᵀ
        self._add(rho[rows], P[rows], first, second, rows if samples is None else samples[rows])

    def sums(self, rho: np.ndarray, P: np.ndarray, S1: np.ndarray, S2: np.ndarray, rows: np.ndarray) -> None:
        """Add, for samples rows, whole blocks of steps of one length given by the sums of their
        start states S1 = Σ w (N, s) and S2 = Σ w wᵀ (N, s, s); rho, P (N, …) as in :meth:`steps`."""
        if rows.size:
            self._add(rho[rows], P[rows], S1[rows], S2[rows], rows)

    def _add(self, rho, P, first, second, rows) -> None:
        self.linear[rows] += (rho @ first[:, :, None])[:, :, 0]
        R, p = rows.size, P.shape[1]
        self.products[rows] += (P.reshape(R, p, -1) @ second.reshape(R, -1, 1))[:, :, 0]

    def snapshot(self, recipe) -> list:
        """:meth:`by_recipe` as copies: the sums so far, kept while the run goes on."""
        return [(a.copy(), b.copy()) for a, b in self.by_recipe(recipe)]

    def by_recipe(self, recipe) -> list:
        """Per recorded probe: (∫ y dt (N,), ∫ y² dt (N,)); a power probe (∫ p dt, NaN)."""
        out, power = [], int(np.sum(self.pairs[:, 0] == self.pairs[:, 1]))  # products after squares
        for r in recipe:
            if r[0] == "row":
                out.append((self.linear[:, r[1]], self.products[:, r[1]]))
            else:
                out.append((self.products[:, power], np.full(self.linear.shape[0], np.nan)))
                power += 1
        return out
