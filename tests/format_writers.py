"""Writers of the mesh formats caselint reads with its own readers, from their documented
layouts (no program of the format's vendor is used). Each takes an element mesh
(:class:`mixed_mesh.ElementMesh`) or face data and a path.

:data:`ROUND_TRIP_WRITERS` lists, per format, a function ``write(mesh, folder) -> (path,
read options)`` for the round-trip matrix (``tests/test_mesh_round_trip.py``).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from mixed_mesh import ElementMesh

SU2_TYPE = {"line": 3, "triangle": 5, "quad": 9, "tetra": 10, "hexahedron": 12, "wedge": 13,
            "pyramid": 14}


def su2_zone(mesh: ElementMesh, *, indices: bool = True, dim: int = 3,
             order=None) -> list[str]:
    """The lines of one SU2 zone (NDIME .. markers); element and point indices optional;
    ``order[r]`` is the cell (in block order) written on element row ``r``."""
    lines = [f"NDIME= {dim}", f"NELEM= {mesh.n_cells}"]
    cells = [[SU2_TYPE[t], *cell] for t, conn in mesh.blocks for cell in conn]
    for row, c in enumerate(range(len(cells)) if order is None else order):
        lines.append(" ".join(map(str, cells[c] + ([row] if indices else []))))
    lines.append(f"NPOIN= {len(mesh.points)}")
    for i, p in enumerate(mesh.points):
        lines.append(" ".join(f"{x:.17g}" for x in p[:dim]) + (f" {i}" if indices else ""))
    groups = sorted({g for _, _, g in mesh.boundary})
    lines.append(f"NMARK= {len(groups)}")
    for g in groups:
        elems = [(t, c) for t, conn, name in mesh.boundary if name == g for c in conn]
        lines += [f"MARKER_TAG= {g}", f"MARKER_ELEMS= {len(elems)}"]
        lines += [" ".join(map(str, [SU2_TYPE[t], *c])) for t, c in elems]
    return lines


def write_su2(mesh: ElementMesh, path: Path, *, crlf: bool = False,
              zones: list[ElementMesh] | None = None, order=None) -> Path:
    """An SU2 file of ``mesh``, or a multi-zone file of ``zones``."""
    if zones is None:
        lines = ["% written by the caselint tests", *su2_zone(mesh, order=order)]
    else:
        lines = [f"NZONE= {len(zones)}"]
        for i, z in enumerate(zones, start=1):
            lines += [f"IZONE= {i}", *su2_zone(z)]
    end = "\r\n" if crlf else "\n"
    path.write_bytes((end.join(lines) + end).encode())
    return path


def _su2(mesh, folder):
    from caselint.mesh.readers import ReadOptions

    return write_su2(mesh, folder / "box.su2"), ReadOptions()


ROUND_TRIP_WRITERS = {"su2": _su2}
