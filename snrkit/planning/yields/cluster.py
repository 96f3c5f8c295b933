"""Chunks of a population as dask tasks: connecting, sizing, running, storing.

Why futures (``Client.submit`` + ``as_completed``) and not dask.dataframe
or dask.array: the chunks are whole generator blocks (or row ranges of a
file) that are independent and return a small table each; the command must
store each chunk the moment it finishes (so an interrupted run resumes) and
skip chunks already stored.  Futures give exactly that: one task per chunk
with a deterministic key, completion in any order, and the scheduler
re-running the task of a lost worker (a chunk has no state, so running it
again gives the same rows).  A dataframe would add partition metadata,
schema inference and a shuffle-capable graph that this job never uses.

The scheduler is, in order: the ``scheduler`` argument, the
:data:`SCHEDULER_ENV` environment variable, else a
``distributed.LocalCluster`` sized to the machine (one single-threaded worker
process per core, the memory shared equally).  ``"in-process"`` runs the
same chunk function in this process, one chunk after the other.
"""

import os

from ...errors import InputError
from ...units import parse_number
from .chunk import evaluate_chunk
from .store import COUNT_KEYS

__all__ = ["SCHEDULER_ENV", "IN_PROCESS", "LOCAL", "WORKER_CONFIG", "connect", "parse_memory",
           "worker_memory",
           "check_chunk_memory", "run_chunks", "chunk_task", "ENGINE_BYTES_PER_PLANET",
           "PROCESS_BASE_BYTES", "planets_per_pass", "FileChunk", "IN_FLIGHT_PER_WORKER"]

#: Environment variable naming the scheduler address (or ``local`` / ``in-process``).
SCHEDULER_ENV = "SNRKIT_SCHEDULER"
IN_PROCESS = "in-process"
LOCAL = "local"
#: Engine working memory per planet in one pass at R = 100 [bytes] (measured:
#: 2000 planets x 4 scenarios through the rank path peak at about 420 MB
#: resident against about 150 MB before the pass; benchmarks/bench_population.py
#: prints the peak per worker of a whole run).
ENGINE_BYTES_PER_PLANET = 150_000
#: Memory of a worker before any chunk: the imports, the opacity lattice
#: (bounded at 256 MB, see snrkit.atmosphere.analytic_kernel) and the tables.
PROCESS_BASE_BYTES = 500_000_000
#: dask settings of the workers we start.  The nanny's default environment
#: sets MALLOC_TRIM_THRESHOLD_, which fixes glibc's mmap threshold: every
#: large numpy temporary is then mapped and unmapped, and the engine runs 2-5
#: times slower (measured on a chunk of 3 generator blocks); None unsets it.
#: The workers' statistical profiler is off: it keeps a call tree per second
#: for the last hour, and the engine's deep stacks made a worker grow by about
#: 0.25 MB per second of work (measured: 182 -> 220 MB over 160 s with it,
#: flat without), up to about 0.9 GB after an hour: memory set by the run's
#: length instead of the chunk (the dashboard's profile page stays empty).
WORKER_CONFIG = {"distributed.nanny.pre-spawn-environ.MALLOC_TRIM_THRESHOLD_": None,
                 "distributed.worker.profile.enabled": False}
#: Chunks in flight per worker thread: tasks are sent as others finish, so a
#: file's chunks (read in this process) and the task graph stay bounded.
IN_FLIGHT_PER_WORKER = 2
_UNITS = {"b": 1, "kb": 1e3, "mb": 1e6, "gb": 1e9, "tb": 1e12, "kib": 2**10, "mib": 2**20,
          "gib": 2**30, "tib": 2**40}


def parse_memory(text, field="--chunk-memory"):
    """Bytes from ``"512 MB"``, ``"2GiB"`` or a number of bytes."""
    if isinstance(text, (int, float)) and not isinstance(text, bool):
        return float(parse_number(text, field, 1, 2**50))
    s = str(text).strip().lower().replace(" ", "")
    num = s.rstrip("abcdefghijklmnopqrstuvwxyz")
    unit = s[len(num):] or "b"
    try:
        value = float(num)
    except ValueError:
        value = None
    if value is None or unit not in _UNITS:
        raise InputError(field, text, "a size such as '512 MB' or '2 GiB' (B, kB, MB, GB, KiB, "
                         "MiB, GiB)")
    return float(parse_number(value * _UNITS[unit], field, 1, 2**50))


def planets_per_pass(chunk_bytes, resolution_bins_factor=1.0):
    """Planets per engine pass that fit in ``chunk_bytes`` beside the worker's base memory."""
    room = chunk_bytes - PROCESS_BASE_BYTES
    per = ENGINE_BYTES_PER_PLANET * max(resolution_bins_factor, 0.05)
    if room < per:
        raise InputError("--chunk-memory", f"{chunk_bytes / 1e6:.0f} MB",
                         f"at least {(PROCESS_BASE_BYTES + per) / 1e6:.0f} MB (a worker's base "
                         f"memory and one planet)")
    return int(min(room // per, 20000))


def _address(scheduler):
    text = str(scheduler).strip()
    if "://" not in text:
        text = "tcp://" + text
    host_port = text.split("://", 1)[1]
    host, _, port = host_port.rpartition(":")
    if not host or not port.isdigit() or not 0 < int(port) < 65536:
        raise InputError("--scheduler", scheduler, "a scheduler address HOST:PORT (or "
                         "tcp://HOST:PORT), 'local' or 'in-process'")
    return text


def connect(scheduler=None, workers=None, timeout=10.0):
    """A dask client for ``scheduler`` (see the module docstring).

    Returns
    -------
    (client, cluster)
        ``(None, None)`` for in-process; ``cluster`` is the LocalCluster this
        call started (close it after the client), else None.

    Raises
    ------
    InputError
        A malformed or unreachable address (one line naming it).
    """
    choice = scheduler or os.environ.get(SCHEDULER_ENV) or LOCAL
    if choice == IN_PROCESS:
        return None, None
    import logging
    from distributed import Client, LocalCluster
    if choice == LOCAL:
        import dask
        n = int(parse_number(workers or os.cpu_count() or 1, "--workers", 1, 1024, integer=True))
        with dask.config.set(WORKER_CONFIG):
            cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=True,
                                   dashboard_address=":0", silence_logs=logging.ERROR,
                                   env={"SNRKIT_THREADS": "1"})
        return Client(cluster), cluster
    address = _address(choice)
    try:
        client = Client(address, timeout=f"{float(timeout)}s")
    except (OSError, TimeoutError) as exc:
        raise InputError("--scheduler", choice, "the address of a running dask scheduler",
                         detail=f"no answer within {float(timeout):g} s: "
                                f"{type(exc).__name__}") from None
    return client, None


def worker_memory(client):
    """Smallest memory limit of the connected workers [bytes] (None when unlimited)."""
    limits = [w.get("memory_limit") or 0 for w in client.scheduler_info()["workers"].values()]
    limits = [x for x in limits if x > 0]
    return min(limits) if limits else None


def check_chunk_memory(client, chunk_bytes):
    """Refuse a chunk memory larger than the smallest worker's limit."""
    if client is None:
        return
    limit = worker_memory(client)
    if limit is not None and chunk_bytes > limit:
        raise InputError("--chunk-memory", f"{chunk_bytes / 1e9:.3g} GB",
                         f"at most the memory of one worker, {limit / 1e9:.3g} GB")


def chunk_task(source, seed, block, designs, settings):
    """One chunk: its rows (a Table, or made by ``source(seed, block)``), then the engine."""
    table = source(seed, block) if callable(source) else source
    return evaluate_chunk(table, designs, seed=seed, block=block, **settings)


class FileChunk:
    """Chunk ``index`` of a :class:`~snrkit.planning.population.stream.PopulationFile`,
    read and screened in the calling process by :meth:`load` when its task is sent."""

    def __init__(self, population_file, index):
        self.file, self.index = population_file, index

    def load(self):
        return self.file.chunk(self.index)


def _rows(source):
    """What a task receives: a Table, a callable run on the worker, or a loaded file chunk."""
    return source.load() if isinstance(source, FileChunk) else source


def run_chunks(chunks, designs, settings, client=None, store=None, done=None, progress=None,
               key_prefix="snrkit-yields"):
    """Run the chunks not yet done; store and count each as it finishes.

    Parameters
    ----------
    chunks : list of ((seed, block), source)
        ``source`` is a Table or a callable ``source(seed, block)``.
    designs, settings :
        Passed to :func:`evaluate_chunk` (through :func:`chunk_task`).
    client : distributed.Client, optional
        None runs the chunks in this process.
    store : RunStore, optional
        Where finished chunks go (None: counts only).
    done : dict, optional
        ``{(seed, block): counts}`` of chunks already stored (skipped).
    progress : callable, optional
        ``progress(done, total)`` after each chunk.

    Returns
    -------
    (dict, int)
        Counts of every chunk, and how many were computed now.
    """
    counts = dict(done or {})
    todo = [(k, src) for k, src in chunks if k not in counts]
    total = len(chunks)

    def finish(key, result):
        counts[key] = (store.write(*key, result) if store is not None else
                       {k: result[k] for k in COUNT_KEYS})
        if progress is not None:
            progress(len(counts), total)

    if client is None:
        for key, src in todo:
            finish(key, chunk_task(_rows(src), key[0], key[1], designs, settings))
        return counts, len(todo)
    from distributed import as_completed
    futures, pending = {}, iter(todo)
    window = IN_FLIGHT_PER_WORKER * max(sum(client.nthreads().values()), 1)

    def submit():
        item = next(pending, None)
        if item is None:
            return None
        key, src = item
        f = client.submit(chunk_task, _rows(src), key[0], key[1], designs, settings,
                          key=f"{key_prefix}-{key[0]}-{key[1]}", pure=False)
        futures[f] = key
        return f

    try:
        ac = as_completed([f for f in (submit() for _ in range(window)) if f is not None])
        for f in ac:
            finish(futures.pop(f), f.result())
            f.release()
            nxt = submit()
            if nxt is not None:
                ac.add(nxt)
    finally:
        client.cancel([f for f in futures if not f.done()])
    return counts, len(todo)
