"""The reduced matrix of a sparse descriptor system, by the connected blocks of its algebraic part.

For ``E w' = A w + B u`` with the n differential unknowns first,
``E = diag(E₁₁, 0)`` and ``A = [[A₁₁, A₁₂], [A₂₁, A₂₂]]``, eliminating the
algebraic unknowns gives ``x' = E₁₁⁻¹ (A₁₁ − A₁₂ A₂₂⁻¹ A₂₁) x + …``.  The
product ``A₂₂⁻¹ A₂₁`` is formed without one solve per state: A₂₂ is split into
the connected components of its graph (scipy.sparse.csgraph), so
``A₂₂⁻¹ = blockdiag(A_c⁻¹)`` exactly.  Components of at most :data:`SMALL`
unknowns are inverted densely in one batched call (numpy), and the inverse is
a sparse block-diagonal matrix; a larger component is solved with its sparse LU
for only the columns of A₂₁ that touch it.  Work and memory are
Σ_c k_c² + Σ_large k_c · (columns touching c), linear in the circuit when the
components are small (as in a ladder or a busbar, where every capacitor pins
its node).  Knows nothing of circuits.
"""
from __future__ import annotations

import numpy as np

__all__ = ["SMALL", "block_cost", "block_inverse_product", "reduced_matrix"]

#: Components up to this many unknowns are inverted densely (batched).
SMALL = 64


def block_cost(A22, A21) -> float:
    """The dense numbers the large components of A₂₂ cost in :func:`block_inverse_product`."""
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components

    A22, A21 = sp.csr_matrix(A22), sp.csr_matrix(A21)
    if A22.shape[0] == 0:
        return 0.0
    count, label = connected_components(A22, directed=False)
    sizes = np.bincount(label, minlength=count)
    cost = 0.0
    for c in np.flatnonzero(sizes > SMALL):
        rows = np.flatnonzero(label == c)
        cost += rows.size * np.unique(A21[rows].tocoo().col).size
    return cost


def block_inverse_product(A22, A21, budget: float = 5e7):
    """Sparse ``A₂₂⁻¹ A₂₁`` (K × n) by connected components, or None over ``budget``.

    A22 : (K, K) sparse, nonsingular.  A21 : (K, n) sparse.  ``budget`` bounds the
    dense numbers of the large components (k_c × touching columns, summed).
    """
    import scipy.sparse as sp
    from scipy.sparse.csgraph import connected_components
    from scipy.sparse.linalg import splu

    A22, A21 = sp.csr_matrix(A22), sp.csr_matrix(A21)
    K = A22.shape[0]
    if K == 0:
        return sp.csr_matrix((0, A21.shape[1]))
    count, label = connected_components(A22, directed=False)
    sizes = np.bincount(label, minlength=count)
    order = np.argsort(label, kind="stable")  # unknowns grouped by component
    start = np.concatenate([[0], np.cumsum(sizes)])
    pos = np.empty(K, dtype=np.int64)
    pos[order] = np.arange(K) - start[label[order]]  # place of each unknown in its component
    large = np.flatnonzero(sizes > SMALL)
    cost = 0.0
    columns_of = {}
    for c in large:  # few by construction; their columns first, to honour the budget
        rows = order[start[c]:start[c + 1]]
        cols = np.unique(A21[rows].tocoo().col)
        columns_of[c] = (rows, cols)
        cost += rows.size * cols.size
    if cost > budget:
        return None
    coo = A22.tocoo()
    pieces_r, pieces_c, pieces_v = [], [], []
    for k in np.unique(sizes[sizes <= SMALL]):
        comps = np.flatnonzero(sizes == k)
        slot = np.full(count, -1, dtype=np.int64)
        slot[comps] = np.arange(comps.size)
        blocks = np.zeros((comps.size, k, k))
        keep = slot[label[coo.row]] >= 0
        r, cidx, v = coo.row[keep], coo.col[keep], coo.data[keep]
        np.add.at(blocks, (slot[label[r]], pos[r], pos[cidx]), v)
        inv = np.linalg.inv(blocks)  # (g, k, k); raises LinAlgError when a block is singular
        members = order[start[comps][:, None] + np.arange(k)]  # (g, k) global indices
        pieces_r.append(np.repeat(members, k, axis=1).ravel())
        pieces_c.append(np.tile(members, (1, k)).ravel())
        pieces_v.append(inv.ravel())
    inverse = sp.csr_matrix((np.concatenate(pieces_v) if pieces_v else np.zeros(0),
                             (np.concatenate(pieces_r) if pieces_r else np.zeros(0, int),
                              np.concatenate(pieces_c) if pieces_c else np.zeros(0, int))), shape=(K, K))
    product = (inverse @ A21).tocoo()
    rows_all, cols_all, vals_all = [product.row], [product.col], [product.data]
    for c, (rows, cols) in columns_of.items():
        lu = splu(sp.csc_matrix(A22[rows][:, rows]))
        rhs = A21[rows][:, cols]
        for first in range(0, cols.size, 256):
            part = lu.solve(np.asarray(rhs[:, first:first + 256].toarray(), dtype=float))
            nz_r, nz_c = np.nonzero(part)
            rows_all.append(rows[nz_r]); cols_all.append(cols[first + nz_c]); vals_all.append(part[nz_r, nz_c])
    return sp.csr_matrix((np.concatenate(vals_all), (np.concatenate(rows_all), np.concatenate(cols_all))),
                         shape=A21.shape)


def reduced_matrix(A11, A12, A21, A22, e_scale, budget: float = 5e7):
    """Sparse ``E₁₁⁻¹ (A₁₁ − A₁₂ A₂₂⁻¹ A₂₁)`` (n × n, CSR), or None over ``budget``.

    e_scale : sparse diagonal E₁₁⁻¹.  A22 may have zero size (no algebraic unknowns).
    """
    import scipy.sparse as sp

    if A22 is None or A22.shape[0] == 0:
        return sp.csr_matrix(e_scale @ A11)
    Y = block_inverse_product(A22, A21, budget)
    if Y is None:
        return None
    return sp.csr_matrix(e_scale @ (sp.csr_matrix(A11) - sp.csr_matrix(A12) @ Y))
