"""Plate solving whole calibrated frames rendered by the scenario generator."""

import dataclasses

import numpy as np
import pytest
from astropy import units as u
from astropy.coordinates import SkyCoord

from photpipe.frames import pixel_scale_from_header
from photpipe.photometry import PlateSolveError, solve_frame

from ._fields import largest_difference_arcsec


def _without_wcs(frame, **cards):
    header = frame.info.header.copy()
    for key in list(header):
        if key.startswith(("CTYPE", "CRVAL", "CRPIX", "CD1_", "CD2_", "CDELT", "PC", "CUNIT",
                           "WCSAXES", "RADESYS", "EQUINOX", "LONPOLE", "LATPOLE", "MJDREF")):
            del header[key]
    for key, value in cards.items():
        header[key] = value
    info = dataclasses.replace(frame.info, header=header)
    return dataclasses.replace(frame, info=info, wcs=None)


@pytest.fixture(scope="module")
def rendered(synthetic):
    return synthetic(shape=(512, 512), afrho=None, n_stars=150, seed=21)


def test_frame_without_wcs_solved_from_sexagesimal_pointing(rendered):
    true_centre = rendered.truth.wcs.pixel_to_world(255.5, 255.5)
    guess = true_centre.directional_offset_by(40 * u.deg, 9 * u.arcmin)
    ra = guess.ra.to_string(u.hourangle, sep=" ", precision=2)
    dec = guess.dec.to_string(u.deg, sep=" ", precision=1, alwayssign=True)
    frame = _without_wcs(rendered.frame, OBJCTRA=ra, OBJCTDEC=dec)
    solved, sol, details = solve_frame(frame, rendered.stars, band="R",
                                       pixel_scale=1.0 * u.arcsec)
    assert details["guess_source"] == "header pointing"
    assert largest_difference_arcsec(solved.wcs, rendered.truth.wcs, (512, 512)) < 0.3
    assert sol.median_arcsec <= 0.2
    assert solved.info.header["SOLVED"] is True
    assert "plate solved" in solved.history[-1]


def test_frame_without_any_pointing_uses_the_comet_position(rendered):
    frame = _without_wcs(rendered.frame)
    comet = rendered.truth.wcs.pixel_to_world(300.0, 200.0)
    solved, _, details = solve_frame(frame, rendered.stars, band="R",
                                     pixel_scale=1.0 * u.arcsec, comet_position=comet)
    assert details["guess_source"] == "comet's predicted position"
    assert largest_difference_arcsec(solved.wcs, rendered.truth.wcs, (512, 512)) < 0.3


@pytest.mark.parametrize("offset_pix", [pytest.param((4.0, -3.0), id="arcsec"),
                                        pytest.param((300.0, 120.0), id="arcmin")])
def test_wrong_header_wcs_is_detected_and_corrected(synthetic, offset_pix):
    s = synthetic(shape=(512, 512), afrho=None, n_stars=150, seed=22, wcs_offset_pix=offset_pix)
    solved, _, details = solve_frame(s.frame, s.stars, band="R")
    assert details["header_wcs_error_arcsec"] == pytest.approx(np.hypot(*offset_pix), rel=0.05)
    assert largest_difference_arcsec(solved.wcs, s.truth.wcs, (512, 512)) < 0.3


def test_no_guess_at_all_is_one_clear_reason(rendered):
    with pytest.raises(PlateSolveError, match="no WCS, no pointing keywords"):
        solve_frame(_without_wcs(rendered.frame), rendered.stars, band="R",
                    pixel_scale=1.0 * u.arcsec)


def test_no_pixel_scale_is_one_clear_reason(rendered):
    frame = _without_wcs(rendered.frame, RA=52.0, DEC=18.0)
    with pytest.raises(PlateSolveError, match="no pixel scale"):
        solve_frame(frame, rendered.stars, band="R")


def test_modes(rendered):
    same, sol, _ = solve_frame(rendered.frame, rendered.stars, band="R", mode="missing")
    assert same is rendered.frame and sol is None
    with pytest.raises(ValueError, match="'mode' must be one of"):
        solve_frame(rendered.frame, rendered.stars, band="R", mode="sometimes")


def test_pixel_scale_from_header_keywords():
    # 206.265 arcsec per radian / 1000 (um over mm), common practice
    assert pixel_scale_from_header({"PIXSCALE": 0.8}).value == pytest.approx(0.8)
    assert pixel_scale_from_header({"XPIXSZ": 13.5, "FOCALLEN": 2000.0}).value == \
        pytest.approx(206.265 * 13.5 / 2000.0)
    assert pixel_scale_from_header({"XPIXSZ": "big", "FOCALLEN": 2000.0}) is None


def test_solved_position_of_a_star_matches_truth(rendered):
    frame = _without_wcs(rendered.frame, RA=52.05, DEC=18.1)
    solved, _, _ = solve_frame(frame, rendered.stars, band="R", pixel_scale=1.0 * u.arcsec)
    st = rendered.truth.stars
    sky = solved.wcs.pixel_to_world(np.asarray(st["x"]), np.asarray(st["y"]))
    ref = {int(i): k for k, i in enumerate(rendered.stars["id"])}
    cat = SkyCoord(rendered.stars["ra"][[ref[int(i)] for i in st["id"]]],
                   rendered.stars["dec"][[ref[int(i)] for i in st["id"]]])
    assert np.median(sky.separation(cat).arcsec) < 0.1


def test_calibrated_file_keeps_the_solution_and_its_quality(synthetic, tmp_path):
    from astropy.io import fits
    from astropy.wcs import WCS

    from photpipe.frames import write_calibrated

    s = synthetic(shape=(256, 256), afrho=None, n_stars=80, seed=3, wcs_offset_pix=(40, 10))
    solved, sol, _ = solve_frame(s.frame, s.stars, band="R")
    path = write_calibrated(solved, tmp_path / "cal.fits")
    with fits.open(path) as hdul:
        assert hdul[0].header["SOLVED"] is True
        assert hdul[0].header["SOLVNSTR"] == sol.n_matched
        written = WCS(hdul["DATA"].header)
    assert largest_difference_arcsec(written, s.truth.wcs, (256, 256)) < 0.3
