"""The list files of the face-based mesh folder, one layout detail at a time.

References: small files written here by hand from the format's published structure
(header dictionary, ``N ( ... )`` and ``N{value}`` lists, raw binary items between the
parentheses, byte order and sizes from ``arch``); the values are the ones written.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from caselint.errors import MeshReadError
from caselint.mesh import read_mesh
from caselint.mesh.formats.face_dicts import read_dict_list
from caselint.mesh.formats.face_lists import (
    parse_list_file, read_faces, read_labels, read_points,
)
from mesh_writers import write_face_folder

HEADER = """/* a comment before the header */
FoamFile
{{
    version     2.0;
    format      {fmt};
    arch        "{arch}";   // label and scalar sizes
    class       {cls};
    object      x;
}}
// * * * * * //
"""


def list_file(tmp_path: Path, body: bytes, *, fmt="ascii", arch="LSB;label=32;scalar=64",
              cls="labelList"):
    path = tmp_path / "x"
    data = HEADER.format(fmt=fmt, arch=arch, cls=cls).encode() + body
    path.write_bytes(data)
    return parse_list_file(path, data)


def test_ascii_labels_with_comments_and_a_uniform_list(tmp_path):
    lf = list_file(tmp_path, b"/* sizes */\n4\n(\n3\n1 // one\n4\n1\n)\n")
    values, _ = read_labels(lf, lf.start, "owner")
    assert values.tolist() == [3, 1, 4, 1] and values.dtype == np.int32
    lf = list_file(tmp_path, b"5{7}\n")
    assert read_labels(lf, lf.start, "owner")[0].tolist() == [7] * 5


def test_big_endian_64_bit_binary(tmp_path):
    labels = np.array([2, 70000, 3], dtype=">i8")
    lf = list_file(tmp_path, b"3\n(" + labels.tobytes() + b")\n", fmt="binary",
                   arch="MSB;label=64;scalar=64")
    values, _ = read_labels(lf, lf.start, "owner")
    assert values.tolist() == [2, 70000, 3] and values.dtype == np.int64
    points = np.array([[0.5, -1.25, 3.0]], dtype=">f4")
    lf = list_file(tmp_path, b"1\n(" + points.tobytes() + b")\n", fmt="binary",
                   arch="MSB;label=32;scalar=32", cls="vectorField")
    assert read_points(lf).tolist() == [[0.5, -1.25, 3.0]]


def test_arch_must_match_the_binary_data(tmp_path):
    labels = np.array([2, 5, 3], dtype="<i8")
    lf = list_file(tmp_path, b"3\n(" + labels.tobytes() + b")\n", fmt="binary",
                   arch="LSB;label=32;scalar=64")
    with pytest.raises(MeshReadError, match="the item size from 'arch' does not match"):
        read_labels(lf, lf.start, "owner")


def test_face_lists_in_both_forms(tmp_path):
    lf = list_file(tmp_path, b"2\n(\n3(0 1 2)\n5(2 1 3 4 5)\n)\n", cls="faceList")
    offsets, points = read_faces(lf)
    assert offsets.tolist() == [0, 3, 8] and points.tolist() == [0, 1, 2, 2, 1, 3, 4, 5]
    lf = list_file(tmp_path, b"3\n(0 3 8)\n8\n(0 1 2 2 1 3 4 5)\n", cls="faceCompactList")
    offsets2, points2 = read_faces(lf)
    assert offsets2.tolist() == offsets.tolist() and points2.tolist() == points.tolist()
    lf = list_file(tmp_path, b"3\n(0 3 9)\n8\n(0 1 2 2 1 3 4 5)\n", cls="faceCompactList")
    with pytest.raises(MeshReadError, match="must rise from 0 to the number of face points"):
        read_faces(lf)


def test_boundary_dictionary(tmp_path):
    body = b"""2
(
    inlet
    {
        type            patch;
        nFaces          4;
        startFace       10;
    }
    walls
    {
        type            wall;
        inGroups        List<word> 1(wall);
        nFaces          6;
        startFace       14;
    }
)
"""
    lf = list_file(tmp_path, body, cls="polyBoundaryMesh")
    items = read_dict_list(lf, "boundary")
    assert [name for name, _, _ in items] == ["inlet", "walls"]
    walls = items[1][1]
    assert walls["type"].words == ["wall"]
    assert walls["inGroups"].words == ["List<word>", "1", "(", "wall", ")"]
    lf = list_file(tmp_path, body.replace(b"2\n(", b"3\n("), cls="polyBoundaryMesh")
    with pytest.raises(MeshReadError, match="the boundary list declares 3 items but holds 2"):
        read_dict_list(lf, "boundary")


@pytest.fixture
def cube_data():
    from caselint.mesh.blocks import structured_hex
    from caselint.mesh.formats.meshio_files import meshio_data

    return meshio_data(structured_hex(np.arange(3.0), np.arange(3.0), np.arange(2.0)))


def test_neighbour_listing_every_face(cube_data, tmp_path):
    folder = write_face_folder(tmp_path / "p", cube_data)
    reference = read_mesh(folder)
    n_int, n_faces = cube_data.n_internal, cube_data.n_faces
    full = list(reference.neighbour[:n_int]) + [-1] * (n_faces - n_int)
    text = (folder / "neighbour").read_text()
    head = text[:text.index(f"{n_int}\n(")]
    (folder / "neighbour").write_text(head + f"{n_faces}\n(\n" + "\n".join(map(str, full))
                                      + "\n)\n")
    mesh = read_mesh(folder)
    assert np.array_equal(mesh.neighbour, reference.neighbour)


def test_binary_face_list_of_class_facelist_is_refused(cube_data, tmp_path):
    folder = write_face_folder(tmp_path / "p", cube_data, binary=True, compact=False)
    with pytest.raises(MeshReadError, match="a binary face list of class faceList is not read"):
        read_mesh(folder)


@pytest.mark.parametrize("text, offsets, points", [
    # triangles only, a comment and a line break inside a face
    (b"3\n(\n3(0 1 2) // first\n3(2 1\n 3)\n3(3 4 5))\n", [0, 3, 6, 9],
     [0, 1, 2, 2, 1, 3, 3, 4, 5]),
    # quadrilaterals only, several on one line, 64-bit ids
    (b"2\n(4(0 1 2 3) 4(9 8 7 3000000000))\n", [0, 4, 8], [0, 1, 2, 3, 9, 8, 7, 3000000000]),
    # as many numbers as three quadrilaterals would give: a quadrilateral, a triangle and
    # a pentagon
    (b"3\n(\n4(0 1 2 3)\n3(0 1 2)\n5(2 1 3 4 5)\n)\n", [0, 4, 7, 12],
     [0, 1, 2, 3, 0, 1, 2, 2, 1, 3, 4, 5]),
    # quadrilaterals with a negative point id: read, refused later by the range check
    (b"2\n(\n4(0 1 2 3)\n4(4 -5 6 7)\n)\n", [0, 4, 8], [0, 1, 2, 3, 4, -5, 6, 7]),
])
def test_face_lists_of_one_size_and_of_several(tmp_path, text, offsets, points):
    lf = list_file(tmp_path, text, cls="faceList", arch="LSB;label=64;scalar=64")
    got_offsets, got_points = read_faces(lf)
    assert got_offsets.tolist() == offsets and got_offsets.dtype == np.int64
    assert got_points.tolist() == points and got_points.dtype == np.int64


@pytest.mark.parametrize("text, message", [
    # the numbers of two quadrilaterals with one end misplaced
    (b"2\n(\n4(0 1 2)\n4 3(4 5 6 7)\n)\n", "face 0 of the face list does not hold the number"),
    # a -1 among the points reads as one face more
    (b"2\n(\n4(0 -1 2 3)\n4(4 5 6 7)\n)\n", "declares 2 faces but holds 3"),
    (b"3\n(\n4(0 1 2 3)\n4(4 5 6 7)\n)\n", "declares 3 faces but holds 2"),
])
def test_face_lists_out_of_step_are_refused(tmp_path, text, message):
    lf = list_file(tmp_path, text, cls="faceList")
    with pytest.raises(MeshReadError, match=message):
        read_faces(lf)


def test_a_face_list_reads_as_its_offsets_and_points_form(tmp_path):
    """One mesh's faces written as a face list (quadrilaterals only: read by stride) and
    as offsets + points (read as two label lists): the same arrays."""
    from caselint.mesh.blocks import structured_hex
    from caselint.mesh.formats.meshio_files import meshio_data

    data = meshio_data(structured_hex(*(np.linspace(0.0, 1.0, 7),) * 3))
    arrays = []
    for compact in (False, True):
        folder = write_face_folder(tmp_path / str(compact), data, compact=compact)
        arrays.append(read_faces(parse_list_file(folder / "faces",
                                                 (folder / "faces").read_bytes())))
    assert arrays[0][1].size == 4 * data.n_faces
    for a, b in zip(*arrays):
        assert a.dtype == b.dtype and np.array_equal(a, b)
