import numpy as np
from astropy import units as u
from astropy.table import QTable

from photpipe.report.headline import headline_lines, nightly_afrho


def _meas():
    # two nights, two frames each, apertures 5000 and 10000 km
    return QTable({
        "frame": ["a", "a", "b", "b", "c", "c", "d", "d"],
        "mjd_utc_mid": [61375.1, 61375.1, 61375.2, 61375.2, 61376.1, 61376.1, 61376.2, 61376.2],
        "rho_km": [5000.0, 10000.0] * 4 * u.km,
        "a0frho_cm": [1.0, 100.0, 1.0, 110.0, 1.0, 90.0, 1.0, 90.0] * u.cm,
        "a0frho_err_cm": [1.0, 5.0, 1.0, 10.0, 1.0, 3.0, 1.0, 3.0] * u.cm,
        "flags": ["", "", "edge", "", "", "", "", "airmass_computed"]})


def test_night_means_are_weighted_and_scaled_by_their_scatter():
    rows = nightly_afrho(_meas())
    date, mean, err, rho, n = rows[0]
    # weighted mean of 100 ± 5 and 110 ± 10 (inverse-variance weights, common practice)
    w = np.array([1 / 25, 1 / 100])
    assert date == "2026-12-01" and rho == 10000 and n == 2
    assert np.isclose(mean, (100 * w[0] + 110 * w[1]) / w.sum())
    chi2 = (w[0] * (100 - mean) ** 2 + w[1] * (110 - mean) ** 2) / 1
    assert np.isclose(err, np.sqrt(1 / w.sum()) * max(1, np.sqrt(chi2)))
    assert np.isclose(rows[1][1], 90.0) and np.isclose(rows[1][2], 3 / np.sqrt(2))


def test_headline_names_caveats_and_where_to_look():
    nuc = QTable({"nucleus_mag": [15.2, 15.4, 16.0] * u.mag,
                  "flags": ["", "", "upper_limit"]})
    lines = headline_lines(measurements=_meas(), nucleus=nuc,
                           rotation={"status": "none", "reason": "weak detection"},
                           size={"radius_km": 4.43, "radius_lo_km": 3.82,
                                 "radius_hi_km": 5.46, "albedo": 0.04},
                           report="results/report.html")
    text = "\n".join(lines)
    assert "A(0°)fρ of all the light 2026-12-01 (ρ = 10000 km, 2 frames): 102.0 ± 4.5 cm" in text
    assert "nucleus magnitude: 15.20–15.40 mag over 2 frames; 1 frame(s) give only an upper " \
           "limit" in text
    assert "rotation period: none found (weak detection)" in text
    assert "nucleus radius: 4.4 km (68 % interval 3.8–5.5 km)" in text
    assert "flagged measurement rows: edge (1)" in text  # airmass_computed only informs
    assert lines[-1] == "open the report: results/report.html"


def test_headline_follows_the_activity_column_and_names_an_uncertain_radius():
    meas = _meas()
    meas["a0frho_coma_cm"] = meas["a0frho_cm"] * 0.5
    meas["a0frho_coma_err_cm"] = meas["a0frho_err_cm"] * 0.5
    lines = headline_lines(measurements=meas, activity={"afrho_column": "a0frho_coma_cm"},
                           size={"radius_km": 5.07, "status": "uncertain",
                                 "reason": "the H error exceeds the limit"})
    text = "\n".join(lines)
    # half of the total-light case above: 102.0 ± 4.47 cm scaled by 0.5 (exact)
    assert "A(0°)fρ of the coma 2026-12-01 (ρ = 10000 km, 2 frames): 51.0 ± 2.2 cm" in text
    assert "nucleus radius: 5.1 km; UNCERTAIN: the H error exceeds the limit" in text


def test_headline_keeps_to_the_trend_filter_and_names_the_colour():
    meas = _meas()
    meas["filter"] = ["R", "R", "R", "R", "V", "V", "R", "R"]
    meas["a0frho_cm"][4:6] *= 10  # a V frame far brighter in Afρ must not enter the R means
    activity = {"filter": "R", "colours": [
        {"label": "R-V", "status": "measured", "colour_mag": -0.452, "colour_err_mag": 0.013,
         "n_pairs": 7},
        {"label": "R-B", "status": "none", "reason": "0 R frame(s) with a B frame within 30 min"},
    ]}
    text = "\n".join(headline_lines(measurements=meas, activity=activity))
    # night 2 in R is frame d alone: 90 ± 3 cm (exact)
    assert "A(0°)fρ of all the light in R 2026-12-02 (ρ = 10000 km, 1 frames): 90.0 ± 3.0 cm" \
        in text
    assert "comet colour R-V: -0.452 ± 0.013 mag (7 frames paired)" in text
    assert "comet colour R-B: none (0 R frame(s) with a B frame within 30 min)" in text


def test_run_screen_size_line_carries_radius_and_status():
    # the in-run line says what the end headline says, not only the step's title
    from photpipe.campaign.pipeline import _step_line

    size = {"radius_km": 3.1, "radius_lo_km": 2.6, "radius_hi_km": 3.7, "albedo": 0.04,
            "status": "insecure", "reason": "H rests on 12 points", "summary": "Nucleus size"}
    line = _step_line("size", size, size["summary"])
    assert line.startswith("size: nucleus radius: 3.1 km (68 % interval")
    assert "INSECURE: H rests on 12 points" in line
    limit = {"radius_upper_limit_km": 1.2, "status": "upper_limit", "summary": "limit"}
    assert "below 1.2 km (upper limit)" in _step_line("size", limit, "limit")
    assert _step_line("rotation", {}, "Rotation\nmore") == \
        "rotation: Rotation (full text in the log)"


def test_a_coma_not_detected_is_an_upper_limit_not_a_small_value():
    # A bare nucleus: coma-only values about zero. The headline must not print "0.4 ± 0.2 cm"
    # as if a coma were measured; it gives the 2σ upper limit and the activity step's reason.
    meas = _meas()
    meas["a0frho_coma_cm"] = [0.0, 0.3, 0.0, -0.1, 0.0, 0.2, 0.0, 0.1] * u.cm
    meas["a0frho_coma_err_cm"] = [1.0, 0.2, 1.0, 0.2, 1.0, 0.2, 1.0, 0.2] * u.cm
    activity = {"status": "not_fitted", "afrho_column": "a0frho_coma_cm",
                "reason": "the coma is not detected: 4 of 4 rows below 3 times its error"}
    text = "\n".join(headline_lines(measurements=meas, activity=activity))
    assert "A(0°)fρ of the coma 2026-12-01 (ρ = 10000 km, 2 frames): not detected, below" in text
    assert "activity trend: not fitted (the coma is not detected" in text
