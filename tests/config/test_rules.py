"""The one rule for sections, keys, types and ranges, and one default per key."""

import inspect

import pytest

from photpipe.config import (
    ConfigError,
    load_config,
    read_nucleus,
    read_photometry,
    read_rotation,
    read_size,
)
from photpipe.config._sections import SECTIONS

BASE = """[[night]]
path = "n"
"""


def _load(tmp_path, text):
    path = tmp_path / "c.toml"
    path.write_text(BASE + text, encoding="utf-8")
    return load_config(path)


@pytest.mark.parametrize(("text", "message"), [
    pytest.param('[photometry]\naperture_km = [5000.0]\n',
                 "[photometry] aperture_km: unknown key; did you mean 'apertures_km'?",
                 id="misspelt-key"),
    pytest.param('[activity]\noutbust_sigma = 4.0\n',
                 "[activity] outbust_sigma: unknown key; did you mean 'outburst_sigma'?",
                 id="misspelt-activity-key"),
    pytest.param('[size]\nalbdo = 0.05\n', "[size] albdo: unknown key; did you mean 'albedo'?",
                 id="misspelt-size-key"),
    pytest.param('[photometrie]\nband = "R"\n',
                 "[photometrie]: unknown section; did you mean 'photometry'?",
                 id="misspelt-section"),
    pytest.param('[photometry]\ncoma_correction = "false"\n',
                 "[photometry] coma_correction: must be true or false, got 'false' (a text)",
                 id="text-boolean"),
    pytest.param('[photometry]\nmin_stars = "4"\n',
                 "[photometry] min_stars: must be a whole number, got '4' (a text)",
                 id="text-integer"),
    pytest.param('[rotation]\nn_bootstrap = "many"\n',
                 "[rotation] n_bootstrap: must be a whole number, got 'many' (a text)",
                 id="text-count"),
    pytest.param('[run]\nworkers = "two"\n',
                 "[run] workers: must be a whole number, got 'two' (a text)", id="text-workers"),
    pytest.param('[size]\nalbedo = "0.04"\n',
                 "[size] albedo: must be a number, got '0.04' (a text)", id="text-number"),
    pytest.param('[size]\nalbedo = nan\n', "[size] albedo: must be finite, got nan",
                 id="not-finite"),
    pytest.param('[photometry]\napertures_km = [-5000.0]\n',
                 "[photometry] apertures_km: every value must be positive", id="negative-aperture"),
    pytest.param('[sites.x]\nlatitude_deg = 134.17\n',
                 "[sites.x] latitude_deg: must be at least -90 and at most 90, got 134.17 deg",
                 id="latitude"),
    pytest.param('[target.orbit]\ne = -0.2\n', "[target.orbit] e: must be at least 0",
                 id="orbit-e"),
    pytest.param('[nucleus]\npsf_epsf = "sometimes"\n',
                 "[nucleus] psf_epsf: must be one of 'needed', 'always'", id="choice"),
])
def test_one_rule_for_every_section(tmp_path, text, message):
    with pytest.raises(ConfigError) as caught:
        _load(tmp_path, text)
    assert str(caught.value) == f"{tmp_path / 'c.toml'}: {message}" or \
        str(caught.value).startswith(f"{tmp_path / 'c.toml'}: {message}")


def test_readers_fill_the_defaults(tmp_path):
    config = _load(tmp_path, "")
    assert read_photometry(config).min_stars == SECTIONS["photometry"].key("min_stars").default
    assert read_size(config).phase_coefficient == read_rotation(config).phase_coefficient


def _signature_defaults(function):
    return {name: p.default for name, p in inspect.signature(function).parameters.items()
            if p.default is not inspect.Parameter.empty}


def test_defaults_match_the_stages_own():
    """The settings handed to a stage equal what the stage would use by itself."""
    import numpy as np
    from astropy import units as u

    from photpipe.nucleus import fit_nucleus, measure_psf
    from photpipe.photometry import measure_comet_frame

    stage = _signature_defaults(measure_comet_frame)
    for name, value in read_photometry({}).options().items():
        if isinstance(value, u.Quantity):
            assert np.allclose(value.to_value(stage[name].unit), stage[name].value), name
        else:
            assert value == stage[name], name
    nucleus = read_nucleus({})
    stage = _signature_defaults(fit_nucleus)
    for name, value in nucleus.fit_options().items():
        assert value == stage[name], name
    stage = _signature_defaults(measure_psf)
    for name, value in nucleus.psf_options().items():
        assert tuple(value) == tuple(stage[name]) if name == "methods" else value == stage[name]
