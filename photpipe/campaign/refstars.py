"""The campaign's reference stars: one HEALPix-indexed store, built once from the catalogue file.

A campaign of many nights reads its reference-star catalogue once, into a
:class:`~photpipe.photometry.ReferenceStarStore` file (``[photometry] reference_store``, by default
``reference_store.npz`` in the results folder). The store remembers the catalogue's content hash,
the magnitude band and the colour it was built for, and is built again only when one of them
changes. Each frame task then opens the store once per worker process and asks only for the stars
of its own footprint, so no frame reads or projects the whole catalogue.
"""

import os
from dataclasses import dataclass
from pathlib import Path

from photpipe.photometry import ReferenceStarStore, read_reference_stars

from .hashing import file_sha256

__all__ = ["DEFAULT_STORE_NAME", "ReferenceSource", "campaign_reference_store"]

#: File name of the store in the results folder when ``[photometry] reference_store`` is not set.
DEFAULT_STORE_NAME = "reference_store.npz"


@dataclass(frozen=True)
class ReferenceSource:
    """Where the frame tasks find their reference stars, or why they cannot.

    Attributes
    ----------
    store_path : str or None
        The store file, built and checked; None when there is none.
    problem : str
        Empty when ``store_path`` is set; otherwise the reason every frame's photometry gives.
    built : bool
        The store was (re)built by this call.
    n_stars : int
        Stars in the store.
    """

    store_path: str | None
    problem: str = ""
    built: bool = False
    n_stars: int = 0


def _wanted_meta(catalogue, bands, colour, columns):
    return {"source": os.path.abspath(catalogue), "source_sha256": file_sha256(catalogue),
            "bands": list(bands), "colour": colour, "columns": dict(columns or {})}


def campaign_reference_store(catalogue, store_path, *, band="R", colour=None, nside=64,
                             bands=None, columns=None):
    """Open the campaign's reference-star store, building it from ``catalogue`` when needed.

    Parameters
    ----------
    catalogue : str or None
        The reference-star file (``[photometry] reference_stars``), any format
        :func:`~photpipe.photometry.read_reference_stars` reads.
    store_path : str or path-like
        The store file. Used as it is when ``catalogue`` is None; otherwise (re)built when it is
        missing, unreadable, or was built from another catalogue content, band or colour.
    band : str, optional
        Magnitude column the zero point uses (must be in the catalogue).
    colour : str, optional
        Colour column (must be in the catalogue when given).
    nside : int, optional
        HEALPix resolution of a new store.
    bands : list of str, optional
        Every band the frames calibrate on (one per mapped filter; default ``[band]``).
    columns : dict, optional
        photpipe name -> the catalogue's column name (``[catalogue]``).

    Returns
    -------
    ReferenceSource
        A catalogue that is missing, unreadable or lacks the band is returned as its problem.

    Raises
    ------
    OSError
        When the store cannot be written (a read-only folder, a full disk).
    """
    store_cls = ReferenceStarStore
    store_path = os.fspath(store_path)
    if catalogue is None:
        if not os.path.exists(store_path):
            return ReferenceSource(None, "no reference-star file is configured "
                                         "([photometry] reference_stars)")
        try:
            store = store_cls(store_path)
        except (OSError, ValueError) as exc:
            return ReferenceSource(None, str(exc))
        return ReferenceSource(store_path, n_stars=len(store))
    if not os.path.isfile(catalogue):
        return ReferenceSource(None, f"{catalogue}: reference-star file not found")
    bands = list(bands or [band])
    wanted = _wanted_meta(catalogue, bands, colour, columns)
    if os.path.exists(store_path):
        try:
            store = store_cls(store_path)
        except (OSError, ValueError):
            store = None  # damaged or of another format: built again below
        if store is not None and store.meta == wanted:
            return ReferenceSource(store_path, n_stars=len(store))
    try:
        table = read_reference_stars(catalogue, bands=bands, colour=colour, columns=columns)
    except (OSError, ValueError) as exc:
        return ReferenceSource(None, str(exc))
    # a store that cannot be written (read-only folder, full disk) is not a catalogue problem
    Path(store_path).parent.mkdir(parents=True, exist_ok=True)
    store = store_cls.build(table, store_path, nside=nside, meta=wanted)
    return ReferenceSource(store_path, built=True, n_stars=len(store))
