"""The mesh formats caselint reads, one module per format, each defining a ``READER``.

:data:`BUILTIN_READERS` is what the built-in plugin registers through
``caselint_register_mesh_readers`` (see :mod:`caselint.mesh.readers` for how a reader is
chosen for a path).
"""

from caselint.mesh.formats import (
    cgns,
    face_folder_reader,
    face_msh,
    meshio_files,
    su2,
    vtk_legacy,
    vtu_files,
)

BUILTIN_READERS = (cgns.READER, face_folder_reader.READER, face_msh.READER,
                   meshio_files.READER, su2.READER, vtk_legacy.READER, vtu_files.READER)
