import logging
import os

import pytest
from astropy import units as u

from photpipe.campaign import TaskError, TaskRunner, run_tasks

from . import _toys


def test_inline_results_and_errors_per_item():
    out = dict(run_tasks(_toys.fail_on_three, range(6), workers=0, progress=False))
    assert [out[i] for i in (0, 1, 2, 4, 5)] == [0, 1, 2, 4, 5]
    err = out[3]
    assert isinstance(err, TaskError)
    assert err.kind == "ValueError"
    assert str(err) == "ValueError: item 3 is bad"
    assert isinstance(err.original, ValueError)
    assert "fail_on_three" in err.details


def test_warnings_are_logged_not_raised(caplog):
    # pytest turns warnings into errors; the runner records them per item instead.
    with caplog.at_level(logging.WARNING, logger="photpipe.campaign"):
        out = dict(run_tasks(_toys.warn_and_return, [7], workers=0, progress=False,
                             label=lambda x: f"frame{x}"))
    assert out == {7: 7}
    assert "frame7: PoorResultWarning: item 7 is poor" in caplog.text


def test_shared_data_reaches_every_task():
    out = dict(run_tasks(_toys.add_shared, [1, 2], workers=0, progress=False,
                         shared={"offset": 10}))
    assert out == {1: 11, 2: 12}


def test_memory_is_tracked_after_each_task():
    with TaskRunner(workers=0, progress=False) as runner:
        list(runner.map(_toys.add_shared, [1, 2, 3], shared={"offset": 0}))
    [(pid, track)] = runner.memory_track.items()
    assert len(track) == 3
    assert track == sorted(track)                     # a peak never falls
    assert runner.peak_memory_mb[pid] == track[-1]


def test_unpicklable_exception_is_described():
    (_, err), = run_tasks(_toys.raise_unpicklable, [1], workers=0, progress=False)
    assert err.kind == "Unpicklable" and err.original is None
    assert err.message == "cannot travel"


@pytest.mark.parametrize("workers", [
    pytest.param(-1, id="negative"), pytest.param(1.5, id="fraction")])
def test_bad_worker_count(workers):
    with pytest.raises(ValueError, match="'workers' must be a whole number >= 0"):
        TaskRunner(workers=workers)


@pytest.mark.slow
def test_local_cluster_streams_results_and_survives_a_dead_worker():
    items = list(range(6))
    with TaskRunner(workers=2, progress=False) as runner:
        out = dict(runner.map(_toys.die_on_two, items))
        again = dict(runner.map(_toys.add_shared, [1, 2], shared={"offset": 5}))
        (_, total), = runner.map(_toys.quantity_sum, [{"length": 1 * u.km}],
                                 shared={"offset": 500 * u.m})
    assert {k: v for k, v in out.items() if k != 2} == {0: 0, 1: 1, 3: 3, 4: 4, 5: 5}
    assert isinstance(out[2], TaskError) and out[2].kind == "KilledWorker"
    assert "worker process died" in out[2].message
    assert again == {1: 6, 2: 7}
    assert total.unit == u.km and total.value == 1.5
    assert len(runner.peak_memory_mb) >= 1


@pytest.mark.slow
def test_workers_started_in_the_background_run_the_tasks():
    # start_soon returns at once; the work done meanwhile does not wait for the processes
    with TaskRunner(workers=1, progress=False) as runner:
        runner.start_soon()
        runner.start_soon()                      # a second call starts nothing more
        local = sum(range(1000))
        out = dict(runner.map(_toys.add_shared, [1, 2], shared={"offset": local}))
        names = ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MALLOC_TRIM_THRESHOLD_")
        [(_, env)] = runner.map(_toys.environment, [names])
    assert out == {1: 1 + local, 2: 2 + local}
    # one thread per numerical library; glibc's allocator left as in this process (a trim
    # threshold set in the environment turns off its moving mmap threshold; glibc mallopt(3))
    assert env["OMP_NUM_THREADS"] == env["OPENBLAS_NUM_THREADS"] == "1"
    assert env["MALLOC_TRIM_THRESHOLD_"] == os.environ.get("MALLOC_TRIM_THRESHOLD_")
    assert runner._client is None and runner._starting is None     # closed


def test_start_soon_without_workers_runs_inline():
    with TaskRunner(workers=0, progress=False) as runner:
        runner.start_soon()
        assert [r for _, r in runner.map(abs, [-3])] == [3]


@pytest.mark.slow
def test_existing_scheduler_gives_the_same_results():
    from distributed import LocalCluster

    with LocalCluster(n_workers=1, threads_per_worker=1, processes=True,
                      dashboard_address=":0", silence_logs=logging.ERROR) as cluster:
        remote = dict(run_tasks(_toys.fail_on_three, range(5), scheduler=cluster.scheduler_address,
                                progress=False))
    local = dict(run_tasks(_toys.fail_on_three, range(5), workers=0, progress=False))
    assert {k: v for k, v in remote.items() if k != 3} == {k: v for k, v in local.items()
                                                            if k != 3}
    assert str(remote[3]) == str(local[3]) == "ValueError: item 3 is bad"


def test_unreachable_scheduler_is_named():
    with pytest.raises(ConnectionError, match="tcp://127.0.0.1:9"):
        TaskRunner(scheduler="tcp://127.0.0.1:9", connect_timeout=1.0).open()
