"""A campaign's reference stars in a local file indexed by HEALPix, for fast cone queries.

The store is one ``.npz`` file: every column as a plain array, rows sorted by their nested HEALPix
pixel at a fixed ``nside``, plus an offset index ``start[p]:start[p + 1]`` giving the rows of pixel
``p``, each row's place in the source table, and a small JSON ``meta`` record (what it was built
from). A cone query asks astropy-healpix which pixels overlap the cone, gathers their rows, keeps
those within the radius and returns them in the source table's order, so a query gives the same
rows in the same order as a cut of the whole table. :meth:`ReferenceStarStore.for_frame` asks for
the cone around a frame's footprint. This module is the only part of the photometry stage that
touches files.
"""

import json
import os

import numpy as np
from astropy import units as u
from astropy.coordinates import ICRS, SkyCoord
from astropy.table import QTable
from astropy_healpix import HEALPix

from photpipe._files import replacing
from photpipe._quantity import as_positive_value, as_value

from .refstars import check_reference_columns

__all__ = ["ReferenceStarStore", "frame_cone"]

_FORMAT_TAG = "photpipe-reference-store-1"


class ReferenceStarStore:
    """Read-only cone queries on a reference-star store file.

    Parameters
    ----------
    path : str or path-like
        A file written by :meth:`ReferenceStarStore.build`.

    Raises
    ------
    FileNotFoundError
        If the file does not exist.
    ValueError
        If the file is not a store of this format.

    Notes
    -----
    Pixels are nested-ordered HEALPix (Górski et al. 2005, ApJ 622, 759) in ICRS; the pixels that
    overlap the cone come from ``HEALPix.cone_search_skycoord`` of astropy-healpix, which may
    return a few extra pixels; rows are then cut at the exact angular distance.

    Examples
    --------
    >>> import os, tempfile
    >>> import numpy as np, astropy.units as u
    >>> from astropy.coordinates import SkyCoord
    >>> from astropy.table import QTable
    >>> t = QTable({"ra": [10.0, 10.1, 50.0] * u.deg, "dec": [20.0, 20.0, -5.0] * u.deg,
    ...             "R": [12.0, 13.0, 14.0] * u.mag})
    >>> path = os.path.join(tempfile.mkdtemp(), "stars.npz")
    >>> store = ReferenceStarStore.build(t, path)
    >>> len(store.cone(SkyCoord(10.05 * u.deg, 20 * u.deg), 0.2 * u.deg))
    2
    """

    def __init__(self, path):
        self.path = os.fspath(path)
        if not os.path.exists(self.path):
            msg = f"{self.path}: reference-star store not found"
            raise FileNotFoundError(msg)
        try:
            with np.load(self.path, allow_pickle=False) as npz:
                arrays = {k: npz[k] for k in npz.files}
        except (OSError, ValueError) as exc:
            msg = f"{self.path}: not a readable reference-star store ({exc})"
            raise ValueError(msg) from exc
        if str(arrays.get("_format", "")) != _FORMAT_TAG:
            msg = f"{self.path}: not a reference-star store of format {_FORMAT_TAG!r}"
            raise ValueError(msg)
        self.nside = int(arrays.pop("_nside"))
        self._start = arrays.pop("_start")
        self._source_row = arrays.pop("_source_row", None)
        self.meta = json.loads(str(arrays.pop("_meta", "{}")))
        names = [str(n) for n in arrays.pop("_names")]
        units = [str(s) for s in arrays.pop("_units")]
        arrays.pop("_format")
        self._columns = {n: arrays[f"col_{i}"] for i, n in enumerate(names)}
        self._units = dict(zip(names, units, strict=True))
        self._healpix = HEALPix(nside=self.nside, order="nested", frame=ICRS())

    def __len__(self):
        return int(self._start[-1])

    @property
    def colnames(self):
        """Column names of the stored table."""
        return list(self._columns)

    @classmethod
    def build(cls, table, path, *, nside=64, meta=None):
        """Write a store from a reference-star table and open it.

        Parameters
        ----------
        table : `~astropy.table.Table`
            Reference stars with ``ra`` and ``dec`` (Quantity angles or plain degrees).
        path : str or path-like
            Output file (written to a temporary name, then renamed).
        nside : int, optional
            HEALPix resolution, a power of 2 (64 gives pixels of about 0.9°).
        meta : dict, optional
            JSON-serialisable facts kept with the store (for example the source file's hash),
            returned as the ``meta`` attribute of the opened store.

        Returns
        -------
        store : ReferenceStarStore
        """
        path = os.fspath(path)
        check_reference_columns(table, ["ra", "dec"], source=path)
        if nside < 1 or nside & (nside - 1):
            msg = f"'nside' must be a power of 2, got {nside}"
            raise ValueError(msg)
        ra = _degrees(table["ra"], "ra", path)
        dec = _degrees(table["dec"], "dec", path)
        ok = np.isfinite(ra) & np.isfinite(dec) & (np.abs(dec) <= 90.0)
        if not np.all(ok):
            msg = f"{path}: {np.count_nonzero(~ok)} reference star(s) with invalid ra/dec"
            raise ValueError(msg)
        hp = HEALPix(nside=nside, order="nested", frame=ICRS())
        pix = hp.lonlat_to_healpix(ra * u.deg, dec * u.deg)
        order = np.argsort(pix, kind="stable")
        start = np.searchsorted(pix[order], np.arange(hp.npix + 1)).astype(np.int64)
        arrays = {"_format": np.array(_FORMAT_TAG), "_nside": np.array(nside),
                  "_start": start, "_source_row": order.astype(np.int64),
                  "_meta": np.array(json.dumps(meta or {}, sort_keys=True))}
        names, units = [], []
        for i, name in enumerate(table.colnames):
            col = table[name]
            unit = getattr(col, "unit", None)
            if isinstance(col, u.Quantity):
                values = col.value
            else:
                values = np.asarray(col.filled(np.nan) if hasattr(col, "filled") else col)
            if name in ("ra", "dec"):
                values, unit = (ra if name == "ra" else dec), u.deg
            if values.dtype.kind == "O":
                values = values.astype(str)
            arrays[f"col_{i}"] = np.asarray(values)[order]
            names.append(name)
            units.append("" if unit is None else str(unit))
        arrays["_names"] = np.array(names)
        arrays["_units"] = np.array(units)
        # numpy.savez appends ".npz" to a name without it; the folder must exist
        with replacing(path, suffix=".npz", mode=0o644, fsync=False) as tmp:
            np.savez(tmp, **arrays)
        return cls(path)

    def cone(self, center, radius):
        """Reference stars within ``radius`` of ``center``.

        Parameters
        ----------
        center : `~astropy.coordinates.SkyCoord`
            Cone centre.
        radius : `~astropy.units.Quantity` ['angle']
            Cone radius.

        Returns
        -------
        stars : `~astropy.table.QTable`
            Matching rows with the stored columns and units.
        """
        if not isinstance(center, SkyCoord):
            msg = f"'center' must be a SkyCoord, got {type(center).__name__}"
            raise TypeError(msg)
        r_deg = as_positive_value(radius, u.deg, "radius")
        pixels = np.atleast_1d(self._healpix.cone_search_skycoord(center, r_deg * u.deg))
        pieces = [np.arange(self._start[p], self._start[p + 1]) for p in np.sort(pixels)]
        rows = np.concatenate(pieces) if pieces else np.zeros(0, dtype=np.int64)
        ra = self._columns["ra"][rows]
        dec = self._columns["dec"][rows]
        c = center.icrs
        sep = SkyCoord(ra * u.deg, dec * u.deg, frame="icrs").separation(c).deg if rows.size \
            else np.zeros(0)
        rows = rows[sep <= r_deg]
        if self._source_row is not None:
            rows = rows[np.argsort(self._source_row[rows], kind="stable")]
        out = QTable()
        for name, values in self._columns.items():
            unit = self._units[name]
            out[name] = values[rows] * u.Unit(unit) if unit else values[rows]
        return out

    def for_frame(self, wcs, shape, *, margin=60 * u.arcsec):
        """Reference stars on and around a frame: the cone that holds its footprint.

        Parameters
        ----------
        wcs : `~astropy.wcs.WCS`
            The frame's celestial WCS.
        shape : tuple of int
            ``(ny, nx)`` of the frame.
        margin : `~astropy.units.Quantity` ['angle'], optional
            Added to the radius of the circle through the frame's corners (room for a WCS
            that is off by up to about this much).

        Returns
        -------
        stars : `~astropy.table.QTable`
            As :meth:`cone`; empty when the frame lies outside the catalogue's coverage.

        Raises
        ------
        ValueError
            If ``wcs`` has no celestial part.
        """
        center, radius = frame_cone(wcs, shape, margin=margin)
        return self.cone(center, radius)


def frame_cone(wcs, shape, *, margin=0 * u.arcsec):
    """Centre and radius of the smallest cone about a frame's centre holding all its corners.

    Parameters
    ----------
    wcs : `~astropy.wcs.WCS`
        The frame's WCS (its celestial part is used).
    shape : tuple of int
        ``(ny, nx)``.
    margin : `~astropy.units.Quantity` ['angle'], optional
        Added to the radius.

    Returns
    -------
    center : `~astropy.coordinates.SkyCoord`
    radius : `~astropy.units.Quantity` ['angle'] (deg)

    Raises
    ------
    ValueError
        If ``wcs`` is None or has no celestial part.

    Examples
    --------
    >>> from astropy.wcs import WCS
    >>> w = WCS(naxis=2)
    >>> w.wcs.ctype = ["RA---TAN", "DEC--TAN"]
    >>> w.wcs.crval = [10.0, 20.0]
    >>> w.wcs.crpix = [50.5, 50.5]
    >>> w.wcs.cdelt = [-1 / 3600, 1 / 3600]
    >>> c, r = frame_cone(w, (100, 100))
    >>> round(float(c.ra.deg), 4), round(float(r.to_value(u.arcsec)), 1)   # 50 sqrt(2)
    (10.0, 70.7)
    """
    if wcs is None or not wcs.has_celestial:
        msg = "frame has no celestial WCS, so its place on the sky is unknown"
        raise ValueError(msg)
    ny, nx = shape
    cel = wcs.celestial
    x = np.array([(nx - 1) / 2.0, -0.5, nx - 0.5, nx - 0.5, -0.5])
    y = np.array([(ny - 1) / 2.0, -0.5, -0.5, ny - 0.5, ny - 0.5])
    ra, dec = cel.pixel_to_world_values(x, y)
    points = SkyCoord(np.asarray(ra) * u.deg, np.asarray(dec) * u.deg, frame="icrs")
    center = points[0]
    pad = as_value(margin, u.deg, "margin")
    if not pad >= 0.0:
        msg = f"'margin' must be an angle >= 0, got {margin}"
        raise ValueError(msg)
    radius = float(np.max(points[1:].separation(center).deg)) + pad
    return center, radius * u.deg


def _degrees(col, name, path):
    if isinstance(col, u.Quantity):
        try:
            return np.asarray(col.to_value(u.deg), dtype=float)
        except u.UnitConversionError as exc:
            msg = f"{path}: column {name!r} has unit {col.unit}, expected an angle"
            raise ValueError(msg) from exc
    values = col.filled(np.nan) if hasattr(col, "filled") else col
    return np.asarray(values, dtype=float)
