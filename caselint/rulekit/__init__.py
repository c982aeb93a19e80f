"""The rule kit: what rules share, public for built-in rules and rule packs alike.

A rule module imports the data model (:mod:`caselint.model`, the case's
:mod:`caselint.manifest.case`), this kit, :mod:`caselint.mesh` and :mod:`caselint.physics`,
and nothing else of caselint (a test holds the built-in rules to that). The kit holds:

- :mod:`.locate`: the worst ids of a metric, the file's names of cells, points, faces;
- :mod:`.words`: counts and numbers in a finding's words, distributions by area;
- :mod:`.measures`: measurements of face and cell metrics, their extents for grading by
  extent and place, and the place grades such a rule declares;
- :mod:`.face_metrics`: a face metric's result (worst located, extent, picture);
- :mod:`.sources`: the sources and place-grading words the mesh-quality rules share;
- :mod:`.stacks`: the cells of the wall-layer stacks, which the layer rules judge;
- :mod:`.places`: the place of each cell and face (region of interest, near a no-slip
  wall, elsewhere);
- :mod:`.walls`: choosing the no-slip walls of a case, their layer stacks;
- :mod:`.regions`: regions of interest and cell sizes;
- :mod:`.rays`: the rays from the walls, cast once and shared;
- :mod:`.wallflow` and :mod:`.velocity`: the flow a near-wall or time-step rule assumes;
- :mod:`.thickness`: the boundary-layer thickness at each wall face;
- :mod:`.cases`: what the case's physics means (storage location, scale-resolving models);
- :mod:`.meshview`: points of cells and faces.

``RuleContext`` (what a rule's check receives) and ``hookimpl`` are re-exported here.
"""

from caselint.engine.context import RuleContext
from caselint.engine.hookspecs import hookimpl
from caselint.rulekit.locate import (
    at_face,
    cell_names,
    finite_point,
    first_cells,
    first_limit,
    point_words,
    worst_ids,
)
from caselint.rulekit.words import fmt, plural, settled

__all__ = ["RuleContext", "at_face", "cell_names", "finite_point", "first_cells",
           "first_limit", "fmt", "hookimpl", "plural", "point_words", "settled", "worst_ids"]
