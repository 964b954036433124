import numpy as np
import pytest
from astropy import units as u
from astropy.table import QTable, Table

from photpipe.photometry import read_reference_stars


def _table():
    return Table({"id": ["a", "b", "c"], "RA": [10.0, 10.1, 10.2], "Dec": [20.0, 20.1, 19.9],
                  "R": [12.0, 13.5, 14.25], "B-V": [0.6, 0.9, 1.2]})


@pytest.mark.parametrize(
    ("suffix", "fmt"),
    [
        pytest.param(".csv", "ascii.csv", id="csv"),
        pytest.param(".ecsv", "ascii.ecsv", id="ecsv"),
        pytest.param(".fits", "fits", id="fits"),
        pytest.param(".xml", "votable", id="votable"),
    ],
)
def test_round_trip(tmp_path, suffix, fmt):
    path = tmp_path / f"stars{suffix}"
    _table().write(path, format=fmt)
    got = read_reference_stars(path, bands=["R"], colour="B-V")
    assert isinstance(got, QTable)
    assert got["ra"].unit == u.deg and got["dec"].unit == u.deg
    np.testing.assert_array_equal(got["ra"].value, [10.0, 10.1, 10.2])
    np.testing.assert_array_equal(got["R"].to_value(u.mag), [12.0, 13.5, 14.25])


def test_units_from_ecsv_are_converted(tmp_path):
    t = QTable({"ra": [0.1, 0.2] * u.rad, "dec": [0.0, 0.1] * u.rad, "V": [12.0, 13.0] * u.mag})
    path = tmp_path / "stars.ecsv"
    t.write(path)
    got = read_reference_stars(path, bands=["V"])
    np.testing.assert_allclose(got["ra"].value, np.degrees([0.1, 0.2]), rtol=1e-12)


def test_missing_column_names_file_and_column(tmp_path):
    path = tmp_path / "stars.csv"
    _table().write(path, format="ascii.csv")
    with pytest.raises(ValueError, match="stars.csv: reference-star table has no column 'V'"):
        read_reference_stars(path, bands=["V"])


def test_missing_file(tmp_path):
    with pytest.raises(FileNotFoundError, match="reference-star file not found"):
        read_reference_stars(tmp_path / "nope.csv")


def test_unknown_format(tmp_path):
    path = tmp_path / "stars.dat"
    path.write_bytes(b"\x00\x01\x02 binary \xff\xfe")
    with pytest.raises(ValueError, match="stars.dat: cannot read as a table"):
        read_reference_stars(path)


def test_any_ending_astropy_recognises_and_mapped_columns(tmp_path):
    """A catalogue as a survey service writes it: RAJ2000, DEJ2000, Vmag, e_Vmag, B-V."""
    path = tmp_path / "field.txt"
    path.write_text("RAJ2000 DEJ2000 Vmag e_Vmag B-V\n10.0 20.0 12.5 0.02 0.6\n"
                    "10.1 20.1 13.0 0.03 0.8\n")
    t = read_reference_stars(path, bands=["V"], colour="B-V",
                             columns={"ra": "RAJ2000", "dec": "DEJ2000", "V": "Vmag",
                                      "V_err": "e_Vmag"})
    assert t["ra"].unit == u.deg and t["V"].unit == u.mag
    assert t["V_err"].unit == u.mag
    assert float(t["V_err"][1].value) == 0.03


def test_mapped_column_missing_is_named(tmp_path):
    path = tmp_path / "field.csv"
    path.write_text("RAJ2000,DEJ2000,Vmag\n10.0,20.0,12.5\n")
    with pytest.raises(ValueError, match="the configured column 'Rmag' \\(for 'R'\\)"):
        read_reference_stars(path, bands=["R"], columns={"ra": "RAJ2000", "dec": "DEJ2000",
                                                         "R": "Rmag"})


def test_unparsable(tmp_path):
    path = tmp_path / "stars.fits"
    path.write_bytes(b"not a fits file at all")
    with pytest.raises(ValueError, match="stars.fits: cannot read as fits table"):
        read_reference_stars(path)


def test_non_numeric_magnitude(tmp_path):
    path = tmp_path / "stars.csv"
    path.write_text("ra,dec,R\n10,20,bright\n")
    with pytest.raises(ValueError, match="column 'R' is not numeric"):
        read_reference_stars(path, bands=["R"])
