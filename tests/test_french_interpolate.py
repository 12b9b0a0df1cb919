"""The pure-Python table interpolation against numpy.interp (the reference library)."""

from __future__ import annotations

import numpy as np
import pytest

from vascplan.sizing.french import interpolate, sheath_outer_table


def test_interpolate_equals_numpy_interp_over_the_sheath_table():
    fr, od, _rows = sheath_outer_table()
    for x in [fr[0] - 2, *fr, *(a + 0.37 * (b - a) for a, b in zip(fr, fr[1:], strict=False)),
              fr[-1] + 3]:
        assert interpolate(x, fr, od) == pytest.approx(float(np.interp(x, fr, od)), abs=1e-12)


def test_hand_worked_midpoint():
    # Halfway between (4, 1.0) and (6, 2.0) is 1.5; beyond the ends the end values.
    assert interpolate(5.0, [4.0, 6.0], [1.0, 2.0]) == 1.5
    assert interpolate(3.0, [4.0, 6.0], [1.0, 2.0]) == 1.0
    assert interpolate(7.0, [4.0, 6.0], [1.0, 2.0]) == 2.0
