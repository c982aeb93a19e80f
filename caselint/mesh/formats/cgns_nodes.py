"""CGNS files stored in HDF5, node by node (the SIDS-to-HDF5 mapping), read with h5py.

Every CGNS node is an HDF5 group with the attributes ``name``, ``label`` (the SIDS type,
e.g. ``Zone_t``) and ``type`` (``MT``, ``I4``, ``I8``, ``R4``, ``R8``, ``C1``); its data,
if any, is the dataset ``" data"`` inside the group. Arrays are written in Fortran order,
so an HDF5 dataset has the CGNS dimensions reversed (the zone sizes of a structured 3-D
zone, CGNS ``[3][3]``, read as ``h5[size kind][index]``).

CGNS files stored in the older ADF format are not HDF5 files; they are recognised by their
first bytes and refused with a message saying how to convert them.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np

from caselint.errors import MeshReadError

_HDF5_SIGNATURE = b"\x89HDF\r\n\x1a\n"
_ADF_SIGNATURE = b"@(#)ADF Database Version"

#: CGNS ElementType_t values (cgnslib.h) -> (caselint/meshio base type or a keyword, nodes).
ELEMENT_TYPES: dict[int, tuple[str, int]] = {
    2: ("node", 1), 3: ("line", 2), 4: ("line", 3), 5: ("triangle", 3), 6: ("triangle", 6),
    7: ("quad", 4), 8: ("quad", 8), 9: ("quad", 9), 10: ("tetra", 4), 11: ("tetra", 10),
    12: ("pyramid", 5), 13: ("pyramid", 14), 14: ("wedge", 6), 15: ("wedge", 15),
    16: ("wedge", 18), 17: ("hexahedron", 8), 18: ("hexahedron", 20),
    19: ("hexahedron", 27), 20: ("MIXED", 0), 21: ("pyramid", 13), 22: ("NGON_n", 0),
    23: ("NFACE_n", 0), 24: ("line", 4), 25: ("triangle", 9), 26: ("triangle", 10),
    27: ("quad", 12), 28: ("quad", 16), 29: ("tetra", 16), 30: ("tetra", 20),
    31: ("pyramid", 21), 32: ("pyramid", 29), 33: ("pyramid", 30), 34: ("wedge", 24),
    35: ("wedge", 38), 36: ("wedge", 40), 37: ("hexahedron", 32), 38: ("hexahedron", 56),
    39: ("hexahedron", 64), 40: ("line", 5), 41: ("triangle", 12), 42: ("triangle", 15),
    43: ("quad", 16), 44: ("quad", 25), 45: ("tetra", 22), 46: ("tetra", 34),
    47: ("tetra", 35), 48: ("pyramid", 29), 49: ("pyramid", 50), 50: ("pyramid", 55),
    51: ("wedge", 33), 52: ("wedge", 66), 53: ("wedge", 75), 54: ("hexahedron", 44),
    55: ("hexahedron", 98), 56: ("hexahedron", 125),
}
#: Nodes per element type code (0 for MIXED, NGON_n, NFACE_n and unknown codes).
NODE_COUNTS = np.zeros(64, dtype=np.int64)
for _code, (_kind, _n) in ELEMENT_TYPES.items():
    NODE_COUNTS[_code] = _n


def open_cgns(path: Path):
    """The HDF5 file of a CGNS file (h5py ``File``, read-only).

    :raises MeshReadError: h5py missing (names the package), an ADF-based file, or not
        an HDF5 file.
    """
    name = str(path)
    with open(path, "rb") as handle:
        head = handle.read(1024)
    if head.startswith(_ADF_SIGNATURE):
        raise MeshReadError(name, "is a CGNS file in the older ADF storage format; caselint "
                            "reads CGNS files stored in HDF5. Convert it with the CGNS "
                            "library's adf2hdf tool (or re-export it as CGNS/HDF5)")
    if _HDF5_SIGNATURE not in head[:1024:] and not _signature_later(path):
        raise MeshReadError(name, "is not an HDF5 file (CGNS files are HDF5 or ADF); "
                                  "truncated, or not a CGNS file")
    try:
        import h5py
    except ImportError:
        raise MeshReadError(name, "reading CGNS files needs the Python package h5py: "
                                  "pip install h5py") from None
    try:
        return h5py.File(name, "r")
    except OSError as exc:
        raise MeshReadError(name, f"the HDF5 library cannot open it (truncated or damaged): "
                                  f"{exc}") from None


def _signature_later(path: Path) -> bool:
    """HDF5 allows a user block before the signature, at 512, 1024, 2048, ... bytes."""
    with open(path, "rb") as handle:
        offset = 512
        while True:
            handle.seek(offset)
            chunk = handle.read(8)
            if len(chunk) < 8:
                return False
            if chunk == _HDF5_SIGNATURE:
                return True
            offset *= 2


def attr(node, key: str) -> str:
    """A text attribute of a node (``name``, ``label``, ``type``), without padding."""
    value = node.attrs.get(key, b"")
    if isinstance(value, np.ndarray):
        value = value.tobytes()
    if isinstance(value, bytes):
        value = value.split(b"\x00")[0].decode("latin-1")
    return str(value).strip()


def label(node) -> str:
    """The SIDS type of a node (``Zone_t``, ...)."""
    return attr(node, "label")


def children(node, kind: str) -> list:
    """Child nodes of SIDS type ``kind``, in name order (groups only)."""
    import h5py

    out = [(key, node[key]) for key in node.keys()
           if key != " data" and isinstance(node.get(key, getlink=True), h5py.HardLink)
           and isinstance(node[key], h5py.Group) and label(node[key]) == kind]
    return [child for _, child in sorted(out, key=lambda kv: kv[0])]


def child(node, kind: str, name: str | None = None):
    """The child of type ``kind`` (named ``name`` if given, else the first), or None."""
    found = children(node, kind)
    if name is not None:
        found = [c for c in found if node_name(c) == name] or found[:0]
    return found[0] if found else None


def node_name(node) -> str:
    """The CGNS name of a node (its ``name`` attribute, else the HDF5 key)."""
    return attr(node, "name") or node.name.rsplit("/", 1)[-1]


def data(node) -> np.ndarray | None:
    """The node's data array as stored (HDF5 dimension order), or None."""
    if node is None or " data" not in node:
        return None
    return np.asarray(node[" data"][()])


def text(node) -> str:
    """The node's character data (C1) as text."""
    value = data(node)
    if value is None:
        return ""
    return value.astype(np.uint8).tobytes().split(b"\x00")[0].decode("latin-1").strip()


def where(node) -> str:
    """The node's path in the file, for messages."""
    return node.name
