"""Where variants are evaluated: this process, local processes, or a Dask cluster.

Every backend evaluates the same fixed chunks of variants (their size depends on the
number of variants only, never on the backend or the number of workers) with the same
function, :func:`~noisebudget.trade.evaluate.evaluate`, so the results are identical bit
for bit whichever runs them. The model is sent to each worker once.

Local processes start with the ``forkserver`` method where the platform has it (a clean
process that imports the package, rather than a fork of a parent that may hold threads),
else ``spawn``; they ignore SIGINT so that an interrupt reaches only the main process,
which keeps the finished chunks. Dask is imported only when a cluster is asked for.
"""

from __future__ import annotations

import math
import multiprocessing
import os
import signal
import warnings

import numpy as np

from ..checks import ArgumentError
from ..errors import ModelRangeWarning
from .evaluate import TradeModel, evaluate

__all__ = ["Engine", "chunk_size", "chunks"]

_MODEL: TradeModel | None = None   # the model of a worker process
_CATEGORIES = {c.__name__: c for c in (ModelRangeWarning, RuntimeWarning, UserWarning)}


def chunk_size(n: int) -> int:
    """Variants per chunk for ``n`` variants: about 8 chunks (work for a few processes),
    1 to 256 variants each (a chunk is one batch of the transmission kernels,
    :mod:`noisebudget.batch`, whose cost per variant falls with the batch: the demo
    sidewall's CPU time per variant is about 10 % lower in batches of 256 than of 64)."""
    return max(1, min(256, math.ceil(n / 8)))


def chunks(n: int, size: int, done=None) -> list[tuple[int, int]]:
    """``(start, stop)`` of every chunk of ``n`` variants not yet entirely ``done``."""
    out = []
    for start in range(0, n, size):
        stop = min(start + size, n)
        if done is None or not np.all(done[start:stop]):
            out.append((start, stop))
    return out


def _init_worker(model: TradeModel) -> None:
    global _MODEL
    signal.signal(signal.SIGINT, signal.SIG_IGN)
    _MODEL = model


def _chunk(model: TradeModel, start: int, x: np.ndarray):
    """Evaluate one chunk; its warnings travel back as text, to be shown once by the
    main process (a worker's standard error is not the user's)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        ev = evaluate(model, x)
    return start, ev, tuple(dict.fromkeys((w.category.__name__, str(w.message))
                                          for w in caught))


def _local_chunk(start: int, x: np.ndarray):
    return _chunk(_MODEL, start, x)


class Engine:
    """Evaluates chunks of variants on the chosen backend (a context manager).

    Parameters
    ----------
    model : TradeModel
    workers : int or None
        Local processes (None: one per core). 1 evaluates in this process.
    cluster : str or None
        ``"tcp://HOST:PORT"`` of a running Dask scheduler, or ``"local"`` to start a
        local Dask cluster of ``workers`` processes. Workers need noisebudget installed.
    cluster_options : dict
        Extra arguments for ``distributed.LocalCluster`` with ``cluster="local"`` (tests
        use ``{"processes": False}``).
    """

    def __init__(self, model: TradeModel, workers: int | None = None,
                 cluster: str | None = None, cluster_options: dict | None = None):
        self.model = model
        self.workers = workers if workers is not None else (os.cpu_count() or 1)
        if isinstance(self.workers, bool) or not isinstance(self.workers, int) \
                or self.workers < 1:
            raise ArgumentError(f"workers = {self.workers!r}: need at least 1")
        self.cluster = cluster
        self.cluster_options = cluster_options or {}
        self._pool = self._client = self._local = self._model_future = None
        self._warned: set = set()

    def __enter__(self):
        if self.cluster is not None:
            self._start_dask()
        elif self.workers > 1:
            from concurrent.futures import ProcessPoolExecutor

            methods = multiprocessing.get_all_start_methods()
            ctx = multiprocessing.get_context("forkserver" if "forkserver" in methods
                                              else "spawn")
            if ctx.get_start_method() == "forkserver":
                ctx.set_forkserver_preload(["noisebudget.trade.evaluate"])
            self._pool = ProcessPoolExecutor(self.workers, mp_context=ctx,
                                             initializer=_init_worker,
                                             initargs=(self.model,))
        return self

    def _start_dask(self):
        try:
            import distributed
        except ImportError:
            raise ArgumentError("cluster: Dask is not installed (pip install "
                                "'noisebudget[cluster]')") from None
        if self.cluster == "local":
            options = {"n_workers": self.workers, "threads_per_worker": 1,
                       "host": "127.0.0.1", "dashboard_address": None}
            options.update(self.cluster_options)
            if not options.get("processes", True):
                options.pop("host")  # threads in this process talk in-process, no sockets
            self._local = distributed.LocalCluster(**options)
            self._client = distributed.Client(self._local)
        elif self.cluster.startswith("tcp://"):
            try:
                self._client = distributed.Client(self.cluster, timeout="20s")
            except OSError as exc:
                raise ArgumentError(f"cluster = {self.cluster!r}: cannot reach the Dask "
                                    f"scheduler ({exc})") from None
        else:
            raise ArgumentError(f"cluster = {self.cluster!r}: expected tcp://HOST:PORT or "
                                "'local'")
        self._model_future = self._client.scatter(self.model, broadcast=True, hash=False)

    def __exit__(self, *exc):
        self.close()
        return False

    def close(self) -> None:
        """Stop the workers; unfinished chunks are dropped."""
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
            self._pool = None
        if self._client is not None:
            self._client.close()
            self._client = None
        if self._local is not None:
            self._local.close()
            self._local = None

    def map(self, x: np.ndarray, spans):
        """Evaluate the chunks ``spans`` of the variants ``x``; yields ``(start,
        Evaluated)`` in the order the chunks finish. Warnings of the workers are issued
        here, each distinct one once."""
        for start, ev, caught in self._results(x, spans):
            for category, message in caught:
                if (category, message) not in self._warned:
                    self._warned.add((category, message))
                    warnings.warn(message, _CATEGORIES.get(category, UserWarning),
                                  stacklevel=2)
            yield start, ev

    def _results(self, x, spans):
        if self._client is not None:
            import distributed

            futures = [self._client.submit(_chunk, self._model_future, a, x[a:b],
                                           pure=False) for a, b in spans]
            try:
                for fut in distributed.as_completed(futures):
                    yield fut.result()
            finally:
                for fut in futures:
                    fut.cancel()
            return
        if self._pool is not None:
            from concurrent.futures import as_completed

            futures = [self._pool.submit(_local_chunk, a, x[a:b]) for a, b in spans]
            try:
                for fut in as_completed(futures):
                    yield fut.result()
            finally:
                for fut in futures:
                    fut.cancel()
            return
        for a, b in spans:
            yield _chunk(self.model, a, x[a:b])
