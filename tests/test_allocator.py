"""Allocator settings of a caselint process (caselint/allocator.py), each in a fresh interpreter."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import pytest

_PROBE = """
import json, sys
from caselint import cli
from caselint.allocator import _done
try:
    from numpy._core import multiarray
except ImportError:
    from numpy.core import multiarray
before = dict(_done)
code = cli.main(sys.argv[1:])
# _set_madvise_hugepage returns the previous setting: False once caselint turned it off
print(json.dumps({"before": before, "after": dict(_done), "code": code,
                  "hugepage_was": bool(multiarray._set_madvise_hugepage(False))}))
"""


def _probe(env_extra: dict[str, str]) -> dict:
    env = {**os.environ, **env_extra}
    done = subprocess.run([sys.executable, "-c", _PROBE, "rules"], capture_output=True,
                          text=True, env=env, timeout=120)
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout.strip().splitlines()[-1])


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="glibc settings are Linux-only")
def test_the_command_line_tunes_its_own_process():
    out = _probe({"CASELINT_ALLOCATOR": ""})
    assert out["before"] == {}                       # importing caselint changes nothing
    assert out["code"] == 0
    assert out["after"]["numpy_hugepage_off"] is True
    assert out["hugepage_was"] is False
    try:
        glibc = (os.confstr("CS_GNU_LIBC_VERSION") or "").startswith("glibc")
    except (ValueError, OSError):
        glibc = False
    assert out["after"]["glibc_heap"] is glibc


def test_the_settings_can_be_left_alone():
    out = _probe({"CASELINT_ALLOCATOR": "default"})
    assert out["after"] == {}
    # numpy's own default, read in an interpreter that never imports caselint
    plain = subprocess.run(
        [sys.executable, "-c", "try:\n from numpy._core import multiarray\nexcept ImportError:\n"
         " from numpy.core import multiarray\nprint(multiarray._set_madvise_hugepage(False))"],
        capture_output=True, text=True, timeout=60)
    assert out["hugepage_was"] is (plain.stdout.strip() == "True")
