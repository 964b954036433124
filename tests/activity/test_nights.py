import numpy as np
import pytest
from astropy import units as u
from astropy.time import Time

from photpipe.activity.nights import bin_nights, night_labels


def test_night_labels_gap_and_order():
    t = Time([60000.10, 60000.30, 60001.10, 60000.20, 60005.0], format="mjd")
    assert night_labels(t).tolist() == [0, 0, 1, 0, 2]


def test_night_labels_max_span_splits_a_continuous_chain():
    # Frames every 2 h for 3 days: no gap, but a night never spans more than a day.
    t = Time(60000.0 + np.arange(0, 3.0, 2 / 24), format="mjd")
    labels = night_labels(t, gap=6 * u.h, max_span=1 * u.day)
    assert labels.max() == 2
    assert np.all(np.diff(labels) >= 0)


def test_night_labels_rejects_plain_numbers():
    with pytest.raises(TypeError, match="'time' must be an astropy Time"):
        night_labels(np.array([1.0, 2.0]))


def test_night_labels_rejects_bad_gap():
    t = Time([60000.0], format="mjd")
    with pytest.raises(ValueError, match="'gap' must be finite and positive"):
        night_labels(t, gap=-1 * u.h)


def test_bin_nights_weighted_mean_and_birge_ratio():
    # Two frames 3.0 and 3.2 with σ = 0.1: mean 3.1, χ² = 2 on 1 dof, Birge ratio √2,
    # so the error 0.1/√2 becomes exactly 0.1 (Birge 1932, Phys. Rev. 40, 207).
    b = bin_nights(np.array([1.0, 1.1, 2.0]), np.zeros(3), np.array([3.0, 3.2, 3.1]),
                   np.full(3, 0.1))
    np.testing.assert_allclose(b.y, [3.1, 3.1], rtol=1e-12)
    np.testing.assert_allclose(b.sy, [0.1, 0.1], rtol=1e-12)
    assert b.n_frames.tolist() == [2, 1]
    assert b.labels.tolist() == [0, 0, 1]


def test_bin_nights_consistent_frames_not_inflated():
    # Identical values: χ² = 0, Birge ratio below 1 is not applied; error is 0.1/√4.
    b = bin_nights(np.array([1.0, 1.05, 1.1, 1.15]), np.zeros(4), np.full(4, 2.0),
                   np.full(4, 0.1))
    np.testing.assert_allclose(b.sy, [0.05], rtol=1e-12)


def test_bin_nights_split_at_perihelion_and_drop_nan():
    mjd = np.array([10.0, 10.1, 10.2, 10.3, np.nan])
    b = bin_nights(mjd, np.zeros(5), np.ones(5), np.full(5, 0.1), split_mjd=10.15)
    assert len(b) == 2
    assert b.labels.tolist() == [0, 0, 1, 1, -1]
    np.testing.assert_allclose(b.mjd_first, [10.0, 10.2])
    np.testing.assert_allclose(b.mjd_last, [10.1, 10.3])
