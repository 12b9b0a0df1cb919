"""French sizes, sheath outer diameters and the sheath-to-artery ratio."""

from __future__ import annotations

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from vascplan.sizing.assess import sar_threshold
from vascplan.sizing.french import device_outer_mm, fr_to_mm, mm_to_fr, sar


def test_french_scale_is_a_third_of_a_millimetre():
    # French scale: outer diameter in mm = Fr / 3 exactly (REFERENCES.md, Sizes).
    assert fr_to_mm(3) == 1.0
    assert fr_to_mm(1) == pytest.approx(1 / 3, rel=1e-15)
    assert fr_to_mm(24) == 8.0
    assert mm_to_fr(1.0) == 3.0


@settings(max_examples=50, deadline=None)
@given(st.floats(min_value=0.1, max_value=60))
def test_french_round_trip(fr):
    assert mm_to_fr(fr_to_mm(fr)) == pytest.approx(fr, rel=1e-12)


@pytest.mark.parametrize("bad", [0, -1, float("nan"), float("inf")])
def test_bad_sizes_refused(bad):
    with pytest.raises(ValueError, match="positive"):
        fr_to_mm(bad)
    with pytest.raises(ValueError, match="positive"):
        device_outer_mm(bad, "inner")


def test_unknown_label_refused():
    with pytest.raises(ValueError, match="'outer' or 'inner'"):
        device_outer_mm(6, "middle")  # type: ignore[arg-type]


# Measured sheath outer diameters: Wahood et al., J NeuroIntervent Surg 2022 (seen):
# 5 Fr 2.29 mm, 6 Fr 2.62 mm.
@pytest.mark.parametrize(("fr", "outer_mm"), [(5, 2.29), (6, 2.62)])
def test_sheath_outer_diameters_measured_by_wahood(fr, outer_mm):
    od = device_outer_mm(fr, "inner")
    assert od.mm == pytest.approx(outer_mm, abs=0.005)
    assert od.source == "wall-allowance"
    assert od.assumption is not None and "Wahood" in od.assumption
    assert "assumed" in od.assumption


# Standard-wall sheath outer sizes, REFERENCES.md (from memory): the table must lie in
# each range.
MEMORY_RANGES = {
    4: (1.9, 2.0), 7: (2.9, 3.0), 8: (3.3, 3.4), 10: (4.0, 4.2), 12: (4.7, 4.9),
    14: (5.3, 6.0), 16: (6.0, 6.7), 18: (6.7, 7.2), 20: (7.5, 7.9), 22: (8.3, 8.4),
    24: (9.0, 9.2),
}


@pytest.mark.parametrize(("fr", "bounds"), sorted(MEMORY_RANGES.items()))
def test_sheath_table_within_recalled_ranges(fr, bounds):
    od = device_outer_mm(fr, "inner")
    assert bounds[0] <= od.mm <= bounds[1]
    assert "from memory" in od.assumption


def test_catheter_labelled_by_outer_size_has_no_assumption():
    od = device_outer_mm(17, "outer")
    assert od.mm == pytest.approx(17 / 3)
    assert (od.source, od.assumption) == ("label", None)


def test_measured_outer_diameter_wins():
    od = device_outer_mm(14, "inner", outer_mm=6.1)
    assert (od.mm, od.source, od.assumption) == (6.1, "measured", None)


def test_sheath_beyond_the_table_keeps_the_end_wall_and_says_so():
    od = device_outer_mm(26, "inner")
    # 24 Fr row: 9.1 mm outer = 8.0 mm + 1.1 mm wall; kept for 26 Fr (8.667 mm label).
    assert od.mm == pytest.approx(26 / 3 + 1.1, abs=1e-6)
    assert "kept for larger sizes" in od.assumption


@settings(max_examples=60, deadline=None)
@given(st.floats(min_value=2, max_value=30), st.floats(min_value=0.01, max_value=5))
def test_sheath_outer_diameter_grows_with_the_label(fr, step):
    small, big = device_outer_mm(fr, "inner"), device_outer_mm(fr + step, "inner")
    assert big.mm >= small.mm
    assert small.mm > fr_to_mm(fr)  # the wall is always added


def test_sar_and_its_threshold():
    # SAR = outer diameter / minimal lumen diameter (Hayashida et al. 2011).
    assert sar(6.0, 6.0) == 1.0
    assert sar(17 / 3, 6.5) == pytest.approx(0.8718, abs=1e-4)
    th = sar_threshold()
    # SFAR >= 1.05: Hayashida et al., JACC Cardiovasc Interv 2011 (REFERENCES.md).
    assert th.value == 1.05
    assert "Hayashida" in th.source
    with pytest.raises(ValueError):
        sar(6.0, 0.0)
