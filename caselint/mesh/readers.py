"""Mesh readers: which reader takes a file or folder, and what every reader promises.

A :class:`MeshReader` turns one mesh format into a :class:`~caselint.mesh.model.MeshData`
(points in metres, polygonal faces with owner and neighbour, named boundary groups, cell
zones where the format has them). Built-in readers are registered through the hook
``caselint_register_mesh_readers`` like any plugin's (:data:`caselint.mesh.formats.
BUILTIN_READERS`); meshio is one of them.

Choosing a reader for a path (:func:`choose_reader`): a folder goes to the readers that
read folders, a file to the readers whose suffixes end its name (case-insensitive); among
those, readers with a content check (``accepts``) are asked first, in name order, and the
first that accepts it reads the file, then the readers without a check. So a reader for a
format that shares its suffix with another (``.msh``) looks at the file before claiming it.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any, Callable, Iterable

import numpy as np

from caselint.errors import MeshReadError

if TYPE_CHECKING:
    from caselint.mesh.model import MeshData

#: Largest coordinate magnitude read (m); the case file's own limit for lengths, too.
MAX_COORDINATE_M = 1e12


@dataclass(frozen=True)
class ReadOptions:
    """How to read a mesh: the case file's ``mesh`` settings, in SI.

    ``scale_to_m`` multiplies the coordinates; ``tag_array`` and ``tags`` name boundary
    groups in formats that only number them (meshio cell data); ``zone`` picks one zone of
    a file that holds several (None: the reader refuses such a file, listing the zones);
    ``memory_limit`` is a :data:`caselint.mesh.limits.MemoryLimit`, the most bytes the check
    may use and where that limit comes from (None: the default limit); ``scratch`` (a
    :class:`caselint.partition.scratch.Scratch`, for a streamed check) is where a reader
    that can puts the whole mesh's arrays, and then no memory check is made (None: memory).
    """

    scale_to_m: float = 1.0
    tag_array: str | None = None
    tags: dict[int, str] = field(default_factory=dict)
    zone: str | None = None
    memory_limit: tuple[int | None, str] | None = None
    scratch: Any = None


@dataclass(frozen=True)
class MeshReader:
    """A mesh format caselint can read.

    ``name`` is an id in lower-case words; ``description`` says which format, by its
    structure, in one line; ``suffixes`` are file-name endings with the dot, lower-case
    (``(".su2",)``); ``folders`` says the reader reads folders. ``accepts(path)`` is an
    optional cheap look at the content (a header, a sub-folder) for suffixes or folders
    that other formats share. ``read(path, options)`` returns the mesh data or raises
    :class:`~caselint.errors.MeshReadError` naming the file and what is wrong. A folder
    reader's ``files(path)`` lists the files a read uses, for the mesh's fingerprint
    (:func:`mesh_sha256`).
    """

    name: str
    description: str
    read: Callable[[Path, ReadOptions], "MeshData"]
    suffixes: tuple[str, ...] = ()
    folders: bool = False
    accepts: Callable[[Path], bool] | None = None
    files: Callable[[Path], list[Path]] | None = None

    def __post_init__(self) -> None:
        import re

        if not re.fullmatch(r"[a-z][a-z0-9]*(-[a-z0-9]+)*", self.name):
            raise ValueError(f"mesh reader name {self.name!r} must be lower-case words "
                             "joined by '-'")
        if any(not s.startswith(".") or s != s.lower() for s in self.suffixes):
            raise ValueError(f"mesh reader {self.name!r}: suffixes must be lower-case and "
                             f"start with '.', got {self.suffixes}")
        if not self.suffixes and not self.folders:
            raise ValueError(f"mesh reader {self.name!r} reads neither files nor folders")

    def takes(self, path: Path) -> bool:
        """Whether this reader claims ``path`` (suffix or folder, then its content check)."""
        if path.is_dir():
            if not self.folders:
                return False
        elif not self.suffixes or not path.name.lower().endswith(self.suffixes):
            return False
        return self.accepts is None or bool(self.accepts(path))


def choose_reader(path: Path, readers: Iterable[MeshReader]) -> MeshReader:
    """The reader for ``path`` (see the module docstring).

    :raises MeshReadError: no reader takes it; the message lists the known suffixes.
    """
    readers = sorted(readers, key=lambda r: (r.accepts is None, r.name))
    if not path.exists():
        raise MeshReadError(str(path), "mesh file not found")
    for reader in readers:
        if reader.takes(path):
            return reader
    if path.is_dir():
        kinds = "; ".join(f"{r.name}: {r.description}" for r in readers if r.folders)
        raise MeshReadError(str(path), "is a folder that no mesh reader recognises"
                            + (f" (folders read: {kinds})" if kinds else ""))
    suffixes = sorted({s for r in readers for s in r.suffixes})
    shared = [r.name for r in readers if path.name.lower().endswith(r.suffixes)
              and r.suffixes]
    if shared:
        raise MeshReadError(str(path), f"no reader recognises the content of this "
                            f"{path.suffix} file (tried {', '.join(shared)})")
    raise MeshReadError(str(path), f"unknown mesh format {path.suffix or '(no extension)'!r}; "
                        f"expected one of {', '.join(suffixes)}, or a mesh folder")


def no_zones(path: Path, options: ReadOptions) -> None:
    """Refuse ``mesh.zone`` for a format that holds one mesh (MeshReadError), so that the
    key is never ignored silently."""
    if options.zone is not None:
        raise MeshReadError(str(path), f"mesh.zone is {options.zone!r}, but this format "
                                       "holds a single mesh (no zones to choose from); "
                                       "remove mesh.zone from the case file")


def checked_points(path: str, points: np.ndarray, scale_to_m: float) -> np.ndarray:
    """(P, 3) float64 coordinates in metres: 2-D points get z = 0, non-finite coordinates
    and coordinates beyond :data:`MAX_COORDINATE_M` are refused (MeshReadError)."""
    if not (isinstance(scale_to_m, (int, float)) and math.isfinite(scale_to_m)
            and scale_to_m > 0):
        raise MeshReadError(path, f"scale_to_m must be a positive number, got {scale_to_m!r}")
    points = np.asarray(points, dtype=np.float64)
    if points.ndim != 2 or points.shape[1] not in (2, 3) or len(points) == 0:
        raise MeshReadError(path, f"expected points of shape (P, 2) or (P, 3), got "
                                  f"{points.shape}")
    if points.shape[1] == 2:
        points = np.column_stack([points, np.zeros(len(points))])
    # the smallest and largest coordinate are finite only when all are (NaN and inf carry
    # through min and max): two passes without temporaries on a sound file
    if not (np.isfinite(points.min()) and np.isfinite(points.max())):
        bad = ~np.isfinite(points).all(axis=1)
        first = int(np.argmax(bad))
        raise MeshReadError(path, f"{int(bad.sum())} points have non-finite coordinates "
                                  f"(first: point {first})")
    if scale_to_m != 1.0:
        points = points * float(scale_to_m)
    reach = max(-float(points.min()), float(points.max()))
    if reach > MAX_COORDINATE_M:
        # Beyond this, squares and cubes of lengths (areas, volumes, Jacobians) lose range.
        raise MeshReadError(path, f"coordinates reach {reach:.3g} m (after scaling to metres); "
                                  f"caselint reads meshes within {MAX_COORDINATE_M:g} m of the "
                                  "origin: check the mesh units or the file")
    return points
