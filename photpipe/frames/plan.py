"""Which calibration frames go together, and which of them serve each science frame.

Rules (each is what must physically match for the calibration to be valid):

- bias frames are grouped by (binning, shape);
- darks by (binning, shape, exposure time); a dark group is turned into a dark-current *rate*,
  so a science frame uses the dark group of its own exposure time if there is one, otherwise
  the nearest exposure time, scaled (flag ``dark_scaled``);
- flats by (binning, shape, filter), filter names compared without case or blanks;
- a science frame needs a bias group and a flat group that match it; without one it is skipped
  with a reason. Without any usable dark of its binning and shape it is calibrated without dark
  subtraction and flagged ``no_dark`` (or skipped when ``require_dark=True``).
- a dark group needs a bias group to be subtracted from it; a flat group needs a bias group (and
  uses a dark when there is one).
"""

from dataclasses import dataclass, field

from astropy import units as u

from photpipe._records import Skipped

__all__ = ["CalibrationPlan", "CalibrationChoice", "plan_calibrations", "choose_calibrations",
           "bias_key", "dark_key", "flat_key", "describe_key"]


def _filter_key(name):
    return "" if name is None else "".join(str(name).split()).casefold()


def bias_key(info):
    """Grouping key of a bias frame (and of any frame that needs one): (binning, shape)."""
    return ("bias", tuple(info.binning), tuple(info.shape))


def dark_key(info):
    """Grouping key of a dark frame: (binning, shape, exposure in ms)."""
    return ("dark", tuple(info.binning), tuple(info.shape),
            int(round(info.exptime.to_value(u.s) * 1000)))


def flat_key(info):
    """Grouping key of a flat frame (and of a science frame's flat): (binning, shape, filter)."""
    return ("flat", tuple(info.binning), tuple(info.shape), _filter_key(info.filter))


def describe_key(key):
    """Short readable text for a grouping key, e.g. ``'binning 1x1, 64x96, 30 s'``."""
    text = f"binning {key[1][0]}x{key[1][1]}, {key[2][0]}x{key[2][1]}"
    if key[0] == "dark":
        text += f", {key[3] / 1000:g} s"
    elif key[0] == "flat":
        text += f", filter {key[3] or 'none'}"
    return text


@dataclass(frozen=True)
class CalibrationChoice:
    """The calibration groups chosen for one frame.

    Attributes
    ----------
    bias : tuple
        Bias group key.
    dark : tuple or None
        Dark group key, None when no dark is used.
    flat : tuple or None
        Flat group key (None only for frames that are not flat-fielded, i.e. flats themselves).
    flags : tuple of str
        ``dark_scaled`` (dark of another exposure, rate scaled), ``no_dark``.
    """

    bias: tuple
    dark: tuple | None
    flat: tuple | None
    flags: tuple = ()


def _pick_dark(key, exptime_ms, dark_keys):
    same = [k for k in dark_keys if k[1] == key[1] and k[2] == key[2]]
    if not same:
        return None, ("no_dark",)
    exact = [k for k in same if k[3] == exptime_ms]
    if exact:
        return exact[0], ()
    # nearest exposure; between two equally near, the longer has the better-measured rate
    best = min(same, key=lambda k: (abs(k[3] - exptime_ms), -k[3]))
    return best, ("dark_scaled",)


def choose_calibrations(info, bias_keys, dark_keys, flat_keys, *, require_dark=False,
                        flat_field=True):
    """Choose bias, dark and flat groups for one frame.

    Parameters
    ----------
    info : FrameInfo
        The frame to calibrate.
    bias_keys, dark_keys, flat_keys : iterable of tuple
        Keys of the groups (or masters) available.
    require_dark : bool, optional
        Refuse a frame with no dark of its binning and shape.
    flat_field : bool, optional
        Whether a flat is needed (False for flats themselves).

    Returns
    -------
    choice : CalibrationChoice or None
    reason : str or None
        Why no choice could be made (when ``choice`` is None).
    """
    bias_keys, dark_keys, flat_keys = list(bias_keys), list(dark_keys), list(flat_keys)
    bkey = bias_key(info)
    if bkey not in bias_keys:
        have = "; ".join(describe_key(k) for k in bias_keys) or "none"
        return None, f"no bias frames with {describe_key(bkey)} (bias groups: {have})"
    exptime_ms = int(round(info.exptime.to_value(u.s) * 1000))
    dkey, flags = _pick_dark(bkey, exptime_ms, dark_keys)
    if dkey is None and require_dark:
        return None, f"no dark frames with {describe_key(bkey)}"
    fkey = None
    if flat_field:
        fkey = flat_key(info)
        if fkey not in flat_keys:
            have = "; ".join(describe_key(k) for k in flat_keys) or "none"
            return None, f"no flat frames with {describe_key(fkey)} (flat groups: {have})"
    return CalibrationChoice(bias=bkey, dark=dkey, flat=fkey, flags=flags), None


@dataclass(frozen=True)
class CalibrationPlan:
    """Calibration groups of a night and the choice made for each science frame.

    Attributes
    ----------
    bias_groups, dark_groups, flat_groups : dict
        Group key -> list of `FrameInfo`, only groups that can be built.
    science : list of FrameInfo
        Science frames that have the calibrations they need.
    choices : dict
        Science frame path -> `CalibrationChoice`.
    skipped : list of `~photpipe._records.Skipped`
        Frames (science or calibration) that cannot be used, each with its reason
        (stage ``"planning"``).
    require_dark : bool
        The rule the plan was made with.
    """

    bias_groups: dict = field(default_factory=dict)
    dark_groups: dict = field(default_factory=dict)
    flat_groups: dict = field(default_factory=dict)
    science: list = field(default_factory=list)
    choices: dict = field(default_factory=dict)
    skipped: list = field(default_factory=list)
    require_dark: bool = False

    def summary(self):
        """A few lines for a person: the groups and how many science frames each serves."""
        lines = []
        for label, groups in (("bias", self.bias_groups), ("dark", self.dark_groups),
                              ("flat", self.flat_groups)):
            for key, members in groups.items():
                lines.append(f"{label}: {describe_key(key)}: {len(members)} frames")
        lines.append(f"science: {len(self.science)} frames with calibrations, "
                     f"{len(self.skipped)} frames skipped")
        return "\n".join(lines)


def _group(frames, keyfunc):
    groups = {}
    for info in frames:
        groups.setdefault(keyfunc(info), []).append(info)
    return groups


def plan_calibrations(inventory, *, require_dark=False):
    """Group a night's calibration frames and choose calibrations for each science frame.

    Parameters
    ----------
    inventory : NightInventory
        From `scan_night`.
    require_dark : bool, optional
        Skip science frames that have no dark of their binning and shape instead of
        calibrating them without dark subtraction (flag ``no_dark``).

    Returns
    -------
    CalibrationPlan

    Notes
    -----
    The matching rules are given in the module docstring; they are the same rules
    `MasterSet.choose` applies to built masters.

    Examples
    --------
    >>> from photpipe.frames import NightInventory
    >>> plan = plan_calibrations(NightInventory())
    >>> plan.science, plan.skipped
    ([], [])
    """
    bias_groups = _group(inventory.of_kind("bias"), bias_key)
    skipped = []
    dark_groups = {}
    for key, members in _group(inventory.of_kind("dark"), dark_key).items():
        if ("bias",) + key[1:3] in bias_groups:
            dark_groups[key] = members
        else:
            skipped += [Skipped(m.path, "planning", f"dark has no bias frames with "
                                f"{describe_key(('bias',) + key[1:3])} to subtract")
                        for m in members]
    flat_groups = {}
    for key, members in _group(inventory.of_kind("flat"), flat_key).items():
        if ("bias",) + key[1:3] in bias_groups:
            flat_groups[key] = members
        else:
            skipped += [Skipped(m.path, "planning", f"flat has no bias frames with "
                                f"{describe_key(('bias',) + key[1:3])} to subtract")
                        for m in members]
    science, choices = [], {}
    for info in inventory.of_kind("science"):
        choice, reason = choose_calibrations(info, bias_groups, dark_groups, flat_groups,
                                             require_dark=require_dark)
        if choice is None:
            skipped.append(Skipped(info.path, "planning", reason))
        else:
            science.append(info)
            choices[info.path] = choice
    return CalibrationPlan(bias_groups=bias_groups, dark_groups=dark_groups,
                           flat_groups=flat_groups, science=science, choices=choices,
                           skipped=skipped, require_dark=require_dark)
