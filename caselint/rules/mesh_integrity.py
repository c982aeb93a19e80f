"""Built-in mesh-integrity rules: damage that a mesh file can carry without being unreadable.

- ``duplicate-points``: points at the same place used by different cells. Cells on either
  side of a "seam" of duplicated points share no face, so the solver sees two walls there
  (a crack) unless the seam is a deliberate baffle.
- ``non-manifold-faces``: faces shared by more than two cells (overlapping or duplicated
  cells); a finite-volume face has exactly one cell on each side.
- ``disconnected-pieces``: the cells form several pieces with no face between them; no flow
  passes from one to another.
- ``unmatched-boundary-elements``: boundary elements of the file (triangles, quads or edges
  in a named group) that lie on no face of any volume cell: they are ignored, so the
  boundary condition meant for them is applied nowhere.
- ``open-cells``: cells whose faces do not close (their outward area vectors do not sum to
  zero): a face is missing or listed with the wrong cell, as a face-based file can have.
- ``degenerate-faces``: faces with fewer than three distinct points (3-D) or an edge of one
  point (2-D): no area, no normal.

Inverted and zero-volume cells are the business of ``inverted-cells`` (mesh_quality).
Everything is vectorised: grouping by sorted keys, and connected pieces by hooking and
pointer jumping over the owner-neighbour pairs (no loop over cells or faces).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint import hookimpl
from caselint.mesh.kernels import compiled
from caselint.mesh.geometry import chunks
from caselint.mesh.topology import cells_of_points
from caselint.model import MAX_LISTED_IDS, Limits, Measurement, Note, Rule, RuleResult, Where
from caselint.rulekit import RuleContext, finite_point, first_cells, plural
from caselint.rulekit.meshview import cells_using, face_point_ids, used_points

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh

#: Points closer than this fraction of the mesh's largest extent count as coincident: far
#: below any cell size, only round-off of the same coordinates.
COINCIDENCE = 1e-12
_DEFINITION = "definition of a finite-volume face (one owner and one neighbour cell)"


# -- measurements --------------------------------------------------------------------------


def coincident_points(mesh: "Mesh") -> tuple[np.ndarray, int]:
    """Ids of used points sharing their place with another used point, and the number of
    extra copies (a point present three times gives three ids and two copies)."""
    ids = np.flatnonzero(mesh.used_points())
    if ids.size < 2:
        return np.empty(0, dtype=np.int64), 0
    kernel = compiled("face_checks", mesh.n_cells)
    if kernel is not None:       # the same box and keys, without point-long temporaries
        lo, hi = kernel.point_box(mesh.points, ids)
    else:
        pts = mesh.points[ids]
        lo, hi = pts.min(axis=0), pts.max(axis=0)
    span = float(np.max(hi - lo))
    if span == 0.0:
        return ids, int(ids.size - 1)          # every point at one place
    # Relative to the lower corner, rounded to COINCIDENCE * span: at most 1e12, fits int64.
    if kernel is not None:
        flagged, copies = kernel.coincident(kernel.quantized(mesh.points, ids, lo,
                                                             COINCIDENCE * span))
        return ids[flagged], int(copies)
    q = np.floor((pts - lo) / (COINCIDENCE * span) + 0.5).astype(np.int64)
    order = np.lexsort((q[:, 2], q[:, 1], q[:, 0]))
    sq = q[order]
    same = np.all(sq[1:] == sq[:-1], axis=1)
    flagged = np.zeros(ids.size, dtype=bool)
    flagged[order[1:][same]] = True
    flagged[order[:-1][same]] = True
    return np.sort(ids[flagged]), int(np.count_nonzero(same))


def cell_pieces(mesh: "Mesh") -> np.ndarray:
    """(C,) label of each cell's connected piece (the lowest cell id in it), joined through
    internal faces: hook each root onto the smaller root across a face, then pointer-jump."""
    # int32 ids where they fit: half the memory, and on a large mesh first touches of new
    # memory cost as much as the arithmetic (benchmarks/README.md)
    dtype = np.int32 if mesh.n_cells < 2**31 else np.int64
    kernel = compiled("face_checks", mesh.n_cells)
    if kernel is not None:           # union-find: the same labels
        return kernel.cell_pieces(mesh.owner, mesh.neighbour, mesh.n_internal, mesh.n_cells,
                                  np.empty(0, dtype=dtype))
    label = np.arange(mesh.n_cells, dtype=dtype)
    owner, neighbour = mesh.owner, mesh.neighbour
    inner = neighbour >= 0
    a_cells = np.empty(int(np.count_nonzero(inner)), dtype=dtype)
    b_cells = np.empty_like(a_cells)
    at = 0
    for sl in chunks(len(owner), 1 << 20):      # no face-long int64 temporaries
        keep = inner[sl]
        k = int(np.count_nonzero(keep))
        a_cells[at : at + k] = np.compress(keep, owner[sl])
        b_cells[at : at + k] = np.compress(keep, neighbour[sl])
        at += k
    while True:
        a, b = np.take(label, a_cells), np.take(label, b_cells)
        differ = a != b
        if not differ.any():
            return label
        low, high = np.minimum(a, b)[differ], np.maximum(a, b)[differ]
        np.minimum.at(label, high, low)        # high is a root: roots point at themselves
        while True:                            # compress every path to its root
            jumped = label[label]
            if np.array_equal(jumped, label):
                break
            label = jumped


#: A cell is open when its outward area vectors sum to more than this fraction of the sum
#: of their magnitudes: round-off of a closed cell stays near 1e-16.
OPEN_TOLERANCE = 1e-8


def cell_closure(mesh: "Mesh") -> np.ndarray:
    """(C,) |sum of the outward face area vectors| over the sum of their magnitudes."""

    def compute() -> np.ndarray:
        n, n_int = mesh.n_cells, mesh.n_internal
        s, area = mesh.face_area_vectors, mesh.face_areas
        kernel = compiled("face_checks", n)
        if kernel is not None:
            cf = mesh.cell_faces
            return kernel.cell_closure(cf.offsets, cf.faces, cf.owned, s, area)
        nbr = mesh.neighbour[:n_int]
        total = (np.bincount(mesh.owner, weights=area, minlength=n)
                 + np.bincount(nbr, weights=area[:n_int], minlength=n))
        net = np.zeros(n)
        for k in range(3):
            part = (np.bincount(mesh.owner, weights=s[:, k], minlength=n)
                    - np.bincount(nbr, weights=s[:n_int, k], minlength=n))
            net += part * part
        return np.sqrt(net) / np.where(total > 0, total, 1.0)

    # not kept: one rule reads it (8 bytes a cell held for nothing)
    return mesh.provided("mesh_integrity.closure", compute)


def short_faces(mesh: "Mesh") -> np.ndarray:
    """Ids of faces with fewer distinct points than a face needs (3 in 3-D, 2 in 2-D)."""
    kernel = compiled("face_checks", mesh.n_cells)
    if kernel is not None:
        distinct = kernel.distinct_points(mesh.face_offsets, mesh.face_points)
        return np.flatnonzero(distinct < mesh.dim)
    table = mesh.face_point_table()
    srt = np.sort(table, axis=1)
    distinct = 1 + np.count_nonzero(srt[:, 1:] != srt[:, :-1], axis=1)
    return np.flatnonzero(distinct < mesh.dim)


# -- checks --------------------------------------------------------------------------------


def check_duplicate_points(ctx: RuleContext) -> RuleResult:
    """Count extra copies of points at one place among the points the cells use."""
    mesh = ctx.mesh
    points, copies = coincident_points(mesh)
    unused = int(mesh.n_points - np.count_nonzero(mesh.used_points()))
    notes = ()
    if unused:
        notes = (Note(f"{plural(unused, 'point')} of the file belong to no volume cell "
                      "(harmless; they are not checked)"),)
    if not copies:
        return RuleResult(measurements=(Measurement(
            0.0, detail=f"no two of the {mesh.n_points - unused} points in use coincide"),),
            notes=notes)
    cells = cells_using(mesh, points)
    named = mesh.file_point_ids(points)
    first = int(np.argmin(named))
    where = Where(cells=first_cells(mesh, cells), cell_count=int(cells.size),
                  point=finite_point(mesh.points[points[first]]))
    copy_word = "copy" if copies == 1 else "copies"
    detail = (f"{copies} extra {copy_word} of points at the same place, used by "
              f"{plural(int(cells.size), 'cell')}; first at point {int(named[first])}")
    return RuleResult(measurements=(Measurement(float(copies), where=where, detail=detail),),
                      notes=notes)


def check_non_manifold_faces(ctx: RuleContext) -> RuleResult:
    """Count the faces (vertex sets) shared by more than two cells, or twice by one cell."""
    mesh = ctx.mesh
    occurrences = np.asarray(mesh.nonmanifold_faces, dtype=np.int64)
    if occurrences.size == 0:
        return RuleResult(measurements=(Measurement(
            0.0, detail=f"every one of the {mesh.n_faces} faces has at most two cells"),))
    keys = np.sort(face_point_ids(mesh, occurrences), axis=1)
    _, first, inverse = np.unique(keys, axis=0, return_index=True, return_inverse=True)
    count = int(first.size)
    cells = np.unique(mesh.owner[occurrences])
    worst = int(occurrences[np.min(first)])
    shared_by = np.bincount(inverse.ravel())
    listed = first_cells(mesh, cells)
    where = Where(faces=tuple(int(f) for f in np.sort(occurrences[first])[:MAX_LISTED_IDS]),
                  face_count=count, cells=listed,
                  cell_count=int(cells.size), point=finite_point(mesh.face_centroids[worst]))
    detail = (f"{plural(count, 'face')} shared by up to {int(shared_by.max())} cells, "
              f"{plural(int(cells.size), 'cell')} involved; first at cell {listed[0]}")
    return RuleResult(measurements=(Measurement(float(count), where=where, detail=detail),))


def check_disconnected_pieces(ctx: RuleContext) -> RuleResult:
    """Count the pieces of cells joined through faces; list the cells outside the largest."""
    mesh = ctx.mesh
    label = cell_pieces(mesh)          # read once, by this rule: not kept with the mesh
    roots, inverse, sizes = np.unique(label, return_inverse=True, return_counts=True)
    n = int(roots.size)
    if n == 1:
        return RuleResult(measurements=(Measurement(
            1.0, detail=f"all {mesh.n_cells} cells form one piece"),))
    # each piece is named by its lowest cell id in the file; equal sizes go by that name
    names = mesh.file_cell_ids()
    first = np.full(n, np.iinfo(np.int64).max)
    np.minimum.at(first, inverse.ravel(), names)
    order = np.lexsort((first, -sizes))
    main = int(order[0])
    outside = np.flatnonzero(inverse.ravel() != main)
    shown = ", ".join(str(int(s)) for s in sizes[order[:5]]) + (", ..." if n > 5 else "")
    smallest = int(first[order[-1]])
    at = int(np.flatnonzero(names == smallest)[0])
    where = Where(cells=first_cells(mesh, outside),
                  cell_count=int(outside.size),
                  point=finite_point(mesh.cell_centroids[at]))
    detail = (f"{n} pieces with no face between them ({shown} cells); "
              f"{plural(int(outside.size), 'cell')} outside the largest piece, the smallest "
              f"piece starts at cell {smallest}")
    return RuleResult(measurements=(Measurement(float(n), where=where, detail=detail),))


def check_unmatched_boundary_elements(ctx: RuleContext) -> RuleResult:
    """Boundary elements of each group that lie on no face of a volume cell."""
    mesh = ctx.mesh
    if not mesh.group_names:
        return RuleResult.skip("the mesh file names no boundary groups")
    unmatched = mesh.unmatched_group_elements
    if not any(unmatched.values()):
        return RuleResult(measurements=(Measurement(
            0.0, detail=f"every boundary element of the {plural(len(mesh.group_names), 'group')}"
                        " lies on a cell face"),))
    measurements = tuple(
        Measurement(float(count), where=Where(boundary=name),
                    detail=f"{plural(count, 'element')} of group '{name}' lie on no face of a "
                           "volume cell and are ignored")
        for name, count in sorted(unmatched.items()) if count
    )
    return RuleResult(measurements=measurements)


def check_open_cells(ctx: "RuleContext") -> RuleResult:
    """Count the cells whose faces do not close."""
    mesh = ctx.mesh
    if mesh.n_cells == 0:
        return RuleResult.skip("the mesh has no volume cells")
    closure = cell_closure(mesh)
    open_ = np.flatnonzero(closure > OPEN_TOLERANCE)
    if not open_.size:
        return RuleResult(measurements=(Measurement(
            0.0, detail=f"the faces of all {mesh.n_cells} cells close (largest gap "
                        f"{float(closure.max(initial=0.0)):.1e} of the cell's face area)"),))
    worst = int(open_[np.argmax(closure[open_])])
    where = Where(cells=first_cells(mesh, open_), cell_count=int(open_.size),
                  point=finite_point(mesh.cell_centroids[worst]))
    detail = (f"{plural(int(open_.size), 'cell')} whose faces leave a gap; worst cell "
              f"{int(mesh.file_cell_ids(worst))} (its face area vectors sum to "
              f"{closure[worst]:.3g} of their total)")
    return RuleResult(measurements=(Measurement(float(open_.size), where=where, detail=detail),))


def check_degenerate_faces(ctx: "RuleContext") -> RuleResult:
    """Count the faces with too few distinct points to have an area."""
    mesh = ctx.mesh
    if mesh.n_cells == 0:
        return RuleResult.skip("the mesh has no volume cells")
    bad = short_faces(mesh)
    need = "three" if mesh.dim == 3 else "two"
    if not bad.size:
        return RuleResult(measurements=(Measurement(
            0.0, detail=f"every one of the {mesh.n_faces} faces has at least {need} points"),))
    cells = np.unique(np.concatenate([mesh.owner[bad], mesh.neighbour[bad]]))
    cells = cells[cells >= 0]
    where = Where(faces=tuple(int(f) for f in bad[:MAX_LISTED_IDS]), face_count=int(bad.size),
                  cells=first_cells(mesh, cells), cell_count=int(cells.size),
                  point=finite_point(mesh.face_centroids[bad[0]]))
    detail = (f"{plural(int(bad.size), 'face')} with fewer than {need} distinct points, on "
              f"{plural(int(cells.size), 'cell')}")
    return RuleResult(measurements=(Measurement(float(bad.size), where=where, detail=detail),))


def check_mesh_reading(ctx: RuleContext) -> RuleResult:
    """What the reader changed or left out (its notes), each as a note finding."""
    notes = ctx.mesh.notes
    counts = ", ".join(f"{n} {t}" for t, n in sorted(ctx.mesh.cell_counts.items()))
    detail = (f"read {plural(ctx.mesh.n_cells, 'cell')} ({counts}) as written"
              if not notes else f"{plural(len(notes), 'change')} made while reading")
    return RuleResult(measurements=(Measurement(float(len(notes)), detail=detail),),
                      notes=tuple(Note(f"reading the mesh: {n}") for n in notes))


# -- the rules -------------------------------------------------------------------------------

DUPLICATE_POINTS = Rule(
    id="duplicate-points",
    title="Duplicate points",
    rationale=(
        "Two points at the same place, used by different cells, mean the cells around them "
        "share no face: the solver sees a seam of boundary faces (an internal wall) where the "
        "fluid should pass. It usually comes from merging parts or exporting zones without "
        "merging their nodes. A deliberate baffle looks the same, so this is a warning. Points "
        "count as coincident within 1e-12 of the mesh's largest extent (common practice)."
    ),
    source="common practice",
    unit="points",
    limits=Limits(warn=0, error=None),
    hint=("Merge coincident nodes in the mesher or at export (its step that merges coincident "
          "nodes), unless the seam is a baffle, which then needs a named wall group."),
    check=check_duplicate_points,
    measures="number of extra copies of points at the same place",
)

NON_MANIFOLD_FACES = Rule(
    id="non-manifold-faces",
    title="Faces shared by more than two cells",
    rationale=(
        "In a finite-volume mesh every internal face lies between exactly two cells, its "
        "owner and its neighbour. A face with three or more cells, or listed twice by one "
        "cell, means overlapping or duplicated cells: fluxes through it are undefined and the "
        "cells' volumes are counted twice. caselint keeps each occurrence as a separate "
        "face. A single such face is an error (common practice)."
    ),
    source=_DEFINITION + "; limit: common practice",
    unit="faces",
    limits=Limits(warn=None, error=0),
    hint=("Remove duplicated or overlapping cells in the mesher (often left by merging "
          "meshes twice, or by a failed boolean); check the listed cells."),
    check=check_non_manifold_faces,
    measures="number of faces shared by more than two cells",
)

DISCONNECTED_PIECES = Rule(
    id="disconnected-pieces",
    title="Mesh in disconnected pieces",
    rationale=(
        "Cells joined through shared faces form a piece; flow cannot pass between pieces. "
        "More than one piece is usually a stray fragment left in the export, a gap at an "
        "interface meant to be conformal, or regions of a multi-region case exported into "
        "one file. A warning, because coupled regions can be intended (common practice)."
    ),
    source="common practice",
    unit="pieces",
    limits=Limits(warn=1, error=None),
    hint=("Delete stray fragments; make interfaces conformal (or declare them as interfaces "
          "in the solver); check the listed cells outside the largest piece."),
    check=check_disconnected_pieces,
    measures="number of connected pieces of cells",
)

UNMATCHED_BOUNDARY_ELEMENTS = Rule(
    id="unmatched-boundary-elements",
    title="Boundary elements on no cell face",
    rationale=(
        "A boundary element of a named group (a triangle or quad of a volume mesh, an edge "
        "of a 2-D mesh) should cover a face of a volume cell. One that matches no cell face "
        "is ignored, so the condition meant for it is applied nowhere: the export lost the "
        "link between the surface and the volume mesh (common practice)."
    ),
    source="common practice",
    unit="elements",
    limits=Limits(warn=0, error=None),
    hint=("Re-export the mesh with the boundary elements taken from the volume cells' faces "
          "(not from the CAD surface), and check the group for elements of other parts."),
    check=check_unmatched_boundary_elements,
    measures="number of boundary elements matching no face of a volume cell",
)

OPEN_CELLS = Rule(
    id="open-cells",
    title="Cells whose faces do not close",
    rationale=(
        "The faces of a cell enclose it: their outward area vectors sum to zero (the "
        "divergence theorem applied to a constant). When they do not, a face is missing, "
        "belongs to another cell or is listed with the wrong owner, and the cell's volume, "
        "centroid and fluxes are wrong. caselint flags a cell whose area vectors sum to more "
        "than 1e-8 of their total magnitude (round-off of a closed cell is near 1e-16). A "
        "single such cell is an error (common practice)."
    ),
    source="divergence theorem (closed control volumes); limit: common practice",
    unit="cells",
    limits=Limits(warn=None, error=0),
    hint=("Re-export the mesh: a face-based file whose face lists or owner/neighbour lists "
          "are incomplete or inconsistent (often a partial write or a bad conversion)."),
    check=check_open_cells,
    measures="number of cells whose faces do not close",
)

DEGENERATE_FACES = Rule(
    id="degenerate-faces",
    title="Faces with too few points",
    rationale=(
        "A face of a 3-D mesh needs at least three distinct points to have an area and a "
        "normal (an edge of a 2-D mesh two). A face with fewer carries no flux and has no "
        "direction: it comes from collapsed cells or a damaged face list. A single such face "
        "is an error (common practice)."
    ),
    source="common practice",
    unit="faces",
    limits=Limits(warn=None, error=0),
    hint=("Remove collapsed cells (merged nodes in the mesher) or re-export the mesh; "
          "check the cells on the listed faces."),
    check=check_degenerate_faces,
    measures="number of faces with fewer than three distinct points (two in 2-D)",
)

MESH_READING = Rule(
    id="mesh-reading",
    title="What reading the mesh changed",
    rationale=(
        "A reader sometimes has to read a file differently from how it is written, or leave "
        "part of it out: higher-order cells read by their corners, a block of cells written "
        "in the other node order read in that order, a one-cell-thick case read as 2-D, "
        "boundary polygons it does not use. Each such change is listed as a note so that "
        "the reviewer knows what was checked. It never fails a case: the rules that judge "
        "the mesh see the result."
    ),
    source="caselint's mesh readers",
    unit="changes",
    limits=Limits(warn=None, error=None),
    hint="Read the notes: where a change is not what the file means, re-export the mesh.",
    check=check_mesh_reading,
    measures="number of changes the reader made",
    main_description="reported only: the changes are listed as notes, never graded",
)

RULES: tuple[Rule, ...] = (MESH_READING, DUPLICATE_POINTS, NON_MANIFOLD_FACES, DISCONNECTED_PIECES,
                           UNMATCHED_BOUNDARY_ELEMENTS, OPEN_CELLS, DEGENERATE_FACES)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in mesh-integrity rules."""
    return list(RULES)
