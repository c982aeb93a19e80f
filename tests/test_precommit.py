"""caselint as a pre-commit hook: the shipped hook definition run by pre-commit itself.

pre-commit would install the hook's own environment from the repository (which needs the
network), so the test copies the shipped ``.pre-commit-hooks.yaml`` entry into a local
hook of a temporary git repository, with ``language: system`` and the ``caselint``
executable of this environment: same id, entry arguments, file pattern and filename
passing, run offline.
"""

from __future__ import annotations

import os
import re
import shutil
import subprocess
import sys
from pathlib import Path

import pytest
import yaml
from test_cli_e2e import write_block_mesh, write_case

import pre_commit  # noqa: E402,F401  (a test dependency: the hook must really run)

ROOT = Path(__file__).resolve().parents[1]


def _hook() -> dict:
    (hook,) = yaml.safe_load((ROOT / ".pre-commit-hooks.yaml").read_text(encoding="utf-8"))
    return hook


def _run(args: list[str], cwd: Path, env: dict[str, str]) -> subprocess.CompletedProcess:
    return subprocess.run(args, cwd=cwd, env=env, capture_output=True, text=True, timeout=300)


@pytest.fixture
def repo(tmp_path):
    """A git repository with a local caselint hook built from the shipped definition."""
    if shutil.which("git") is None:
        pytest.skip("git is not installed")
    hook = _hook()
    executable = Path(sys.executable).with_name("caselint")
    assert executable.exists(), executable
    program, *arguments = hook["entry"].split()
    assert program == "caselint"
    local = {key: hook[key] for key in ("id", "name", "files", "pass_filenames",
                                        "require_serial")}
    local.update(language="system", entry=" ".join([str(executable), *arguments]))
    root = tmp_path / "repo"
    root.mkdir()
    (root / ".pre-commit-config.yaml").write_text(
        yaml.safe_dump({"repos": [{"repo": "local", "hooks": [local]}]}), encoding="utf-8")
    env = {**os.environ, "PRE_COMMIT_HOME": str(tmp_path / "pre-commit-home"),
           "GIT_CONFIG_NOSYSTEM": "1", "HOME": str(tmp_path), "NO_COLOR": "1",
           "CASELINT_DISABLE_PLUGIN_AUTOLOAD": "1"}
    _run(["git", "init", "-q"], root, env).check_returncode()
    return root, env


#: 11 cells of 0.1 m each way: clean under the shipped `general` rule set (no volume jump,
#: orthogonal faces, more cells across the block than the gap rule asks for).
GRID = [0.1 * i for i in range(12)]


def _add_case(root: Path, folder: str, xs: list[float]) -> Path:
    path = root / folder
    path.mkdir(parents=True)
    case = write_case(path, write_block_mesh(path / "room.msh", xs=xs, ys=GRID, zs=GRID))
    return case.rename(path / "case.yaml")


def _pre_commit(root: Path, env: dict[str, str]) -> subprocess.CompletedProcess:
    _run(["git", "add", "-A"], root, env).check_returncode()
    return _run([sys.executable, "-m", "pre_commit", "run", "--all-files", "--color", "never"],
                root, env)


def test_shipped_hook_definition():
    hook = _hook()
    assert hook["id"] == "caselint" and hook["entry"] == "caselint check"
    assert hook["language"] == "python" and hook["pass_filenames"] is True
    pattern = re.compile(hook["files"])
    for name, match in (("case.yaml", True), ("rooms/a/case.yml", True),
                        ("rooms/hood.caselint.yaml", True), ("rooms/notes.yaml", False),
                        ("rooms/mycase.yaml", False), ("case.yaml.bak", False)):
        assert bool(pattern.search(name)) is match, name


def test_clean_cases_pass_and_other_yaml_is_left_alone(repo):
    root, env = repo
    _add_case(root, "rooms/a", GRID)
    _add_case(root, "rooms/b", GRID)
    # not a case file name: the hook must not pass it (caselint would reject it, exit 2)
    (root / "rooms" / "notes.yaml").write_text("broken: [\n", encoding="utf-8")
    result = _pre_commit(root, env)
    assert result.returncode == 0, result.stdout + result.stderr
    assert "caselint" in result.stdout and "Passed" in result.stdout


def test_a_failing_case_fails_the_hook_with_its_finding(repo):
    root, env = repo
    _add_case(root, "rooms/a", GRID)
    # x spacings 0.1, ..., 0.1, 0.4 m: a size jump of 4, above the error limit 3
    _add_case(root, "rooms/jump", GRID + [1.5])
    result = _pre_commit(root, env)
    assert result.returncode == 1, result.stdout + result.stderr
    assert "Failed" in result.stdout
    assert "growth-ratio" in result.stdout and " 4 " in result.stdout
    # both case files reached caselint in one call (pre-commit splits a file list across
    # processes only beyond 4 files), each mesh found beside its case file
    assert "Result for 2 cases:" in result.stdout
