"""How the partitions of one mesh are analysed: here, one after the other, or as tasks of a
Dask distributed cluster; and how a run asks for it (``caselint check --partitions``).

A runner is a callable ``run(function, items)`` that yields ``function(item)`` for every
item, in any order, as each is done; ``items`` may be a generator, consumed only as work
can start, so that neither the items nor the results all need to be in memory at once. Each partition's task receives its piece (the cells it owns and their two rings,
:mod:`caselint.partition.piece`) and returns the quantities of what it owns; the client
assembles them. The results do not depend on the runner.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass
from pathlib import Path
from typing import Callable, Iterable, Iterator

from caselint.errors import UsageError
from caselint.partition.plan import Plan, by_cell_budget, by_processors, by_ranges

#: Cells per partition of ``--partitions auto`` on a mesh that is not decomposed.
AUTO_CELLS = 1_000_000

#: How long to wait for a Dask scheduler to answer (a Dask time string).
CONNECT_TIMEOUT = "10s"

#: An item heavier than this (its ``nbytes``: a piece cut by the client) is scattered to
#: the workers on its own rather than put into the task graph, which the scheduler copies.
SCATTER_BYTES = 1 << 20


def serial(function: Callable, items: Iterable) -> Iterator:
    """Each item in turn, in this process (the next item is made after the last is done)."""
    for item in items:
        result = function(item)
        del item                    # not held while the next item is made
        yield result
        del result                  # nor the result, once taken


class DaskRunner:
    """The items as tasks of the Dask distributed scheduler at ``address`` (connected on
    first use, closed by :meth:`close`)."""

    def __init__(self, address: str) -> None:
        self.address = address
        self._client = None

    def _connect(self):
        if self._client is None:
            try:
                from distributed import Client
            except ImportError:
                raise UsageError("--scheduler needs Dask's distributed scheduler: pip install "
                                 "'dask[distributed]'") from None
            try:
                self._client = Client(self.address, timeout=CONNECT_TIMEOUT)
            except (OSError, TimeoutError, ValueError) as exc:
                raise UsageError(f"cannot reach the Dask scheduler at {self.address}: "
                                 f"{type(exc).__name__}: {exc}") from None
        return self._client

    def __call__(self, function: Callable, items: Iterable) -> Iterator:
        from distributed import as_completed

        client = self._connect()
        # a window of tasks in flight, two per worker thread: the client holds that many
        # pieces, not all of them, and the workers never wait for the next one
        window = max(2, 2 * sum(client.nthreads().values()))
        items = iter(items)
        running = as_completed([_submit(client, function, item)
                                for item in itertools.islice(items, window)])
        for future in running:
            yield future.result()
            future.release()
            for item in itertools.islice(items, 1):
                running.add(_submit(client, function, item))

    def hold(self, function: Callable, items: Iterable) -> list:
        """``function(item)`` for every item, computed and kept on the workers: one future
        each, which tasks take in place of the value (Dask hands it to them there)."""
        client = self._connect()
        return [_submit(client, function, item) for item in items]

    def close(self) -> None:
        """Disconnect from the scheduler (the cluster keeps running)."""
        if self._client is not None:
            self._client.close()
            self._client = None


def _submit(client, function: Callable, item):
    """``function(item)`` as a task; a heavy item (:data:`SCATTER_BYTES`) scattered first,
    the task given its future."""
    if getattr(item, "nbytes", 0) > SCATTER_BYTES:
        item = client.scatter(item, hash=False)
    return client.submit(function, item, pure=False)


@dataclass(frozen=True)
class PartitionRequest:
    """What ``--partitions`` asked for: ``count`` ranges of cells, or ``auto`` (None): the
    processor folders of a decomposed case, else ranges of at most :data:`AUTO_CELLS`
    cells; with ``scheduler`` the partitions run on that Dask scheduler."""

    count: int | None = None
    scheduler: str | None = None

    @classmethod
    def parse(cls, text: str, scheduler: str | None = None) -> "PartitionRequest":
        """From the option's value: a whole number of at least 1, or ``auto``."""
        if text.strip().lower() == "auto":
            return cls(None, scheduler)
        try:
            count = int(text)
        except ValueError:
            count = 0
        if count < 1:
            raise UsageError(f"--partitions takes a whole number of at least 1 or 'auto', "
                             f"got {text!r}")
        return cls(count, scheduler)

    def plan(self, path: str | Path, n_cells: int) -> Plan:
        """The split of the mesh read from ``path`` into partitions."""
        if self.count is not None:
            return by_ranges(n_cells, self.count)
        from caselint.mesh.formats.face_folder import mesh_folder, processor_folders

        path = Path(path)
        if path.is_dir() and mesh_folder(path, None) is None and processor_folders(path):
            return by_processors(path)           # a decomposed case: its processor folders
        return by_cell_budget(n_cells, AUTO_CELLS)

    def runner(self) -> Callable[[Callable, list], list]:
        """The runner to use (close it with :func:`close_runner`)."""
        return serial if self.scheduler is None else DaskRunner(self.scheduler)


def hold(run: Callable, function: Callable, items: Iterable) -> list:
    """``function(item)`` for every item, kept where ``run`` runs its tasks: the values
    themselves here, futures on a Dask cluster (:meth:`DaskRunner.hold`). Tasks of ``run``
    take what this returns as they would take the values."""
    if isinstance(run, DaskRunner):
        return run.hold(function, items)
    return [function(item) for item in items]


def close_runner(run: Callable) -> None:
    """Close a runner that holds a connection."""
    if isinstance(run, DaskRunner):
        run.close()


__all__ = ["AUTO_CELLS", "DaskRunner", "PartitionRequest", "close_runner", "hold", "serial"]
