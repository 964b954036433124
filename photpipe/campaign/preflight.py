"""What concerns every frame is checked once, before any frame is touched.

A reference-star catalogue that is missing, unreadable or lacks the band, an orbit that is not
an orbit (or an ephemeris table that cannot be read), a site off the Earth, a bad aperture: each
would make every frame fail the same way, and a re-run would then find nothing to keep. The run
stops at the start instead, with one line naming the file, the section and the key.
"""

from dataclasses import dataclass

from photpipe.config import (
    ConfigError,
    location_for_site,
    orbit_from_config,
    read_ephemeris_table,
    read_frames,
    read_geometry,
    read_nucleus,
    read_photometry,
    section_values,
)

from .refstars import DEFAULT_STORE_NAME, campaign_reference_store

__all__ = ["SharedSettings", "check_before_frames"]


@dataclass(frozen=True)
class SharedSettings:
    """The settings every frame of the run shares, checked.

    Attributes
    ----------
    frames, photometry, nucleus : settings objects of `photpipe.config`
    sites : dict
        Site name (None: no site) -> `~astropy.coordinates.EarthLocation` or None.
    reference : `~photpipe.campaign.refstars.ReferenceSource`
    """

    frames: object
    photometry: object
    nucleus: object
    sites: dict
    reference: object
    instruments: list = ()
    filters: object = None


def _check_geometry(config):
    read_geometry(config)
    table = section_values(config, "target")["ephemeris_table"]
    if table:
        read_ephemeris_table(table)
    else:
        orbit_from_config(config)


def check_before_frames(config, results):
    """Read and check everything the frames share; build the reference-star store.

    Parameters
    ----------
    config : dict
        A loaded configuration.
    results : path-like
        The results folder (where the reference-star store goes by default).

    Returns
    -------
    SharedSettings

    Raises
    ------
    ConfigError
        ``"<file>: [section] key: problem"`` for the first problem found.
    """
    frames = read_frames(config)
    photometry = read_photometry(config)
    nucleus = read_nucleus(config)
    sites = {entry.get("site"): location_for_site(config, entry.get("site"))
             for entry in config["night"]}
    _check_geometry(config)
    from photpipe.config import read_catalogue_columns, read_filters, read_instruments

    instruments = read_instruments(config)
    filters = read_filters(config)
    bands = list(dict.fromkeys([photometry.band] + [e.band for e in filters.entries]))
    store_path = photometry.reference_store or results / DEFAULT_STORE_NAME
    reference = campaign_reference_store(photometry.reference_stars, store_path,
                                         band=photometry.band, colour=photometry.colour,
                                         bands=bands, columns=read_catalogue_columns(config))
    if reference.problem and photometry.reference_stars is not None:
        msg = f"{config.get('_file', 'configuration')}: [photometry] reference_stars: " \
              f"{reference.problem}"
        raise ConfigError(msg)
    return SharedSettings(frames, photometry, nucleus, sites, reference, instruments, filters)
