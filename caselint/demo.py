"""The demo case shipped with caselint: ripening room 3 of an invented fruit co-operative.

``caselint`` users can try every output on it without a mesh of their own; its findings
(a growth-ratio and a non-orthogonality warning, an unassigned-boundary error) are
designed into the mesh by ``examples/ripening-room/make_mesh.py``.
"""

from __future__ import annotations

from pathlib import Path

from caselint.resources import shipped_dir

#: Folder of the demo case inside the shipped examples.
DEMO_FOLDER = "ripening-room"


def demo_case_path() -> Path:
    """Path of the shipped demo case file (``examples/ripening-room/case.yaml``)."""
    path = shipped_dir("examples") / DEMO_FOLDER / "case.yaml"
    if not path.is_file():
        raise FileNotFoundError(f"caselint's demo case is missing: {path}")
    return path
