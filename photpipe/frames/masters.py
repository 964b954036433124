"""Master bias, dark-current rate and normalised flat, combined in row blocks.

A master is a FITS file with three image extensions, ``DATA``, ``VARIANCE`` and ``QUALITY``,
and its provenance (input files, counts, clipping) in the primary header. `MasterSet` is what
the calibration of science frames takes: only paths and small metadata, so it pickles cheaply
to worker processes, each of which loads a master once and keeps it.
"""

import functools
import os
import re
from dataclasses import dataclass, field

import numpy as np
from astropy import units as u
from astropy.io import fits
from scipy import ndimage

from photpipe._records import Skipped

from ._fitsfile import RowReader, open_image, read_image, write_atomic
from .calibrated_io import card_text
from .combine import COMBINE_METHODS
from .errors import FrameError
from .plan import choose_calibrations, describe_key
from .types import Quality

__all__ = ["MasterFrame", "MasterSet", "build_masters", "load_master", "MasterData"]

_UNITS = {"bias": "adu", "dark": "adu / s", "flat": ""}


@dataclass(frozen=True)
class MasterData:
    """Arrays of one master: value, its variance, quality bits."""

    value: np.ndarray
    variance: np.ndarray
    quality: np.ndarray


@dataclass(frozen=True)
class MasterFrame:
    """One master calibration file and what it is for.

    Attributes
    ----------
    kind : str
        ``"bias"`` (adu), ``"dark"`` (dark-current rate, adu/s) or ``"flat"`` (normalised).
    key : tuple
        Grouping key (see :mod:`photpipe.frames.plan`).
    path : str
        The FITS file.
    n_frames : int
        Frames combined.
    """

    kind: str
    key: tuple
    path: str
    n_frames: int

    def load(self):
        """The master's arrays (read once per process, then cached)."""
        return load_master(self.path)

    def describe(self):
        """One line for the calibration history."""
        return (f"{self.kind} master {os.path.basename(self.path)} "
                f"({describe_key(self.key)}, {self.n_frames} frames)")


@functools.lru_cache(maxsize=6)
def _load_cached(path, mtime_ns, size):
    with open_image(path) as (hdul, _):
        try:
            arrays = [np.array(hdul[name].data) for name in ("DATA", "VARIANCE", "QUALITY")]
        except KeyError as exc:
            raise FrameError(path, f"not a photpipe master: missing extension {exc}") from exc
    value, var, quality = arrays
    for arr in arrays:
        arr.setflags(write=False)
    return MasterData(value=value.astype(np.float32, copy=False),
                      variance=var.astype(np.float32, copy=False),
                      quality=quality.astype(np.uint16, copy=False))


def load_master(path):
    """Read a master file's ``DATA``, ``VARIANCE``, ``QUALITY`` (cached per process).

    The cache is keyed on the file's modification time and size, so a rebuilt master is
    read again. Returned arrays are read-only.
    """
    path = os.fspath(path)
    try:
        st = os.stat(path)
    except OSError as exc:
        raise FrameError(path, "master file is missing") from exc
    return _load_cached(path, st.st_mtime_ns, st.st_size)


@dataclass(frozen=True)
class MasterSet:
    """The masters of a night, and the files that could not go into them.

    Attributes
    ----------
    masters : tuple of MasterFrame
    skipped : list of `~photpipe._records.Skipped`
        Calibration frames left out (stage ``"masters"``) and groups that could not be built.
    require_dark : bool
        Refuse science frames without a dark (see `plan_calibrations`).
    """

    masters: tuple = ()
    skipped: list = field(default_factory=list)
    require_dark: bool = False

    def of_kind(self, kind):
        """Masters of one kind, as a dict key -> `MasterFrame`."""
        return {m.key: m for m in self.masters if m.kind == kind}

    def choose(self, info, *, flat_field=True):
        """Masters for one frame, by the rules of :mod:`photpipe.frames.plan`.

        Returns
        -------
        bias, dark, flat : MasterFrame (dark and flat may be None)
        flags : tuple of str

        Raises
        ------
        FrameError
            If no master matches the frame.
        """
        bias, dark, flat = self.of_kind("bias"), self.of_kind("dark"), self.of_kind("flat")
        choice, reason = choose_calibrations(info, bias, dark, flat, flat_field=flat_field,
                                             require_dark=self.require_dark)
        if choice is None:
            raise FrameError(info.path, reason)
        return (bias[choice.bias], None if choice.dark is None else dark[choice.dark],
                None if choice.flat is None else flat[choice.flat], choice.flags)


def _safe(text):
    return re.sub(r"[^A-Za-z0-9_.-]+", "_", str(text)) or "none"


def _file_name(key):
    base = f"master_{key[0]}_b{key[1][0]}x{key[1][1]}_{key[2][0]}x{key[2][1]}"
    if key[0] == "dark":
        base += f"_{_safe(f'{key[3] / 1000:g}')}s"
    elif key[0] == "flat":
        base += f"_{_safe(key[3])}"
    return base + ".fits"


def _auto_block_rows(n_frames, nx, block_rows, block_bytes):
    if block_rows is not None:
        if int(block_rows) < 1:
            msg = f"'block_rows' must be at least 1, got {block_rows}"
            raise ValueError(msg)
        return int(block_rows)
    return max(1, int(block_bytes // (4 * max(n_frames, 1) * max(nx, 1))))


def _detector(members):
    gain = float(np.mean([m.gain.to_value(u.electron / u.adu) for m in members]))
    rdn = float(np.mean([m.read_noise.to_value(u.electron) for m in members]))
    sat = float(np.min([m.saturation.to_value(u.adu) for m in members]))
    return gain, rdn, sat


def _combine_rows(members, shape, prepare, noise_var, *, method, sigma, maxiters, block_rows):
    """Combine ``members`` block by block; ``prepare(i, r0, r1, raw)`` turns raw rows into values.

    Returns value, n_used and the number of rejected values.
    """
    ny, nx = shape
    combine = COMBINE_METHODS[method]
    value = np.empty(shape, np.float32)
    n_used = np.empty(shape, np.int16)
    rejected = 0
    factor = 1.0
    with RowReader([m.path for m in members], shape,
                   [m.sections for m in members]) as reader:
        stack = np.empty((min(block_rows, ny), nx, len(members)), np.float32)
        for r0 in range(0, ny, block_rows):
            r1 = min(ny, r0 + block_rows)
            block = stack[: r1 - r0]
            for i in range(len(members)):
                block[..., i] = prepare(i, r0, r1, reader.read(i, r0, r1))
            out = combine(block, sigma=sigma, maxiters=maxiters,
                          noise_var=None if noise_var is None else
                          functools.partial(noise_var, r0=r0, r1=r1))
            value[r0:r1], n_used[r0:r1] = out.value, out.n_used
            rejected += out.n_rejected
            factor = out.variance_factor
    return value, n_used, rejected, factor


def _provenance(kind, key, members, *, method, sigma, maxiters, rejected, gain, rdn, extra=()):
    hdr = fits.Header()
    hdr["PPMASTER"] = (kind, "photpipe master calibration kind")
    hdr["XBINNING"], hdr["YBINNING"] = key[1]
    if kind == "dark":
        hdr["EXPTIME"] = (key[3] / 1000.0, "[s] exposure of the combined darks")
    if kind == "flat":
        hdr["FILTER"] = (members[0].filter or "", "filter of the combined flats")
    hdr["NCOMBINE"] = (len(members), "frames combined")
    hdr["COMBMETH"] = (method, "per-pixel combination")
    hdr["CLIPSIG"] = (float(sigma), "clipping threshold, noise units")
    hdr["CLIPITER"] = (int(maxiters), "largest number of clipping passes")
    total = len(members) * int(np.prod(key[2]))
    hdr["NREJECT"] = (int(rejected), "values rejected by clipping")
    hdr["REJFRAC"] = (round(rejected / max(total, 1), 8), "fraction of values rejected")
    hdr["GAIN"] = (gain, "[electron/adu] mean gain of the inputs")
    hdr["RDNOISE"] = (rdn, "[electron] mean read noise of the inputs")
    hdr["BUNIT"] = _UNITS[kind]
    for card in extra:
        hdr[card[0]] = card[1:]
    for i, m in enumerate(members, 1):
        hdr[f"SRC{i:04d}"] = (card_text(os.path.basename(m.path)), "input frame")
    for m in members:
        hdr.add_history(card_text(f"input: {m.path}"))
    return hdr


def _write_master(path, header, value, variance, quality):
    hdul = fits.HDUList([
        fits.PrimaryHDU(header=header),
        fits.ImageHDU(value.astype(np.float32), name="DATA"),
        fits.ImageHDU(variance.astype(np.float32), name="VARIANCE"),
        fits.ImageHDU(quality.astype(np.uint16), name="QUALITY"),
    ])
    hdul["DATA"].header["BUNIT"] = _UNITS[header["PPMASTER"]]
    write_atomic(hdul, path)


def _with_retries(kind, key, members, build, skipped):
    """Build a master, dropping members that cannot be read; None if none is left."""
    members = list(members)
    while members:
        try:
            return build(members)
        except FrameError as exc:
            bad = [m for m in members if m.path == exc.path]
            if not bad:
                raise
            skipped.append(Skipped(exc.path, "masters", exc.problem))
            members = [m for m in members if m.path != exc.path]
    skipped.append(Skipped(f"{kind} group {describe_key(key)}", "masters",
                           "no readable frames left in the group"))
    return None


def _nonfinite_quality(value):
    return np.where(np.isfinite(value), 0, Quality.NONFINITE | Quality.BAD).astype(np.uint16)


def _robust_center_scale(values):
    finite = values[np.isfinite(values)]
    if finite.size == 0:
        return np.nan, np.nan
    sample = finite[:: max(1, finite.size // 1_000_000)]
    med = float(np.median(sample))
    return med, float(1.482602218505602 * np.median(np.abs(sample - med)))


def build_masters(plan, out_dir, *, method="clipped_mean", sigma=3.0, maxiters=5,
                  block_rows=None, block_bytes=32 * 2**20, hot_sigma=6.0, low_flat=0.5,
                  bad_flat_deviation=0.2):
    """Combine the plan's calibration groups into master files.

    Parameters
    ----------
    plan : CalibrationPlan
        From `plan_calibrations`.
    out_dir : str or path-like
        Folder for the master files (made if needed); existing masters of the same name are
        replaced only once the new file is complete.
    method : str, optional
        Key of `~photpipe.frames.combine.COMBINE_METHODS`.
    sigma, maxiters : float, int, optional
        Clipping threshold (noise units) and largest number of passes.
    block_rows : int, optional
        Rows per block; by default chosen so one block of the stack is about ``block_bytes``.
    block_bytes : int, optional
        Target size of one block of the stack (float32) when ``block_rows`` is None. Peak
        memory is a small multiple of this plus the masters being built (three planes).
    hot_sigma : float, optional
        A pixel is HOT where its dark rate exceeds the map's median by this many times its own
        uncertainty.
    low_flat : float, optional
        Normalised flat response below which a pixel is LOW_FLAT.
    bad_flat_deviation : float, optional
        A pixel is BAD where its flat response differs from the median of its 5x5
        neighbourhood by more than this fraction.

    Returns
    -------
    MasterSet

    Notes
    -----
    Bias: clipped combination of the raw frames (adu); noise per frame ``RN/G``.
    Dark: combination of ``raw - bias`` (adu) divided by the exposure: a dark-current rate in
    adu/s, which the calibration scales to any exposure. Noise per frame
    ``sqrt(G max(x, 0) + RN**2) / G``.
    Flat: each frame has bias and dark (rate times its exposure) removed and is divided by its
    own median level ``m_i``; saturated pixels are excluded; the combination is divided by its
    median over the finite pixels. Noise per frame ``sqrt(G m f + RN**2) / (G m)``.
    The variance plane of each master is the CCD noise model at the combined level divided by
    the number of frames kept (times pi/2 for a median), plus the variance of the masters
    subtracted from it. Clipping is iterative about the median with the larger of the model
    noise and the data's robust scale.

    Examples
    --------
    >>> import tempfile
    >>> from photpipe.frames import CalibrationPlan
    >>> build_masters(CalibrationPlan(), tempfile.mkdtemp()).masters
    ()
    """
    if method not in COMBINE_METHODS:
        msg = f"'method' must be one of {sorted(COMBINE_METHODS)}, got {method!r}"
        raise ValueError(msg)
    out_dir = os.fspath(out_dir)
    os.makedirs(out_dir, exist_ok=True)
    o = _Options(out_dir, dict(method=method, sigma=sigma, maxiters=maxiters), block_rows,
                 block_bytes, hot_sigma, low_flat, bad_flat_deviation)
    skipped, built = [], []
    bias_data = _bias_masters(plan, o, built, skipped)
    dark_data = _dark_masters(plan, o, bias_data, built, skipped)
    _flat_masters(plan, o, bias_data, dark_data, built, skipped)
    return MasterSet(masters=tuple(built), skipped=skipped, require_dark=plan.require_dark)


@dataclass(frozen=True)
class _Options:
    """What every master of one `build_masters` call shares."""

    out_dir: str
    combine: dict           # method, sigma, maxiters
    block_rows: int | None
    block_bytes: int
    hot_sigma: float
    low_flat: float
    bad_flat_deviation: float

    def rows(self, n_frames, key):
        """Rows per block for a group of ``n_frames`` frames of the key's shape."""
        return _auto_block_rows(n_frames, key[2][1], self.block_rows, self.block_bytes)

    def write(self, kind, key, members, header, value, variance, quality):
        """Write one master file; its `MasterFrame`."""
        path = os.path.join(self.out_dir, _file_name(key))
        _write_master(path, header, value, variance, quality)
        return MasterFrame(kind, key, path, len(members))


def _build_bias(members, key, o):
    """Master bias (adu) of one group: clipped combination of the raw frames."""
    gain, rdn, _ = _detector(members)
    var1 = (rdn / gain) ** 2

    def noise(c, r0, r1):
        return np.full_like(c, var1)
    value, n_used, rej, factor = _combine_rows(
        members, key[2], lambda i, r0, r1, raw: raw, noise, block_rows=o.rows(len(members), key),
        **o.combine)
    variance = factor * var1 / np.maximum(n_used, 1)
    quality = _nonfinite_quality(value)
    hdr = _provenance("bias", key, members, rejected=rej, gain=gain, rdn=rdn, **o.combine)
    return (o.write("bias", key, members, hdr, value, variance, quality),
            MasterData(value, variance, quality))


def _bias_masters(plan, o, built, skipped):
    """Every bias group's master; their data by (binning, shape)."""
    bias_data = {}
    for key, members in plan.bias_groups.items():
        result = _with_retries("bias", key, members,
                               functools.partial(_build_bias, key=key, o=o), skipped)
        if result is not None:
            built.append(result[0])
            bias_data[key[1:3]] = result[1]
    return bias_data


def _build_dark(members, key, bias, o):
    """Master dark-current rate (adu/s) of one group, HOT pixels flagged."""
    gain, rdn, sat = _detector(members)
    t = key[3] / 1000.0

    def prepare(i, r0, r1, raw):
        out = raw - bias.value[r0:r1]
        out[raw >= sat] = np.nan
        return out

    def noise(c, r0, r1):
        return (gain * np.maximum(c, 0.0) + rdn**2) / gain**2
    value, n_used, rej, factor = _combine_rows(members, key[2], prepare, noise,
                                               block_rows=o.rows(len(members), key),
                                               **o.combine)
    variance = (factor * noise(value, 0, 0) / np.maximum(n_used, 1) + bias.variance) / t**2
    rate = value / t
    quality = _nonfinite_quality(rate) | bias.quality
    med, _ = _robust_center_scale(rate)
    with np.errstate(invalid="ignore"):
        hot = (rate - med) > o.hot_sigma * np.sqrt(variance)
    quality[hot] |= np.uint16(Quality.HOT)
    extra = [("NHOT", int(hot.sum()), "pixels flagged HOT"),
             ("DARKRATE", med * gain, "[electron/s] median dark-current rate")]
    hdr = _provenance("dark", key, members, rejected=rej, gain=gain, rdn=rdn, extra=extra,
                      **o.combine)
    return (o.write("dark", key, members, hdr, rate, variance, quality),
            MasterData(rate, variance, quality))


def _dark_masters(plan, o, bias_data, built, skipped):
    """Every dark group's master (those with a bias and an exposure); their data by key."""
    dark_data = {}
    for key, members in plan.dark_groups.items():
        bias = bias_data.get(key[1:3])
        if bias is None or key[3] <= 0:
            why = "its bias master could not be built" if bias is None else \
                "exposure time is zero, no dark-current rate can be measured"
            skipped += [Skipped(m.path, "masters", f"dark not used: {why}") for m in members]
            continue
        result = _with_retries("dark", key, members,
                               functools.partial(_build_dark, key=key, bias=bias, o=o), skipped)
        if result is not None:
            built.append(result[0])
            dark_data[key] = result[1]
    return dark_data


def _flat_level(info, key, bias, dark_data):
    """A flat frame's level after bias and dark removal: (level adu, dark used, exposure s)."""
    choice, _ = choose_calibrations(info, [("bias",) + key[1:3]], list(dark_data), [],
                                    flat_field=False)
    dark = None if choice.dark is None else dark_data[choice.dark]
    t = info.exptime.to_value(u.s)
    raw = read_image(info.path, sections=info.sections)
    sat = info.saturation.to_value(u.adu)
    frac = float(np.mean(raw >= sat))
    if frac > 0.01:
        raise FrameError(info.path, f"flat is saturated: {100 * frac:.1f}% of pixels "
                                    f"at or above {sat:g} adu")
    x = raw - bias.value
    if dark is not None:
        x -= dark.value * t
    level = float(np.nanmedian(x[::4, ::4]))
    if not level > 0:
        raise FrameError(info.path, f"flat level after bias and dark removal is "
                                    f"{level:.1f} adu; no light")
    return level, dark, t


def _flat_quality(value, bias, o):
    """Quality of a normalised flat: non-finite, LOW_FLAT and BAD (odd against neighbours)."""
    quality = _nonfinite_quality(value) | bias.quality
    with np.errstate(invalid="ignore"):
        low = ~(value >= o.low_flat) & np.isfinite(value)
        quality[low] |= np.uint16(Quality.LOW_FLAT)
        local = ndimage.median_filter(np.nan_to_num(value, nan=0.0), size=5, mode="nearest")
        odd = np.abs(value - local) > o.bad_flat_deviation * np.abs(local)
        quality[odd] |= np.uint16(Quality.BAD)
    return quality


def _build_flat(members, key, bias, dark_data, o):
    """Master flat of one group, normalised to its median."""
    gain, rdn, sat = _detector(members)
    levels = [_flat_level(m, key, bias, dark_data) for m in members]
    mean_level = float(np.mean([lv[0] for lv in levels]))

    def prepare(i, r0, r1, raw):
        level, dark, t = levels[i]
        out = raw - bias.value[r0:r1]
        if dark is not None:
            out -= dark.value[r0:r1] * t
        out /= level
        out[raw >= sat] = np.nan
        return out

    def noise(c, r0, r1):
        return (gain * mean_level * np.maximum(c, 0.0) + rdn**2) / (gain * mean_level)**2
    value, n_used, rej, factor = _combine_rows(members, key[2], prepare, noise,
                                               block_rows=o.rows(len(members), key),
                                               **o.combine)
    variance = factor * noise(value, 0, 0) / np.maximum(n_used, 1)
    variance += bias.variance / mean_level**2
    darks = [lv for lv in levels if lv[1] is not None]
    if darks:
        t_mean = float(np.mean([lv[2] for lv in darks]))
        variance += darks[0][1].variance * (t_mean / mean_level) ** 2
    norm, _ = _robust_center_scale(value)
    if not norm > 0:
        raise FrameError(members[0].path, "combined flat has no positive level")
    value /= norm
    variance /= norm**2
    quality = _flat_quality(value, bias, o)
    extra = [("NORMLEVL", norm, "median of the combination before normalising"),
             ("LOWFLAT", float(o.low_flat), "response below this is LOW_FLAT"),
             ("NLOWFLAT", int(np.count_nonzero(quality & Quality.LOW_FLAT)),
              "pixels flagged LOW_FLAT"),
             ("DARKUSED", bool(darks), "dark current removed from the flats")]
    hdr = _provenance("flat", key, members, rejected=rej, gain=gain, rdn=rdn, extra=extra,
                      **o.combine)
    for i, lv in enumerate(levels, 1):
        hdr[f"LVL{i:04d}"] = (round(lv[0], 3), f"[adu] level of SRC{i:04d}")
    return o.write("flat", key, members, hdr, value, variance, quality), None


def _flat_masters(plan, o, bias_data, dark_data, built, skipped):
    """Every flat group's master (those with a bias)."""
    for key, members in plan.flat_groups.items():
        bias = bias_data.get(key[1:3])
        if bias is None:
            skipped += [Skipped(m.path, "masters", "flat not used: its bias master could not "
                                "be built") for m in members]
            continue
        result = _with_retries("flat", key, members,
                               functools.partial(_build_flat, key=key, bias=bias,
                                                 dark_data=dark_data, o=o), skipped)
        if result is not None:
            built.append(result[0])
