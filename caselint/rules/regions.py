"""Built-in rule ``region-cell-size``: are the cells in each region of interest small enough?

A region of the case file (``regions``: a box, a sphere or a cylinder, in metres) holds the
cells whose centroid lies inside it; a region naming a cell zone of the mesh (``zone``)
holds that zone's cells. The size of a cell is the cube root of its volume
(the square root of its area on a 2-D mesh); the rule reports, per region, the largest size
against the region's ``max_cell_size``, and how many cells and which exceed it.

On a 2-D mesh the z coordinate is ignored: a box is its x-y rectangle, a sphere its circle
around the centre's x and y, a cylinder its shape in the x-y plane. A region smaller than the
cells around it may hold no cell centroid; then the cell whose centroid is nearest the
region's centre is measured, so a coarse cell over a small region is still caught.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np

from caselint import hookimpl
from caselint.manifest.case import Region
from caselint.model import Limits, Measurement, Note, Rule, RuleResult, Where
from caselint.rulekit import RuleContext, cell_names, finite_point, first_limit, plural, worst_ids
from caselint.rulekit.regions import cell_sizes, cells_of_region, inside, region_centre

if TYPE_CHECKING:
    from caselint.mesh.analysis import Mesh


def _scaled(limits: Limits, size: float) -> Limits:
    """The rule's limits (multiples of max_cell_size) in metres for one region."""
    return Limits(warn=None if limits.warn is None else limits.warn * size,
                  error=None if limits.error is None else limits.error * size)


def _region_measurement(mesh: "Mesh", index: int, region: Region, sizes: np.ndarray,
                        limits: Limits) -> Measurement | Note:
    """The largest cell size in one region, or a note when no cell can be measured."""
    target = float(region.max_cell_size)
    key = f"regions[{index}]"
    m_limits = _scaled(limits, target)
    cells = cells_of_region(region, mesh)
    nearest = ""
    if cells.size == 0 and region.shape == "zone":
        return Note(f"region '{region.name}': the mesh's cell zone "
                    f"'{region.geometry['zone']}' holds no cell", where=Where(region=region.name,
                                                                               key=key))
    if cells.size == 0:
        lo, hi = mesh.bounds
        centre = region_centre(region)
        dims = slice(0, mesh.dim)
        if not np.all((centre[dims] >= lo[dims]) & (centre[dims] <= hi[dims])):
            return Note(f"region '{region.name}' holds no cell and its centre is outside the "
                        "mesh: check its coordinates (metres, or texts with units)",
                        where=Where(region=region.name, key=key))
        diff = mesh.cell_centroids[:, :mesh.dim] - centre[:mesh.dim]
        cells = np.array([int(np.argmin((diff**2).sum(axis=1)))])
        nearest = "no cell centroid lies inside the region; the cell nearest its centre "
    threshold = first_limit(m_limits)
    local, count = worst_ids(sizes[cells], threshold, names=mesh.file_cell_ids(cells))
    listed = cells[local]
    worst = int(listed[0])
    largest = float(sizes[worst])
    name = int(mesh.file_cell_ids(worst))
    if nearest:
        detail = f"{nearest}(cell {name}) is {largest:.4g} m"
    elif count:
        detail = (f"{count} of {plural(cells.size, 'cell')} in the region are larger than "
                  f"{threshold:.4g} m; largest cell {name}")
    else:
        detail = f"all {plural(cells.size, 'cell')} in the region are at most {threshold:.4g} m"
    detail += f" (max_cell_size {target:.4g} m)"
    where = Where(region=region.name, cells=cell_names(mesh, listed) if count else (),
                  cell_count=count, point=finite_point(mesh.cell_centroids[worst]), key=key)
    fix = ""
    if count:
        fix = (f"Refine the cells in region '{region.name}' to at most {target:.4g} m "
               "(a refinement zone covering the region), or revise its max_cell_size.")
    return Measurement(value=largest, where=where, detail=detail, fix=fix,
                       label="largest cell size", unit="m", limits=m_limits)


def check_region_cell_size(ctx: RuleContext) -> RuleResult:
    """Largest cell size in each region of interest against its max_cell_size."""
    regions = ctx.case.regions
    targets = [(i, r) for i, r in enumerate(regions) if r.max_cell_size is not None]
    notes: list[Note] = [Note(f"region '{r.name}' has no max_cell_size and is not checked",
                              where=Where(region=r.name, key=f"regions[{i}]"))
                         for i, r in enumerate(regions) if r.max_cell_size is None]
    if not targets:
        return RuleResult(skipped="no region sets max_cell_size", notes=tuple(notes))
    mesh = ctx.mesh
    sizes = cell_sizes(mesh)
    measurements = []
    for i, region in targets:                            # a few regions per case
        got = _region_measurement(mesh, i, region, sizes, ctx.limits)
        (notes if isinstance(got, Note) else measurements).append(got)
    if not measurements:
        return RuleResult(skipped="no region with a max_cell_size holds a cell of the mesh",
                          notes=tuple(notes))
    return RuleResult(measurements=tuple(measurements), notes=tuple(notes))


REGION_CELL_SIZE = Rule(
    id="region-cell-size",
    title="Cell size in regions of interest",
    rationale=(
        "Where the case file marks a region of interest (a wake, a jet, a sensor location) "
        "with a max_cell_size, the cells there must be at least that fine, or the flow "
        "features the region was drawn for are smeared out. The size of a cell is the cube "
        "root of its volume (square root of its area in 2-D); a cell belongs to the region "
        "when its centroid lies inside. The limits are multiples of each region's "
        "max_cell_size: a warning above 1x, an error above 2x (caselint defaults)."
    ),
    source="the case file's max_cell_size; error at 2x: caselint default",
    unit="x max_cell_size",
    limits=Limits(warn=1.0, error=2.0),
    hint=("Refine the mesh in the region (a refinement box or sphere around it in the mesher), "
          "or revise the region's max_cell_size."),
    check=check_region_cell_size,
    needs=("regions", "mesh"),
    measures="largest cell size in a region, against its max_cell_size",
)

RULES: tuple[Rule, ...] = (REGION_CELL_SIZE,)


@hookimpl
def caselint_register_rules() -> list[Rule]:
    """The built-in region rule."""
    return list(RULES)
