"""The one registry of flag words: what each short word in a ``flags`` column or list means.

Every output row and result file carries its warnings as a comma-separated list of short
lower-case words, empty when all is well. The report, the README and the tests read their
meanings from here, so a word means the same everywhere.
"""

__all__ = ["FLAGS", "INFORMATIONAL", "meaning", "split_flags", "describe_flags"]

#: Flag word -> (stage that sets it, meaning in one sentence).
FLAGS = {
    # frames
    "dark_scaled": ("frames", "the dark was scaled from another exposure time"),
    "no_dark": ("frames", "no master dark: only bias removed"),
    # geometry
    "near_sun": ("geometry", "small solar elongation: pointing optics near the Sun can blind "
                             "and damage them; follow local rules and experienced practice"),
    "table_mismatch": ("geometry", "the ephemeris table's phase angle disagrees with the one "
                                   "rebuilt from its distances"),
    # photometry
    "few_stars": ("photometry", "fewer reference stars than 'min_stars' in the zero-point fit"),
    "colour_term_dropped": ("photometry", "too few stars to fit a colour term; constant zero "
                                          "point used"),
    "wcs_refined_large": ("photometry", "header WCS was off by more than the refinement limit"),
    "edge": ("photometry", "an aperture or the sky annulus runs off the frame"),
    "saturated": ("photometry", "saturated comet pixels inside an aperture or the fit box"),
    "star_in_aperture": ("photometry", "a field star inside an aperture was masked and filled "
                                       "from the coma"),
    "nan_pixels": ("photometry", "non-finite or bad pixels inside an aperture were filled from "
                                 "the coma"),
    "centroid_at_limit": ("photometry", "comet centroid reached 'max_centroid_shift'; position "
                                        "is bounded"),
    "centroid_failed": ("photometry", "no comet light found for a centroid; predicted position "
                                      "used"),
    "nonpositive_flux": ("photometry", "flux in an aperture is not positive; magnitude "
                                       "undefined"),
    "profile_short": ("photometry", "too few profile annuli in the slope range"),
    "no_sun_pa": ("photometry", "no position angle of the Sun; sector profiles not made"),
    "no_solar_magnitude": ("photometry", "no solar magnitude for the band; Afρ not computed"),
    "psf_fallback": ("photometry", "too few field stars for the PSF: a Moffat profile with "
                                   "beta = 3 and the measured FWHM was used"),
    "low_elongation": ("photometry", "small solar elongation: pointing optics near the Sun can "
                                     "blind and damage them; follow local rules and "
                                     "experienced practice"),
    "phase_extrapolated": ("photometry", "phase angle outside the range where the dust phase "
                                         "function is checked; A(0)fρ uses its edge value"),
    "airmass_computed": ("photometry", "no AIRMASS in the header: computed from the site and "
                                       "time (informational)"),
    # nucleus
    "upper_limit": ("nucleus", "the nucleus is not detected or not separable (see the other "
                               "flags): its magnitude is an upper limit (the faintest nucleus the"
                               " data allow)"),
    "fit_at_bound": ("nucleus", "the nucleus centre reached its allowed shift: the nucleus is an "
                                "upper limit"),
    "no_convergence": ("nucleus", "the nucleus + coma fit did not converge"),
    "profile_disagrees": ("nucleus", "the radial profile disagrees with the 2-D fit"),
    "star_near_nucleus": ("nucleus", "a catalogued star within 2 FWHM of the nucleus: the nucleus"
                                     " is an upper limit"),
    "tracking_comet": ("nucleus", "the telescope followed the comet (a TRACKING header, the "
                               "stars' trails or the night's vote said so, against the "
                               "configured tracking): the stars were measured and fitted as "
                               "trailed"),
    "tracking_sidereal": ("nucleus", "the telescope followed the stars (a TRACKING header, "
                                     "the round stars or the night's vote said so, against "
                                     "the configured tracking): the comet was fitted as "
                                     "trailed"),
    "core_masked": ("nucleus", "over a quarter of the pixels within one FWHM of the nucleus are "
                               "unusable: the nucleus is left out (NaN), the coma still fitted"),
    "no_error": ("nucleus", "the nucleus fit gave no finite error: the nucleus is left out (NaN)"),
    "gamma_fixed": ("nucleus", "the coma is not seen (K under 2 sigma or its index "
                               "unconstrained): the index held at 1"),
    "uncatalogued_star_masked": ("nucleus", "a star not in the catalogue, found in the fit "
                                            "residual, was masked"),
    "uncatalogued_star_fitted": ("nucleus", "a star not in the catalogue, found near the nucleus,"
                                            " was fitted with it"),
    "star_fitted_near_nucleus": ("nucleus", "a catalogued star whose mask would cover the "
                                            "nucleus's core was fitted with it instead"),
    # rotation
    "single_night": ("rotation", "all points come from one night: longer periods and the cycle "
                                 "count between nights are not constrained"),
    "max_period_clipped": ("rotation", "the search stopped at the baseline, shorter than the "
                                       "longest trial period"),
    "bootstrap_by_point": ("rotation", "too few site-nights for a block bootstrap: single "
                                       "points were resampled"),
    "coma_contaminated": ("rotation", "the lightcurve holds coma light"),
    "coma_dilution_corrected": ("rotation", "the amplitude was corrected for the coma's share "
                                            "of the light"),
    "coma_dilution_unknown": ("rotation", "coma light of unknown share: the amplitude is only a "
                                          "lower bound"),
    "weak_detection": ("rotation", "the period's false-alarm probability is high: the "
                                   "variation may be noise"),
    "alias_ambiguous": ("rotation", "an alias of the period fits nearly as well: the period is "
                                    "ambiguous"),
    "methods_disagree": ("rotation", "the methods' best periods are not the same, a harmonic or "
                                     "an alias of each other"),
    "double_peaked_assumed": ("rotation", "a double-peaked lightcurve was assumed, not "
                                          "demonstrated"),
    "filter_offsets_removed": ("rotation", "a constant offset per filter was removed"),
    "phase_beyond_hg": ("rotation", "phase angle above 120°, beyond the H, G law's range"),
    "upper_limits_set_aside": ("rotation", "nucleus upper limits were left out of the period "
                               "search (counted in n_upper_limits_set_aside)"),
    "bad_points_set_aside": ("rotation", "points with a NaN, infinite or non-positive error, "
                             "magnitude or epoch were left out"),
    "period_ambiguous": ("rotation", "several periods fit about as well, or the sampling cannot "
                         "tell: no single period is claimed"),
    "period_none": ("rotation", "no significant variation: no rotation period"),
    # activity
    "few_nights": ("activity", "fewer than 5 nights in the power-law fit"),
    "narrow_r_h": ("activity", "the nights span too narrow a range of r_h for a reliable "
                               "index"),
    "high_scatter": ("activity", "the nights scatter about the trend more than their errors "
                                 "say"),
    "not_converged": ("activity", "the trend fit did not converge"),
    "wide_bracket": ("activity", "more than 3 days between the last quiet night and the "
                                 "outburst night"),
    "across_perihelion": ("activity", "the onset bracket spans perihelion"),
    "onset_uncertain": ("activity", "another onset inside the night fits almost as well "
                                    "(within-night search)"),
    "decay_unresolved": ("activity", "the decay time is not bounded above by the night "
                                     "(within-night search)"),
    "total_light": ("activity", "no coma-only Afρ on this row: the total light's was used"),
    # size
    "below_momentum_bound": ("size", "the radius is below what the momentum balance of the "
                                     "outgassing allows"),
    "h_error_large": ("size", "the H error, phase coefficient's range included, exceeds the "
                      "stated limit: the radius is poorly constrained"),
    "rotation_unknown": ("size", "H formed without a rotation model; its error covers the unknown "
                         "rotational sampling"),
}

#: Words that inform rather than warn.
INFORMATIONAL = frozenset({"airmass_computed", "coma_dilution_corrected",
                           "filter_offsets_removed"})


def split_flags(text):
    """The flag words of a ``flags`` value (comma-separated text or a list), empty ones dropped.

    Examples
    --------
    >>> split_flags("few_stars, edge,")
    ['few_stars', 'edge']
    >>> split_flags(["upper_limit"])
    ['upper_limit']
    """
    if text is None:
        return []
    words = text.split(",") if isinstance(text, str) else [str(w) for w in text]
    return [w.strip() for w in words if w.strip() and w.strip() != "--"]


def meaning(word):
    """The meaning of a flag word (the word itself said to be unknown when not registered).

    Examples
    --------
    >>> meaning("few_stars")
    "fewer reference stars than 'min_stars' in the zero-point fit"
    >>> meaning("mystery")
    'mystery (no description registered)'
    """
    entry = FLAGS.get(word)
    return entry[1] if entry else f"{word} (no description registered)"


def describe_flags(counts):
    """Lines ``word (n rows): meaning`` for flag words and how often each was set.

    Parameters
    ----------
    counts : dict of str -> int

    Examples
    --------
    >>> describe_flags({"edge": 2})
    ['edge (2 rows): an aperture or the sky annulus runs off the frame']
    """
    return [f"{w} ({n} row{'s' if n != 1 else ''}): {meaning(w)}"
            for w, n in sorted(counts.items(), key=lambda kv: -kv[1])]
