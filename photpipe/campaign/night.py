"""One night of a batch run: read, plan, calibrate and measure, store, export.

`NightRun.nights` reads like the plan: for every night take its files, name the frames, plan
the calibrations and pick the science frames not yet measured; then build all the nights'
masters (in parallel tasks when there are several, while the workers start); then for each night
compute the geometry once, hand one task per frame to the runner, store each result as it comes
back, and export the night's tables. Each part's seconds go into the run's ``phase_seconds``.
"""

import logging
import os
import time
import warnings
from collections import Counter
from dataclasses import dataclass
from pathlib import Path

from astropy.time import Time

from photpipe import frames
from photpipe._records import Skipped
from photpipe.config import ConfigError, geometry_at_location, night_folders

from .frame_keys import calibrated_name, duplicates, frame_keys
from .hashing import file_sha256
from .runner import TaskError
from .summary import NightSummary
from .tasks import process_frame

__all__ = ["NightRun", "night_name", "night_masters", "NIGHT_TABLES", "TrackingVote",
           "night_tracking_vote"]

log = logging.getLogger("photpipe.campaign")

#: Tables exported into each night's folder.
NIGHT_TABLES = ("frames", "measurements", "nucleus", "stars", "zero_points", "astrometry",
                "profiles", "skipped")


def night_name(night):
    """Return the name a ``[[night]]`` entry goes by: its ``name``, else its folder's name.

    Examples
    --------
    >>> night_name({"path": "/data/raw/2026-12-01"})
    '2026-12-01'
    >>> night_name({"path": "/data/raw/2026-12-02/*.fits.fz"})
    '2026-12-02'
    >>> night_name({"path": "/x", "name": "first night"})
    'first night'
    """
    if night.get("name"):
        return str(night["name"])
    path = os.path.normpath(night["path"])
    parts = Path(path).parts
    for i, part in enumerate(parts):
        if any(ch in part for ch in "*?["):
            return parts[i - 1] if i > 0 else path
    return os.path.basename(path)


def night_masters(item):
    """Build one night's master calibrations: a task of ``plan``, ``folder`` and ``options``."""
    return frames.build_masters(item["plan"], item["folder"], **item["options"])


@dataclass(frozen=True)
class TrackingVote:
    """The tracking mode of one night and camera, from its frames' own verdicts.

    Attributes
    ----------
    mode : str or None
        The mode most frames' evidence (a TRACKING header or the stars' shapes) gave; None
        when too few frames decided or they split.
    votes : dict
        Frames that decided, per mode.
    again : tuple of str
        Frames measured in another mode on weak evidence (or none): measured again in
        ``mode``.
    own : tuple of str
        Frames whose strong evidence (a TRACKING header, or stars far from the other mode)
        keeps their own mode.
    """

    mode: str | None
    votes: dict
    again: tuple = ()
    own: tuple = ()

    def line(self, night, camera):
        """One line for the night's messages, or None when every frame agreed."""
        if self.mode is None or not (self.again or self.own):
            return None
        counts = ", ".join(f"{n} {m}" for m, n in sorted(self.votes.items()))
        text = f"night {night}{camera}: tracking {self.mode} by the frames' votes ({counts})"
        if self.again:
            text += f"; measured again as {self.mode}: {', '.join(self.again)}"
        if self.own:
            text += f"; keep their own mode on strong evidence: {', '.join(self.own)}"
        return text


#: A night's mode needs at least this many deciding frames and this share of them.
VOTE_MIN_FRAMES, VOTE_MIN_SHARE = 2, 2.0 / 3.0


def night_tracking_vote(verdicts):
    """Decide one night's (and camera's) tracking mode from its frames' verdicts.

    Frames of one night and one camera are tracked alike, as a rule. A frame's own verdict
    (`photpipe.photometry.TrackingVerdict.to_dict`: ``mode, source, strong``) counts as a
    vote when a header or the stars decided it; the night takes the mode of at least
    `VOTE_MIN_FRAMES` votes and `VOTE_MIN_SHARE` of them. A frame measured in another mode
    keeps it only on strong evidence; the others are to be measured again in the night's.

    Parameters
    ----------
    verdicts : dict of str to dict or None
        Frame name -> its verdict.

    Returns
    -------
    TrackingVote

    Examples
    --------
    >>> v = {"a": {"mode": "comet", "source": "stars", "strong": True},
    ...      "b": {"mode": "comet", "source": "stars", "strong": False},
    ...      "c": {"mode": "sidereal", "source": "configuration", "strong": False},
    ...      "d": {"mode": "sidereal", "source": "header", "strong": True}}
    >>> vote = night_tracking_vote(v)
    >>> vote.mode, vote.again, vote.own
    ('comet', ('c',), ('d',))
    """
    decided = {f: v for f, v in verdicts.items()
               if v and v.get("source") in ("header", "stars")}
    votes = dict(Counter(v["mode"] for v in decided.values()))
    if not votes:
        return TrackingVote(None, votes)
    mode, n = max(votes.items(), key=lambda kv: kv[1])
    if n < VOTE_MIN_FRAMES or n < VOTE_MIN_SHARE * sum(votes.values()):
        return TrackingVote(None, votes)
    differ = sorted(f for f, v in verdicts.items() if v and v.get("mode") != mode)
    own = tuple(f for f in differ if verdicts[f].get("strong"))
    again = tuple(f for f in differ if not verdicts[f].get("strong"))
    return TrackingVote(mode, votes, again, own)


def _site_groups(site, infos):
    """Frames grouped by where they were taken: the header's site, else the night's."""
    groups = {}
    for i, info in enumerate(infos):
        where = info.site if getattr(info, "site", None) is not None else site
        key = None if where is None else tuple(round(float(v.to_value("m"))) for v in
                                               where.geocentric)
        groups.setdefault(key, (where, []))[1].append(i)
    return list(groups.values())


def _night_geometry(config, site, infos):
    """Geometry rows of the frames, each seen from its own site; (rows, problem, cautions).

    A frame whose header names its site (OBSGEO-*, SITELAT/SITELONG) is seen from there; the
    others from the night's ``site``. Computed once per site here.
    """
    if not infos:
        return [], None, []
    rows, cautions = [None] * len(infos), set()
    for where, idx in _site_groups(site, infos):
        times = Time([infos[i].time_mid for i in idx])
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            try:
                table = geometry_at_location(config, where, times)
            except Exception as exc:  # noqa: BLE001 - no geometry: the night still calibrates
                return [None] * len(infos), f"{type(exc).__name__}: {exc}", []
        cautions |= {str(w.message) for w in caught
                     if w.category.__name__ == "SolarElongationWarning"}
        for w in caught:
            if w.category.__name__ != "SolarElongationWarning":
                log.warning("geometry: %s: %s", w.category.__name__, w.message)
        for k, i in enumerate(idx):
            rows[i] = table[k:k + 1]
    return rows, None, sorted(cautions)


class NightRun:
    """The work of one run on its nights (shared: the store, the runner, the settings).

    Parameters
    ----------
    run : object
        Holds ``config, store, runner, summary, settings`` (`~photpipe.campaign.preflight.
        SharedSettings`), ``frame_hash``, ``rerun``, ``results`` and ``echo``.
    """

    def __init__(self, run):
        self.run = run

    # -- the plan ----------------------------------------------------------------------------

    def nights(self, entries):
        """Reduce the ``[[night]]`` entries: all inventories, then all masters, then the frames.

        The masters of several nights are built at once, as parallel tasks on the runner (one
        night's in this process while the workers start); then each night's frames are measured
        and its tables exported.
        """
        prepared = [self._prepare(entry) for entry in entries]
        todo = [p for p in prepared if p is not None and p["todo"]]
        masters = self._all_masters(todo)
        for p in prepared:
            if p is None:
                continue
            if p["todo"] and p["night"].name in masters:
                self._measure(p["entry"], p["night"], masters[p["night"].name], p["todo"],
                              p["keys"], p["hashes"])
            self._export(p["night"])

    def night(self, entry):
        """Reduce one ``[[night]]`` entry; its counts go into the run's summary."""
        self.nights([entry])

    def _prepare(self, entry):
        """Read a night's headers, claim its files, plan its calibrations, pick its frames."""
        started = time.perf_counter()
        night = NightSummary(name=night_name(entry), folder=entry["path"])
        self.run.summary.nights.append(night)
        inventory = self._inventory(entry, night)
        if inventory is None:
            return None
        keys = frame_keys(inventory.frames)
        hashes = {info.path: file_sha256(info.path) for info in inventory.frames}
        same = self._claim(night, inventory, keys, hashes)
        self._add_frames(entry, night, inventory, keys, hashes)
        plan = frames.plan_calibrations(inventory,
                                        require_dark=self.run.settings.frames.require_dark)
        for s in plan.skipped:
            self.skip(night, keys.get(s.item, s.item), s.stage, s.reason)
        todo = self._to_measure(night, plan, keys, hashes, same)
        self._phase("inventories", started)
        return {"entry": entry, "night": night, "plan": plan, "todo": todo, "keys": keys,
                "hashes": hashes}

    def _phase(self, name, started):
        phases = self.run.summary.phase_seconds
        phases[name] = phases.get(name, 0.0) + time.perf_counter() - started

    def skip(self, night, item, stage, reason):
        """Record that ``item`` of ``night`` could not pass ``stage``, and why."""
        night.skipped.append(Skipped(str(item), stage, str(reason)))
        name = _stem(item) if os.sep in str(item) else str(item)
        self.run.store.add_skipped(self.run.summary.run_id, night.name, name, stage, reason)
        log.info("skipped %s/%s [%s]: %s", night.name, name, stage, reason)

    # -- the steps ---------------------------------------------------------------------------

    def _inventory(self, entry, night):
        try:
            files = night_folders(entry)
        except ConfigError as exc:
            self.skip(night, entry["path"], "ingest", str(exc))
            self.run.echo(f"night {night.name}: {exc}; going on with the other nights")
            return None
        settings = self.run.settings
        inventory = frames.scan_night(files, kind_map=settings.frames.kind_map,
                                      profiles=settings.instruments,
                                      night_profile=entry.get("instrument"))
        night.counts = inventory.counts()
        for note in inventory.notes:
            self.run.echo(f"night {night.name}: {note}")
            log.info("night %s: %s", night.name, note)
        for s in inventory.skipped:
            self.skip(night, s.item, s.stage, s.reason)
        counts = ", ".join(f"{n} {k}" for k, n in night.counts.items() if n)
        self.run.echo(f"night {night.name}: {len(inventory.frames)} frames read "
                      f"({counts or 'none'}), {len(inventory.skipped)} unreadable")
        return inventory

    def _add_frames(self, entry, night, inventory, keys, hashes):
        self.run.store.add_frames(
            {"night": night.name, "frame": keys[info.path], "path": info.path,
             "content_hash": hashes[info.path], "kind": info.kind,
             "mjd_utc_mid": float(info.time_mid.utc.mjd), "filter": info.filter,
             "exptime_s": info.exptime, "site": entry.get("site")}
            for info in inventory.frames)

    def _claim(self, night, inventory, keys, hashes):
        """Science files claim their results by content and full path (`claim_frame`).

        Results follow a renamed or moved file, and their calibrated file with them; another
        file's results under a reused name are kept under that file's name. Returns
        ``path -> "night/frame"`` of files whose content was measured from another file that
        still holds it.
        """
        calibrated = self.run.results

        def calibrated_for(night_name, key):
            return calibrated / night_name / "calibrated" / calibrated_name(key)

        def holds_content(path, digest):
            if path in hashes:
                return hashes[path] == digest
            return os.path.isfile(path) and file_sha256(path) == digest

        same = {}
        for info in inventory.of_kind("science"):
            key = keys[info.path]
            claim = self.run.store.claim_frame(
                night.name, key, info.path, hashes[info.path], holds_content=holds_content,
                calibrated_for=calibrated_for)
            for old, new in claim.calibrated_moves:
                _move_file(old, new)
            if claim.same_as:
                same[info.path] = claim.same_as
            if claim.moved_from:
                log.info("%s/%s: the results of %s (same content) go by this name now",
                         night.name, key, claim.moved_from)
            if claim.set_aside:
                self.run.echo(f"night {night.name}: {key} is a new file; the results of the "
                              f"earlier file of that name are kept as {claim.set_aside}")
        return same

    def _to_measure(self, night, plan, keys, hashes, same):
        """Science frames not measured yet with this content and configuration."""
        fresh = [info for info in plan.science if info.path not in same]
        same = {**same, **duplicates(fresh, hashes, keys)}
        todo = []
        for info in plan.science:
            key = keys[info.path]
            if info.path in same:
                self.skip(night, key, "ingest", f"same content as {same[info.path]}: "
                                                "measured once")
            elif not self.run.rerun and self.run.store.is_measured(
                    night.name, key, content_hash=hashes[info.path],
                    config_hash=self.run.frame_hash, stages=self.run.frame_stages):
                night.reused += 1
            else:
                todo.append(info)
        if not plan.science:
            self.run.echo(f"night {night.name}: no science frame has the calibrations it needs")
        elif not todo and night.reused:
            self.run.echo(f"night {night.name}: all {night.reused} science frames already "
                          "measured with this configuration (use --rerun to measure them "
                          "again)")
        return todo

    def _all_masters(self, prepared):
        """Master calibrations of the prepared nights (night name -> MasterSet).

        The workers start first (`TaskRunner.start_soon`); one night's masters are built here
        meanwhile, several nights' as parallel tasks, one per night.
        """
        if not prepared:
            return {}
        self.run.runner.start_soon()
        started = time.perf_counter()
        options = self.run.settings.frames.master_options()
        items = [{"night": p["night"].name, "plan": p["plan"], "options": options,
                  "folder": str(self.run.results / p["night"].name / "masters")}
                 for p in prepared]
        if len(items) == 1:
            results = [(items[0], night_masters(items[0]))]
        else:
            self.run.runner.open()
            results = self.run.runner.map(night_masters, items, desc="masters",
                                          label=lambda it: f"{it['night']} masters")
        nights = {p["night"].name: p["night"] for p in prepared}
        out = {}
        for item, masters in results:
            night = nights[item["night"]]
            if isinstance(masters, TaskError):
                self.skip(night, night.folder, "masters", str(masters))
                continue
            out[night.name] = masters
            self._keep_masters(night, masters)
        self._phase("masters", started)
        return out

    def _keep_masters(self, night, masters):
        for s in masters.skipped:
            self.skip(night, s.item, s.stage, s.reason)
        self.run.store.add_calibrations(
            {"night": night.name, "kind": m.kind, "path": m.path, "n_inputs": m.n_frames,
             "filter": str(m.key[3]) if m.kind == "flat" else None,
             "exptime_s": m.key[3] / 1000.0 if m.kind == "dark" else None}
            for m in masters.masters)

    def _geometry(self, entry, night, todo):
        site = self.run.settings.sites.get(entry.get("site"))
        rows, problem, cautions = _night_geometry(self.run.config, site, todo)
        for text in cautions:
            if text not in self.run.summary.cautions:
                self.run.summary.cautions.append(text)
                self.run.echo(f"CAUTION: {text}")
        if problem:
            self.run.echo(f"night {night.name}: no observing geometry ({problem}); "
                          "frames are calibrated but not measured")
        return site, rows, problem

    def _shared(self, masters, site):
        settings = self.run.settings
        reference = settings.reference
        return {"masters": masters, "stages": self.run.frame_stages,
                "calibration": settings.frames.calibration_options(),
                "photometry": settings.photometry.options(),
                "nucleus": settings.nucleus.fit_options(),
                "psf": settings.nucleus.psf_options(), "tracking": settings.nucleus.tracking,
                "tracking_check": settings.nucleus.tracking_check,
                "site_location": site,
                "reference_store": reference.store_path, "reference_problem": reference.problem,
                "filters": settings.filters,
                "target_name": str(self.run.config.get("target", {}).get("name") or ""),
                "catalogue_name": os.path.basename(str(
                    self.run.config.get("photometry", {}).get("reference_stars") or "")),
                "plate_solve": {"mode": settings.photometry.plate_solve,
                                "max_offset": settings.photometry.plate_max_offset}}

    def _measure(self, entry, night, masters, todo, keys, hashes):
        started = time.perf_counter()
        site, geometry, problem = self._geometry(entry, night, todo)
        calibrated = self.run.results / night.name / "calibrated"
        items = [{"night": night.name, "frame": keys[info.path], "site": entry.get("site"),
                  "info": info, "content_hash": hashes[info.path], "geometry": row,
                  "geometry_problem": problem,
                  "calibrated_path": str(calibrated / calibrated_name(keys[info.path]))}
                 for info, row in zip(todo, geometry)]
        self._phase("geometry", started)
        started = time.perf_counter()
        self.run.runner.open()
        self._phase("waiting for workers", started)
        started = time.perf_counter()
        shared = self._shared(masters, site)
        verdicts = {}
        for item, result in self.run.runner.map(
                process_frame, items, shared=shared, desc=night.name,
                label=lambda it: f"{it['night']}/{it['frame']}"):
            self._store(night, item["frame"], result)
            verdicts[item["frame"]] = getattr(result, "tracking", None)
        again = self._tracking_vote(night, todo, items, verdicts)
        if again:
            for item, result in self.run.runner.map(
                    process_frame, again, shared=shared, desc=f"{night.name} again",
                    label=lambda it: f"{it['night']}/{it['frame']}"):
                self._store(night, item["frame"], result, again=True)
        self._phase("frames", started)

    def _tracking_vote(self, night, todo, items, verdicts):
        """The frames to measure again in their night's tracking mode (per camera).

        The disagreements are said once per night and camera.
        """
        if not self.run.settings.nucleus.tracking_check:
            return []
        cameras = {}
        for info, item in zip(todo, items, strict=True):
            cameras.setdefault(getattr(info, "instrument", None) or "", []).append(item)
        again = []
        for camera, group in cameras.items():
            vote = night_tracking_vote({it["frame"]: verdicts.get(it["frame"]) for it in group})
            line = vote.line(night.name, f" ({camera})" if len(cameras) > 1 else "")
            if line:
                self.run.echo(line)
                log.info("%s", line)
            redo = set(vote.again)
            again += [dict(it, tracking=vote.mode) for it in group if it["frame"] in redo]
        return again

    def _store(self, night, frame, result, *, again=False):
        """Store one frame's result; count it as measured only when it was stored.

        A frame measured ``again`` (in its night's tracking mode) replaces its first result
        and its problems, and is not counted twice.
        """
        if again:
            night.skipped = [s for s in night.skipped if s.item != frame]
            counts = (night.measured, night.kept)
            self._store(night, frame, result)
            night.measured, night.kept = counts
            return
        if isinstance(result, TaskError):
            self.skip(night, frame, "worker", str(result))
            return
        try:
            stored = self.run.store.write_frame(self.run.summary.run_id, result,
                                                config_hash=self.run.frame_hash)
        except (ValueError, TypeError) as exc:
            # A result the store cannot take (a unit it does not know) is nothing stored.
            self.skip(night, frame, "store", str(exc))
            return
        if stored is not None and result.nucleus_images:
            self._keep_images(night, frame, result.nucleus_images)
        for stage, reason in result.problems:
            night.skipped.append(Skipped(frame, stage, reason))
            log.info("%s/%s [%s]: %s", night.name, frame, stage, reason)
        if stored is None:
            night.kept += 1
            log.info("%s/%s: not measured this time; its earlier results are kept", night.name,
                     frame)
        elif not any(stage == "calibration" for stage, _ in result.problems):
            night.measured += 1

    def _keep_images(self, night, frame, images):
        """The nucleus fit's small images beside the store (a failure costs only the figure)."""
        from .frame_views import nucleus_images_path, write_nucleus_images

        try:
            write_nucleus_images(images, nucleus_images_path(self.run.results, night.name, frame))
        except OSError as exc:
            log.info("%s/%s: nucleus images not kept (%s)", night.name, frame, exc)

    def _export(self, night):
        started = time.perf_counter()
        folder = self.run.results / night.name
        for table in NIGHT_TABLES:
            data = self.run.store.export_table(table, night=night.name)
            path = folder / f"{table}.ecsv"
            if len(data) == 0 and _holds_rows(path):
                # never write an empty table over a file that holds rows
                log.info("%s: left as it was (the store has no rows for it)", path)
                continue
            night.outputs.append(str(write_export(data, path)))
        from .astrometry_files import write_night_positions

        night.outputs.extend(write_night_positions(self.run.store, folder, night.name))
        self._phase("night tables", started)


def _move_file(old, new):
    """Rename a calibrated file to follow its results (nothing to do when it is not there)."""
    try:
        Path(new).parent.mkdir(parents=True, exist_ok=True)
        os.replace(old, new)
    except FileNotFoundError:
        pass
    except OSError as exc:
        log.warning("%s: could not be renamed to %s (%s)", old, new, exc)


def _stem(path):
    base = os.path.basename(str(path))
    for ending in (".fz", ".gz", ".fits", ".fit", ".fts"):
        if base.lower().endswith(ending):
            base = base[: -len(ending)]
    return base


def _holds_rows(path):
    """Whether an ECSV file exists and holds at least one data row."""
    try:
        with open(path, encoding="utf-8") as handle:
            lines = [line for line in handle if line.strip() and not line.startswith("#")]
    except (OSError, UnicodeDecodeError):
        return False
    return len(lines) > 1  # the header line, then rows


def write_export(table, path):
    """Write an exported table (ECSV, atomically); return its path."""
    from photpipe.store import write_table_atomic

    return write_table_atomic(table, path)
