"""Optional batch backend: run the per-file ``solve`` job on a Dask cluster.

For archives larger than one machine handles, the same job the process pool
runs (:func:`dxf2frame.pipeline.solve_file`) is handed to Dask's distributed
scheduler instead of a home-made one.  It is an optional extra::

    pip install 'dxf2frame[dask]'
    dxf2frame solve 'archive/**/*.dxf' --scheduler tcp://scheduler:8786
    dxf2frame solve 'revisions/*.dxf' --scheduler local     # in-process cluster

Every worker needs dxf2frame installed and must see the input files and the
output folder at the same paths (a shared file system).  One file is one
task; a task that raises (a worker lost, say) comes back as an
``"internal error"`` outcome, so one file never stops the batch.
"""
from __future__ import annotations

import uuid
from pathlib import Path
from typing import Iterator, Sequence

from .errors import Dxf2FrameError
from .pipeline import EXIT_INTERNAL, FileOutcome, SolveRequest, solve_file

__all__ = ["DaskMissingError", "INSTALL_HINT", "solve_on_dask", "failed_outcome"]

INSTALL_HINT = "install the dask extra: pip install 'dxf2frame[dask]'"


class DaskMissingError(Dxf2FrameError):
    """``--scheduler`` was given but Dask's distributed package is not installed."""


def _client(scheduler: str):
    """A ``dask.distributed.Client`` and the local cluster it owns (or None)."""
    try:
        from distributed import Client, LocalCluster
    except ImportError:
        raise DaskMissingError(f"--scheduler needs Dask's distributed scheduler; {INSTALL_HINT}") from None
    if scheduler == "local":
        # threads in this process: one worker, one thread (the writers use
        # matplotlib, which is not thread-safe)
        cluster = LocalCluster(processes=False, n_workers=1, threads_per_worker=1,
                               dashboard_address=None)
        return Client(cluster), cluster
    try:
        return Client(scheduler, timeout="20s"), None
    except (OSError, TimeoutError, ValueError) as exc:
        raise Dxf2FrameError(f"cannot reach the Dask scheduler at {scheduler!r}: {exc}") from None


def solve_on_dask(files: Sequence[Path | str], req: SolveRequest, scheduler: str) -> Iterator[tuple[int, FileOutcome]]:
    """Solve every file on a Dask cluster; yields ``(index in files, outcome)``
    as each finishes (in completion order).

    ``scheduler``: a scheduler address (``"tcp://host:8786"``) or ``"local"``
    for an in-process cluster.  Raises :class:`DaskMissingError` when the
    ``dask`` extra is missing.  The client (and a local cluster) is closed
    when the iterator is exhausted or closed.
    """
    client, cluster = _client(scheduler)
    from distributed import as_completed

    run = uuid.uuid4().hex[:12]  # keys unique per run: a shared scheduler never hands back old results
    try:
        futures = [client.submit(solve_file, str(f), req, key=f"dxf2frame-solve-{run}-{i}")
                   for i, f in enumerate(files)]
        index = {fut.key: i for i, fut in enumerate(futures)}
        for fut in as_completed(futures):
            i = index[fut.key]
            try:
                out = fut.result()
            except Exception as exc:  # noqa: BLE001 - a worker died or the task failed
                out = failed_outcome(files[i], exc)
            yield i, out
    finally:
        client.close()
        if cluster is not None:
            cluster.close()


def failed_outcome(source: Path | str, exc: BaseException) -> FileOutcome:
    """The outcome of a drawing whose task failed on the cluster.  Dask
    itself runs a task again when its worker dies (the scheduler's
    ``allowed-failures``, 3 by default); ``KilledWorker`` means it killed
    every worker it was given, which is reported as the local pool reports
    a killed worker."""
    if type(exc).__name__ == "KilledWorker":
        return FileOutcome(
            str(source), "worker killed", EXIT_INTERNAL,
            "the Dask workers solving this drawing were killed (perhaps for lack of memory) each time it was "
            "tried; nothing was written for it, the other drawings were solved")
    return FileOutcome(str(source), "internal error", EXIT_INTERNAL, f"{type(exc).__name__}: {exc}")
