"""Checking a mesh larger than the memory limit: streamed, partition by partition, with its
whole-mesh arrays on disk.

When the estimate of a whole-mesh check (:func:`caselint.mesh.limits.choose_way`) is over
the memory limit and the mesh is of the face-based mesh folder format, a single folder or
a decomposed case with its addressing files, the mesh is not refused but *streamed*:

1. the mesh is read into whole-mesh arrays on disk (arrays of a
   :class:`~caselint.partition.scratch.Scratch`): a single folder one list file at a time
   (:mod:`caselint.mesh.formats.face_folder_disk`), a decomposed case one processor folder
   at a time (:mod:`caselint.mesh.formats.face_decomposed_disk`);
2. every per-cell and per-face quantity is computed partition by partition, one piece in
   memory at a time, and assembled into arrays on disk
   (:func:`caselint.partition.measure.analysed_in_partitions`); the partitions are runs
   of consecutive cell ids as large as the estimate leaves room for (whose faces lie
   together in the arrays on disk), on a cluster too (each piece sent to a worker);
3. the rules run on that :class:`~caselint.mesh.analysis.Mesh`, whose later results are
   kept on disk too.

The report is the one of the whole-mesh check, byte for byte (same arithmetic in the same
order: only where the arrays live changes). A mesh that cannot be streamed (a mesh file of
another format, a decomposed case without addressing files) is refused as before, the
message saying what would work.
"""

from __future__ import annotations

import contextlib
from pathlib import Path
from typing import Callable, ContextManager, Iterable, Iterator

from caselint.mesh.limits import (
    SCRATCH_BYTES_PER_CELL, STREAM_PIECE_BYTES_PER_CELL, MemoryLimit, MemoryWay, choose_way,
    memory_limit,
)

#: Called once when a mesh is streamed: ``(note, n_steps)`` -> a context manager yielding
#: ``advance(n)`` for the steps (folders read twice, then partitions analysed).
OnStream = Callable[[str, int], ContextManager[Callable[[int], None]]]

NO_ADDRESSING = ("its processor folders have no addressing files (pointProcAddressing, "
                 "faceProcAddressing, cellProcAddressing), without which the case cannot be "
                 "merged one folder at a time: decompose it again keeping them")


def mesh_way(path: str | Path, limit: MemoryLimit | None, zone: str | None = None
             ) -> MemoryWay:
    """Whole or streamed for the mesh at ``path`` (its region ``zone``) under ``limit``
    (:func:`caselint.mesh.limits.choose_way`); a mesh that is not a folder is always read
    whole (its reader checks the memory).

    :raises MeshReadError: the mesh fits neither way.
    """
    from caselint.errors import MeshReadError
    from caselint.mesh.formats.face_decomposed_disk import has_addressing
    from caselint.mesh.formats.face_folder import mesh_folder, processor_folders
    from caselint.mesh.formats.face_folder_disk import read_bytes_per_cell

    path = Path(path)
    limit = limit if limit is not None else memory_limit()
    if limit[0] is None:
        return MemoryWay("whole", "no memory limit")
    reader = "its reader checks the memory"
    if not path.is_dir():
        return MemoryWay("whole", f"a mesh file: {reader}")
    try:
        folder = mesh_folder(path, zone)
    except MeshReadError:                # e.g. several regions: the reader says which
        return MemoryWay("whole", reader)
    if folder is not None:
        return choose_way(str(path), [folder], limit,
                          reading_per_cell=read_bytes_per_cell(folder))
    folders = [p / "constant" / "polyMesh" for p in processor_folders(path)]
    if not folders:
        return MemoryWay("whole", f"not a face-based mesh folder: {reader}")
    return choose_way(str(path), folders, limit,
                      None if has_addressing(folders) else NO_ADDRESSING)


def streamed_mesh(path: str | Path, way: MemoryWay, scratch, *, scale_to_m: float = 1.0,
                  zone: str | None = None, readers=None, request=None,
                  run=None, on_stream: OnStream | None = None):
    """The mesh of the mesh folder or decomposed case ``path``, read and analysed streamed
    (module docstring), its arrays in ``scratch`` (refused first when ``way.scratch`` is
    more than its disk has free: :meth:`~caselint.partition.scratch.Scratch.check_room`);
    ``request`` the :class:`~caselint.partition.runners.PartitionRequest` of the run
    (default: runs of consecutive cell ids, as large as ``way`` allows),
    ``run`` the runner (default: one after the other here); ``on_stream`` is told once,
    with the reason, and of each step."""
    from caselint.mesh import read_mesh
    from caselint.mesh.formats.face_folder import mesh_folder, processor_folders
    from caselint.mesh.formats.face_folder_disk import READ_STEPS
    from caselint.partition.measure import analysed_in_partitions
    from caselint.partition.plan import by_cell_budget
    from caselint.partition.runners import serial

    if way.scratch is not None:          # refused before reading rather than part-way
        scratch.check_room(way.scratch, f"about {SCRATCH_BYTES_PER_CELL} bytes per cell, "
                                        "estimated from the mesh files", way.need)
    path = Path(path)
    single = mesh_folder(path, zone) is not None
    note = (f"{path}: checked partition by partition with its whole-mesh arrays on disk "
            f"({way.reason})")
    reads = READ_STEPS if single else 2 * len(processor_folders(path))   # folders: twice
    parts = request.count if request is not None else None
    if parts is None:                    # runs of cells as large as the estimate allows
        parts = (by_cell_budget(way.cells, way.part_cells).n_parts
                 if way.cells and way.part_cells else 1)
    bar = on_stream(note, reads + parts) if on_stream else contextlib.nullcontext(lambda n: None)
    with bar as advance:
        scratch.advance = advance        # the reader's steps
        # the memory of a part of the estimate's size (the largest folder's, or less) is
        # free while the mesh is read; not more (not the share the rules hold later: 13 GB
        # held besides the merged arrays' pages squeezed them out of memory at 100M cells;
        # 4 GB merged in the same time as 1.6 GB there)
        scratch.spare = STREAM_PIECE_BYTES_PER_CELL * way.piece_cells if way.piece_cells \
            else None
        mesh = read_mesh(path, scale_to_m=scale_to_m, zone=zone, readers=readers,
                         memory_limit=(None, "streamed"), scratch=scratch)
        if request is not None and request.count is not None:
            plan = request.plan(path, mesh.n_cells)
        else:
            # runs of consecutive cell ids, also on a cluster (cut here from the arrays on
            # disk, each sent to a worker). A mesh folder numbers its faces after their
            # owner cells, so a run's faces lie together in the arrays on disk and a piece
            # reads and writes few of their pages; a processor folder's cells are spread
            # over the whole numbering, and each piece would read back and rewrite every
            # page (a 100M-cell case in 64 slabs: 0.3 TB read, 1 TB written in the first
            # 20 minutes of its analysis by processor folders)
            plan = by_cell_budget(mesh.n_cells, way.part_cells or max(mesh.n_cells, 1))
        run = counted(serial if run is None else run, advance)
        return analysed_in_partitions(mesh.data, plan, run, scratch=scratch)


def counted(run: Callable, advance: Callable[[int], None]) -> Callable:
    """The runner ``run``, calling ``advance(1)`` as each item is done."""
    def counting(function: Callable, items: Iterable) -> Iterator:
        for result in run(function, items):
            advance(1)
            yield result
            del result              # not held while the next item is made
    return counting


__all__ = ["NO_ADDRESSING", "OnStream", "counted", "mesh_way",
           "streamed_mesh"]
