"""The batch run: every night of a configuration, stage by stage, into the campaign store.

For each ``[[night]]``: read the headers, plan and build the master calibrations, compute the
observing geometry of all science frames at once, then hand one task per science frame to the
:class:`~photpipe.campaign.TaskRunner` (calibrate, write the calibrated frame, photometry,
nucleus fit) and store each frame's results in one transaction as soon as it comes back. Then the
night's tables are exported, and once all nights are done the campaign lightcurve and the
campaign-level stages (rotation, size, activity and report) run. Stages that are not installed
are named in the summary and skipped; nothing is invented in their place.

Only this module's caller (the CLI) reads the configuration file; the stages get plain values.
"""

import hashlib
import logging
import os
import time
import warnings
from pathlib import Path

from astropy.time import Time

from photpipe import frames
from photpipe._records import Skipped
from photpipe.config import (
    ConfigError,
    geometry_at_location,
    location_for_night,
    night_folders,
    read_catalogue_columns,
    read_filters,
    read_frames,
    read_instruments,
    read_nucleus,
    read_photometry,
    read_run,
)

from .hashing import config_hash, file_sha256
from .refstars import DEFAULT_STORE_NAME, campaign_reference_store
from .runner import TaskError, TaskRunner
from .stages import CAMPAIGN_STEPS, FRAME_STAGES
from .steps import run_campaign_steps
from .store import CampaignStore, write_table_atomic
from .summary import NightSummary, RunSummary
from .tasks import process_frame

__all__ = ["run_campaign", "night_name", "NIGHT_TABLES"]

log = logging.getLogger("photpipe.campaign")

#: Tables exported into each night's folder, with the stage that fills them.
NIGHT_TABLES = {"frames": "calibration", "measurements": "photometry", "nucleus": "nucleus",
                "stars": "photometry", "zero_points": "photometry", "skipped": "calibration"}

_FITS_ENDINGS = (".fz", ".gz", ".fits", ".fit", ".fts")


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


def _frame_name(path):
    base = os.path.basename(str(path))
    for ext in _FITS_ENDINGS:
        if base.lower().endswith(ext):
            base = base[: -len(ext)]
    return base


def _night_site(config, night):
    """The night's observing site (an EarthLocation, or None for the geocentre) and a problem."""
    try:
        return location_for_night(config, night), None
    except ConfigError as exc:
        return None, f"{type(exc).__name__}: {exc}"


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
    """Geometry rows of the night's science frames, each seen from its own site.

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


class _Run:
    """State of one run: the store, the runner, the summary being filled."""

    def __init__(self, config, store, runner, summary, *, rerun, echo):
        self.config = config
        self.store = store
        self.runner = runner
        self.summary = summary
        self.rerun = rerun
        self.echo = echo
        self.results = Path(config["campaign"]["results"])
        self.frame_hash = config_hash(config)
        self._reference = None
        self.frame_stages = FRAME_STAGES
        self.frames = read_frames(config)
        self.instruments = read_instruments(config)
        self.filters = read_filters(config)
        self.photometry = read_photometry(config)
        self.nucleus = read_nucleus(config)

    def reference(self):
        """The campaign's reference-star store, opened (built when needed) on first use."""
        if self._reference is None:
            phot = self.photometry
            store_path = phot.reference_store or self.results / DEFAULT_STORE_NAME
            bands = list(dict.fromkeys([phot.band] + [e.band for e in self.filters.entries]))
            self._reference = campaign_reference_store(
                phot.reference_stars, store_path, band=phot.band, colour=phot.colour,
                bands=bands, columns=read_catalogue_columns(self.config))
            ref = self._reference
            if ref.problem:
                self.echo(f"reference stars: {ref.problem}; frames are calibrated but not "
                          "measured")
            elif ref.built:
                self.echo(f"reference stars: {ref.n_stars} indexed once for the campaign in "
                          f"{ref.store_path}")
        return self._reference

    def skip(self, night, item, stage, reason):
        record = Skipped(str(item), stage, str(reason))
        night.skipped.append(record)
        self.store.add_skipped(self.summary.run_id, night.name, _frame_name(item), stage, reason)
        log.info("skipped %s/%s [%s]: %s", night.name, _frame_name(item), stage, reason)

    # -- one night -------------------------------------------------------------------------

    def night(self, entry):
        name = night_name(entry)
        night = NightSummary(name=name, folder=entry["path"])
        self.summary.nights.append(night)
        try:
            files = night_folders(entry)
        except ConfigError as exc:
            self.skip(night, entry["path"], "ingest", str(exc))
            self.echo(f"night {name}: {exc}; going on with the other nights")
            return
        inventory = frames.scan_night(files, kind_map=self.frames.kind_map,
                                      profiles=self.instruments,
                                      night_profile=entry.get("instrument"))
        night.counts = inventory.counts()
        for note in inventory.notes:
            self.echo(f"night {name}: {note}")
            log.info("night %s: %s", name, note)
        for s in inventory.skipped:
            self.skip(night, s.item, s.stage, s.reason)
        hashes = {info.path: file_sha256(info.path) for info in inventory.frames}
        self.store.add_frames(
            {"night": name, "frame": info.name, "path": info.path,
             "content_hash": hashes[info.path], "kind": info.kind,
             "mjd_utc_mid": float(info.time_mid.utc.mjd), "filter": info.filter,
             "exptime_s": info.exptime, "site": entry.get("site")}
            for info in inventory.frames)
        counts = ", ".join(f"{n} {k}" for k, n in night.counts.items() if n)
        self.echo(f"night {name}: {len(inventory.frames)} frames read ({counts or 'none'}), "
                  f"{len(inventory.skipped)} unreadable")

        plan = frames.plan_calibrations(inventory, require_dark=self.frames.require_dark)
        for s in plan.skipped:
            self.skip(night, s.item, s.stage, s.reason)
        todo = []
        for info in plan.science:
            if not self.rerun and self.store.is_measured(
                    name, info.name, content_hash=hashes[info.path],
                    config_hash=self.frame_hash, stages=self.frame_stages):
                night.reused += 1
            else:
                todo.append(info)
        if not plan.science:
            self.echo(f"night {name}: no science frame has the calibrations it needs")
        elif not todo:
            self.echo(f"night {name}: all {night.reused} science frames already measured "
                      "with this configuration (use --rerun to measure them again)")
        if todo:
            self._measure(entry, night, plan, todo, hashes)
        self._export_night(night)

    def _measure(self, entry, night, plan, todo, hashes):
        folder = self.results / night.name
        masters = frames.build_masters(plan, folder / "masters", **self.frames.master_options())
        for s in masters.skipped:
            self.skip(night, s.item, s.stage, s.reason)
        self.store.add_calibrations(
            {"night": night.name, "kind": m.kind, "path": m.path, "n_inputs": m.n_frames,
             "filter": str(m.key[3]) if m.kind == "flat" else None,
             "exptime_s": m.key[3] / 1000.0 if m.kind == "dark" else None}
            for m in masters.masters)

        geometry, problem, site = [None] * len(todo), None, None
        if "geometry" in self.frame_stages:
            # the site is read once: the geometry and the frames' airmass both use it
            site, problem = _night_site(self.config, entry)
            cautions = []
            if problem is None:
                geometry, problem, cautions = _night_geometry(self.config, site, todo)
            for text in cautions:
                if text not in self.summary.cautions:
                    self.summary.cautions.append(text)
                    self.echo(f"CAUTION: {text}")
            if problem:
                self.echo(f"night {night.name}: no observing geometry ({problem}); "
                          "frames are calibrated but not measured")
        items = [{"night": night.name, "site": entry.get("site"), "info": info,
                  "content_hash": hashes[info.path], "geometry": row,
                  "geometry_problem": problem,
                  "calibrated_path": str(folder / "calibrated" / f"{info.name}.fits")}
                 for info, row in zip(todo, geometry)]
        shared = {"masters": masters, "stages": self.frame_stages,
                  "calibration": self.frames.calibration_options(),
                  "photometry": self.photometry.options(),
                  "nucleus": self.nucleus.fit_options(), "psf": self.nucleus.psf_options(),
                  "site_location": site, "filters": self.filters,
                  "plate_solve": {"mode": self.photometry.plate_solve,
                                  "max_offset": self.photometry.plate_max_offset}}
        if "photometry" in self.frame_stages:
            reference = self.reference()
            shared.update(reference_store=reference.store_path,
                          reference_problem=reference.problem)
        self.runner.open()
        started = time.perf_counter()
        for item, result in self.runner.map(process_frame, items, shared=shared,
                                            desc=night.name,
                                            label=lambda it: f"{it['night']}/{it['info'].name}"):
            frame = item["info"].name
            if isinstance(result, TaskError):
                self.skip(night, frame, "worker", str(result))
                continue
            try:
                self.store.write_frame(self.summary.run_id, result,
                                       config_hash=self.frame_hash)
            except (ValueError, TypeError) as exc:
                # A result the store cannot take (a unit it does not know) is nothing stored.
                self.skip(night, frame, "store", str(exc))
                continue
            for stage, reason in result.problems:
                night.skipped.append(Skipped(frame, stage, reason))
                log.info("%s/%s [%s]: %s", night.name, frame, stage, reason)
            if not any(stage == "calibration" for stage, _ in result.problems):
                night.measured += 1
        phases = self.summary.phase_seconds
        phases["frames"] = phases.get("frames", 0.0) + time.perf_counter() - started

    def _export_night(self, night):
        folder = self.results / night.name
        for table, stage in NIGHT_TABLES.items():
            if stage not in self.frame_stages:
                continue
            path = self.store.write_ecsv(table, folder / f"{table}.ecsv", night=night.name)
            night.outputs.append(str(path))

    # -- the campaign ----------------------------------------------------------------------

    def campaign(self):
        """Export the lightcurve and run the campaign steps on the store's tables."""
        lightcurve = self.store.lightcurve()
        path = write_table_atomic(lightcurve, self.results / "lightcurve.ecsv")
        lightcurve.meta["path"] = str(path)
        self.summary.outputs.append(str(path))
        steps = run_campaign_steps(
            self.config, lightcurve, self.store.export_table("measurements"),
            self.store.export_table("nucleus"), self.results, echo=self.echo,
            sources=[f"campaign store {self.store.path}"])
        self.summary.skipped.extend(steps.skipped)
        self.summary.step_results = steps.results
        for name, written in steps.results.items():
            summary = getattr(written, "summary", None) if not isinstance(written, dict) \
                else written.get("summary")
            if summary:
                # The step's own account goes to the log whole; the screen gets its title.
                log.info("%s step:\n%s", name, summary)
                self.echo(f"{name}: {str(summary).splitlines()[0]} (full text in the log)")
            for path in _paths(written):
                self.summary.outputs.append(str(path))


def _paths(written):
    if written is None:
        return []
    if isinstance(written, (str, os.PathLike)):
        return [written] if os.path.isfile(written) else []
    if not isinstance(written, dict):
        written = {"path": getattr(written, "path", None)}
    found = []
    for key, value in written.items():
        if key == "summary":
            continue
        if isinstance(value, dict):
            found.extend(value.values())
        else:
            found.extend(value if isinstance(value, (list, tuple)) else [value])
    return [p for p in found if isinstance(p, (str, os.PathLike)) and os.path.isfile(p)]


def _open_log(results, run_id):
    folder = Path(results) / "logs"
    folder.mkdir(parents=True, exist_ok=True)
    path = folder / f"run-{run_id:04d}.log"
    handler = logging.FileHandler(path, encoding="utf-8")
    handler.setFormatter(logging.Formatter("%(asctime)s %(levelname)-7s %(message)s",
                                           "%Y-%m-%dT%H:%M:%S"))
    handler.setLevel(logging.DEBUG)
    return path, handler


def run_campaign(config, *, workers=None, scheduler=None, rerun=False, progress=True,
                 echo=print):
    """Reduce every night of a configuration into its campaign store.

    Parameters
    ----------
    config : dict
        As returned by :func:`photpipe.config.load_config`.
    workers : int, optional
        Local worker processes (default ``[run] workers``, else 1; 0 runs in this process).
    scheduler : str, optional
        Address of an existing Dask scheduler (default ``[run] scheduler``).
    rerun : bool, optional
        Measure again frames already measured with the same file content and configuration.
    progress : bool, optional
        Show progress bars.
    echo : callable, optional
        Where progress lines go (also written to the run's log file).

    Returns
    -------
    RunSummary

    Raises
    ------
    ConfigError
        If the configuration cannot be used (for example a bad ``[frames]`` mapping).
    StoreError
        If the campaign store is damaged.
    """
    started = time.perf_counter()
    run_settings = read_run(config)
    if workers is None and scheduler is None:
        scheduler = run_settings.scheduler
    if workers is None:
        workers = run_settings.workers
    names = [night_name(n) for n in config["night"]]
    duplicated = sorted({n for n in names if names.count(n) > 1})
    if duplicated:
        msg = (f"{config.get('_file', 'configuration')}: two [[night]] entries share the name "
               f"{duplicated[0]!r}; give one of them a 'name'")
        raise ConfigError(msg)

    results = Path(config["campaign"]["results"])
    results.mkdir(parents=True, exist_ok=True)
    store = CampaignStore(config["campaign"]["store"])
    text = config.get("_text", "")
    run_id = store.start_run(text, config_hash=hashlib.sha256(text.encode()).hexdigest())
    log_path, handler = _open_log(results, run_id)
    root = logging.getLogger("photpipe")
    old_level = root.level
    root.addHandler(handler)
    root.setLevel(logging.DEBUG)

    def say(line):
        log.info("%s", line)
        echo(line)

    runner = TaskRunner(workers=workers, scheduler=scheduler, progress=progress)
    summary = RunSummary(run_id=run_id, results=str(results), store=str(store.path),
                         log=str(log_path), where=runner.description)
    status = "failed"
    try:
        run = _Run(config, store, runner, summary, rerun=rerun, echo=say)
        summary.stages = list(FRAME_STAGES + CAMPAIGN_STEPS)
        say(f"run {run_id}: {len(config['night'])} night(s), tasks on {runner.description}")
        with runner:
            for entry in config["night"]:
                run.night(entry)
        run.campaign()
        status = "completed"
    except KeyboardInterrupt:
        status = "interrupted"
        raise
    finally:
        summary.status = status
        summary.seconds = time.perf_counter() - started
        summary.task_seconds = list(runner.task_seconds)
        summary.task_cpu_seconds = list(runner.task_cpu_seconds)
        summary.phase_seconds["workers start"] = runner.start_seconds
        summary.bytes_to_workers = runner.bytes_sent
        summary.bytes_from_workers = runner.bytes_received
        summary.worker_peak_mb = dict(runner.peak_memory_mb)
        summary.worker_memory_track = {pid: list(mb) for pid, mb in runner.memory_track.items()}
        store.end_run(run_id, status)
        log.info("summary\n%s", summary.format())
        store.close()
        root.removeHandler(handler)
        root.setLevel(old_level)
        handler.close()
    return summary
