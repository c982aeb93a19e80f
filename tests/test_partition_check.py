"""A check in partitions walks its gap rays and wall-layer stacks partition by partition
(``Mesh.walks``, caselint.partition.walks) and reports what the whole-mesh check reports,
byte for byte.

The reference is the whole-mesh walk and check of the same code. Cases, from gmsh (not
designed for these tests): the prism-layer plate of the calibration corpus (laminar, a
no-slip floor: layer stacks, cells within the boundary layer, rays from the floor),
decomposed into six bands of equal cell counts up from the floor, so that every stack and
ray crosses several partitions; and the 10 mm slot between fins (gap-cells: rays across
the slot and the channel), its cells dealt to four processors at random, so that nearly
every step of a ray enters another partition. Both with the numpy and the compiled
kernels; partitions from the processor folders (``auto``) and ranges (``7``).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

import calibration
from caselint.cache import MeshStore
from caselint.mesh import rays, wall_layers
from caselint.mesh.analysis import Mesh
from caselint.mesh.reader import read_mesh
from caselint.partition.runners import PartitionRequest
from caselint.partition.walks import PartitionWalks
from caselint.rulekit.stacks import layer_cells
from mesh_writers import write_decomposed
from partition_checks import assert_same_fields, check_report

pytestmark = pytest.mark.usefixtures("kernel_mode")

#: The wall group of each case.
WALLS = {"plate": "floor", "slot": "walls"}


def _decomposed(sample, name: str, part: np.ndarray, data) -> Path:
    """``data`` written as the decomposed case ``name`` beside ``sample``, and its case
    file (the sample's, reading the folder)."""
    folder = sample.case.parent
    write_decomposed(folder / name, data, part, binary=True)
    case = folder / f"{name}.caselint.yaml"
    case.write_text(sample.case.read_text().replace(f"file: {sample.name}.msh", f"file: {name}"))
    return case


@pytest.fixture(scope="module")
def cases(tmp_path_factory) -> dict[str, Path]:
    plate = calibration.layer_growth(tmp_path_factory.mktemp("plate"))
    data = read_mesh(plate.case.with_suffix(".msh")).data
    rank = np.argsort(np.argsort(Mesh(data).cell_centroids[:, 2], kind="stable"))
    bands = rank * 6 // data.n_cells
    slot = calibration.narrow_gap(tmp_path_factory.mktemp("slot"))
    slot_data = read_mesh(slot.case.with_suffix(".msh")).data
    dealt = np.random.default_rng(7).integers(0, 4, slot_data.n_cells)
    return {"plate": _decomposed(plate, "plate", bands, data),
            "slot": _decomposed(slot, "slot", dealt, slot_data)}


@pytest.mark.parametrize("name", ["plate", "slot"])
@pytest.mark.parametrize("count", [None, 7])
def test_walks_of_a_mesh_in_partitions_are_the_whole_meshs(cases, name, count):
    folder = cases[name].parent / name
    whole = Mesh(read_mesh(folder).data)
    store = MeshStore(partitions=PartitionRequest(count))
    mesh = store.read(folder)
    assert isinstance(mesh.walks, PartitionWalks) and whole.walks is None
    faces = mesh.group_faces(WALLS[name])
    assert_same_fields(rays.wall_rays(mesh, (WALLS[name],)), rays.wall_rays(whole, (WALLS[name],)))
    assert_same_fields(rays.cells_within(mesh, faces, 0.004), rays.cells_within(whole, faces, 0.004))
    for reach in (0.0, np.inf):
        assert_same_fields(wall_layers.wall_layers(mesh, faces, reach_m=reach),
                     wall_layers.wall_layers(whole, faces, reach_m=reach))
    layers = wall_layers.wall_layers(whole, faces)
    assert np.array_equal(layer_cells(mesh, layers.faces, layers.cells, layers.n_layers),
                          layer_cells(whole, layers.faces, layers.cells, layers.n_layers))
    # rays and stacks handed over again and again: more rounds than walks (5 of them)
    assert mesh.walks.rounds > 5 * 3
    hits = rays.wall_rays(whole, (WALLS[name],))
    if name == "slot":
        assert (hits.status == rays.WALL).sum() > 100          # gaps crossed
    else:
        assert wall_layers.wall_layers(whole, faces).n_layers.max() >= 4


def _report(case: Path, *options: str) -> dict:
    code, report, err = check_report(case, *options)
    assert code in (0, 1), err
    return report


def test_check_in_partitions_reports_the_whole_check(cases):
    for name, rules in (("plate", {"layer-growth", "boundary-layer-cells", "layer-cover"}),
                        ("slot", {"gap-cells"})):
        whole = _report(cases[name])
        # the rules that read the walks have findings to compare
        assert rules <= {f["rule"] for f in whole["cases"][0]["findings"]}
        assert _report(cases[name], "--partitions", "7") == whole
        assert _report(cases[name], "--partitions", "auto") == whole
