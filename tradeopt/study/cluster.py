"""Where the pieces of a study run: in this process, on a local dask cluster, or on an existing one.

One helper for every command that scales out (``simulate``, ``sweep``):

* neither ``workers`` nor ``scheduler``: the pieces run one after the other in this process
  (no cluster is started; the fastest choice for small studies);
* ``workers=N``: a ``distributed.LocalCluster`` of N single-threaded worker processes bound to
  the loopback address, with no dashboard, started and closed around the study;
* ``scheduler="tcp://host:port"``: a client of a cluster started beforehand with dask's own
  ``dask scheduler`` and ``dask worker`` commands (the workers must have tradeopt installed).

Results come back in the order of the pieces whatever the number of workers, and each piece
must be a pure function of its arguments (its own seed included), so the answer does not depend
on where or in which order the pieces ran. A worker lost mid-run has its pieces re-run by the
dask scheduler on another worker (up to dask's ``distributed.scheduler.allowed-failures``).
"""
from __future__ import annotations

import contextlib
import logging
import uuid
from collections.abc import Callable, Iterator, Sequence
from typing import Any

from ..inputs.errors import InputError

__all__ = ["ExecutionOptions", "check_execution_options", "study_client", "run_pieces", "MAX_WORKERS",
           "SCHEDULER_TIMEOUT_S"]

#: Largest number of local worker processes accepted by ``--workers``.
MAX_WORKERS = 256
#: How long to wait for an existing scheduler before giving up [s].
SCHEDULER_TIMEOUT_S = 10.0


class ExecutionOptions:
    """Validated ``--workers`` / ``--scheduler`` options (at most one of them is set).

    Attributes
    ----------
    workers : int or None
        Local worker processes to start (None: none).
    scheduler : str or None
        Address of an existing dask scheduler (None: none).
    timeout_s : float
        Time allowed to reach the scheduler [s].
    """

    __slots__ = ("workers", "scheduler", "timeout_s")

    def __init__(self, workers: int | None = None, scheduler: str | None = None,
                 timeout_s: float = SCHEDULER_TIMEOUT_S) -> None:
        self.workers = workers
        self.scheduler = scheduler
        self.timeout_s = timeout_s

    @property
    def label(self) -> str:
        """A short description of where the pieces run (for summaries)."""
        if self.scheduler is not None:
            return f"dask cluster at {self.scheduler}"
        if self.workers is not None:
            return f"local dask cluster of {self.workers} worker process{'es' if self.workers != 1 else ''}"
        return "this process"


def check_execution_options(*, workers: int | None = None, scheduler: str | None = None,
                            timeout_s: float | None = None) -> ExecutionOptions:
    """Validate the execution options of a study.

    Parameters
    ----------
    workers : int, optional
        Local worker processes [-], 1 to :data:`MAX_WORKERS`.
    scheduler : str, optional
        Address of an existing dask scheduler, e.g. ``tcp://10.0.0.5:8786``.
    timeout_s : float, optional
        Time allowed to reach the scheduler [s], > 0; default :data:`SCHEDULER_TIMEOUT_S`.

    Returns
    -------
    ExecutionOptions

    Raises
    ------
    InputError
        Both options given, a number of workers out of range, or an empty address.
    """
    if workers is not None and scheduler is not None:
        raise InputError("give --workers N (a local cluster) or --scheduler ADDRESS (an existing one), not both",
                         where="option --workers")
    if workers is not None:
        if isinstance(workers, bool) or not isinstance(workers, int) or not 1 <= workers <= MAX_WORKERS:
            raise InputError(f"expected a whole number of worker processes from 1 to {MAX_WORKERS}, got {workers!r}",
                             where="option --workers")
    if scheduler is not None:
        scheduler = str(scheduler).strip()
        if not scheduler:
            raise InputError("expected a scheduler address such as tcp://127.0.0.1:8786", where="option --scheduler")
        if "://" not in scheduler:
            scheduler = "tcp://" + scheduler
    if timeout_s is None:
        timeout_s = SCHEDULER_TIMEOUT_S
    if not timeout_s > 0:
        raise InputError(f"expected a positive timeout in seconds, got {timeout_s!r}", where="option --scheduler")
    return ExecutionOptions(workers=workers, scheduler=scheduler, timeout_s=float(timeout_s))


@contextlib.contextmanager
def study_client(options: ExecutionOptions) -> Iterator[Any]:
    """A dask.distributed ``Client`` for the options, or None to run in this process.

    A local cluster binds to 127.0.0.1 only, has no dashboard, one thread per worker process
    (the pieces are numpy-heavy and hold the GIL between calls), and is closed on exit.

    Raises
    ------
    InputError
        The scheduler cannot be reached within ``options.timeout_s``.
    """
    if options.workers is None and options.scheduler is None:
        yield None
        return
    from distributed import Client, LocalCluster  # noqa: PLC0415

    quiet = logging.getLogger("distributed")
    level = quiet.level
    quiet.setLevel(logging.ERROR)
    try:
        if options.scheduler is not None:
            try:
                client = Client(options.scheduler, timeout=options.timeout_s, set_as_default=False)
            except (OSError, TimeoutError) as exc:
                raise InputError(f"cannot reach the dask scheduler within {options.timeout_s:g} s "
                                 f"({type(exc).__name__}); start one with 'dask scheduler' and "
                                 "'dask worker ADDRESS', or use --workers N for a local cluster",
                                 where=f"option --scheduler {options.scheduler}") from None
            with client:
                yield client
            return
        cluster = LocalCluster(n_workers=options.workers, threads_per_worker=1, processes=True,
                               host="127.0.0.1", dashboard_address=None, silence_logs=logging.ERROR)
        with cluster, Client(cluster, set_as_default=False) as client:
            yield client
    finally:
        quiet.setLevel(level)


def run_pieces(function: Callable[..., Any], pieces: Sequence[Any], *, client: Any = None,
               on_done: Callable[[int, int], None] | None = None, shared: Any = None) -> list[Any]:
    """Run ``function(piece, shared)`` for every piece and return the results in the order of ``pieces``.

    Parameters
    ----------
    function : callable
        A module-level (picklable) pure function of ``(piece, shared)``.
    pieces : sequence
        The pieces of work (picklable).
    client : distributed.Client, optional
        From :func:`study_client`; None runs the pieces here, one after the other.
    on_done : callable, optional
        Called as ``on_done(done, total)`` after each piece finishes (progress display).
    shared : object, optional
        Read-only data every piece needs (scattered once to the workers).

    Returns
    -------
    list
        ``[function(p, shared) for p in pieces]``, whatever the number of workers.
    """
    total = len(pieces)
    if client is None:
        out = []
        for k, piece in enumerate(pieces):
            out.append(function(piece, shared))
            if on_done is not None:
                on_done(k + 1, total)
        return out
    from distributed import as_completed  # noqa: PLC0415

    shared_future = client.scatter(shared, broadcast=True) if shared is not None else None
    run = uuid.uuid4().hex
    futures = [client.submit(function, piece, shared_future, pure=False, key=f"tradeopt-piece-{k}-{run}")
               for k, piece in enumerate(pieces)]
    index = {f.key: k for k, f in enumerate(futures)}
    results: list[Any] = [None] * total
    done = 0
    for future in as_completed(futures, loop=client.loop):
        results[index[future.key]] = future.result()
        done += 1
        if on_done is not None:
            on_done(done, total)
    return results
