"""Where chunks run: the local engine (a thread pool) and the dask engine (a cluster)."""

from __future__ import annotations

from collections.abc import Callable, Sequence

from ..errors import SettingError
from .evaluation import ChunkResult, evaluate_chunk
from .plan import SweepPlan

__all__ = ["run_chunks"]


def run_chunks(
    plan: SweepPlan,
    chunks: Sequence[int],
    on_result: Callable[[ChunkResult], None],
    *,
    curves: bool = False,
    engine: str = "local",
    scheduler: str | None = None,
    workers: int | None = None,
    connect_timeout: float = 10.0,
    threads: int | None = None,
) -> None:
    """Evaluate ``chunks`` of ``plan`` and hand each result to ``on_result`` as it completes.

    Parameters
    ----------
    plan : SweepPlan
    chunks : sequence of int
        Chunk numbers to evaluate.
    on_result : callable
        Called once per finished chunk (in completion order) in the calling process; this
        is where results are stored.
    curves : bool
        Keep the concentration curves.
    engine : {"local", "dask"}
        ``local``: in this process (several chunks at once on a thread pool).  ``dask``:
        each chunk is a task on a Dask distributed cluster: the one at ``scheduler``, or a
        local cluster of worker processes started for this run.
    scheduler : str, optional
        Address of a running Dask scheduler (``tcp://host:8786``); only with ``dask``.
    workers : int, optional
        Worker processes of the local cluster (default: the number of CPUs).
    connect_timeout : float
        Seconds to wait for the scheduler at ``scheduler`` [s].
    threads : int, optional
        Local engine: chunks evaluated at the same time by a pool of threads (numpy
        releases the interpreter lock in its array loops); default: the number of CPUs,
        at most the number of chunks.  ``1`` evaluates them one after another.

    Raises
    ------
    kinetics.errors.SettingError
        Unknown engine, ``dask`` not installed, scheduler unreachable.

    Notes
    -----
    Workers of a remote cluster need this package installed in the same version.  Results
    are identical whatever the engine: every chunk is evaluated by the same code on the
    same inputs.
    """
    chunks = list(chunks)
    if engine == "local":
        if scheduler is not None:
            raise SettingError(
                "a scheduler needs engine='dask'", "pass engine='dask' or leave out scheduler"
            )
        _run_local(plan, chunks, on_result, curves, threads)
        return
    if engine != "dask":
        raise SettingError(f"unknown engine {engine!r}", "use engine='local' or engine='dask'")
    client, cluster = _dask_client(scheduler, workers, connect_timeout)
    try:
        _run_dask(client, plan, chunks, on_result, curves)
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def _run_local(
    plan: SweepPlan, chunks: list[int], on_result, curves: bool, threads: int | None
) -> None:
    """Evaluate the chunks in this process, on ``threads`` threads (default: every CPU)."""
    import os

    n = threads if threads is not None else (os.cpu_count() or 1)
    if isinstance(n, bool) or not isinstance(n, int) or n < 1:
        raise SettingError(
            f"the number of threads must be a whole number >= 1, not {n!r}", "e.g. 2"
        )
    n = min(n, len(chunks))
    if n <= 1:
        for k in chunks:
            on_result(evaluate_chunk(plan, k, curves))
        return
    _run_threads(plan, chunks, on_result, curves, n)


def _run_threads(plan: SweepPlan, chunks: list[int], on_result, curves: bool, n: int) -> None:
    """Evaluate the chunks on ``n`` threads, at most ``n`` at a time, results as they come.

    An interruption cancels the chunks not started.
    """
    from concurrent.futures import FIRST_COMPLETED, ThreadPoolExecutor, wait

    todo = iter(chunks)
    with ThreadPoolExecutor(max_workers=n, thread_name_prefix="kinetics-sweep") as pool:
        running = set()
        try:
            for k in todo:
                running.add(pool.submit(evaluate_chunk, plan, k, curves))
                if len(running) >= n:
                    done, running = wait(running, return_when=FIRST_COMPLETED)
                    for f in done:
                        on_result(f.result())
            while running:
                done, running = wait(running, return_when=FIRST_COMPLETED)
                for f in done:
                    on_result(f.result())
        except BaseException:
            for f in running:
                f.cancel()
            raise


def _dask_client(scheduler: str | None, workers: int | None, timeout: float = 10.0):
    try:
        from dask.distributed import Client, LocalCluster
    except ImportError:
        raise SettingError(
            "the dask engine needs the optional dependency dask[distributed]",
            'install it with pip install "stepwise-kinetics[dask]"',
        ) from None
    if scheduler is not None:
        try:
            return Client(scheduler, timeout=f"{timeout}s"), None
        except (OSError, TimeoutError) as exc:
            raise SettingError(
                f"cannot reach the Dask scheduler at {scheduler!r} ({exc})",
                "check the address (e.g. tcp://host:8786) and that the scheduler runs",
            ) from None
    import os

    n = workers or os.cpu_count() or 1
    cluster = LocalCluster(
        n_workers=n, processes=True, threads_per_worker=1, dashboard_address=None
    )
    return Client(cluster), cluster


def _run_dask(client, plan: SweepPlan, chunks: list[int], on_result, curves: bool) -> None:
    from dask.distributed import as_completed

    if not chunks:
        return
    remote_plan = client.scatter(plan, broadcast=True)
    futures = [
        client.submit(
            evaluate_chunk, remote_plan, k, curves, key=f"kinetics-chunk-{k}-{id(plan)}", pure=False
        )
        for k in chunks
    ]
    try:
        for future in as_completed(futures):
            on_result(future.result())
            future.release()
    finally:
        for f in futures:
            f.cancel()
