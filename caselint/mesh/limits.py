"""Memory needed to check a mesh, estimated before the work starts, and the refusal.

Building topology, geometry and the rules' metrics takes far more memory than the mesh
file. Rather than be killed by the operating system part-way, :func:`read_mesh
<caselint.mesh.reader.read_mesh>` estimates the peak twice: from the counts in the file's
header before meshio reads it (gmsh 2.2 and 4.1, VTU; files above
:data:`HEADER_CHECK_MIN_BYTES`), and from the exact cell counts once read, before the
:class:`~caselint.mesh.model.Mesh` and its topology are built. Over the limit, it raises
:class:`~caselint.errors.MeshReadError` with the estimate, the limit and how to raise it.

For the face-based mesh folders, :func:`choose_way` decides *how* a mesh is checked and
says why: whole, in memory, when the estimate fits; streamed, partition by partition with
the whole-mesh arrays on disk (:mod:`caselint.partition.streaming`), when it does not but
the mesh can be streamed (a single mesh folder, or a decomposed case with addressing
files) and the streamed estimate fits; else refused, the message saying what would work.

The limit is passed in by the caller (:func:`memory_limit` turns a size into one); when
none is passed it is :data:`DEFAULT_FRACTION` of the memory available now (``MemAvailable``
of /proc/meminfo, capped by a cgroup limit). The command line takes it from ``check
--memory-limit SIZE``, else from the environment variable ``CASELINT_MEMORY_LIMIT``; the
library never reads that variable. ``off`` (or ``0``) switches the check off. Sizes are
bytes unless they carry a unit: ``8GB`` = 8e9 bytes, ``8GiB`` = 8 x 2^30 bytes.
"""

from __future__ import annotations

import contextlib
import os
import re
import struct
from dataclasses import dataclass
from pathlib import Path

from caselint.errors import MeshReadError, UsageError

#: Environment variable the command line reads the memory limit from when ``--memory-limit``
#: is not given (e.g. ``8GB``; ``off`` disables the check).
ENV_LIMIT = "CASELINT_MEMORY_LIMIT"
#: Share of the available memory used as the limit when none is given: enough headroom for
#: the estimate's error (below) and the rest of the system, while a 20M-hexahedron mesh
#: (measured peak 15.5 GB, benchmarks/README.md) still runs on a 24 GB machine.
DEFAULT_FRACTION = 0.85

#: Peak memory (bytes) of ``caselint check`` per volume cell, its points included, over the
#: fixed cost of the interpreter. Measured with benchmarks/memory_per_cell.py on this
#: project's 2-CPU build machine (Python 3.11, numpy 2, meshio 5.3.5): peak resident memory
#: (VmHWM) of a fresh process running lint_case with the general rule set (near-wall and
#: time-step rules included) on binary gmsh 2.2 blocks of about 50k and 200k cells, the
#: difference over the difference in cells: hexahedra 898 (1.04 points per cell), tetrahedra
#: 600 (0.18), wedges 786 (0.53), pyramids 752 (0.35). Rounded up by about 10 %, because
#: other rule packs and numbering that scatters memory access add to it, except for
#: hexahedra, whose per-cell cost falls with size: from 200k to 800k cells the same script
#: gave 884 (hexahedra) and 591 (tetrahedra), and benchmarks/bench_large.py measured 787 to
#: 825 bytes per shuffled hexahedron at 5M to 20M cells, so 900 (the small-mesh slope) stays
#: above every measurement without refusing meshes that fit.
BYTES_PER_CELL: dict[str, int] = {
    "hexahedron": 900,
    "tetra": 660,
    "wedge": 870,
    "pyramid": 830,
}
#: Cells of other kinds: 2-D cells (not measured; charged as hexahedra, an upper bound with
#: four edges against six faces) and, in a header count, every element of the file.
OTHER_CELL_BYTES = BYTES_PER_CELL["hexahedron"]
#: Boundary elements (triangles, quads, lines) of a volume mesh: their group arrays (guess
#: from the arrays kept per element, about 20 numbers; not measured, they are few).
BOUNDARY_ELEMENT_BYTES = 200
#: Interpreter, numpy, meshio, pint and the rules: the measured fixed part was 54 MB.
FIXED_BYTES = 100_000_000
#: Files below this size are read without a header estimate (meshio's arrays for such a
#: file stay well under 1 GB); the estimate from the cell counts still applies.
HEADER_CHECK_MIN_BYTES = 32 * 2**20

_UNITS = {"": 1, "b": 1, "k": 10**3, "kb": 10**3, "m": 10**6, "mb": 10**6, "g": 10**9,
          "gb": 10**9, "t": 10**12, "tb": 10**12, "kib": 2**10, "mib": 2**20, "gib": 2**30,
          "tib": 2**40}
_OFF = ("off", "none", "unlimited", "0")


def parse_size(text: str, what: str = "memory limit") -> int | None:
    """Bytes of a size such as ``8GB``, ``512 MiB`` or ``2e9``; None for ``off``.

    :raises UsageError: the text is not a size; the message names ``what``.
    """
    cleaned = text.strip().lower()
    if cleaned in _OFF:
        return None
    match = re.fullmatch(r"(\d+(?:\.\d*)?(?:e\d+)?)\s*([a-z]*)", cleaned)
    if match is None or match.group(2) not in _UNITS:
        raise UsageError(f"{what}: expected a size such as 8GB, 512MiB or 'off', got {text!r}")
    size = float(match.group(1)) * _UNITS[match.group(2)]
    if not size >= 1 or size > 2**62:
        raise UsageError(f"{what}: expected a size of at least 1 byte, got {text!r}")
    return int(size)


def format_size(size: float, digits: int = 3) -> str:
    """``9.1 GB``, ``640 MB``: decimal units, as ``free -h --si`` shows them."""
    for unit, scale in (("TB", 1e12), ("GB", 1e9), ("MB", 1e6)):
        if size >= scale:
            return f"{size / scale:.{digits}g} {unit}"
    return f"{size / 1e3:.{digits}g} kB"


def available_memory() -> int | None:
    """Bytes the process may still use: ``MemAvailable``, capped by a cgroup limit."""
    found = []
    try:
        with open("/proc/meminfo", encoding="ascii") as handle:
            for line in handle:
                if line.startswith("MemAvailable:"):
                    found.append(int(line.split()[1]) * 1024)
                    break
    except (OSError, ValueError, IndexError):
        with contextlib.suppress(OSError, ValueError, AttributeError):
            found.append(os.sysconf("SC_AVPHYS_PAGES") * os.sysconf("SC_PAGE_SIZE"))
    for limit_file, usage_file in (("/sys/fs/cgroup/memory.max", "/sys/fs/cgroup/memory.current"),
                                   ("/sys/fs/cgroup/memory/memory.limit_in_bytes",
                                    "/sys/fs/cgroup/memory/memory.usage_in_bytes")):
        with contextlib.suppress(OSError, ValueError):
            limit = Path(limit_file).read_text().strip()
            if limit != "max" and int(limit) < 2**60:
                found.append(max(int(limit) - int(Path(usage_file).read_text()), 0))
    return min(found) if found else None


#: A memory limit: bytes (None: no check) and where it comes from, for the message.
MemoryLimit = tuple[int | None, str]


def memory_limit(text: str | None = None, name: str = "--memory-limit") -> MemoryLimit:
    """The limit of the size ``text``, set by the option or variable ``name``; without one,
    a share of the memory available now.

    :raises UsageError: ``text`` is not a size; the message names ``name``.
    """
    if text is not None and text.strip():
        return parse_size(text, name), f"set by {name}"
    available = available_memory()
    if available is None:
        return None, "unknown"
    return (int(DEFAULT_FRACTION * available),
            f"{DEFAULT_FRACTION:.0%} of the {format_size(available)} available")


def estimate_bytes(cell_counts: dict[str, int], volume: bool = True) -> int:
    """Estimated peak bytes of checking a mesh with these cells (meshio type names).

    ``volume`` says whether the mesh has volume cells (then 2-D cells are its boundary
    elements); higher-order types count as their linear base type.
    """
    from caselint.mesh.celltypes import linear_type

    total = FIXED_BYTES
    for meshio_type, count in cell_counts.items():
        base = linear_type(meshio_type) or meshio_type
        if base in BYTES_PER_CELL:
            total += count * BYTES_PER_CELL[base]
        elif volume and base in ("triangle", "quad", "line", "vertex"):
            total += count * BOUNDARY_ELEMENT_BYTES
        else:
            total += count * OTHER_CELL_BYTES
    return total


def check_memory(path: str, cell_counts: dict[str, int], source: str,
                 limit: MemoryLimit | None = None, *, cells: int | None = None,
                 advice: str | None = None) -> None:
    """Refuse (MeshReadError) when checking these cells would pass the memory ``limit``
    (None: :func:`memory_limit`'s default).

    ``source`` says where the counts come from ("the file header", "the cells read");
    ``cells`` the number of cells to name when ``cell_counts`` charge another number
    (:func:`face_mesh_counts`); ``advice`` what else would work, for the message.
    """
    limit, origin = limit if limit is not None else memory_limit()
    if limit is None:
        return
    volume = any((_linear(t) in BYTES_PER_CELL) for t in cell_counts)
    need = estimate_bytes(cell_counts, volume)
    if need <= limit:
        return
    cells = sum(cell_counts.values()) if cells is None else cells
    suggestion = format_size(1.2 * need).replace(" ", "")
    digits = 3 if format_size(need) != format_size(limit) else 6     # 100.018 MB > 100 MB
    raise MeshReadError(
        path,
        f"checking this mesh needs about {format_size(need, digits)} of memory ({cells:,} "
        f"cells, counted from {source}); the limit is {format_size(limit)} ({origin}). Raise it "
        f"with --memory-limit {suggestion} or {ENV_LIMIT}={suggestion} ('off' turns the "
        "check off), or check the case on a machine with more memory"
        + f"; {advice or STREAM_ADVICE}")


def face_mesh_counts(n_cells: int, n_faces: int) -> dict[str, int]:
    """Cell counts of a face-based mesh for :func:`check_memory`: charged as hexahedra, at
    least one per three faces (a hexahedral mesh has about three faces per cell; the face
    arrays dominate the memory of cells with more faces). An estimate, not measured on
    polyhedral meshes."""
    return {"hexahedron": max(int(n_cells), int(n_faces) // 3)}


def check_folder_memory(path: str, folders: list[Path], limit: MemoryLimit | None = None) -> None:
    """Refuse (MeshReadError) a face-based mesh folder (or the processor folders of one
    decomposed mesh) whose declared counts would pass the memory limit, before reading
    its lists. Counts come from the owner file's header note (nCells, nFaces); a folder
    without one is checked once read."""
    cells = faces = 0
    for folder in folders:
        counts = _folder_counts(folder)
        if counts is None:
            return
        cells, faces = cells + counts[0], faces + counts[1]
    check_memory(path, face_mesh_counts(cells, faces), "the mesh files' headers", limit,
                 cells=cells)


#: What a refusal adds when nothing better is known of the mesh.
STREAM_ADVICE = ("a face-based mesh folder (constant/polyMesh, or a decomposed case's "
                 "processor<N> folders with their addressing files) is checked partition by "
                 "partition within the limit; a mesh file (gmsh, VTU, CGNS, SU2, ...) is "
                 "read whole: convert it to a mesh folder, binary files read with the "
                 "least memory")
#: A streamed check (:mod:`caselint.partition.streaming`): private memory per cell of the
#: whole mesh that stays in memory while the whole-mesh arrays are on disk (the rules'
#: temporaries over whole-mesh arrays, the partition labels), and per cell of the largest
#: partition analysed in memory. Measured with benchmarks/bench_partitions.py (see
#: benchmarks/README.md), rounded up.
STREAM_BYTES_PER_CELL = 130
STREAM_PIECE_BYTES_PER_CELL = 1000
#: A streamed check: disk space of its scratch folder (:mod:`caselint.partition.scratch`)
#: per cell as :func:`face_mesh_counts` charges them (at least one per three faces).
#: Measured as ``Scratch.bytes`` at the end of streamed checks (the benchmark duct's case
#: file, decomposed in 4 slabs): hexahedra 627 (405,224 cells, 635 per cell; 2.6 GB for
#: the 4,096,000 of benchmarks/README.md, 630), a hexahedral block refined 2:1 (hanging
#: nodes, polyhedra) 623, tetrahedra 426. Most of it is per face, so meshes whose faces
#: have many points (polyhedral duals) or other rule packs keeping large results may need
#: more: rounded up by about 10 %, and :meth:`Scratch.empty
#: <caselint.partition.scratch.Scratch.empty>` reserves each file's blocks anyway. The
#: faces are the processor folders' sum (those between two folders count twice): a little
#: more, on the safe side.
SCRATCH_BYTES_PER_CELL = 700
#: A streamed mesh is analysed in parts of consecutive cell ids (of the undecomposed mesh)
#: as large as the memory left allows, and no smaller than this.
MIN_PIECE_CELLS = 10_000


@dataclass(frozen=True)
class MemoryWay:
    """How a mesh is checked under the memory limit, and why: ``way`` is ``whole`` (in
    memory) or ``stream`` (partition by partition, whole-mesh arrays on disk); ``need`` and
    ``streamed`` the estimates (bytes) of the two ways (None: not estimated);
    ``piece_cells`` the most cells a partition may own for ``streamed`` to hold (its
    largest folder, or less when the limit leaves less); ``part_cells`` the cells of the
    parts a streamed check analyses (as many as the limit leaves room for, at least
    ``piece_cells``); ``scratch`` the estimated disk space (bytes) of its scratch folder
    then; ``cells`` the mesh's cells as its files declare them."""

    way: str
    reason: str
    need: int | None = None
    streamed: int | None = None
    limit: int | None = None
    piece_cells: int | None = None
    scratch: int | None = None
    cells: int | None = None
    part_cells: int | None = None


def choose_way(path: str, folders: list[Path], limit: MemoryLimit | None = None,
               cannot_stream: str | None = None, reading_per_cell: int = 0) -> MemoryWay:
    """Whole or streamed, for the mesh folder(s) ``folders`` of ``path`` under ``limit``
    (None: the default): whole when its estimate fits (or there is no limit or no header
    count), else streamed when it can be (``cannot_stream`` None) and that estimate fits;
    ``reading_per_cell`` the bytes a streamed read holds per cell besides the share kept
    (a single folder: its largest list, :mod:`caselint.mesh.formats.face_folder_disk`).

    :raises MeshReadError: neither fits; the message gives both estimates and, where the
        mesh cannot be streamed, ``cannot_stream`` (what would work).
    """
    bytes_limit, origin = limit if limit is not None else memory_limit()
    if bytes_limit is None:
        return MemoryWay("whole", "no memory limit")
    counts = [_folder_counts(folder) or _owner_counts(folder) for folder in folders]
    if not counts or any(c is None for c in counts):
        return MemoryWay("whole", "counts not readable: the reader checks them", limit=bytes_limit)
    cells = sum(c[0] for c in counts)
    faces = sum(c[1] for c in counts)
    need = estimate_bytes(face_mesh_counts(cells, faces))
    largest = max(max(c[0], c[1] // 3) for c in counts)
    streamed = piece = parts = scratch = None
    if cannot_stream is None:
        share = max(cells, faces // 3)
        held = FIXED_BYTES + (STREAM_BYTES_PER_CELL + reading_per_cell) * share
        scratch = SCRATCH_BYTES_PER_CELL * share
        # the estimate: parts of the largest folder's size, or smaller ones if the limit
        # leaves less (the least the streamed way needs)
        room = (bytes_limit - held) // STREAM_PIECE_BYTES_PER_CELL
        piece = max(min(largest, room), min(largest, MIN_PIECE_CELLS))
        streamed = held + STREAM_PIECE_BYTES_PER_CELL * piece
        # the parts analysed: as large as what is left allows, up to the whole mesh. A
        # part is analysed with two rings of neighbours; a run of consecutive cells of a
        # block of hexahedra is whole planes of cells, with a plane of each ring on each
        # side: the pieces of parts of 8 planes (the 100M benchmark's parts of a folder's
        # size) hold 1.22x the cells and 1.13x the faces of the mesh, of 33 planes (its
        # parts of 7M cells) 1.09x and 1.05x
        parts = max(piece, min(share, room))
    if need <= bytes_limit:
        return MemoryWay("whole", f"the estimate {format_size(need)} fits the limit "
                                  f"{format_size(bytes_limit)} ({origin})", need, streamed,
                         bytes_limit, piece, scratch, cells, parts)
    if streamed is not None:
        if streamed <= bytes_limit:
            peak = held + STREAM_PIECE_BYTES_PER_CELL * parts
            return MemoryWay("stream", f"the whole-mesh estimate {format_size(need)} is over "
                                       f"the limit {format_size(bytes_limit)} ({origin}); "
                                       f"streamed, partition by partition, in parts of at "
                                       f"most {parts:,} cells, about {format_size(peak)}",
                             need, streamed, bytes_limit, piece, scratch, cells, parts)
        cannot_stream = (f"streamed, partition by partition, it would still need about "
                         f"{format_size(streamed)} ({format_size(held)} for its "
                         f"{max(cells, faces // 3):,} cells' share, with parts of "
                         f"{piece:,} cells)")
    check_memory(path, face_mesh_counts(cells, faces), "the mesh files",
                 (bytes_limit, origin), cells=cells, advice=cannot_stream)
    raise AssertionError("check_memory refuses what does not fit")     # pragma: no cover


def _folder_counts(folder: Path) -> tuple[int, int] | None:
    """(cells, faces) that a mesh folder's owner file declares in its header note."""
    import zlib

    for name, gz in (("owner", False), ("owner.gz", True)):
        file = folder / name
        if not file.is_file():
            continue
        try:
            with file.open("rb") as handle:
                head = handle.read(8192)
            if gz:
                head = zlib.decompressobj(wbits=31).decompress(head, 8192)
        except (OSError, zlib.error):
            return None
        note = re.search(rb"nCells\s*:\s*(\d+).*?nFaces\s*:\s*(\d+)", head, re.S)
        return (int(note.group(1)), int(note.group(2))) if note else None
    return None


def _owner_counts(folder: Path) -> tuple[int, int] | None:
    """(cells, faces) of a mesh folder whose owner file has no header note: its owner list
    read (one number per face; cells: one more than the largest owner)."""
    from caselint.mesh.formats.face_lists import open_list_file, read_labels

    try:
        owner_file = open_list_file(folder, "owner", required=False)
        if owner_file is None:
            return None
        owner, _ = read_labels(owner_file, owner_file.start, "owner")
    except MeshReadError:
        return None                   # the reader reports the damage
    return int(owner.max(initial=-1)) + 1, len(owner)


def _linear(meshio_type: str) -> str:
    from caselint.mesh.celltypes import linear_type

    return linear_type(meshio_type) or meshio_type


# -- counts from file headers -----------------------------------------------------------


def header_cell_count(path: str) -> int | None:
    """Elements (gmsh) or cells (VTU) a mesh file declares, read without reading the mesh.

    None for other formats, for files below :data:`HEADER_CHECK_MIN_BYTES` and for
    headers that cannot be read (meshio then reports the damage).
    """
    file = Path(path)
    try:
        if file.stat().st_size < HEADER_CHECK_MIN_BYTES:
            return None
        suffix = file.suffix.lower()
        if suffix == ".msh":
            return _gmsh_elements(file)
        if suffix == ".vtu":
            head = file.open("rb").read(2**20).decode("latin-1")
            counts = re.findall(r'NumberOfCells="(\d+)"', head)
            return sum(int(c) for c in counts) if counts else None
    except (OSError, ValueError, struct.error):
        return None
    return None


def _gmsh_elements(file: Path) -> int | None:
    """The element count after ``$Elements`` (gmsh 2.2 and 4.1, ASCII or binary)."""
    with file.open("rb") as handle:
        head = handle.read(256)
        match = re.search(rb"\$MeshFormat\s+(\d+)(?:\.\d+)?\s+(\d)\s+(\d+)", head)
        if match is None:
            return None
        major, binary, size_t = int(match.group(1)), match.group(2) == b"1", int(match.group(3))
        handle.seek(0)
        offset = _find(handle, b"$Elements")
        if offset is None:
            return None
        handle.seek(offset + len(b"$Elements"))
        handle.readline()                       # the rest of the marker line
        if major >= 4 and binary:
            fmt = {4: "<4I", 8: "<4Q"}.get(size_t)
            if fmt is None:
                return None
            return struct.unpack(fmt, handle.read(struct.calcsize(fmt)))[1]
        fields = handle.readline().split()
        return int(fields[1] if major >= 4 else fields[0])


def _find(handle, marker: bytes, block: int = 2**22) -> int | None:
    """Offset of the first ``marker`` at the start of a line, scanning in blocks."""
    needle = b"\n" + marker
    tail = b""
    position = 0
    while True:
        chunk = handle.read(block)
        if not chunk:
            return None
        data = tail + chunk
        found = data.find(needle)
        if found >= 0:
            return position - len(tail) + found + 1
        tail = data[-len(needle):]
        position += len(chunk)
