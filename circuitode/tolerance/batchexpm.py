"""Matrix exponentials and RK4 step matrices of stacks of small matrices.

``scipy.linalg.expm`` accepts stacked arrays but treats them one by one; for
thousands of 5–15 state systems a vectorised scaling-and-squaring Padé
approximant is far quicker.  The algorithm is Higham's (SIAM J. Matrix Anal.
Appl. 26 (2005) 1179, "The scaling and squaring method for the matrix
exponential revisited"), degree-13 Padé with the 1-norm threshold
θ₁₃ = 5.37, each matrix scaled by its own power of two; squarings are masked
so each matrix is squared exactly as often as its own scaling needs.
"""
from __future__ import annotations

import numpy as np

__all__ = ["expm_stack", "rk4_stack"]

# Padé (13, 13) coefficients and θ13 (Higham 2005, Table 2.3 and eq. 2.1).
_B13 = (
    64764752532480000.0, 32382376266240000.0, 7771770303897600.0, 1187353796428800.0,
    129060195264000.0, 10559470521600.0, 670442572800.0, 33522128640.0, 1323241920.0,
    40840800.0, 960960.0, 16380.0, 182.0, 1.0,
)
_THETA13 = 5.371920351148152


def expm_stack(M: np.ndarray) -> np.ndarray:
    """exp(M) for M of shape (..., s, s); non-finite matrices give NaN results."""
    M = np.asarray(M, dtype=float)
    shape = M.shape
    s = shape[-1]
    X = M.reshape(-1, s, s)
    if X.shape[0] == 0 or s == 0:
        return np.zeros(shape)
    finite = np.all(np.isfinite(X), axis=(1, 2))
    X = np.where(finite[:, None, None], X, 0.0)
    norm1 = np.max(np.sum(np.abs(X), axis=1), axis=-1)
    with np.errstate(divide="ignore"):
        squarings = np.where(norm1 > _THETA13, np.ceil(np.log2(norm1 / _THETA13)), 0.0).astype(int)
    X = X / np.ldexp(1.0, squarings)[:, None, None]
    b = _B13
    eye = np.eye(s)
    X2 = X @ X
    X4 = X2 @ X2
    X6 = X4 @ X2
    U = X @ (X6 @ (b[13] * X6 + b[11] * X4 + b[9] * X2) + b[7] * X6 + b[5] * X4 + b[3] * X2 + b[1] * eye)
    V = X6 @ (b[12] * X6 + b[10] * X4 + b[8] * X2) + b[6] * X6 + b[4] * X4 + b[2] * X2 + b[0] * eye
    R = np.linalg.solve(V - U, V + U)
    for j in range(int(squarings.max(initial=0))):
        more = squarings > j
        if more.all():
            R = R @ R
        else:
            R[more] = R[more] @ R[more]
    R[~finite] = np.nan
    return R.reshape(shape)


def rk4_stack(M: np.ndarray) -> np.ndarray:
    """One classic fourth-order Runge–Kutta step of w' = (M/h) w as a matrix:
    I + M + M²/2 + M³/6 + M⁴/24 for M = h·(system matrix), shape (..., s, s)
    (Butcher, "Numerical Methods for ODEs", the stability function of RK4)."""
    M = np.asarray(M, dtype=float)
    eye = np.eye(M.shape[-1])
    return eye + M @ (eye + M @ (eye / 2 + M @ (eye / 6 + M / 24)))
