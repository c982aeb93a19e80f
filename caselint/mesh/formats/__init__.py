"""The mesh formats caselint reads, one module per format, each defining a ``READER``.

:data:`BUILTIN_READERS` is what the built-in plugin registers through
``caselint_register_mesh_readers`` (see :mod:`caselint.mesh.readers` for how a reader is
chosen for a path).
"""

from caselint.mesh.formats import face_folder, meshio_files, vtk_legacy, vtu_files

BUILTIN_READERS = (face_folder.READER, meshio_files.READER, vtk_legacy.READER,
                   vtu_files.READER)
