"""The README's exit codes, for every command: 0 written, 1 other problem, 2 configuration,
3 campaign store, 4 no data. The same problem gives the same code whichever command meets it."""

import numpy as np
import pytest
from astropy import units as u
from campaign import _nights as nights  # tests/ is on the path (pyproject pythonpath)
from campaign._step_inputs import make_lightcurve, write_report_campaign, write_size_config

from photpipe.cli.main import main
from photpipe.rotation import synthetic_lightcurve

OK, FAILED, CONFIG, STORE, NO_DATA = 0, 1, 2, 3, 4


def _run_config(tmp, extra="", night=None):
    return nights.write_config(tmp, [str(night or tmp / "missing")], extra=extra)


def _corrupt_store(tmp):
    store = tmp / "results" / "campaign.sqlite"
    store.parent.mkdir(exist_ok=True)
    store.write_bytes(b"not sqlite at all " * 100)


def run_bad_key(tmp):
    return ["run", _run_config(tmp, '[photometrie]\nband = "R"\n')]


def run_missing_catalogue(tmp):
    return ["run", _run_config(tmp, '[photometry]\nreference_stars = "none.ecsv"\n')]


def run_bad_orbit_time(tmp):
    path = _run_config(tmp)
    path.write_text(path.read_text().replace('"2026-11-20T09:30:00"', '"soon"'))
    return ["run", path]


def run_corrupt_store(tmp):
    _corrupt_store(tmp)
    return ["run", _run_config(tmp)]


def run_no_night_readable(tmp):
    return ["run", _run_config(tmp)]


def run_results_path_is_a_file(tmp):
    (tmp / "results").write_text("not a folder")
    return ["run", _run_config(tmp)]


def run_no_bias(tmp):
    night = tmp / "night"
    nights.render_small_night(night, n_science=2, seed=3)
    for path in night.iterdir():
        if "bias" in path.name:
            path.unlink()
    return ["run", _run_config(tmp, night=night)]


def _ephem(tmp, extra="", step="1h"):
    path = _run_config(tmp, extra)
    return ["ephem", path, "--start", "2026-12-01T00:00", "--stop", "2026-12-01T02:00",
            "--step", step, "--output", tmp / "e.ecsv"]


def ephem_ok(tmp):
    return _ephem(tmp)


def ephem_bad_key(tmp):
    return _ephem(tmp, "[geometry]\ncaution_elongation = 20.0\n")


def ephem_bad_step(tmp):
    return _ephem(tmp, step="fortnight")


def _lightcurve(tmp, n=80):
    (tmp / "results").mkdir(exist_ok=True)
    table, _ = synthetic_lightcurve(period=6.7 * u.h, rng=np.random.default_rng(4))
    table[:n].write(tmp / "results" / "lightcurve.ecsv", format="ascii.ecsv")


def _rotation(tmp, extra=""):
    return ["rotation", _run_config(tmp, "[rotation]\nmin_period_h = 3.0\nmax_period_h = 20.0\n"
                                    f"n_bootstrap = 10\n{extra}")]


def rotation_ok(tmp):
    _lightcurve(tmp)
    return _rotation(tmp)


def rotation_bad_key(tmp):
    _lightcurve(tmp)
    return _rotation(tmp, "periodd = 3\n")


def rotation_no_lightcurve(tmp):
    return _rotation(tmp)


def rotation_too_few_points(tmp):
    _lightcurve(tmp, n=5)
    return _rotation(tmp)


def _size(tmp, lines="albedo = 0.04\nn_samples = 2000\n", lightcurve=True, flags=None):
    cfg = write_size_config(tmp, lines)
    if lightcurve:
        make_lightcurve(flags=flags).write(tmp / "results" / "lightcurve.ecsv")
    return ["size", cfg]


def size_ok(tmp):
    return _size(tmp)


def size_negative_albedo(tmp):
    return _size(tmp, "albedo = -0.04\n")


def size_albedo_above_one(tmp):
    return _size(tmp, "albedo = 1.5\n")


def size_no_lightcurve(tmp):
    return _size(tmp, lightcurve=False)


def size_only_upper_limits(tmp):
    # the data support only a limit: that is a result, written
    return _size(tmp, flags=["upper_limit"] * 80)


def size_lightcurve_without_magnitudes(tmp):
    cfg = write_size_config(tmp, "albedo = 0.04\nn_samples = 2000\n")
    table = make_lightcurve()
    table.remove_column("nucleus_mag")
    table.write(tmp / "results" / "lightcurve.ecsv")
    return ["size", cfg]


def report_ok(tmp):
    cfg, *_ = write_report_campaign(tmp)
    return ["report", cfg, "--from-tables"]


def report_bad_key(tmp):
    cfg, *_ = write_report_campaign(tmp, activity="outbust_sigma = 4.0\n")
    return ["report", cfg]


def report_corrupt_store(tmp):
    cfg, *_ = write_report_campaign(tmp)
    _corrupt_store(tmp)
    return ["report", cfg]


def report_no_measurements(tmp):
    cfg, *_ = write_report_campaign(tmp, write_tables=False)
    return ["report", cfg]


CASES = [
    (run_bad_key, CONFIG, "[photometrie]: unknown section"),
    (run_missing_catalogue, CONFIG, "[photometry] reference_stars: "),
    (run_bad_orbit_time, CONFIG, "[target.orbit] perihelion_time: not a readable time"),
    (run_corrupt_store, STORE, "campaign store problem"),
    (run_no_night_readable, NO_DATA, "none of the nights could be read"),
    (run_results_path_is_a_file, FAILED, "the results path is a file, not a folder"),
    (run_no_bias, NO_DATA, "no science frame was measured"),
    (ephem_ok, OK, ""),
    (ephem_bad_key, CONFIG, "[geometry] caution_elongation: unknown key; did you mean "
                            "'caution_elongation_deg'?"),
    (ephem_bad_step, FAILED, "--step 'fortnight'"),
    (rotation_ok, OK, ""),
    (rotation_bad_key, CONFIG, "[rotation] periodd: unknown key"),
    (rotation_no_lightcurve, NO_DATA, "no lightcurve there"),
    (rotation_too_few_points, OK, ""),  # status "none" with its reason, not a failure
    (size_ok, OK, ""),
    (size_negative_albedo, CONFIG, "[size] albedo: must be above 0 and at most 1"),
    (size_albedo_above_one, CONFIG, "[size] albedo: must be above 0 and at most 1"),
    (size_no_lightcurve, NO_DATA, "no lightcurve there"),
    (size_only_upper_limits, OK, ""),
    (size_lightcurve_without_magnitudes, FAILED, "lightcurve lacks column(s)"),
    (report_ok, OK, ""),
    (report_bad_key, CONFIG, "[activity] outbust_sigma: unknown key"),
    (report_corrupt_store, STORE, "campaign store problem"),
    (report_no_measurements, NO_DATA, "no measurements under"),
]


@pytest.mark.parametrize(("setup", "code", "text"), CASES, ids=[c[0].__name__ for c in CASES])
def test_exit_code(tmp_path, capsys, setup, code, text):
    argv = [str(a) for a in setup(tmp_path)]
    if argv[0] == "run":
        argv += ["--workers", "0", "--no-progress"]
    assert main(argv) == code
    err = capsys.readouterr().err
    assert text in err
    if code != OK:
        # one line, naming the command
        assert err.strip().count("\n") == 0 and err.startswith(f"photpipe {argv[0]}")
