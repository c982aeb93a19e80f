"""A single face-based mesh folder read into arrays on disk, one list file at a time.

The same arrays as :func:`caselint.mesh.formats.face_folder.read_folder_mesh` (the same
parsers and checks, value for value), for a folder too large to hold in memory with
everything a check builds on it (:mod:`caselint.partition.streaming`). Each list is parsed
in memory as usual, copied into an array made by ``scratch`` (a
:class:`caselint.partition.scratch.Scratch`: memory-mapped files), and let go with its
file's bytes before the next file is read: the read peaks at the largest list (the faces:
offsets and point ids) with its file, not at every list and file at once. Ids (face points,
owner, neighbour) are stored as int32 where they fit, as
:func:`caselint.mesh.build.mesh_from_faces` stores them, so that they are not converted in
memory afterwards; face offsets stay int64.

The streamed check then analyses the mesh in ranges of consecutive cell ids
(:func:`caselint.partition.plan.by_cell_budget`), the folder's own numbering.
"""

from __future__ import annotations

from pathlib import Path
from typing import Callable

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh.formats.face_folder import FolderMesh, read_folder_mesh
from caselint.mesh.formats.face_lists import open_list_head

#: Steps of the read told to ``done``: the points, faces, owner and neighbour lists.
READ_STEPS = 4
#: Private memory of the read while one list is in memory, per cell (charged per cell or
#: per three faces, as :func:`caselint.mesh.limits.choose_way` charges): the largest list
#: with its file's bytes (the faces; in ASCII also the parser's copies of the text).
#: Measured once (peak ``RssAnon``, sampled every 2 ms, of a fresh process reading a
#: 314k-hexahedron folder on disk, over the same process before the read): binary 112
#: bytes a cell with the numpy parser, 116 with the compiled one (188 with the 23 MB of
#: its import, a fixed cost), ASCII 427 and 291; rounded up, with room for a gzip file's
#: compressed bytes.
READ_BYTES_PER_CELL = {"binary": 150, "ascii": 500}

_IDS = ("face_points", "owner", "neighbour")
_STEPS = ("points", "face_points", "owner", "neighbour")
_INT32 = np.iinfo(np.int32)


def read_on_disk(folder: Path, scratch, done: Callable[[int], None] | None = None
                 ) -> FolderMesh:
    """The arrays of the mesh folder ``folder`` made by ``scratch`` (module docstring);
    ``done(1)`` is told as each of the :data:`READ_STEPS` lists is read.

    :raises MeshReadError: as :func:`~caselint.mesh.formats.face_folder.read_folder_mesh`.
    """
    def keep(name: str, array: np.ndarray) -> np.ndarray:
        if name in _IDS and array.dtype.itemsize > 4 and len(array) \
                and _INT32.min <= int(array.min()) and int(array.max()) <= _INT32.max:
            out = scratch.empty(name, array.shape, np.int32)
            out[...] = array                     # cast in buffered blocks, no full copy
        else:
            out = scratch.keep_large(name, array)
        if done is not None and name in _STEPS:
            done(1)
        return out

    return read_folder_mesh(folder, keep)


def read_bytes_per_cell(folder: Path) -> int:
    """:data:`READ_BYTES_PER_CELL` of the folder's faces file (ASCII when its header
    cannot be read: the larger charge; the reader names the fault)."""
    try:
        binary = open_list_head(folder, "faces").binary
    except MeshReadError:
        binary = False
    return READ_BYTES_PER_CELL["binary" if binary else "ascii"]


__all__ = ["READ_BYTES_PER_CELL", "READ_STEPS", "read_bytes_per_cell", "read_on_disk"]
