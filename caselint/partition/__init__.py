"""A mesh analysed in partitions: each part of the cells with the rings of neighbours its
face metrics need, results put back together equal to the bit to the whole-mesh ones.

- :mod:`caselint.partition.plan`: which cells each partition owns (ranges of caselint's
  cell ids, which are in locality order, or the processor of each cell of a decomposed
  case);
- :mod:`caselint.partition.piece`: one partition cut out of the mesh with its halo, as a
  :class:`~caselint.mesh.model.MeshData` of its own;
- :mod:`caselint.partition.measure`: the per-cell and per-face quantities of a piece, for
  the cells and faces it owns, and their assembly into whole-mesh arrays;
- :mod:`caselint.partition.exchange`: walks that go on from partition to partition, handed
  over with their state in exchange rounds; :mod:`caselint.partition.rays` (gap rays) and
  :mod:`caselint.partition.stacks` (wall-layer stacks and their cells) drive them, and
  :mod:`caselint.partition.walks` gives them to a mesh analysed in partitions;
- :mod:`caselint.partition.stored`: pieces the tasks read themselves from the processor
  folders of a decomposed case (on a cluster: the client sends where they are);
- :mod:`caselint.partition.streaming`: a decomposed mesh over the memory limit checked
  partition by partition, its whole-mesh arrays memory-mapped in a
  :mod:`caselint.partition.scratch` folder;
- :mod:`caselint.partition.runners`: where the tasks run (here, or on Dask).
"""
