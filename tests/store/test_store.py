import sqlite3
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest
from astropy import units as u
from astropy.table import QTable

from photpipe.campaign import FrameRecord, config_hash, file_sha256
from photpipe.store import CampaignStore, StoreError

HERE = Path(__file__).parent


@pytest.fixture
def store(tmp_path):
    with CampaignStore(tmp_path / "campaign.sqlite") as s:
        yield s


def _measurements(mags=(15.2, 14.6, 14.1)):
    n = len(mags)
    return QTable({
        "mjd_utc_mid": np.full(n, 61010.25),
        "rho_km": [5000.0, 10000.0, 20000.0][:n] * u.km,
        # Given in metres and arcmin: the store must convert them to the contract units.
        "rho_arcsec": ([3.0, 6.0, 12.0][:n] * u.arcsec).to(u.arcmin),
        "afrho_cm": ([120.0, 118.0, 117.0][:n] * u.cm).to(u.m),
        "mag": list(mags) * u.mag,
        "mag_err": np.full(n, 0.02) * u.mag,
        "n_stars": np.full(n, 12),
        "flags": ["", "star_in_aperture", ""][:n],
    })


def _record(name="sci_0001", *, content="h1", mags=(15.2, 14.6, 14.1), nucleus=True, **kw):
    return FrameRecord(
        "2026-12-01", name, f"/raw/{name}.fits", content, mjd_utc_mid=61010.25, filter="R",
        exptime_s=120.0, site="kettle_rock", stages=("calibration", "photometry", "nucleus"),
        calibrations=({"kind": "bias", "path": "/res/masters/bias.fits", "n_inputs": 9},),
        geometry={"r_h_au": 1.42 * u.AU, "delta_au": 0.81 * u.AU, "phase_deg": 38.0 * u.deg,
                  "light_time_s": (0.81 * u.AU / (299792.458 * u.km / u.s)).to(u.s)},
        zero_point={"zp_mag": 23.1 * u.mag, "zp_err_mag": 0.01 * u.mag, "n_stars": 12},
        stars=QTable({"ra_deg": [10.0, 10.1] * u.deg, "mag_ref": [12.0, 13.0] * u.mag,
                      "used": [True, False]}),
        measurements=_measurements(mags),
        nucleus={"nucleus_mag": 18.3 * u.mag, "nucleus_mag_err": 0.05 * u.mag,
                 "method": "2d", "flags": ""} if nucleus else None,
        **kw)


def test_round_trip_converts_to_contract_units(store):
    run = store.start_run("[campaign]", config_hash="c1")
    store.write_frame(run, _record(), config_hash="c1")
    m = store.export_table("measurements", night="2026-12-01")
    assert m.colnames[0] == "frame"
    assert list(m["frame"]) == ["sci_0001"] * 3
    assert m["rho_arcsec"].unit == u.arcsec
    np.testing.assert_allclose(m["rho_arcsec"].value, [3.0, 6.0, 12.0], rtol=1e-12)
    assert m["afrho_cm"].unit == u.cm
    np.testing.assert_allclose(m["afrho_cm"].value, [120.0, 118.0, 117.0], rtol=1e-12)
    # Frame-level facts missing from the rows come from the record.
    assert list(m["filter"]) == ["R"] * 3
    np.testing.assert_allclose(m["exptime_s"].to_value(u.s), 120.0)
    assert list(m["flags"]) == ["", "star_in_aperture", ""]
    n = store.export_table("nucleus")
    assert n["nucleus_mag"].unit == u.mag and n["nucleus_mag"][0].value == 18.3
    g = store.export_table("geometry")
    # light time for 0.81 AU: 0.81 * 499.00478 s (IAU 2012 au, c exact)
    np.testing.assert_allclose(g["light_time_s"].to_value(u.s), 0.81 * 499.004784, rtol=1e-8)
    stars = store.export_table("stars")
    assert list(stars["used"]) == [1, 0]
    cal = store.export_table("calibrations")
    assert list(cal["kind"]) == ["bias"] and cal["n_inputs"][0] == 9


def test_writing_again_replaces_rows(store):
    run = store.start_run("[campaign]", config_hash="c1")
    store.write_frame(run, _record(), config_hash="c1")
    store.write_frame(run, _record(), config_hash="c1")
    assert store.count("measurements") == 3
    assert store.count("frames") == 1
    assert store.count("nucleus") == 1
    # Fewer apertures this time: the stale third row must go.
    store.write_frame(run, _record(mags=(15.0, 14.5)), config_hash="c1")
    assert store.count("measurements") == 2
    assert store.count("calibrations") == 1


@pytest.mark.parametrize("change, expected", [
    pytest.param({}, True, id="same"),
    pytest.param({"content_hash": "h2"}, False, id="file-changed"),
    pytest.param({"config_hash": "c2"}, False, id="config-changed"),
    pytest.param({"stages": ("calibration", "photometry", "nucleus", "extra")}, False,
                 id="new-stage-available"),
    pytest.param({"stages": ("calibration",)}, True, id="fewer-stages-asked"),
])
def test_is_measured(store, change, expected):
    run = store.start_run("[campaign]", config_hash="c1")
    store.write_frame(run, _record(), config_hash="c1")
    ask = {"content_hash": "h1", "config_hash": "c1",
           "stages": ("calibration", "photometry", "nucleus"), **change}
    assert store.is_measured("2026-12-01", "sci_0001", **ask) is expected
    assert store.is_measured("2026-12-01", "sci_9999", content_hash="h1",
                             config_hash="c1") is False


def test_failed_write_leaves_nothing_half_done(store):
    run = store.start_run("[campaign]", config_hash="c1")
    store.write_frame(run, _record(), config_hash="c1")
    bad = _record(mags=(15.0, 14.5, 14.0))
    bad.measurements["rho_km"] = [1.0, 2.0, 3.0] * u.s  # wrong kind of unit
    with pytest.raises(ValueError, match="measurements.rho_km: cannot convert s to km"):
        store.write_frame(run, bad, config_hash="c2")
    # The earlier results are intact: the failed transaction was rolled back whole.
    assert store.count("measurements") == 3
    assert store.is_measured("2026-12-01", "sci_0001", content_hash="h1", config_hash="c1")


def test_export_writes_ecsv_with_units(store, tmp_path):
    run = store.start_run("[campaign]", config_hash="c1")
    store.write_frame(run, _record(), config_hash="c1")
    path = store.write_ecsv("measurements", tmp_path / "out" / "measurements.ecsv",
                            night="2026-12-01")
    back = QTable.read(path, format="ascii.ecsv")
    assert back["rho_km"].unit == u.km
    assert back["mag"].unit == u.mag
    assert back["afrho_cm"].unit == u.cm
    assert back.meta["night"] == "2026-12-01"
    # The measurements.ecsv contract columns, in order (DEVELOPERS.md, Photometry).
    assert back.colnames == [
        "frame", "mjd_utc_mid", "filter", "exptime_s", "airmass", "zp_mag", "zp_err_mag",
        "n_stars", "x_pix", "y_pix", "ra_deg", "dec_deg", "r_h_au", "delta_au", "phase_deg",
        "elong_deg", "rho_km", "rho_arcsec", "mag", "mag_err", "afrho_cm", "afrho_err_cm",
        "a0frho_cm", "a0frho_err_cm", "coma_slope", "coma_slope_err", "coma_apcorr_mag",
        "nucleus_share", "afrho_coma_cm", "afrho_coma_err_cm", "a0frho_coma_cm",
        "a0frho_coma_err_cm", "flags"]
    nucleus = store.export_table("nucleus", night="2026-12-01")
    # The nucleus.ecsv contract columns, in order (DEVELOPERS.md, Nucleus).
    assert nucleus.colnames == [
        "frame", "mjd_utc_mid", "nucleus_mag", "nucleus_mag_err", "nucleus_flux_e_s", "coma_k",
        "coma_gamma", "fwhm_arcsec", "nucleus_fraction", "chi2_red", "method", "flags"]
    assert not list(tmp_path.glob("out/.*tmp"))


def test_lightcurve_prefers_the_nucleus_fit(store):
    run = store.start_run("[campaign]", config_hash="c1")
    store.write_frame(run, _record("sci_0001"), config_hash="c1")
    store.write_frame(run, _record("sci_0002", nucleus=False, mags=(16.0, 15.0)),
                      config_hash="c1")
    lc = store.lightcurve()
    assert lc.colnames[:12] == ["frame", "mjd_utc_mid", "nucleus_mag", "nucleus_mag_err",
                                "r_h_au", "delta_au", "phase_deg", "light_time_s", "site",
                                "filter", "source", "flags"]
    by = {row["frame"]: row for row in lc}
    assert by["sci_0001"]["source"] == "nucleus_fit"
    assert by["sci_0001"]["nucleus_mag"].value == 18.3
    # No fit: the smallest aperture (5000 km) stands in.
    assert by["sci_0002"]["source"] == "small_aperture"
    assert by["sci_0002"]["nucleus_mag"].value == 16.0
    assert by["sci_0002"]["r_h_au"].to_value(u.AU) == 1.42


def test_skipped_rows_are_current_state(store):
    run = store.start_run("[campaign]", config_hash="c1")
    store.add_skipped(run, "2026-12-01", "sci_0001", "photometry", "only 2 stars matched")
    store.add_skipped(run, "2026-12-01", "sci_0001", "photometry", "only 3 stars matched")
    assert store.count("skipped") == 1
    # The frame is measured later: its skip record goes.
    store.write_frame(run, _record(problems=(("nucleus", "fit did not converge"),)),
                      config_hash="c1")
    skipped = store.export_table("skipped")
    assert list(skipped["stage"]) == ["nucleus"]
    assert list(skipped["reason"]) == ["fit did not converge"]


def test_abandoned_run_is_marked_interrupted(tmp_path):
    path = tmp_path / "c.sqlite"
    with CampaignStore(path) as store:
        store.start_run("[campaign]", config_hash="c1")
    # Pretend the run belonged to a process that has gone away.
    with sqlite3.connect(path) as db:
        db.execute("UPDATE runs SET pid = 2147483646")
    with CampaignStore(path) as store:
        store.start_run("[campaign]", config_hash="c1")
        runs = store.export_table("runs")
    assert list(runs["status"]) == ["interrupted", "running"]


@pytest.mark.parametrize("content, message", [
    pytest.param(b"this is not a database, just text\n" * 200, "is damaged or is not a SQLite",
                 id="text"),
    pytest.param(b"SQLite format 3\x00" + b"\xff" * 4000, "is damaged or is not a SQLite",
                 id="bad-header"),
])
def test_corrupt_file_names_the_file(tmp_path, content, message):
    path = tmp_path / "broken.sqlite"
    path.write_bytes(content)
    with pytest.raises(StoreError, match=message) as info:
        CampaignStore(path)
    assert str(path) in str(info.value)


def test_truncated_store_is_refused(tmp_path):
    path = tmp_path / "c.sqlite"
    with CampaignStore(path) as store:
        run = store.start_run("x" * 50000, config_hash="c1")
        for i in range(30):
            store.write_frame(run, _record(f"sci_{i:04d}"), config_hash="c1")
    data = path.read_bytes()
    (tmp_path / "c.sqlite-wal").unlink(missing_ok=True)
    path.write_bytes(data[: len(data) // 2])
    with pytest.raises(StoreError, match=str(path)):
        CampaignStore(path)


def test_foreign_sqlite_file_is_refused(tmp_path):
    path = tmp_path / "other.sqlite"
    with sqlite3.connect(path) as db:
        db.execute("CREATE TABLE recipes (name TEXT)")
    with pytest.raises(StoreError, match="not a photpipe campaign store"):
        CampaignStore(path)


def test_newer_schema_is_refused(tmp_path):
    path = tmp_path / "c.sqlite"
    CampaignStore(path).close()
    with sqlite3.connect(path) as db:
        db.execute("UPDATE schema_version SET version = 99")
    with pytest.raises(StoreError, match="schema version 99 is newer"):
        CampaignStore(path)


def test_older_store_gains_the_new_columns_and_keeps_its_rows(tmp_path):
    path = tmp_path / "c.sqlite"
    with CampaignStore(path) as store:
        run = store.start_run("[campaign]", config_hash="c1")
        store.write_frame(run, _record(), config_hash="c1")
    db = sqlite3.connect(path)
    # A version-1 store: before the coma-only Afρ columns.
    db.execute("ALTER TABLE measurements DROP COLUMN afrho_coma_cm")
    db.execute("UPDATE schema_version SET version = 1")
    db.commit()
    db.close()
    with CampaignStore(path) as store:
        assert store.schema_version == 3
        table = store.export_table("measurements")
    assert len(table) == 3
    assert np.all(np.isnan(u.Quantity(table["afrho_coma_cm"]).value))


def test_unknown_table_name(store):
    with pytest.raises(ValueError, match="unknown table 'comets'"):
        store.export_table("comets")


@pytest.mark.slow
def test_two_writer_processes_at_once(tmp_path):
    path = tmp_path / "shared.sqlite"
    CampaignStore(path).close()
    # Overlapping ranges: frames 20..39 are written by both processes.
    procs = [subprocess.Popen([sys.executable, str(HERE / "_writer.py"), str(path), *args])
             for args in (("0", "40", "a"), ("20", "60", "b"))]
    for p in procs:
        assert p.wait(timeout=300) == 0
    with CampaignStore(path) as store:
        assert store.count("frames") == 60
        assert store.count("measurements") == 180  # 3 apertures per frame, no duplicates
        assert store.count("nucleus") == 60
        runs = store.export_table("runs")
    assert sorted(runs["status"]) == ["completed", "completed"]
    with sqlite3.connect(path) as db:
        assert db.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        per_frame = db.execute(
            "SELECT count(*) FROM measurements GROUP BY frame_id HAVING count(*) != 3").fetchall()
    assert per_frame == []


def test_config_hash_ignores_run_settings(tmp_path):
    stars = tmp_path / "stars.ecsv"
    stars.write_text("# %ECSV 1.0\nra dec\n1 2\n")
    base = {"photometry": {"reference_stars": str(stars), "apertures_km": [5000.0]},
            "run": {"workers": 1}, "campaign": {"name": "a"}}
    same = {**base, "run": {"workers": 8}, "campaign": {"name": "b"}}
    other = {**base, "photometry": {**base["photometry"], "apertures_km": [6000.0]}}
    assert config_hash(base) == config_hash(same)
    assert config_hash(base) != config_hash(other)
    h = config_hash(base)
    stars.write_text("# %ECSV 1.0\nra dec\n1 3\n")  # catalogue edited in place
    assert config_hash(base) != h


def test_file_sha256_known_value(tmp_path):
    path = tmp_path / "abc.bin"
    path.write_bytes(b"abc")
    # NIST FIPS 180-2 (2002), Appendix B.1: SHA-256("abc")
    assert file_sha256(path) == (
        "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad")
