"""Finding case files: folders given on the command line expand to the case files below.

``caselint check cases/`` checks every file named ``case.yaml`` or ``case.yml``, and every
``*.caselint.yaml`` / ``*.caselint.yml``, in ``cases/`` and its sub-folders, in sorted
order; hidden folders (``.git``, ``.venv``...) are not searched. A file given by name is
checked whatever it is called. The same names are what the pre-commit hook matches.
"""

from __future__ import annotations

import os
from typing import Iterable

from caselint.errors import UsageError

#: File names that are always case files.
CASE_FILE_NAMES: tuple[str, ...] = ("case.yaml", "case.yml")
#: Endings that mark a case file with a name of its own, e.g. ``hood.caselint.yaml``.
CASE_FILE_SUFFIXES: tuple[str, ...] = (".caselint.yaml", ".caselint.yml")


def is_case_file_name(name: str) -> bool:
    """True for ``case.yaml``, ``case.yml`` and names ending ``.caselint.yaml``/``.yml``."""
    return name in CASE_FILE_NAMES or name.endswith(CASE_FILE_SUFFIXES)


def case_files_below(folder: str) -> list[str]:
    """Every case file below ``folder``, sorted by path, hidden folders skipped."""
    found = []
    for root, dirs, files in os.walk(folder):
        dirs[:] = sorted(d for d in dirs if not d.startswith("."))
        found += [os.path.join(root, name) for name in files if is_case_file_name(name)]
    return sorted(found, key=lambda p: os.path.relpath(p, folder).replace(os.sep, "/"))


def expand_case_paths(paths: Iterable[str]) -> list[str]:
    """The paths with each folder replaced by the case files below it; repeats dropped.

    :raises UsageError: a folder holds no case file.
    """
    out: list[str] = []
    for path in paths:
        if os.path.isdir(path):
            below = case_files_below(path)
            if not below:
                names = ", ".join(CASE_FILE_NAMES + tuple("*" + s for s in CASE_FILE_SUFFIXES))
                raise UsageError(f"no case files in folder {path} (looked for {names})")
            out += below
        else:
            out.append(path)
    unique: dict[str, str] = {}
    for path in out:
        unique.setdefault(os.path.normpath(path), path)
    return list(unique.values())
