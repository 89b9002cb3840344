"""Where the portfolio's tasks run: a plain loop in this process, a Dask cluster in this
process (threads, nothing to set up), or an existing Dask cluster at an address.

Every runner calls the same task functions on the same inputs and hands each result to
the caller with its item number, so what is computed never depends on the runner, the
number of workers or the order in which results arrive.

BLAS (the linear algebra under numpy) sums in an order that depends on its thread count,
which would change the last bits of a result between a laptop and a worker. The tasks
therefore run with one BLAS thread wherever they are (:func:`one_blas_thread`), and the
caller holds its own process to one while a run lasts (:func:`blas_held_to_one`).
"""

from __future__ import annotations

import contextlib
import logging
import os

from lcoe.inputs.errors import ScenarioError

CONNECT_TIMEOUT_S = 10


_CONTROLLER = None


def _controller():
    """threadpoolctl's view of the thread pools loaded in this process (built once: slow)."""
    global _CONTROLLER
    if _CONTROLLER is None:
        from threadpoolctl import ThreadpoolController
        _CONTROLLER = ThreadpoolController()
    return _CONTROLLER


def one_blas_thread() -> None:
    """Hold this process's BLAS to one thread (a task calls this first). A worker process
    is ours for the run, so the limit stays; in the caller's own process it is already one."""
    blas = _controller().select(user_api="blas")
    if any(i.get("num_threads", 1) != 1 for i in blas.info()):
        blas.limit(limits=1)


@contextlib.contextmanager
def blas_held_to_one():
    """One BLAS thread in this process while the block runs, restored afterwards."""
    with _controller().limit(limits=1, user_api="blas"):
        yield


class Plain:
    """A plain loop in this process, no Dask."""

    mode = "plain"
    address = None

    @property
    def workers(self) -> int:
        return 1

    def map(self, fn, shared, items, sink) -> None:
        for i in items:
            sink(i, fn(shared, i))

    def close(self) -> None:
        pass

    def describe(self) -> dict:
        return {"mode": self.mode, "workers": self.workers, "scheduler": None}

    def __enter__(self):
        return self

    def __exit__(self, *exc):
        self.close()


class DaskRunner(Plain):
    """Tasks on a Dask cluster: ``shared`` is sent to every worker once, then one task per item."""

    def __init__(self, client, cluster=None, mode: str = "scheduler", address: str | None = None):
        self.client, self.cluster, self.mode, self.address = client, cluster, mode, address

    @property
    def workers(self) -> int:
        return len(self.client.scheduler_info(n_workers=-1)["workers"])

    def map(self, fn, shared, items, sink) -> None:
        from distributed import as_completed
        items = list(items)
        if not items:
            return
        [shared_f] = self.client.scatter([shared], broadcast=True, hash=False)
        futures = [self.client.submit(fn, shared_f, i, pure=False) for i in items]
        where = {f.key: i for f, i in zip(futures, items)}
        try:
            for fut, result in as_completed(futures, with_results=True):
                sink(where[fut.key], result)
                fut.release()
        finally:
            for f in futures:
                f.release()
            shared_f.release()

    def close(self) -> None:
        self.client.close()
        if self.cluster is not None:
            self.cluster.close()

    def describe(self) -> dict:
        return {"mode": self.mode, "workers": self.workers, "scheduler": self.address}


def default_workers() -> int:
    return max(1, min(os.cpu_count() or 1, 8))


def local(workers: int | None = None) -> DaskRunner:
    """A Dask cluster inside this process: ``workers`` single-threaded workers (default: one per
    core), talking in memory (no network port is opened, no dashboard)."""
    from distributed import Client, LocalCluster
    from distributed.comm import inproc
    # the in-memory transport names its addresses after this machine's IP, which it would look
    # up with a socket aimed at a public address; this machine's loopback name does as well
    if getattr(inproc.global_manager, "_ip", "") is None:
        inproc.global_manager._ip = "127.0.0.1"
    n = default_workers() if workers is None else int(workers)
    if n < 1:
        raise ScenarioError("must be >= 1", key="--workers", value=n)
    # a task's error comes back to the caller (a bad input as its one line): the workers do not log it
    cluster = LocalCluster(n_workers=n, threads_per_worker=1, processes=False, dashboard_address=None,
                           silence_logs=logging.CRITICAL)
    return DaskRunner(Client(cluster), cluster, mode="local")


def remote(address: str, timeout_s: float = CONNECT_TIMEOUT_S) -> DaskRunner:
    """A client of the Dask scheduler at ``address`` (``tcp://host:port`` or ``host:port``)."""
    from distributed import Client
    text = str(address).strip()
    if not text or any(c.isspace() for c in text):
        raise ScenarioError("must be a scheduler address such as tcp://127.0.0.1:8786", key="--scheduler",
                            value=address)
    try:
        client = Client(text, timeout=f"{timeout_s}s")
    except (OSError, TimeoutError, ValueError) as exc:
        why = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise ScenarioError(f"cannot reach a Dask scheduler there ({why[:120]})", key="--scheduler",
                            value=address) from None
    try:
        client.wait_for_workers(1, timeout=timeout_s)
    except (OSError, TimeoutError):
        client.close()
        raise ScenarioError(f"the Dask scheduler there has no workers (waited {timeout_s:g} s)",
                            key="--scheduler", value=address) from None
    return DaskRunner(client, None, mode="scheduler", address=text)
