"""The grid tools: buckets, rolling extremes, runs, crossings — against hand-worked cases and a naive loop."""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from soaklog.errors import InputError
from soaklog.report.series import (
    Series,
    bucketize,
    crossing_time,
    nan_mean_rows,
    rolling_max,
    rolling_min,
    true_runs,
)


def test_bucketize_mean_lowest_highest_by_hand() -> None:
    # readings at 0, 4, 9 s (bucket 0 of 10 s), 12 s (bucket 1), none in bucket 2, 25 s NaN (ignored)
    t = [0.0, 4.0, 9.0, 12.0, 25.0]
    v = [1.0, 3.0, 2.0, 7.0, float("nan")]
    mean, lo, hi = bucketize(t, v, 0.0, 10.0, 3)
    np.testing.assert_allclose(mean[:2], [2.0, 7.0])  # (1 + 3 + 2) / 3 = 2
    np.testing.assert_allclose(lo[:2], [1.0, 7.0])
    np.testing.assert_allclose(hi[:2], [3.0, 7.0])
    assert math.isnan(mean[2]) and math.isnan(lo[2]) and math.isnan(hi[2])


def test_bucketize_drops_readings_off_the_grid() -> None:
    mean, _lo, _hi = bucketize([-1.0, 5.0, 30.0], [9.0, 1.0, 9.0], 0.0, 10.0, 2)
    np.testing.assert_allclose(mean, [1.0, np.nan])


def _naive_max(x: list[float], m: int) -> list[float]:
    out = []
    for i in range(len(x)):
        if i < m - 1:
            out.append(float("nan"))
            continue
        w = x[i - m + 1:i + 1]
        out.append(float("nan") if any(math.isnan(v) for v in w) else max(w))
    return out


@given(
    st.lists(st.one_of(st.floats(-1e6, 1e6), st.just(float("nan"))), min_size=0, max_size=60),
    st.integers(1, 12),
)
@settings(max_examples=200, deadline=None)
def test_rolling_max_and_min_agree_with_a_naive_loop(x: list[float], m: int) -> None:
    got = rolling_max(np.asarray(x, dtype=np.float64), m)
    np.testing.assert_array_equal(got, np.asarray(_naive_max(x, m), dtype=np.float64))
    neg = [-v for v in x]
    got_min = rolling_min(np.asarray(x, dtype=np.float64), m)
    np.testing.assert_array_equal(got_min, -np.asarray(_naive_max(neg, m), dtype=np.float64))


def test_rolling_max_works_per_column() -> None:
    a = np.array([[1.0, 5.0], [3.0, 4.0], [2.0, 6.0]])
    np.testing.assert_array_equal(rolling_max(a, 2), [[np.nan, np.nan], [3.0, 5.0], [3.0, 6.0]])


def test_rolling_window_must_hold_a_sample() -> None:
    with pytest.raises(InputError):
        rolling_max(np.zeros(3), 0)


@pytest.mark.parametrize(
    ("mask", "starts", "ends"),
    [
        ([], [], []),
        ([False, False], [], []),
        ([True], [0], [1]),
        ([True, True, False, True], [0, 3], [2, 4]),
        ([False, True, True, True, False], [1], [4]),
    ],
)
def test_true_runs(mask: list[bool], starts: list[int], ends: list[int]) -> None:
    s, e = true_runs(np.asarray(mask, dtype=bool))
    assert s.tolist() == starts and e.tolist() == ends


def test_crossing_time_interpolates_linearly() -> None:
    # samples 10 °C at t = 30 s and 20 °C at t = 90 s: 12.5 °C is crossed a quarter of the way, at 45 s
    t = np.array([30.0, 90.0])
    y = np.array([10.0, 20.0])
    assert crossing_time(t, y, 12.5, 0) == pytest.approx(45.0)


def test_crossing_time_without_a_neighbour_falls_back_to_the_midpoint() -> None:
    t = np.array([30.0, 90.0])
    assert crossing_time(t, np.array([10.0, np.nan]), 12.5, 0) == pytest.approx(60.0)


def test_nan_mean_rows_skips_missing_channels() -> None:
    np.testing.assert_allclose(nan_mean_rows(np.array([[1.0, 3.0], [np.nan, 4.0], [np.nan, np.nan]])),
                               [2.0, 4.0, np.nan])


def test_series_refuses_arrays_of_the_wrong_shape() -> None:
    with pytest.raises(InputError):
        Series(0.0, 60.0, ("a", "b"), np.zeros((3, 1)), np.zeros((3, 1)), np.zeros((3, 1)))


def test_series_index_and_columns() -> None:
    v = np.arange(6, dtype=np.float64).reshape(3, 2)
    s = Series(100.0, 60.0, ("a", "b"), v, v, v)
    assert s.index_of(100.0) == 0 and s.index_of(219.9) == 1 and s.index_of(1e9) == 2 and s.index_of(0.0) == 0
    np.testing.assert_array_equal(s.columns(["b"]).mean[:, 0], [1.0, 3.0, 5.0])
    np.testing.assert_allclose(s.t_mid(), [130.0, 190.0, 250.0])
