"""Preferred numbers of the E series (IEC 60063): the values resistors and capacitors are sold in.

The tables below are the E6, E12 and E24 decades of IEC 60063 (written from
memory; they are the well-known sequences printed on every resistor catalogue).
E24 does not follow the rounded geometric series 10^(i/24) everywhere: the
standard keeps 2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7 and 8.2 for historical
reasons, so the tables are written out, not computed.
"""
from __future__ import annotations

import math

import numpy as np

__all__ = ["E_SERIES", "preferred_values", "preferred_inside"]

#: Series name → the values of one decade, 1.0 ≤ v < 10 (IEC 60063, from memory).
E_SERIES: dict[str, tuple[float, ...]] = {
    "E6": (1.0, 1.5, 2.2, 3.3, 4.7, 6.8),
    "E12": (1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2),
    "E24": (1.0, 1.1, 1.2, 1.3, 1.5, 1.6, 1.8, 2.0, 2.2, 2.4, 2.7, 3.0,
            3.3, 3.6, 3.9, 4.3, 4.7, 5.1, 5.6, 6.2, 6.8, 7.5, 8.2, 9.1),
}


def preferred_values(series: str, low: float, high: float) -> np.ndarray:
    """(n,) every value of ``series`` ("E6", "E12", "E24") in [low, high], ascending; SI floats.

    Values are rounded to 3 significant digits so that 4.7 × 10^-3 prints as 0.0047.
    """
    if series not in E_SERIES:
        raise ValueError(f"unknown series {series!r}; use one of {', '.join(E_SERIES)}")
    if not (low > 0 and high >= low and math.isfinite(high)):
        return np.zeros(0)
    decades = np.arange(math.floor(math.log10(low)) - 1, math.ceil(math.log10(high)) + 1)
    mantissas = np.asarray(E_SERIES[series])
    values = (mantissas[None, :] * 10.0 ** decades[:, None]).ravel()
    values = np.array([float(f"{v:.3g}") for v in values])  # 3.3 × 10^-3, not 0.0033000000000000004
    return values[(values >= low * (1 - 1e-12)) & (values <= high * (1 + 1e-12))]


def preferred_inside(series: str, low: float, high: float, tolerance: float = 0.0) -> np.ndarray:
    """Values of ``series`` whose whole tolerance band v·(1 ± tolerance) lies in [low, high].

    tolerance : the part's relative tolerance (0.05 for ± 5 %); 0 asks only for v inside.
    """
    candidates = preferred_values(series, low, high)
    keep = (candidates * (1 - tolerance) >= low * (1 - 1e-12)) & (candidates * (1 + tolerance) <= high * (1 + 1e-12))
    return candidates[keep]
