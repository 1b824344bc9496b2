"""Large studies on Dask distributed: the points are cut into chunks, each worker evaluates its chunks with
:func:`massmodel.studies.sweep.evaluate_chunk` (the function the single-process run uses) and sends back a few
numbers per point; the results come back in point order, so they equal the single-process run.

Dask is an optional extra (``pip install massmodel[cluster]``); it is imported only here, when used. Without a
scheduler address a local cluster is started on this machine and closed afterwards.
"""

from __future__ import annotations

import logging
from collections.abc import Mapping, Sequence
from typing import Any

import numpy as np
import numpy.typing as npt

from massmodel.core.errors import UsageError

from .sweep import CHUNK, Progress, Study, chunks, evaluate_chunk

__all__ = ["run_points_dask", "dask_available", "DaskRunner"]

FloatArray = npt.NDArray[np.float64]


def dask_available() -> str | None:
    """None when dask.distributed can be imported, else the reason it cannot."""
    try:
        import distributed  # noqa: F401
    except ImportError as exc:
        return f"dask.distributed is not installed ({exc}); install the extra: pip install 'massmodel[cluster]'"
    return None


def run_points_dask(study: Study, points: Sequence[Mapping[str, str]], progress: Progress | None = None,
                    chunk: int = CHUNK, address: str | None = None, workers: int = 2, processes: bool = True,
                    client: Any = None) -> tuple[FloatArray, FloatArray]:
    """Evaluate the points on a Dask cluster.

    Parameters
    ----------
    study : Study
    points : sequence of mapping
        Override maps, as :func:`massmodel.studies.sweep.grid_points` makes them.
    chunk : int
        Points per task.
    address : str, optional
        Scheduler address (``tcp://host:8786``); None starts a local cluster of ``workers`` workers.
    processes : bool
        Local cluster of processes (True) or of threads in this process (False).
    client : distributed.Client, optional
        An existing client to use (then ``address``, ``workers`` and ``processes`` are ignored).

    Raises
    ------
    ValueError
        Dask missing, or the scheduler cannot be reached; a point the model cannot be built at.
    """
    reason = dask_available()
    if reason is not None:
        raise UsageError(reason)
    from distributed import Client, LocalCluster, as_completed

    own: list[Any] = []
    try:
        if client is None:
            if address is None:
                # quiet workers: a task's error comes back through its future; the log would only add the
                # heartbeat noise of a cluster shutting down
                cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=processes,
                                       dashboard_address=None, silence_logs=logging.CRITICAL)
                own.append(cluster)
                client = Client(cluster)
            else:
                try:
                    client = Client(address, timeout="20s")
                except OSError as exc:
                    raise UsageError(f"--cluster {address}: cannot reach the Dask scheduler ({exc})") from None
            own.insert(0, client)
        pieces = chunks(points, chunk)
        scattered = client.scatter(study, broadcast=True)
        futures = [client.submit(evaluate_chunk, scattered, list(piece), pure=False) for piece in pieces]
        index = {f.key: i for i, f in enumerate(futures)}
        results: list[tuple[FloatArray, FloatArray] | None] = [None] * len(futures)
        done = 0
        for future in as_completed(futures):
            i = index[future.key]
            results[i] = future.result()
            done += len(pieces[i])
            if progress is not None:
                progress(done, len(points))
        if not results:
            ev = study.evaluator()
            from .outputs import select_outputs

            return np.empty((0, len(select_outputs(ev.base, study.outputs)))), np.empty((0, len(ev.base.rules)))
        return (np.concatenate([r[0] for r in results if r is not None]),
                np.concatenate([r[1] for r in results if r is not None]))
    finally:
        for thing in own:
            thing.close()


class DaskRunner:
    """A runner for :func:`massmodel.studies.sweep.sweep` that sends the points to Dask (arguments as
    :func:`run_points_dask`)."""

    def __init__(self, address: str | None = None, workers: int = 2, processes: bool = True, chunk: int = CHUNK,
                 client: Any = None) -> None:
        self.address, self.workers, self.processes, self.chunk, self.client = address, workers, processes, chunk, client

    def __call__(self, study: Study, points: Sequence[Mapping[str, str]], progress: Progress | None = None
                 ) -> tuple[FloatArray, FloatArray]:
        return run_points_dask(study, points, progress, self.chunk, self.address, self.workers, self.processes,
                               self.client)
