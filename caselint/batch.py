"""Checking many case files: serially, in parallel processes, or on a Dask cluster.

Each case file is parsed once, here, and cases are grouped by the mesh they read (file
and read settings): a group is one task, whose worker reads (or takes from the mesh
cache, :mod:`caselint.cache`) each mesh once, under the run's memory limit, and checks all
the group's cases on it. Results come back in the order the cases were
given, whatever order the tasks finish in, so a parallel or distributed run's report is
byte-identical to the serial one's. Parallel and distributed workers judge waivers on the
parent's date.

- ``jobs=1`` (default): in this process, with the caller's plugin manager;
- ``jobs=N``: a :class:`concurrent.futures.ProcessPoolExecutor` of N fresh (spawned)
  processes;
- ``scheduler=ADDRESS``: the tasks are submitted to a running Dask distributed scheduler
  (``dask[distributed]``, imported only then). Workers build their plugin manager
  themselves (installed plugins, minus the blocked ones), so plugins registered by hand in
  this process are not seen there.
"""

from __future__ import annotations

import contextlib
import datetime as dt
import os
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING, Callable, Iterable

from caselint.errors import UsageError

if TYPE_CHECKING:
    import pluggy

    from caselint.cache import MeshCache
    from caselint.engine.registry import Registry
    from caselint.manifest.case import Case
    from caselint.model import CaseReport
    from caselint.partition.runners import PartitionRequest
    from caselint.partition.streaming import OnStream


#: How long to wait for a Dask scheduler to answer (a Dask time string).
CONNECT_TIMEOUT = "10s"


@dataclass(frozen=True)
class CaseOutcome:
    """One case of a batch: its report, or the message of the bad input that stopped it."""

    path: str
    report: "CaseReport | None" = None
    error: str | None = None
    #: what the user should know of how the case was checked, not yet told (a worker's
    #: note that it streamed the mesh)
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class _Task:
    """A group of cases sharing their mesh, with what a worker needs to check them."""

    indices: tuple[int, ...]
    paths: tuple[str, ...]
    cases: tuple["Case", ...]
    rule_sets: tuple[str, ...] | None
    blocked: tuple[str, ...]
    cache: "MeshCache | None"
    memory_limit: tuple[int | None, str] | None
    today: dt.date | None
    partitions: "PartitionRequest | None" = None


def _run_task(task: _Task, registry: "Registry | None" = None,
              on_stream: "OnStream | None" = None) -> list[tuple[int, CaseOutcome]]:
    """Check a task's cases, reading each mesh once (runs in a worker, or in process;
    ``on_stream``: see :func:`lint_batch`)."""
    from caselint import api
    from caselint.cache import MeshStore
    from caselint.engine.plugins import get_plugin_manager
    from caselint.engine.registry import Registry

    if registry is None:
        registry = Registry(get_plugin_manager(blocked=task.blocked))
    notes: list[str] = []
    store = MeshStore(task.cache, task.memory_limit, task.partitions,
                      on_stream if on_stream is not None else _noted(notes))
    extra = {} if task.today is None else {"today": task.today}
    out = []
    try:
        for index, path, case in zip(task.indices, task.paths, task.cases):
            try:
                report = api.lint_case(case, rule_sets=task.rule_sets, registry=registry,
                                       read_mesh=store.read, label=path, **extra)
                out.append((index, CaseOutcome(path, report=report, notes=tuple(notes))))
            except UsageError as exc:
                out.append((index, CaseOutcome(path, error=str(exc), notes=tuple(notes))))
            notes.clear()
        store.save()
    finally:
        store.close()           # also on Ctrl-C: streamed meshes' scratch folders go
    return out


def _noted(notes: list[str]) -> "OnStream":
    """An ``on_stream`` for a worker, which cannot tell the user: the note is kept in
    ``notes`` for the case's outcome, the steps are not shown."""
    @contextlib.contextmanager
    def noted(note: str, steps: int):
        notes.append(note)
        yield lambda n: None
    return noted


def _load_and_group(paths: list[str], registry: "Registry"
                    ) -> tuple[list[list[int]], dict[int, "Case"], dict[int, str]]:
    """Each case file parsed once; the indices of the readable ones grouped by the mesh they
    read (in order of first appearance), and the errors of the others."""
    from caselint.api import load_case

    groups: dict[object, list[int]] = {}
    cases: dict[int, "Case"] = {}
    errors: dict[int, str] = {}
    for i, path in enumerate(paths):
        try:
            case = load_case(path, registry=registry)
        except UsageError as exc:
            errors[i] = str(exc)
            continue
        spec = case.mesh
        key = (os.path.abspath(spec.file), repr(spec.scale_to_m), spec.tag_array,
               tuple(sorted(spec.tags.items())), spec.zone)
        cases[i] = case
        groups.setdefault(key, []).append(i)
    return list(groups.values()), cases, errors


def lint_batch(
    paths: Iterable[str | Path],
    *,
    rule_sets: Iterable[str] | None = None,
    pm: "pluggy.PluginManager | None" = None,
    registry: "Registry | None" = None,
    blocked: Iterable[str] = (),
    jobs: int = 1,
    scheduler: str | None = None,
    cache: "MeshCache | None" = None,
    memory_limit: tuple[int | None, str] | None = None,
    today: dt.date | None = None,
    progress: Callable[[int], None] | None = None,
    partitions: "PartitionRequest | None" = None,
    on_stream: "OnStream | None" = None,
) -> list[CaseOutcome]:
    """Check every case file; one outcome per path, in the order given.

    ``progress(n)`` is called as each group of n cases finishes. Internal errors in a
    worker are raised here; bad input becomes the outcome's ``error``. ``memory_limit`` (a
    :data:`caselint.mesh.limits.MemoryLimit`) holds for every mesh the workers read;
    ``partitions`` has each mesh analysed partition by partition (on its scheduler, if it
    names one). ``on_stream(note, steps)`` is told when a mesh too large for the limit is
    streamed (:mod:`caselint.partition.streaming`) in this process (jobs=1, no scheduler);
    a worker that streams one puts the note in the case's outcome (``notes``) instead.
    :raises UsageError: ``jobs`` below 1, or the Dask scheduler cannot be used.
    """
    from caselint.engine.plugins import get_plugin_manager
    from caselint.engine.registry import Registry

    if jobs < 1:
        raise UsageError(f"--jobs must be at least 1, got {jobs}")
    paths = [str(p) for p in paths]
    if registry is None:
        registry = Registry(pm if pm is not None else get_plugin_manager(blocked=tuple(blocked)))
    rule_sets = tuple(rule_sets) if rule_sets else None
    if today is None and (scheduler is not None or jobs > 1):
        today = dt.date.today()     # every worker judges waivers on the parent's date
    groups, cases, errors = _load_and_group(paths, registry)
    results: dict[int, CaseOutcome] = {i: CaseOutcome(paths[i], error=message)
                                       for i, message in errors.items()}
    if errors and progress is not None:
        progress(len(errors))
    tasks = [_Task(tuple(g), tuple(paths[i] for i in g), tuple(cases[i] for i in g),
                   rule_sets, tuple(blocked), cache, memory_limit, today, partitions)
             for g in groups]

    def collect(done: list[tuple[int, CaseOutcome]]) -> None:
        results.update(done)
        if progress is not None:
            progress(len(done))

    if scheduler is not None:
        _run_on_dask(scheduler, tasks, collect)
    elif jobs > 1 and len(tasks) > 1:
        import multiprocessing
        from concurrent.futures import ProcessPoolExecutor, as_completed

        # spawn: fresh interpreters, never a fork of a process running threads (the
        # progress bar's, a host application's)
        context = multiprocessing.get_context("spawn")
        from caselint.allocator import tune_allocator

        with ProcessPoolExecutor(max_workers=min(jobs, len(tasks)), mp_context=context,
                                 initializer=tune_allocator) as pool:
            futures = [pool.submit(_run_task, task) for task in tasks]
            for future in as_completed(futures):
                collect(future.result())
    else:
        for task in tasks:
            collect(_run_task(task, registry, on_stream))
    return [results[i] for i in range(len(paths))]


def _run_on_dask(address: str, tasks: list[_Task], collect) -> None:
    """Submit the tasks to the Dask scheduler at ``address`` and collect them as they finish."""
    try:
        from distributed import Client, as_completed
    except ImportError:
        raise UsageError("--scheduler needs Dask's distributed scheduler: pip install "
                         "'dask[distributed]'") from None
    try:
        client = Client(address, timeout=CONNECT_TIMEOUT)
    except (OSError, TimeoutError, ValueError) as exc:
        raise UsageError(f"cannot reach the Dask scheduler at {address}: "
                         f"{type(exc).__name__}: {exc}") from None
    try:
        futures = [client.submit(_run_task, task, pure=False) for task in tasks]
        for future in as_completed(futures):
            collect(future.result())
    finally:
        client.close()
