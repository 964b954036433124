"""Private FITS helpers: open a frame file safely, find its image, read rows, write atomically.

Every problem becomes a `FrameError` that starts with the file path, so batch code can record
one clear line and go on.
"""

import contextlib
import os
import warnings

import numpy as np
from astropy.io import fits

from photpipe._files import replacing

from ._headers import number, parse_section
from .errors import FrameError

__all__ = ["open_image", "read_image", "stored_image", "RowReader", "write_atomic",
           "merged_header", "image_sections", "trimmed_shape"]

# keywords that describe one HDU's layout and must not be copied from the primary header
_STRUCTURAL = {"SIMPLE", "EXTEND", "BITPIX", "NAXIS", "NAXIS1", "NAXIS2", "NAXIS3", "PCOUNT",
               "GCOUNT", "XTENSION", "EXTNAME", "BZERO", "BSCALE", "CHECKSUM", "DATASUM",
               "COMMENT", "HISTORY", ""}

_IMAGE_TYPES = (fits.PrimaryHDU, fits.ImageHDU, fits.CompImageHDU)


def _image_index(hdul):
    for i, hdu in enumerate(hdul):
        if isinstance(hdu, _IMAGE_TYPES) and hdu.header.get("NAXIS", 0) >= 2:
            dims = [hdu.header.get(f"NAXIS{k}", 0) for k in range(1, hdu.header["NAXIS"] + 1)]
            if all(d > 0 for d in dims):
                return i
    return None


def merged_header(hdul, index):
    """Header of the image HDU with the primary header's other keywords added after it."""
    header = hdul[index].header.copy()
    if index != 0:
        for card in hdul[0].header.cards:
            if card.keyword not in _STRUCTURAL and card.keyword not in header:
                header.append(card)
    return header


def _check_size(path, hdul, index):
    info = hdul.fileinfo(index)
    if info is None or getattr(info["file"], "compression", None):
        return  # gzip streams are checked when the data are read
    expected = info["datLoc"] + info["datSpan"]
    actual = os.path.getsize(path)
    if actual < expected:
        msg = f"file is truncated: {actual} bytes on disk, its headers promise {expected}"
        raise FrameError(path, msg)


@contextlib.contextmanager
def open_image(path, *, memmap=False, scale=True):
    """Open a FITS file and yield ``(hdul, index)`` of its first image HDU with data.

    With ``scale=False`` the data come as stored (BZERO/BSCALE not applied).

    Raises
    ------
    FrameError
        If the file is missing, is not FITS, is truncated, or holds no 2-D image.
    """
    path = os.fspath(path)
    if not os.path.isfile(path):
        raise FrameError(path, "no such file")
    try:
        with warnings.catch_warnings():
            # astropy warns about truncation and fixable header cards; truncation is checked
            # below from the file size, header fixes are harmless for reading
            warnings.simplefilter("ignore")
            hdul = fits.open(path, memmap=memmap, lazy_load_hdus=False,
                             do_not_scale_image_data=not scale)
    except (OSError, ValueError, TypeError, IndexError, KeyError) as exc:
        raise FrameError(path, f"not a readable FITS file ({exc})") from exc
    try:
        index = _image_index(hdul)
        if index is None:
            size = os.path.getsize(path)
            if size % 2880:
                raise FrameError(path, f"file is truncated: {size} bytes is not a whole number "
                                       f"of 2880-byte FITS blocks, and no complete image HDU "
                                       f"was found")
            raise FrameError(path, "no HDU holds a 2-D image with data")
        ndim = hdul[index].header["NAXIS"]
        if ndim != 2:
            dims = [hdul[index].header.get(f"NAXIS{k}", 0) for k in range(1, ndim + 1)]
            extra = [d for d in dims[2:] if d != 1]
            if extra:
                raise FrameError(path, f"image has {ndim} axes {dims}; expected a 2-D frame")
        _check_size(path, hdul, index)
        yield hdul, index
    finally:
        hdul.close()


def _as_2d(arr, path):
    arr = np.asarray(arr)
    if arr.ndim > 2:
        arr = arr.reshape(arr.shape[-2:])
    if arr.ndim != 2:
        raise FrameError(path, f"image data has shape {arr.shape}; expected 2-D")
    return arr


def _image_data(hdu, path):
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            data = hdu.data
    except Exception as exc:  # noqa: BLE001 - the decoder's own errors (damaged tiles) too
        raise FrameError(path, f"image data cannot be read, file damaged or truncated "
                               f"({type(exc).__name__}: {exc})") from exc
    return _as_2d(data, path)


def image_sections(path, header, shape):
    """The image area and the overscan strip a header declares, as numpy slices.

    The image area is TRIMSEC (else DATASEC), the overscan strip BIASSEC (FITS sections
    ``'[x1:x2,y1:y2]'``, 1-based, inclusive; common practice of CCD headers). Either is None
    when the header has no such keyword.

    Returns
    -------
    trim, overscan : tuple of slice (rows, cols) or None
    """
    trim = overscan = None
    for key in ("TRIMSEC", "DATASEC"):
        value = header.get(key)
        if isinstance(value, str) and value.strip():
            trim = parse_section(path, key, value, shape)
            break
    value = header.get("BIASSEC")
    if isinstance(value, str) and value.strip():
        overscan = parse_section(path, "BIASSEC", value, shape)
    return trim, overscan


def trimmed_shape(path, header, shape):
    """``(ny, nx)`` of the image area (the whole array when the header declares none)."""
    trim, _ = image_sections(path, header, shape)
    if trim is None:
        return tuple(shape)
    return (trim[0].stop - trim[0].start, trim[1].stop - trim[1].start)


def _scaling(path, header):
    return (number(path, "BSCALE", header.get("BSCALE", 1.0)),
            number(path, "BZERO", header.get("BZERO", 0.0)))


def _overscan_level(path, array, overscan, bscale, bzero):
    """Median of the overscan strip in physical units (the frame's own bias level)."""
    strip = np.asarray(array[overscan], dtype=np.float64) * bscale + bzero
    strip = strip[np.isfinite(strip)]
    if strip.size == 0:
        raise FrameError(path, "BIASSEC overscan strip holds no finite values")
    return float(np.median(strip))


def read_image(path, *, dtype=np.float32):
    """Read the image area of ``path`` as a 2-D array of ``dtype`` (BZERO/BSCALE applied).

    With a BIASSEC overscan strip, its median is subtracted.
    """
    with open_image(path) as (hdul, index):
        data = _image_data(hdul[index], path)
        trim, overscan = image_sections(path, hdul[index].header, data.shape)
        level = 0.0 if overscan is None else _overscan_level(path, data, overscan, 1.0, 0.0)
        if trim is not None:
            data = data[trim]
        out = data.astype(dtype, copy=False)
        return out - dtype(level) if level else out


@contextlib.contextmanager
def stored_image(path):
    """Yield ``(array, bscale, bzero)``: the first image as stored, read without a copy.

    An uncompressed image is memory-mapped and left as the file's values (big-endian integers,
    usually), and a tile-compressed one is decoded but not scaled, so the caller converts the
    data once, block by block, as it computes; physical values are ``array * bscale + bzero``.
    An integer image with BLANK pixels is read scaled, as float32 with NaN there (scale 1,
    zero 0). The array is valid only inside the ``with`` block.
    """
    path = os.fspath(path)
    with open_image(path, memmap=True, scale=False) as (hdul, index):
        header = hdul[index].header
        if "BLANK" not in header:
            bscale, bzero = _scaling(path, header)
            data = _image_data(hdul[index], path)
            trim, overscan = image_sections(path, header, data.shape)
            if overscan is not None:
                # the overscan level comes off through the zero point of the stored values
                bzero -= _overscan_level(path, data, overscan, bscale, bzero)
            yield (data if trim is None else data[trim]), bscale, bzero
            return
    yield read_image(path), 1.0, 0.0


class RowReader:
    """Read the same block of rows from many frame files, one block at a time.

    The files stay open (sections are read on demand; compressed tiles are decoded as needed),
    so memory holds one block per file, never whole frames.

    Parameters
    ----------
    paths : list of str
        Frame files, all of the same 2-D shape.
    shape : tuple of int
        Expected ``(ny, nx)``.
    """

    def __init__(self, paths, shape):
        self.paths = [os.fspath(p) for p in paths]
        self.shape = tuple(shape)
        self._stack = contextlib.ExitStack()
        self._hdus = []
        self._layout = []

    def __enter__(self):
        try:
            for path in self.paths:
                hdul, index = self._stack.enter_context(open_image(path, memmap=False))
                hdu = hdul[index]
                full = tuple(hdu.shape[-2:])
                trim, overscan = image_sections(path, hdu.header, full)
                shape = trimmed_shape(path, hdu.header, full)
                if shape != self.shape:
                    msg = f"image shape {shape} differs from the group's {self.shape}"
                    raise FrameError(path, msg)
                level = 0.0
                if overscan is not None:
                    level = _overscan_level(path, self._section(hdu, overscan), (
                        slice(None), slice(None)), 1.0, 0.0)
                self._hdus.append(hdu)
                self._layout.append((trim, level))
        except BaseException:
            self._stack.close()
            raise
        return self

    def __exit__(self, *exc):
        self._hdus = []
        self._layout = []
        self._stack.close()
        return False

    @staticmethod
    def _section(hdu, rows_cols):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            lead = (0,) * (hdu.header["NAXIS"] - 2)
            return hdu.section[lead + tuple(rows_cols)]

    def read(self, i, r0, r1, *, dtype=np.float32):
        """Rows ``r0:r1`` of file ``i``'s image area as ``dtype`` (overscan level taken off)."""
        hdu = self._hdus[i]
        trim, level = self._layout[i]
        rows, cols = slice(r0, r1), slice(None)
        if trim is not None:
            rows = slice(trim[0].start + r0, trim[0].start + r1)
            cols = trim[1]
        try:
            block = self._section(hdu, (rows, cols))
        except Exception as exc:  # noqa: BLE001 - the decoder's own errors (damaged tiles) too
            msg = f"rows {r0}:{r1} cannot be read, file damaged ({type(exc).__name__}: {exc})"
            raise FrameError(self.paths[i], msg) from exc
        block = np.asarray(block, dtype=dtype)
        return block - dtype(level) if level else block


def write_atomic(hdul, path):
    """Write ``hdul`` to ``path`` through a temporary file in the same folder, then rename.

    A reader never sees a half-written file, and an existing file is replaced only once the new
    one is complete. Missing folders are made; the file is readable by all (``0o644``), as
    frames shared by a campaign's observers should be.

    Raises
    ------
    OSError
        ``"<path>: cannot write (<reason>)"``; no temporary file is left behind.
    """
    with replacing(path, mode=0o644, fsync=False, make_folders=True) as tmp:
        with open(tmp, "wb") as fh:
            hdul.writeto(fh, output_verify="silentfix")
