"""Pieces that the tasks read themselves from the processor folders of a decomposed case.

A decomposed face-based mesh-folder case (``processor<N>/constant/polyMesh`` with the
addressing files: the original id of each local point, face and cell) lies on storage the
client and the workers share. Instead of cutting a piece and sending its arrays, the
client sends a task a :class:`Stored`: the absolute paths of the processor folders that
hold the piece's cells (the partition's own and those of its two rings, found from the
whole mesh the client has read), which cells it owns (its processor, or a range of ids)
and the few names the whole mesh gives its groups and zones. The task reads those folders
(:func:`read_stored`), joins them in the original numbering, restricted to the faces whose
two sides it has, and cuts the piece from that. Cells, faces and points keep their
relative order, every face of an owned or ring-1 cell is there with both its cells, and
the shapes of those cells are found from the same faces, so the piece equals the one cut
from the whole mesh, to the bit (``tests/test_partition_stored.py``).

Where the tasks cannot do this (a single-file mesh, a decomposed case without addressing
files, whose numbering depends on every part; a one-cell-thick case read as 2-D; a
multi-region case), :func:`stored_pieces` returns None and the client cuts and sends the
pieces (:func:`caselint.partition.piece.cut_here`).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

import numpy as np

from caselint.errors import MeshReadError
from caselint.mesh import kernels
from caselint.mesh.build import mesh_from_faces
from caselint.mesh.formats.face_decomposed import cell_processors
from caselint.mesh.formats.face_folder import (
    FolderMesh, mesh_folder, processor_folders, read_folder_mesh,
)
from caselint.mesh.formats.face_lists import find_file, open_list_file, read_labels
from caselint.mesh.model import MeshData
from caselint.mesh.readers import checked_points
from caselint.mesh.shapes import with_shapes
from caselint.mesh.topology import CellFaces, cell_faces
from caselint.partition.piece import Piece, Pieces, cells_across, cut_piece, faces_of
from caselint.partition.plan import Plan

#: The files giving each local point, face and cell its original id.
ADDRESSING = ("pointProcAddressing", "faceProcAddressing", "cellProcAddressing")


@dataclass(frozen=True)
class Stored:
    """What a task needs to read its piece (see the module docstring): ``folders`` the
    (processor number, absolute path) of each processor folder to read; ``owned``
    ``("processor", N)`` or ``("range", first, stop)``; the rest as the whole mesh has it."""

    index: int
    folders: tuple[tuple[int, str], ...]
    owned: tuple
    name: str
    group_names: tuple[str, ...]
    group_types: dict
    zone_names: tuple[str, ...] | None
    scale_to_m: float
    whole_cells: int


def stored_pieces(path, data: MeshData, plan: Plan, cf: CellFaces,
                  scale_to_m: float = 1.0) -> Pieces | None:
    """The pieces of ``plan`` as tasks that read them from the processor folders of the
    decomposed case ``path`` (read as ``data``, cell-face lists ``cf``), or None where
    they cannot (module docstring)."""
    path = Path(path).resolve()              # the tasks must not depend on the client's cwd
    if data.dim != 3 or not path.is_dir() or mesh_folder(path, None) is not None:
        return None
    procs = processor_folders(path)
    if not procs or any(find_file(p / "constant" / "polyMesh", name) is None
                        for p in procs for name in ADDRESSING):
        return None
    labels = cell_processors(path)
    if plan.order is None:
        owned = [("range", int(plan.offsets[k]), int(plan.offsets[k + 1]))
                 for k in range(plan.n_parts)]
    elif plan.n_parts == len(procs) and np.array_equal(plan.labels(), labels):
        owned = [("processor", k) for k in range(plan.n_parts)]
    else:
        return None
    zones = data.zone_names if data.cell_zone is not None else None
    items = [Stored(k, tuple((int(p), str(procs[p])) for p in
                             _processors_needed(data, cf, labels, plan.cells(k))),
                    owned[k], data.path, tuple(data.group_names), dict(data.group_types),
                    zones, float(scale_to_m), data.n_cells)
             for k in range(plan.n_parts)]
    return Pieces(lambda: iter(items), read_stored)


def _processors_needed(data: MeshData, cf: CellFaces, labels: np.ndarray,
                       owned: np.ndarray) -> np.ndarray:
    """The processors holding a cell of the piece of ``owned``: the cells across the faces
    of the owned cells and of ring 1 (:func:`caselint.partition.piece.cut_piece`)."""
    is_owned = np.zeros(data.n_cells, dtype=bool)
    is_owned[owned] = True
    ring1 = cells_across(data, faces_of(cf, owned))
    ring1 = ring1[~is_owned[ring1]]
    cells = cells_across(data, faces_of(cf, np.concatenate([owned, ring1])))
    return np.unique(labels[cells])


def read_stored(item: Stored) -> Piece:
    """The piece ``item`` describes, read from its processor folders (a task, run where
    the folders are seen at the same paths as on the client)."""
    parts = []
    for number, folder in item.folders:
        mesh_dir = Path(folder) / "constant" / "polyMesh"
        try:
            if not mesh_dir.is_dir():
                raise MeshReadError(str(mesh_dir), "no such folder")
            part = read_folder_mesh(mesh_dir)
            parts.append((number, part, _addressing(mesh_dir, part)))
        except (OSError, MeshReadError) as exc:
            detail = exc.message if isinstance(exc, MeshReadError) else (exc.strerror or exc)
            raise MeshReadError(str(mesh_dir), (
                f"partition {item.index}'s task cannot read this processor folder where it "
                f"runs ({detail}): the Dask workers must see the case at the same path as "
                "the client, on storage they share with it")) from None
    with kernels.decided_for(item.whole_cells):
        sub, cells, faces, points = _joined(item, parts)
        if item.owned[0] == "processor":
            ids = next(a[2] for n, _, a in parts if n == item.owned[1])
            owned = np.searchsorted(cells, np.sort(ids))
        else:
            owned = np.arange(*np.searchsorted(cells, item.owned[1:]))
        piece = cut_piece(sub, cell_faces(sub), owned, item.index)
    return Piece(piece.index, piece.data, cells[piece.cells], faces[piece.faces],
                 points[piece.points], piece.owned_cells, piece.owned_faces, item.whole_cells)


def _addressing(folder: Path, part: FolderMesh) -> tuple[np.ndarray, ...]:
    """The part's original point ids, face ids (signed, plus one) and cell ids."""
    out = []
    for name, n in zip(ADDRESSING, (len(part.points), len(part.owner), part.n_cells)):
        lf = open_list_file(folder, name)
        values, _ = read_labels(lf, lf.start, name)
        if len(values) != n:
            raise MeshReadError(lf.name, f"{len(values)} entries for the {n} items of this part")
        out.append(values.astype(np.int64))
    return tuple(out)


def _joined(item: Stored, parts: list) -> tuple[MeshData, np.ndarray, np.ndarray, np.ndarray]:
    """The parts joined in the original numbering, restricted to the faces whose cells they
    all hold, and the original ids of its cells, faces and points (ascending)."""
    cells = np.sort(np.concatenate([a[2] for _, _, a in parts]))
    kept, turned = [], []
    for _, part, (point_ids, face_ids, cell_ids) in parts:
        face = np.abs(face_ids) - 1
        is_kept = face_ids > 0
        owner = cell_ids[part.owner]
        # -1: boundary; -2: a processor face, its neighbour from the part that holds it turned
        neighbour = np.where(part.neighbour >= 0, cell_ids[np.maximum(part.neighbour, 0)], -1)
        group = np.full(len(face), -1, dtype=np.int32)
        for patch in part.patches:
            span = slice(patch.start, patch.start + patch.size)
            if patch.type == "processor":
                neighbour[span] = -2
            else:
                group[span] = item.group_names.index(patch.name)
        rows = np.flatnonzero(is_kept)
        sizes = np.diff(part.face_offsets)[rows]
        fp = point_ids[part.face_points[np.repeat(part.face_offsets[rows], sizes)
                                        + _ramp(sizes)]]
        kept.append((face[rows], owner[rows], neighbour[rows], group[rows], sizes, fp))
        turned.append((face[~is_kept], owner[~is_kept]))
    face, owner, neighbour, group, sizes = (np.concatenate([k[i] for k in kept])
                                            for i in range(5))
    starts = np.concatenate([[0], np.cumsum(sizes)[:-1]])
    fp = np.concatenate([k[5] for k in kept])
    other_face = np.concatenate([t[0] for t in turned])
    other_cell = np.concatenate([t[1] for t in turned])
    order = np.argsort(other_face)
    other_face, other_cell = other_face[order], other_cell[order]
    pending = np.flatnonzero(neighbour == -2)
    at = np.minimum(np.searchsorted(other_face, face[pending]), max(len(other_face) - 1, 0))
    found = (other_face[at] == face[pending]) if len(other_face) else np.zeros(0, bool)
    neighbour[pending[found]] = other_cell[at[found]]
    keep = np.flatnonzero(neighbour != -2)                   # faces with both their cells
    keep = keep[np.argsort(face[keep])]
    faces = face[keep]
    sizes = sizes[keep]
    global_fp = fp[np.repeat(starts[keep], sizes) + _ramp(sizes)]
    points = np.unique(global_fp)
    coords = np.zeros((len(points), 3))
    for _, part, (point_ids, _, _) in parts:      # by processor: the last one's coordinates
        at = np.searchsorted(points, point_ids)
        there = at < len(points)
        there[there] = points[at[there]] == point_ids[there]
        coords[at[there]] = part.points[there]
    offsets = np.zeros(len(faces) + 1, dtype=np.int64)
    np.cumsum(sizes, out=offsets[1:])
    nbr = neighbour[keep]
    cell_zone = None
    if item.zone_names is not None:
        cell_zone = np.full(len(cells), -1, dtype=np.int32)
        for _, part, (_, _, cell_ids) in parts:
            for zone, members in part.zones:
                cell_zone[np.searchsorted(cells, cell_ids[members])] = \
                    item.zone_names.index(zone)
    sub = mesh_from_faces(
        path=item.name, points=checked_points(item.name, coords, item.scale_to_m), dim=3,
        face_offsets=offsets, face_points=np.searchsorted(points, global_fp),
        owner=np.searchsorted(cells, owner[keep]),
        neighbour=np.where(nbr >= 0, np.searchsorted(cells, np.maximum(nbr, 0)), -1),
        n_cells=len(cells), face_group=group[keep], group_names=item.group_names,
        group_types=item.group_types, cell_zone=cell_zone,
        zone_names=item.zone_names or ())
    return with_shapes(sub), cells, faces, points


def _ramp(sizes: np.ndarray) -> np.ndarray:
    """0 .. size-1 for each size, concatenated."""
    return np.arange(int(sizes.sum())) - np.repeat(np.cumsum(sizes) - sizes, sizes)


__all__ = ["ADDRESSING", "Stored", "read_stored", "stored_pieces"]
