"""The plausibility windows and ranges themselves (issue 18)."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest

from vascplan.errors import InputError
from vascplan.plausibility import (
    bounds,
    check_check_time,
    check_insertion,
    describe_gap,
    now,
    number_problem,
)
from vascplan.routes.settings import LIMITS_FILE, WEIGHTS_FILE, load_table

NOW = datetime(2026, 12, 10, tzinfo=UTC)  # tests/conftest.py fixes "now" here


def test_now_is_fixed_by_the_suite():
    assert now() == NOW


@pytest.mark.parametrize(("table", "file"), [("limits", LIMITS_FILE), ("weights", WEIGHTS_FILE)])
def test_every_bundled_setting_has_a_range_holding_its_value(table, file):
    for name, setting in load_table(file).items():
        rng = bounds(table, name)
        assert rng is not None, name
        assert rng[0] <= setting.value <= rng[1], name


def test_gap_words():
    # hand arithmetic: 2962-12-01 16:00 less 2026-12-10 00:00 is 935.98 years -> 936
    gap = datetime(2962, 12, 1, 16, tzinfo=UTC) - NOW
    assert describe_gap(gap) == "936 years"
    assert describe_gap(timedelta(minutes=90)) == "1 hour"
    assert describe_gap(timedelta(days=2, hours=3)) == "2 days"
    assert describe_gap(timedelta(seconds=5)) == "1 minute"


def test_check_time_margin_is_one_hour():
    check_check_time(NOW + timedelta(minutes=60), None, "--time")  # at the margin: accepted
    with pytest.raises(InputError) as exc:
        check_check_time(NOW + timedelta(minutes=61), None, "--time")
    assert str(exc.value) == (
        "--time: 2026-12-10 01:01 is 1 hour ahead (a check is at most 1 hour ahead of now)"
    )


def test_insertion_window_five_years_back():
    check_insertion(NOW - timedelta(days=1830), "u.yaml", "f")  # at the edge: accepted
    with pytest.raises(InputError) as exc:
        check_insertion(NOW - timedelta(days=1831), "u.yaml", "f")
    # 2021-12-10 to 2026-12-10 is 1826 days (2024 is a leap year); 5 days more: 2021-12-05
    assert str(exc.value).startswith("u.yaml: f: 2021-12-05 00:00 is 5 years ago: a typo in")


@pytest.mark.parametrize(
    ("text", "integer", "bad"),
    [
        ("64", False, False),
        ("-6.5e1", False, False),
        ("6_4", False, True),  # YAML 1.2 and Python's float() read 64
        ("\u0666\u0664", False, True),  # Arabic-Indic digits: Python's float() reads 64
        ("\uff16\uff14", True, True),  # fullwidth digits
        ("12", True, False),
    ],
)
def test_number_problem(text, integer, bad):
    assert (number_problem(text, integer=integer) is not None) == bad
