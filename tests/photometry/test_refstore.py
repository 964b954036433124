import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import SkyCoord
from astropy.table import QTable

from photpipe.photometry import ReferenceStarStore


@pytest.fixture(scope="module")
def sky_table():
    rng = np.random.default_rng(42)
    n = 20000
    ra = rng.uniform(0, 360, n)
    dec = np.degrees(np.arcsin(rng.uniform(-1, 1, n)))
    return QTable({"id": np.array([f"s{i}" for i in range(n)]), "ra": ra * u.deg,
                   "dec": dec * u.deg, "R": rng.uniform(10, 18, n) * u.mag,
                   "B-V": rng.uniform(0.2, 1.4, n) * u.mag})


@pytest.mark.parametrize(
    ("ra", "dec", "radius"),
    [
        pytest.param(52.0, 18.0, 3.0, id="ordinary"),
        pytest.param(0.5, -10.0, 4.0, id="ra-wrap"),
        pytest.param(123.0, 89.0, 3.0, id="near-pole"),
        pytest.param(200.0, -40.0, 0.5, id="small"),
    ],
)
def test_cone_matches_brute_force(tmp_path, sky_table, ra, dec, radius):
    store = ReferenceStarStore.build(sky_table, tmp_path / "store.npz", nside=32)
    centre = SkyCoord(ra * u.deg, dec * u.deg)
    got = store.cone(centre, radius * u.deg)
    # oracle: astropy angular separation over every star
    sep = SkyCoord(sky_table["ra"], sky_table["dec"]).separation(centre)
    expected = set(sky_table["id"][sep <= radius * u.deg])
    assert set(got["id"]) == expected
    assert got["R"].unit == u.mag and got["ra"].unit == u.deg


def test_reopen_and_len(tmp_path, sky_table):
    path = tmp_path / "store.npz"
    ReferenceStarStore.build(sky_table, path)
    store = ReferenceStarStore(path)
    assert len(store) == len(sky_table)
    assert store.colnames == sky_table.colnames


def test_not_a_store(tmp_path):
    path = tmp_path / "other.npz"
    np.savez(path, a=np.arange(3))
    with pytest.raises(ValueError, match="not a reference-star store"):
        ReferenceStarStore(path)


def test_missing_store(tmp_path):
    with pytest.raises(FileNotFoundError, match="reference-star store not found"):
        ReferenceStarStore(tmp_path / "none.npz")


def test_bad_coordinates(tmp_path):
    t = QTable({"ra": [10.0, np.nan] * u.deg, "dec": [0.0, 0.0] * u.deg})
    with pytest.raises(ValueError, match=r"1 reference star\(s\) with invalid ra/dec"):
        ReferenceStarStore.build(t, tmp_path / "s.npz")


def test_missing_ra(tmp_path):
    with pytest.raises(ValueError, match="has no column 'ra'"):
        ReferenceStarStore.build(QTable({"dec": [1.0]}), tmp_path / "s.npz")


def test_bad_nside(tmp_path, sky_table):
    with pytest.raises(ValueError, match="'nside' must be a power of 2"):
        ReferenceStarStore.build(sky_table, tmp_path / "s.npz", nside=30)
