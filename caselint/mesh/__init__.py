"""Mesh reading, topology, geometry and quality metrics (all lengths in metres).

>>> from caselint.mesh import read_mesh
>>> mesh = read_mesh("duct.msh", scale_to_m=1e-3)      # doctest: +SKIP
>>> mesh.cell_volumes.sum()                              # doctest: +SKIP
"""

from caselint.mesh.analysis import Mesh
from caselint.mesh.celltypes import CELL_TYPES
from caselint.mesh.model import MeshData, ShapeBlock
from caselint.mesh.reader import mesh_from_meshio, read_mesh

__all__ = ["CELL_TYPES", "Mesh", "MeshData", "ShapeBlock", "mesh_from_meshio", "read_mesh"]
