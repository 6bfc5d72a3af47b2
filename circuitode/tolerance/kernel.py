"""The block kernel: K equal steps of every sample of a chunk, states, outputs and sums.

For each sample n with step matrix Φ_n (s, s), output rows G_n (p, s) and start
state w_n (s,), one block of K steps gives

    W[n, k] = Φ_n^(k+1) w_n              (N, K, s)   the states at the block's instants
    Y[n, :, k] = G_n W[n, k]             (N, p, K)   the outputs there
    S1[n] = Σ_k v_k,  S2[n] = Σ_k v_k v_kᵀ,  v_0 = w_n, v_k = W[n, k-1]
                                         (N, s), (N, s, s)  sums of the steps' start
                                         states (the running output integrals use them)

With numba installed (the ``fast`` extra) and at least :data:`MIN_SAMPLES` samples
in the chunk or in the whole batch (``batch``: a batch of many small chunks pays
numba's start once per process), it is one compiled loop per tile of
:data:`TILE` samples: the tile's Φ and G are laid out samples-innermost, stay in
the first-level cache through the K steps, and each step updates the state, the
outputs and both sums for the whole tile in one pass (the sample loop is the one
the compiler vectorises).  Without numba the same quantities come from stacked
numpy products (the step recurrence over k, all samples at once).  The two agree
to rounding: both compute w_(k+1) = Φ w_k step by step.

Flop count per sample and step: 2 s² (state) + 2 p s (outputs) + s + 2 s² (sums);
:func:`flops` gives it for the benchmark.
"""
from __future__ import annotations

import os

import numpy as np

__all__ = ["MIN_SAMPLES", "TILE", "block_steps", "compact_rows", "compiled_for", "flops", "have_numba",
           "kernel_name", "write_columns"]

#: Samples per tile of the compiled loop (the vectorised innermost axis): Φ, G, the state
#: and the sums of a tile (s = 7, p = 6: about 150 kB) stay in the second-level cache
#: through the K steps.  Measured on a 2-core AVX-512 machine: 128 beat 64 and 256.
TILE = 128
#: Fewest samples (of the chunk, or of the whole batch) for which the compiled loop is used:
#: below, the numpy recurrence costs less than numba's start on the first call (0.5–1.3 s
#: measured: import, typing, loading the cached machine code), e.g. the 33–200 points of a
#: sweep or a sizing.  A long run's chunks can be smaller (the bridge rectifier's 20,080
#: rows a sample give chunks of 155): the batch's size decides for them.
MIN_SAMPLES = 256
#: Steps whose states and outputs a tile gathers before writing them out sample-major
#: (each sample's KB·s states and KB outputs per row are whole cache lines).
KB = 8


def have_numba() -> bool:
    """True when the compiled kernel is available (numba installed and not switched off
    by CIRCUITODE_NO_NUMBA=1, which the tests use to compare the two paths)."""
    return _compiled() is not None


def kernel_name() -> str:
    """"numba" or "numpy": which implementation :func:`block_steps` runs."""
    return "numba" if have_numba() else "numpy"


def compiled_for(N: int, batch: int = 0) -> bool:
    """True when a chunk of N samples of a batch of ``batch`` runs the compiled loops."""
    return max(N, batch) >= MIN_SAMPLES and have_numba()


def write_columns(y: np.ndarray, t: np.ndarray | None, Y: np.ndarray, ts: np.ndarray, c0: int,
                  ext_pos: np.ndarray, ext_count: np.ndarray) -> None:
    """The compiled copy of a block's rows into a chunk's record (numba only; see
    :meth:`.stepping.Record.columns`, whose numpy code it replaces, for the layout).

    y (p, N, width) (quantity-major), t (N, width) or None, Y (N, p, K), ts (K,) s: common column c0 + k
    of sample n lands at c0 + k + (its extra rows with position ≤ c0 + k), read from
    ext_pos (N, E) and ext_count (N,)."""
    _compiled_columns()(y, np.empty((0, 0)) if t is None else t, Y, np.ascontiguousarray(ts, dtype=float),
                        int(c0), ext_pos, ext_count, t is not None)


def compact_rows(y: np.ndarray, L: int) -> np.ndarray:
    """The first L columns of every row of a C-contiguous y (…, width), moved in place to
    the front of its buffer (numba only): returns them as a contiguous (…, L) view of
    that buffer, whose old layout is then spoilt.  A record's rows become contiguous
    without a second record's worth of fresh memory."""
    width = y.shape[-1]
    flat = y.reshape(-1)
    rows = flat.size // max(width, 1)
    _compiled_compact()(flat, rows, width, int(L))
    return flat[:rows * L].reshape(y.shape[:-1] + (L,))


def flops(N: int, K: int, s: int, p: int, sums: bool = True) -> float:
    """Floating-point operations of one :func:`block_steps` call (multiply and add count 2)."""
    per = 2 * s * s + 2 * p * s + ((s + 2 * s * s) if sums else 0)
    return float(N) * K * per


def block_steps(phi: np.ndarray, G: np.ndarray, w: np.ndarray, K: int, sums: bool = True, batch: int = 0):
    """K steps of w ← Φ w for every sample; see the module docstring.

    phi : (N, s, s), G : (N, p, s), w : (N, s), K ≥ 1.  batch : samples of the whole
    batch the chunk belongs to (0: the chunk alone); the compiled loop runs when N or
    batch reaches :data:`MIN_SAMPLES`.
    Returns W (N, K, s), Y (N, p, K) and, with sums, S1 (N, s), S2 (N, s, s)
    (None, None without).
    """
    N, s = w.shape
    p = G.shape[1]
    fn = _compiled() if compiled_for(N, batch) else None
    if fn is None:
        return _numpy_steps(phi, G, w, K, sums)
    W = np.empty((N, K, s))
    Y = np.empty((N, p, K))
    S1 = np.empty((N, s))
    S2 = np.empty((N, s, s))
    fn(_tiles(phi), _tiles(G), _tiles(w), W, Y, S1, S2, bool(sums))
    return W, Y, (S1 if sums else None), (S2 if sums else None)


def _tiles(a: np.ndarray) -> np.ndarray:
    """(N, …) → (ceil(N / TILE), …, TILE): samples innermost, the last tile padded with zeros."""
    N = a.shape[0]
    nb = -(-N // TILE)
    out = np.zeros((nb,) + a.shape[1:] + (TILE,))
    full = (N // TILE) * TILE
    if full:
        out[:N // TILE] = np.moveaxis(a[:full].reshape((N // TILE, TILE) + a.shape[1:]), 1, -1)
    if full < N:
        out[-1, ..., :N - full] = np.moveaxis(a[full:], 0, -1)
    return out


def _numpy_steps(phi, G, w, K, sums):
    N, s = w.shape
    W = np.empty((N, K, s))
    cur = w
    for k in range(K):  # the recurrence; each product covers every sample
        cur = (phi @ cur[:, :, None])[:, :, 0]
        W[:, k] = cur
    Y = G @ np.swapaxes(W, 1, 2)
    if not sums:
        return W, Y, None, None
    starts = np.concatenate([w[:, None], W[:, :-1]], axis=1)
    return W, Y, starts.sum(axis=1), np.swapaxes(starts, 1, 2) @ starts


_KERNEL = {}


def _compiled():
    """The compiled tile loop, or None without numba (imported on first use only)."""
    if os.environ.get("CIRCUITODE_NO_NUMBA") == "1":
        return None
    try:  # contract: a·b + c as one fused multiply-add; no other reordering
        return _jitted("fn", _tile_loop, error_model="numpy", fastmath={"contract"})
    except ImportError:
        _KERNEL["fn"] = None
        return None


def _jitted(key: str, loop, **options):
    """``loop`` compiled by numba once per process (kept in _KERNEL under ``key``)."""
    if key not in _KERNEL:
        import numba

        _KERNEL[key] = numba.njit(cache=True, nogil=True, **options)(loop)
    return _KERNEL[key]


def _compiled_compact():
    return _jitted("compact", _compact_loop)


def _compact_loop(flat, rows, width, L):  # pragma: no cover - compiled by numba
    """Row i's first L values from flat[i·width:] to flat[i·L:], rows in order (a value is
    overwritten only after it was read: i·L ≤ i·width)."""
    for i in range(rows):
        src, dst = i * width, i * L
        if src != dst:
            for k in range(L):
                flat[dst + k] = flat[src + k]


def _compiled_columns():
    return _jitted("columns", _columns_loop)


def _columns_loop(y, t, Y, ts, c0, ext_pos, ext_count, has_t):  # pragma: no cover - compiled by numba
    """See :func:`write_columns`: one sample at a time, its rows copied whole."""
    N, p, K = Y.shape
    dest = np.empty(K, dtype=np.int64)
    for n in range(N):
        cnt = ext_count[n]
        last = ext_pos[n, cnt - 1] if cnt > 0 else -1
        if last < c0:  # no extra row among these columns: one offset for the block
            d = c0 + cnt
            for r in range(p):
                for k in range(K):
                    y[r, n, d + k] = Y[n, r, k]
            if has_t:
                for k in range(K):
                    t[n, d + k] = ts[k]
            continue
        for k in range(K):  # each column's place: after the extra rows placed up to it
            before = 0
            for e in range(cnt):
                if ext_pos[n, e] <= c0 + k:
                    before += 1
            dest[k] = c0 + k + before
        for r in range(p):
            for k in range(K):
                y[r, n, dest[k]] = Y[n, r, k]
        if has_t:
            for k in range(K):
                t[n, dest[k]] = ts[k]


def _tile_loop(phiB, GB, wB, W, Y, S1, S2, sums):  # pragma: no cover - compiled by numba
    """phiB (nb, s, s, T), GB (nb, p, s, T), wB (nb, s, T), samples innermost; writes
    W (N, K, s), Y (N, p, K), S1 (N, s), S2 (N, s, s) sample-major."""
    nb, s = wB.shape[0], wB.shape[1]
    p = GB.shape[1]
    N, K = W.shape[0], W.shape[1]
    cur = np.empty((s, TILE))
    s1 = np.empty((s, TILE))
    s2 = np.empty((s, s, TILE))
    wbuf = np.empty((KB, s, TILE))
    ybuf = np.empty((KB, p, TILE))
    for b in range(nb):
        ph, g = phiB[b], GB[b]
        m = min(TILE, N - b * TILE)
        for i in range(s):
            for t in range(TILE):
                cur[i, t] = wB[b, i, t]
                s1[i, t] = 0.0
            for j in range(s):
                for t in range(TILE):
                    s2[i, j, t] = 0.0
        for k0 in range(0, K, KB):
            kn = min(KB, K - k0)
            for kk in range(kn):
                if sums:
                    for i in range(s):
                        for t in range(TILE):
                            s1[i, t] += cur[i, t]
                        for j in range(s):
                            for t in range(TILE):
                                s2[i, j, t] += cur[i, t] * cur[j, t]
                nxt = wbuf[kk]
                for i in range(s):
                    for t in range(TILE):
                        nxt[i, t] = ph[i, 0, t] * cur[0, t]
                    for j in range(1, s):
                        for t in range(TILE):
                            nxt[i, t] += ph[i, j, t] * cur[j, t]
                for i in range(s):
                    for t in range(TILE):
                        cur[i, t] = nxt[i, t]
                y = ybuf[kk]
                for r in range(p):
                    for t in range(TILE):
                        y[r, t] = g[r, 0, t] * cur[0, t]
                    for j in range(1, s):
                        for t in range(TILE):
                            y[r, t] += g[r, j, t] * cur[j, t]
            for t in range(m):  # write the gathered steps out, sample-major
                n = b * TILE + t
                for kk in range(kn):
                    for i in range(s):
                        W[n, k0 + kk, i] = wbuf[kk, i, t]
                for r in range(p):
                    for kk in range(kn):
                        Y[n, r, k0 + kk] = ybuf[kk, r, t]
        for t in range(m):
            n = b * TILE + t
            for i in range(s):
                S1[n, i] = s1[i, t]
                for j in range(s):
                    S2[n, i, j] = s2[i, j, t]
