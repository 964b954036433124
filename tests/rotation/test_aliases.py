import numpy as np
from astropy import units as u
from astropy.table import QTable

from photpipe.rotation.aliases import describe_relation, spectral_window, window_peaks


def test_window_of_nightly_sampling_peaks_at_one_per_day():
    # Sampling once per night repeats the window at k/day (Deeming 1975, Ap&SS 36, 137); for
    # nights of length L the peaks follow [sin(πkL)/(πkL)]²: 0.875 (k=1), 0.573 (k=2) for L=0.2 d
    t = np.concatenate([n + np.linspace(0, 0.2, 15) for n in range(15)])
    f, w = spectral_window(t, 0.0, 0.01, 301)
    assert w[0] == 1.0 or abs(w[0] - 1.0) < 1e-9
    assert abs(w[100] - 0.875) < 0.06 and abs(w[200] - 0.573) < 0.06
    peaks = window_peaks(t)
    assert peaks["name"][0] == "1/day"


def test_two_sites_named_site_pattern():
    rng = np.random.default_rng(2)
    t = np.sort(np.concatenate([n + rng.choice([0.1, 0.55]) + np.linspace(0, 0.15, 10)
                                for n in range(20)]))
    sites = np.where(np.mod(t, 1) > 0.4, "b", "a")
    names = list(window_peaks(t, sites=sites, min_power=0.05)["name"])
    assert "1/day" in names


def test_relations():
    w = QTable({"name": ["1/day"], "frequency": [1.0027] / u.day})
    assert describe_relation(2.0, 2.0, tolerance=0.01) == "adopted"
    assert describe_relation(1.0, 2.0, tolerance=0.01) == "twice the period"
    assert describe_relation(4.0 - 1.0027, 2.0, tolerance=0.001, window=w) == \
        "half period - 1/day"
    assert describe_relation(7.77, 2.0, tolerance=0.01, window=w) == "unrelated"


def test_relation_on_a_short_baseline_is_named_only_for_its_ratio():
    # One 4.4 h night: 0.5 cycle over the baseline is 2.7 /day, wider than the frequencies
    # themselves. A period 1.6 times the adopted one is no harmonic (ratio arithmetic, exact).
    assert describe_relation(5.0 / 1.6, 5.0, tolerance=2.7) == "unrelated"
    assert describe_relation(2.5, 5.0, tolerance=2.7) == "twice the period"
    assert describe_relation(5.1, 5.0, tolerance=2.7) == "adopted"
