"""E-series preferred numbers (circuitode.studies.preferred) against IEC 60063."""
from __future__ import annotations

import numpy as np
import pytest

from circuitode.studies.preferred import E_SERIES, preferred_inside, preferred_values

# IEC 60063 (preferred number series for resistors and capacitors), E24 decade, from memory;
# the E24 values are the geometric series 10^(i/24) rounded to two digits except these, which
# the standard keeps for historical reasons (also from memory).
E24_OFF_SERIES = {10: 2.7, 11: 3.0, 12: 3.3, 13: 3.6, 14: 3.9, 15: 4.3, 16: 4.7, 22: 8.2}


def test_series_lengths_and_nesting():
    # IEC 60063: En has n values per decade; each series is every second value of the next
    assert [len(E_SERIES[s]) for s in ("E6", "E12", "E24")] == [6, 12, 24]
    assert E_SERIES["E12"] == E_SERIES["E24"][::2]
    assert E_SERIES["E6"] == E_SERIES["E12"][::2]


def test_e24_follows_the_rounded_geometric_series_except_the_kept_values():
    for i, value in enumerate(E_SERIES["E24"]):
        geometric = 10 ** (i / 24)
        if i in E24_OFF_SERIES:
            assert value == E24_OFF_SERIES[i]
            assert abs(value - geometric) / geometric < 0.05  # still within the series' steps
        else:
            assert value == round(geometric, 1)


def test_values_across_decades():
    np.testing.assert_allclose(preferred_values("E12", 8.0, 25.0), [8.2, 10, 12, 15, 18, 22])
    np.testing.assert_allclose(preferred_values("E24", 0.0043, 0.0056), [0.0043, 0.0047, 0.0051, 0.0056])
    np.testing.assert_allclose(preferred_values("E6", 680e-9, 3.3e-6), [680e-9, 1e-6, 1.5e-6, 2.2e-6, 3.3e-6])


def test_tolerance_band_must_fit_inside():
    # 10 Ω ± 5 % reaches 9.5 Ω: inside [9.5, 12.6]; 12 Ω ± 5 % reaches 12.6 Ω: inside too
    np.testing.assert_allclose(preferred_inside("E24", 9.5, 12.6, 0.05), [10, 11, 12])
    np.testing.assert_allclose(preferred_inside("E24", 9.6, 12.5, 0.05), [11])


def test_unknown_series_is_refused():
    with pytest.raises(ValueError, match="E6, E12, E24"):
        preferred_values("E7", 1, 10)
