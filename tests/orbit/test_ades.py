import numpy as np
import pytest
from astropy.time import Time

from photpipe.orbit.ades import read_ades, write_ades_psv, write_ades_xml, write_night_ades
from photpipe.orbit.astrometry import comet_astrometry_record
from photpipe.orbit.sites import site_vectors

RECORDS = [
    {"provID": "C/2026 Z1", "mode": "CCD", "stn": "Z01",
     "obsTime": Time("2026-02-01T03:04:05.250", scale="utc"), "ra": 120.123456789,
     "dec": -5.5, "rmsRA": 0.31, "rmsDec": 0.42, "rmsCorr": 0.1, "astCat": "Gaia3"},
    {"provID": "C/2026 Z1", "mode": "CCD", "stn": "247",
     "obsTime": Time("2026-02-01T03:14:05.250", scale="utc"), "ra": 120.2, "dec": -5.4,
     "rmsRA": 0.5, "rmsDec": 0.5, "astCat": "Gaia3", "sys": "WGS84", "pos1": 10.5,
     "pos2": 45.25, "pos3": 300.0},
]


@pytest.mark.parametrize("writer", [write_ades_psv, write_ades_xml], ids=["psv", "xml"])
def test_round_trip(tmp_path, writer):
    path = tmp_path / "night.ades"
    writer(RECORDS, str(path), observatory={"mpcCode": "Z01"})
    got = read_ades([str(path)])
    assert got.problems == []
    t = got.table
    assert list(t["stn"]) == ["Z01", "247"]
    assert t["ra_deg"][0] == pytest.approx(120.123456789, abs=1e-9)
    assert t["rms_dec_arcsec"][0] == pytest.approx(0.42)
    assert t["rms_corr"][0] == pytest.approx(0.1)
    assert abs((t["time"][0] - RECORDS[0]["obsTime"]).sec) < 1e-3
    assert t["sys"][1] == "WGS84" and t["pos2"][1] == pytest.approx(45.25)


def test_psv_header_lines_follow_the_standard(tmp_path):
    # ADES description (IAU/MPC 2017): "# version=2017" first, "# keyword" blocks with
    # "! name value" records, then a line of field names separated by "|"
    path = tmp_path / "n.psv"
    write_ades_psv(RECORDS[:1], str(path), observatory={"mpcCode": "Z01"})
    lines = path.read_text().splitlines()
    assert lines[0] == "# version=2017"
    assert lines[1:3] == ["# observatory", "! mpcCode Z01"]
    assert [f.strip() for f in lines[3].split("|")][:6] == ["provID", "mode", "stn", "obsTime",
                                                              "ra", "dec"]


def test_bad_records_are_named_and_the_rest_is_read(tmp_path):
    text = "\n".join([
        "# version=2017",
        "permID|mode|stn|obsTime|ra|dec|rmsRA|rmsDec",
        "C1|CCD|Z01|2026-01-05T03:00:00.0Z|120.5|10.25|0.3|0.3",
        "C1|CCD|Z01|2026-01-05T03:00:00.0Z|120.5|10.25|0.3|0.3",     # duplicate
        "C1|CCD|Z01|2026-01-05T03:20:00.0Z|120.7|10.30||0.3",        # no rmsRA
        "C1|CCD|Z01|yesterday|120.7|10.30|0.3|0.3",                  # bad time
        "C1|CCD|Z01|2026-01-05T03:40:00.0Z|400.0|10.30|0.3|0.3",     # RA out of range
        "C1|CCD|2026-01-05T03:40:00.0Z|120.9|10.30|0.3|0.3",         # a field missing
    ])
    path = tmp_path / "mixed.psv"
    path.write_text(text)
    broken = tmp_path / "broken.xml"
    broken.write_text("<ades><obsBlock>")
    got = read_ades([str(path), str(broken), str(tmp_path / "absent.psv")])
    assert len(got.table) == 1
    joined = "\n".join(got.problems)
    assert f"{path}:4: skipped: duplicate of {path}:3" in joined
    assert f"{path}:5: skipped: no rmsRA" in joined
    assert f"{path}:6: skipped: obsTime 'yesterday'" in joined
    assert f"{path}:7: skipped: ra 400.0" in joined
    assert f"{path}:8: skipped: 7 fields where the header line has 8" in joined
    assert f"{broken}: not readable as ADES XML" in joined
    assert f"{tmp_path / 'absent.psv'}: cannot read" in joined


def test_default_rms_fills_missing_uncertainties(tmp_path):
    path = tmp_path / "a.psv"
    path.write_text("permID|stn|obsTime|ra|dec\nC1|Z01|2026-01-05T03:00:00Z|1.0|2.0\n")
    got = read_ades(str(path), default_rms_arcsec=1.5)
    assert got.table["rms_ra_arcsec"][0] == 1.5


def test_unknown_site_is_reported(tmp_path):
    path = tmp_path / "a.psv"
    write_ades_psv(RECORDS, str(path))
    got = read_ades(str(path))
    xyz, problems = site_vectors(got.table, {})
    assert problems == [f"{path}:3: unknown site Z01"]
    assert np.all(np.isnan(xyz[:, 0])) and np.all(np.isfinite(xyz[:, 1]))
    # the record's own WGS84 position: |xyz| is about the Earth's radius (WGS84 ellipsoid)
    assert 6360 < np.linalg.norm(xyz[:, 1]) < 6380


def test_frame_records_written_per_night_read_back_with_their_errors(tmp_path):
    from astropy.wcs import WCS

    w = WCS(naxis=2)
    w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    w.wcs.crval = [150.0, 20.0]
    w.wcs.crpix = [51, 51]
    w.wcs.cd = [[-1 / 3600, 0.3 / 3600], [0.3 / 3600, 1 / 3600]]   # sheared: a correlation
    rec = comet_astrometry_record(60.0, 40.0, xy_err=(0.3, 0.6), wcs=w, wcs_rms_arcsec=0.1,
                                  time_mid=Time("2026-02-01T03:00:00", scale="utc"),
                                  station="Z01", object_id="C/2026 Z1", catalogue="Gaia3")
    # first-order propagation by hand (Bevington & Robinson 2003, Eq. 3.13): J = CD in
    # arcsec/pix near the tangent point (Greisen & Calabretta 2002, Eq. 1-3)
    jac = np.array([[-1.0, 0.3], [0.3, 1.0]]) * np.array([[np.cos(np.radians(rec["dec"]))
                                                            / np.cos(np.radians(20.0))], [1.0]])
    cov = jac @ np.diag([0.09, 0.36]) @ jac.T + 0.01 * np.eye(2)
    assert rec["rmsRA"] == pytest.approx(np.sqrt(cov[0, 0]), rel=2e-3)
    assert rec["rmsDec"] == pytest.approx(np.sqrt(cov[1, 1]), rel=2e-3)
    psv, xml = write_night_ades([rec], tmp_path, "2026-02-01")
    for path in (psv, xml):
        t = read_ades(path).table
        assert t["rms_corr"][0] == pytest.approx(rec["rmsCorr"], abs=1e-4)
        assert t["ra_deg"][0] == pytest.approx(rec["ra"], abs=1e-9)
