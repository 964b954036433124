"""Which header value means which kind of frame.

Acquisition programs write the frame type differently (``Bias Frame``, ``ZERO``, ``Light``,
``object`` ...). A `KindMap` names the header keyword to look at and, for each kind, the values
that mean it; comparison ignores case and surrounding blanks.
"""

from dataclasses import dataclass

from .types import FRAME_KINDS

__all__ = ["KindMap", "DEFAULT_KIND_MAP", "kind_map_from_mapping"]

_DEFAULT_VALUES = {
    "bias": ("bias", "zero", "bias frame"),
    "dark": ("dark", "dark frame", "dark current"),
    "flat": ("flat", "flat field", "flatfield", "flat frame", "sky flat", "dome flat",
             "twilight flat"),
    "science": ("light", "object", "science", "light frame"),
}


def _norm(value):
    return " ".join(str(value).split()).lower()


@dataclass(frozen=True)
class KindMap:
    """Header keyword and values that classify frames.

    Attributes
    ----------
    keyword : str
        Header keyword holding the frame type (``IMAGETYP`` by default).
    values : tuple of (str, tuple of str)
        For each kind in ``FRAME_KINDS``, the header values (lower case) that mean it.

    Examples
    --------
    >>> DEFAULT_KIND_MAP.classify("  Light Frame ")
    'science'
    >>> DEFAULT_KIND_MAP.classify("ZERO")
    'bias'
    >>> DEFAULT_KIND_MAP.classify("focus") is None
    True
    """

    keyword: str = "IMAGETYP"
    values: tuple = tuple((kind, _DEFAULT_VALUES[kind]) for kind in FRAME_KINDS)

    def __post_init__(self):
        seen = {}
        for kind, vals in self.values:
            if kind not in FRAME_KINDS:
                msg = f"frame kind {kind!r} is not one of {FRAME_KINDS}"
                raise ValueError(msg)
            for v in vals:
                if v in seen and seen[v] != kind:
                    msg = f"header value {v!r} is listed for both {seen[v]!r} and {kind!r}"
                    raise ValueError(msg)
                seen[v] = kind

    def classify(self, header_value):
        """Return the kind a header value means, or None if it is not listed."""
        key = _norm(header_value)
        for kind, vals in self.values:
            if key in vals:
                return kind
        return None

    def describe(self):
        """One line listing the accepted values per kind, for error messages."""
        return "; ".join(f"{kind}: {', '.join(vals)}" for kind, vals in self.values)


#: The mapping used when none is given.
DEFAULT_KIND_MAP = KindMap()


def kind_map_from_mapping(section):
    """Build a `KindMap` from the ``[frames]`` section of a config.

    Parameters
    ----------
    section : dict or None
        May hold ``type_keyword`` (str) and, per kind (``bias``, ``dark``, ``flat``,
        ``science``), a list of header values (or one string). A kind that is given replaces
        its default list; a kind that is left out keeps the defaults. Other keys are rejected so
        that a misspelt key does not pass unnoticed.

    Returns
    -------
    KindMap

    Raises
    ------
    TypeError
        If a value has the wrong type.
    ValueError
        On an unknown key, an empty list, or a header value listed for two kinds.

    Examples
    --------
    >>> km = kind_map_from_mapping({"type_keyword": "FRAMETYP", "science": ["Light", "target"]})
    >>> km.keyword, km.classify("TARGET"), km.classify("bias")
    ('FRAMETYP', 'science', 'bias')
    """
    section = dict(section or {})
    keyword = section.pop("type_keyword", "IMAGETYP")
    if not isinstance(keyword, str) or not keyword.strip():
        msg = f"[frames] 'type_keyword' must be a non-empty string, got {keyword!r}"
        raise TypeError(msg)
    unknown = sorted(set(section) - set(FRAME_KINDS))
    if unknown:
        msg = (f"[frames] has unknown key(s) {', '.join(map(repr, unknown))}; "
               f"expected 'type_keyword' or one of {', '.join(FRAME_KINDS)}")
        raise ValueError(msg)
    values = []
    for kind in FRAME_KINDS:
        given = section.get(kind, _DEFAULT_VALUES[kind])
        if isinstance(given, str):
            given = [given]
        if not isinstance(given, (list, tuple)) or not all(isinstance(v, str) for v in given):
            msg = f"[frames] {kind!r} must be a list of strings, got {given!r}"
            raise TypeError(msg)
        vals = tuple(dict.fromkeys(_norm(v) for v in given if v.strip()))
        if not vals:
            msg = f"[frames] {kind!r} lists no header values"
            raise ValueError(msg)
        values.append((kind, vals))
    return KindMap(keyword=keyword.strip().upper(), values=tuple(values))
