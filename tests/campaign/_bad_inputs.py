"""A corpus of bad input files, each made from a good frame of the scenario generator.

`KINDS` maps a kind's name to ``(make, expected)``: ``make(path, data, header)`` writes one bad
file (a spoilt copy of a good raw science frame) and ``expected`` is the text its skip line must
hold (the keyword or the problem; common practice of FITS headers, FITS Standard 4.0, Pence et
al. 2010). The expected texts are what a person needs to fix the file, not internal names.
"""

import gzip

import numpy as np
from astropy.io import fits

__all__ = ["KINDS", "good_frame", "write_frame"]

#: Keywords that describe the layout of a stored HDU; the rest is the frame's own header.
_LAYOUT = ("SIMPLE", "EXTEND", "BITPIX", "NAXIS", "NAXIS1", "NAXIS2", "PCOUNT", "GCOUNT",
           "XTENSION", "BZERO", "BSCALE", "ZIMAGE", "EXTNAME")


def good_frame(path):
    """``(data, header)`` of a raw frame: the stored integers and the frame's own cards."""
    with fits.open(path) as hdul:
        hdu = next(h for h in hdul if h.data is not None)
        data = np.array(hdu.data)
        header = fits.Header([c for c in hdu.header.cards
                              if c.keyword not in _LAYOUT and not c.keyword.startswith("Z")])
    return data, header


def write_frame(path, data, header):
    """Write ``data`` with ``header`` as a plain FITS file (astropy fixes what it can)."""
    fits.PrimaryHDU(data, header).writeto(path, output_verify="silentfix", overwrite=True)


def _raw_bytes(path, data, header):
    write_frame(path, data, header)
    return path.read_bytes()


# -- kinds that spoil the header --------------------------------------------------------------

def _set(**changes):
    """A kind that sets (value) or removes (None) header cards; names with '_' mean '-'."""
    def make(path, data, header):
        header = header.copy()
        for key, value in changes.items():
            key = key.replace("_", "-") if key in ("DATE_OBS", "MJD_OBS", "TIME_OBS") else key
            if value is None:
                header.remove(key, ignore_missing=True)
            else:
                header[key] = value
        write_frame(path, data, header)
    return make


def _raw_card(key, text):
    """A kind whose card ``key`` holds ``text`` as written in the file (what astropy refuses)."""
    def make(path, data, header):
        raw = bytearray(_raw_bytes(path, data, header))
        start = raw.index(f"{key:<8}=".encode())
        card = f"{key:<8}= {text}"[:80].ljust(80).encode("latin-1")
        raw[start:start + 80] = card
        path.write_bytes(bytes(raw))
    return make


# -- kinds that spoil the file ----------------------------------------------------------------

def _bytes(content):
    def make(path, data, header):
        path.write_bytes(content)
    return make


def _truncated(fraction):
    def make(path, data, header):
        raw = _raw_bytes(path, data, header)
        path.write_bytes(raw[: int(len(raw) * fraction)])
    return make


def _gzip_of(content=None, fraction=1.0):
    def make(path, data, header):
        raw = _raw_bytes(path, data, header) if content is None else content
        packed = gzip.compress(raw)
        path.write_bytes(packed[: int(len(packed) * fraction)])
    return make


def _table_only(path, data, header):
    table = fits.BinTableHDU.from_columns([fits.Column("x", "E", array=np.arange(3.0))])
    fits.HDUList([fits.PrimaryHDU(header=header), table]).writeto(path)


def _no_image(path, data, header):
    fits.PrimaryHDU(header=header).writeto(path, output_verify="silentfix")


def _shaped(shape):
    def make(path, data, header):
        write_frame(path, np.resize(data, shape), header)
    return make


def _values(fill):
    def make(path, data, header):
        image = np.full(data.shape, fill, dtype=np.float32)
        write_frame(path, image, header)
    return make


def _photpipe_product(key, value):
    return _set(**{key: value})


def _no_end(path, data, header):
    raw = bytearray(_raw_bytes(path, data, header))
    start = raw.index(b"END" + b" " * 77)
    raw[start:start + 80] = b" " * 80
    path.write_bytes(bytes(raw))


def _bad_bytes_in_header(path, data, header):
    raw = bytearray(_raw_bytes(path, data, header))
    start = raw.index(b"FILTER  =")
    raw[start + 11:start + 15] = "\u00e9\u00e8".encode()
    path.write_bytes(bytes(raw))


def _naxis_lies(path, data, header):
    raw = bytearray(_raw_bytes(path, data, header))
    start = raw.index(b"NAXIS2  =")
    raw[start:start + 80] = f"{'NAXIS2':<8}= {data.shape[0] * 4:>20}".ljust(80).encode()
    path.write_bytes(bytes(raw))


def _compressed_garbage(path, data, header):
    hdu = fits.CompImageHDU(data, header, compression_type="RICE_1")
    fits.HDUList([fits.PrimaryHDU(), hdu]).writeto(path)
    raw = bytearray(path.read_bytes())
    # the tile bytes sit after the two header units; spoil them all
    start = raw.index(b"END" + b" " * 77, 2880) // 2880 * 2880 + 2880
    for i in range(start, len(raw)):
        raw[i] = 0xA5
    path.write_bytes(bytes(raw))


_HTML = b"<!DOCTYPE html><html><body>404 Not Found</body></html>\n"

#: name -> (make(path, data, header), text the skip line must hold)
KINDS = {
    # the file itself
    "empty_file": (_bytes(b""), "not a readable FITS file"),
    "text_file": (_bytes(b"observing log, night 1\nclouds at 03h\n"), "not a readable FITS"),
    "html_page": (_bytes(_HTML), "not a readable FITS file"),
    "random_bytes": (_bytes(np.random.default_rng(19).bytes(5760)), "not a readable FITS"),
    "one_block_of_blanks": (_bytes(b" " * 2880), "not a readable FITS file"),
    "truncated_in_header": (_truncated(0.005), "truncated"),
    "truncated_in_data": (_truncated(0.6), "truncated"),
    "truncated_last_block": (_truncated(0.99), "truncated"),
    "gzip_of_garbage": (_gzip_of(b"not a fits file at all" * 50), "not a readable FITS"),
    "gzip_cut_short": (_gzip_of(fraction=0.5), "not a readable FITS file"),
    "compressed_tiles_damaged": (_compressed_garbage, "file damaged"),
    "only_a_table": (_table_only, "no HDU holds a 2-D image"),
    "header_without_image": (_no_image, "no HDU holds a 2-D image"),
    "one_axis": (_shaped((160 * 160,)), "no HDU holds a 2-D image"),
    "cube_of_three": (_shaped((3, 160, 160)), "image has 3 axes"),
    "no_end_card": (_no_end, "not a readable FITS file"),
    "naxis2_too_large": (_naxis_lies, "truncated"),
    "bytes_beyond_ascii_in_header": (_bad_bytes_in_header, "filter ????"),
    "photpipe_master": (_photpipe_product("PPMASTER", "flat"), "master calibration"),
    "photpipe_calibrated_frame": (_photpipe_product("PPKIND", "science"), "not a raw frame"),
    # what the frame is
    "no_frame_type": (_set(IMAGETYP=None), "header has no IMAGETYP"),
    "unknown_frame_type": (_set(IMAGETYP="Banana"), "IMAGETYP = 'Banana' is not a known"),
    "blank_frame_type": (_set(IMAGETYP=""), "IMAGETYP"),
    "numeric_frame_type": (_set(IMAGETYP=42), "IMAGETYP = 42"),
    "logical_frame_type": (_set(IMAGETYP=True), "IMAGETYP = True"),
    # exposure time
    "no_exptime": (_set(EXPTIME=None), "header has no EXPTIME"),
    "negative_exptime": (_set(EXPTIME=-5.0), "EXPTIME = -5.0"),
    "huge_exptime": (_set(EXPTIME=1e30), "EXPTIME = 1e+30"),
    "exptime_over_a_day": (_set(EXPTIME=200000.0), "EXPTIME = 200000.0"),
    "text_exptime": (_set(EXPTIME="forty"), "EXPTIME = 'forty'"),
    "exptime_text_inf": (_set(EXPTIME="INF"), "EXPTIME = 'INF'"),
    "exptime_text_nan": (_set(EXPTIME="NaN"), "EXPTIME = 'NaN'"),
    "exptime_logical": (_set(EXPTIME=True), "EXPTIME = True is a logical value"),
    "exptime_complex": (_set(EXPTIME=complex(40, 1)), "EXPTIME = (40+1j)"),
    "exptime_raw_inf": (_raw_card("EXPTIME", "INF"), "EXPTIME"),
    "exptime_raw_blank": (_raw_card("EXPTIME", ""), "EXPTIME"),
    # time of the exposure
    "no_time": (_set(DATE_OBS=None), "DATE-OBS"),
    "date_words": (_set(DATE_OBS="yesterday"), "DATE-OBS = 'yesterday'"),
    "date_month_13": (_set(DATE_OBS="2026-13-45T00:00:00"), "DATE-OBS = '2026-13-45"),
    "date_hour_25": (_set(DATE_OBS="2026-12-01T25:61:00"), "DATE-OBS = '2026-12-01T25:61"),
    "date_only": (_set(DATE_OBS="2026-12-01"), "DATE-OBS"),
    "date_only_bad_clock": (_set(DATE_OBS="2026-12-01", TIME_OBS="12:99:00"), "TIME-OBS"),
    "date_blank": (_set(DATE_OBS=""), "DATE-OBS"),
    "date_number": (_set(DATE_OBS=12345), "DATE-OBS = 12345"),
    "date_year_1066": (_set(DATE_OBS="1066-10-14T09:00:00"), "DATE-OBS = '1066-10-14"),
    "date_year_9999": (_set(DATE_OBS="9999-12-01T02:00:00"), "DATE-OBS = '9999-12-01"),
    "mjd_huge": (_set(DATE_OBS=None, MJD_OBS=1e30), "MJD-OBS = 1e+30"),
    "mjd_text": (_set(DATE_OBS=None, MJD_OBS="abc"), "MJD-OBS = 'abc'"),
    "mjd_negative": (_set(DATE_OBS=None, MJD_OBS=-1e6), "MJD-OBS = -1000000.0"),
    "jd_huge": (_set(DATE_OBS=None, JD=-1e30), "JD = -1e+30"),
    "timesys_unknown": (_set(TIMESYS="XYZ"), "TIMESYS = 'XYZ'"),
    # the detector
    "gain_zero": (_set(GAIN=0.0), "GAIN = 0.0"),
    "gain_negative": (_set(GAIN=-1.6), "GAIN = -1.6"),
    "gain_text": (_set(GAIN="high"), "GAIN = 'high'"),
    "gain_huge": (_set(GAIN=1e30), "GAIN = 1e+30"),
    "gain_missing": (_set(GAIN=None), "header has no GAIN"),
    "read_noise_negative": (_set(RDNOISE=-8.0), "RDNOISE = -8.0"),
    "read_noise_text": (_set(RDNOISE="low"), "RDNOISE = 'low'"),
    "read_noise_missing": (_set(RDNOISE=None), "RDNOISE"),
    "saturation_zero": (_set(SATURATE=0.0), "SATURATE = 0.0"),
    "saturation_negative": (_set(SATURATE=-5.0), "SATURATE = -5.0"),
    "gain_logical": (_set(GAIN=False), "GAIN = False is a logical value"),
    "read_noise_huge": (_set(RDNOISE=1e5), "RDNOISE = 100000.0"),
    "saturation_text": (_set(SATURATE="x"), "SATURATE = 'x'"),
    "binning_zero": (_set(XBINNING=0), "XBINNING = 0"),
    "binning_half": (_set(XBINNING=1.5), "XBINNING = 1.5"),
    "binning_huge": (_set(XBINNING=128), "XBINNING = 128"),
    "binning_negative": (_set(YBINNING=-1), "YBINNING = -1"),
    "binning_text_inf": (_set(XBINNING="INF"), "XBINNING = 'INF'"),
    "binning_complex": (_set(XBINNING=complex(1, 2)), "XBINNING = (1+2j)"),
    "ccdsum_three_numbers": (_set(XBINNING=None, YBINNING=None, CCDSUM="1 2 3"),
                             "CCDSUM = '1 2 3' is not two integers"),
    "ccdsum_one_number": (_set(XBINNING=None, YBINNING=None, CCDSUM="2"),
                          "CCDSUM = '2' is not two integers"),
    "ccdsum_words": (_set(XBINNING=None, YBINNING=None, CCDSUM="a b"), "CCDSUM = 'a'"),
    "bscale_text": (_raw_card("BSCALE", "'abc'"), "BSCALE"),
    "bzero_text": (_raw_card("BZERO", "'abc'"), "BZERO"),
    # image sections
    "trimsec_from_zero": (_set(TRIMSEC="[0:5,1:2]"), "TRIMSEC = '[0:5,1:2]'"),
    "trimsec_too_wide": (_set(TRIMSEC="[1:99999,1:2]"), "lies outside the 160 x 160 image"),
    "trimsec_words": (_set(TRIMSEC="all of it"), "TRIMSEC = 'all of it' is not a section"),
    "datasec_reversed": (_set(DATASEC="[100:10,1:160]"), "DATASEC = '[100:10,1:160]'"),
    "biassec_words": (_set(BIASSEC="left edge"), "BIASSEC = 'left edge' is not a section"),
    # the site in the header
    "site_latitude_134": (_set(SITELAT=134.0, SITELONG=-111.4), "SITELAT"),
    "site_longitude_text": (_set(SITELAT=34.2, SITELONG="west"), "SITELONG"),
    "biassec_outside": (_set(BIASSEC="[161:170,1:160]"), "BIASSEC = '[161:170,1:160]' lies"),
    "exptime_zero": (_set(EXPTIME=0.0), "'exptime' must be finite and positive"),
    "no_filter": (_set(FILTER=None), "filter"),
    "site_latitude_text": (_set(SITELAT="north", SITELONG=-111.4), "SITELAT"),
    # the pixels
    "pixels_all_nan": (_values(np.nan), "only 0 usable pixels"),
    "pixels_all_zero": (_values(0.0), "usable for the zero point"),
    "pixels_all_infinite": (_values(np.inf), "every pixel is saturated"),
    "pixels_all_saturated": (_values(65000.0), "every pixel is saturated"),
    "image_smaller_than_masters": (_shaped((80, 80)), "no bias frames with binning 1x1, 80x80"),
    "image_of_other_shape": (_shaped((160, 120)), "no bias frames with binning 1x1, 160x120"),
    "filter_without_flat": (_set(FILTER="B"), "flat"),
    "binning_without_masters": (_set(XBINNING=2, YBINNING=2), "2x2"),
}
