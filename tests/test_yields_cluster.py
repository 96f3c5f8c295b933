"""Yields on a real dask LocalCluster (2 worker processes) against the in-process engine.

One cluster serves every test of this module (module-scoped fixture, closed
at the end).  The population is the seeded generator's (about 10^4
transiting planets from 45 blocks of 4096 invented stars) for the equality
test, and its first 8 blocks (about 1800 planets) for the killed worker and
the resumed run; one design and one scenario at R = 10 keep the engine's
share of the test budget small.
"""

import logging
import os
import signal
import socket

import pytest

from snrkit.errors import InputError
from snrkit.planning.yields import population_yields

MODE = "cold6m-prism-lowres"
SETTINGS = dict(generate=45 * 4096, seed=11, mode=MODE, scenarios=["h2-metal-rich"],
                design_texts=["name=9m,aperture_m=9,hours=200"], resolution=10)
SMALL = {**SETTINGS, "generate": 8 * 4096}

pytestmark = pytest.mark.slow


@pytest.fixture(scope="module")
def cluster():
    import dask
    from distributed import LocalCluster
    from snrkit.planning.yields.cluster import WORKER_CONFIG
    with dask.config.set(WORKER_CONFIG):
        c = LocalCluster(n_workers=2, threads_per_worker=1, processes=True, memory_limit="3GB",
                         dashboard_address=":0", silence_logs=logging.CRITICAL,
                         env={"SNRKIT_THREADS": "1"})
    yield c
    c.close()


@pytest.fixture(scope="module")
def reference(tmp_path_factory):
    """The in-process engine's yields, in chunks of 8 blocks."""
    res = population_yields(**SETTINGS, scheduler="in-process", chunk_blocks=8,
                            out_dir=tmp_path_factory.mktemp("in_process"))
    assert 9000 < res["planets"] < 11000               # about 10^4 planets
    return res["dataset"]


@pytest.fixture(scope="module")
def small_reference():
    """The in-process yields of the first 8 blocks, in one chunk."""
    return population_yields(**SMALL, scheduler="in-process", chunk_blocks=8)["dataset"]


def _same(a, b):
    assert a["planet_class"].values.tolist() == b["planet_class"].values.tolist()
    assert (a["planets"].values == b["planets"].values).all()
    assert (a["reached"].values == b["reached"].values).all()
    assert (a["status_count"].values == b["status_count"].values).all()


def test_cluster_yield_equals_the_in_process_engine(cluster, reference, tmp_path):
    """Chunks of 3 blocks on 2 workers against chunks of 8 in process: identical counts."""
    notes = []
    res = population_yields(**SETTINGS, scheduler=cluster.scheduler_address, chunk_blocks=3,
                            out_dir=tmp_path / "run", notify=notes.append)
    _same(res["dataset"], reference)
    assert res["computed"] == res["chunks"] == 15
    assert notes and notes[0].startswith("dask dashboard: http")
    assert 0 < int(reference["reached"].sum()) < int(reference["planets"].sum())


def test_workers_keep_no_profile_history(cluster):
    # dask's statistical profiler keeps a call tree per second for an hour; with the engine's
    # deep stacks it grew a worker by ~0.25 MB/s, tying memory to run length (WORKER_CONFIG
    # turns it off; the cluster fixture starts its workers with that configuration)
    from distributed import Client
    with Client(cluster.scheduler_address) as client:
        _assert_no_profiler(client)


def _assert_no_profiler(client):
    """The workers' config says no profiler, and none of its periodic callbacks runs."""
    enabled = client.run(lambda: __import__("dask").config.get("distributed.worker.profile.enabled"))
    callbacks = client.run(lambda dask_worker: sorted(k for k in dask_worker.periodic_callbacks
                                                      if "profile" in k))
    assert set(enabled.values()) == {False}
    assert all(v == [] for v in callbacks.values()), callbacks


def test_the_local_cluster_snrkit_starts_has_no_profiler():
    # the product's own path (connect), not the fixture's copy of it
    from snrkit.planning.yields.cluster import connect
    client, cluster = connect("local", workers=1)
    try:
        _assert_no_profiler(client)
    finally:
        client.close()
        cluster.close()


def test_a_killed_worker_loses_no_chunk(cluster, small_reference, tmp_path):
    """SIGKILL a worker as soon as it holds chunks of the run: dask reruns them elsewhere."""
    import threading
    import time
    from distributed import Client
    killed = []
    with Client(cluster.scheduler_address) as client:
        pids = client.run(os.getpid)

        def watch():                       # bounded: 30 s at most, then gives up (test fails)
            for _ in range(3000):
                busy = {a: [k for k in keys if str(k).startswith("snrkit-yields")]
                        for a, keys in client.processing().items()}
                busy = {a: k for a, k in busy.items() if k}
                if busy:
                    address = sorted(busy)[0]
                    os.kill(pids[address], signal.SIGKILL)
                    killed.append((address, busy[address]))
                    return
                time.sleep(0.01)

        watcher = threading.Thread(target=watch)
        watcher.start()
        res = population_yields(**SMALL, scheduler=cluster.scheduler_address, chunk_blocks=1,
                                out_dir=tmp_path / "run")
        watcher.join()
    assert killed and killed[0][1]             # the killed worker held chunks of the run
    assert res["computed"] == res["chunks"] == 8
    _same(res["dataset"], small_reference)


def test_an_interrupted_run_resumes_from_its_stored_chunks(cluster, small_reference, tmp_path):
    class Stop(Exception):
        pass

    def stop_after_three(done, total):
        if done == 3:
            raise Stop

    with pytest.raises(Stop):
        population_yields(**SMALL, scheduler=cluster.scheduler_address, chunk_blocks=1,
                          out_dir=tmp_path / "run", progress=stop_after_three)
    stored = list((tmp_path / "run" / "planets").glob("chunk-*.parquet"))
    assert len(stored) == 3
    res = population_yields(**SMALL, scheduler=cluster.scheduler_address, chunk_blocks=1,
                            out_dir=tmp_path / "run")
    assert res["computed"] == res["chunks"] - 3 == 5
    _same(res["dataset"], small_reference)


def test_more_memory_per_chunk_than_a_worker_has_is_refused(cluster, capsys, tmp_path):
    from snrkit.cli import main
    rc = main(["yields", "--generate", "4096", "--mode", MODE, "--scheduler",
               cluster.scheduler_address, "--chunk-memory", "4 GB", "--out", str(tmp_path / "r")])
    err = capsys.readouterr().err
    assert rc == 2 and err.count("\n") == 1
    assert "--chunk-memory" in err and "3 GB" in err


def test_an_unreachable_scheduler_exits_2_naming_the_address(capsys, tmp_path):
    with socket.socket() as s:                  # a free loopback port nobody listens on
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    from snrkit.cli import main
    address = f"tcp://127.0.0.1:{port}"
    rc = main(["yields", "--generate", "4096", "--mode", MODE, "--scheduler", address,
               "--connect-timeout", "1", "--out", str(tmp_path / "r")])
    err = capsys.readouterr().err
    assert rc == 2 and err.count("\n") == 1 and address in err
    with pytest.raises(InputError, match="running dask scheduler"):
        population_yields(generate=4096, mode=MODE, scheduler=address, connect_timeout=1)


def test_bad_input_inside_a_worker_reaches_the_caller_as_input_error(cluster):
    """A row's unknown scenario raised in a worker arrives as the same one-line error."""
    from snrkit.planning.population import generate_block
    pop = generate_block(3, 0)[:5]
    pop["scenario"] = ["no-such-scenario"] * 5      # read by the worker, chunk by chunk
    with pytest.raises(InputError, match="scenario: got 'no-such-scenario'; allowed: a preset"):
        population_yields(pop, mode=MODE, resolution=10, scheduler=cluster.scheduler_address)


def test_a_file_population_streamed_to_the_cluster_equals_the_whole_table(cluster, tmp_path):
    """A CSV file sent in chunks of 37 rows (read and screened here, two in flight per
    worker) gives the yields of its whole table run in process in one chunk."""
    from snrkit.planning.population import generate_block, read_population
    path = tmp_path / "pop.csv"
    generate_block(11, 0).write(path, format="ascii.csv")
    kw = {k: v for k, v in SETTINGS.items() if k not in ("generate", "seed")}
    res = population_yields(path, **kw, scheduler=cluster.scheduler_address, chunk_planets=37)
    ref = population_yields(read_population(path), **kw, scheduler="in-process",
                            chunk_planets=10**6)
    assert res["chunks"] > 2 and ref["chunks"] == 1
    _same(res["dataset"], ref["dataset"])
