"""What the partition tests compare: walk results field by field to the bit, and the JSON
report of ``caselint check`` run in a fresh process (its run time removed)."""

from __future__ import annotations

import dataclasses
import json
import subprocess
import sys
from pathlib import Path

import numpy as np


def assert_same_fields(got, ref) -> None:
    """Every field of the dataclass ``got`` equals ``ref``'s: arrays of the same dtype and
    shape, equal to the bit (NaN where ``ref`` has NaN)."""
    for f in dataclasses.fields(ref):
        a, b = getattr(got, f.name), getattr(ref, f.name)
        if not isinstance(b, np.ndarray):
            assert a == b, f.name
            continue
        assert a.dtype == b.dtype and a.shape == b.shape, f.name
        assert np.array_equal(a, b, equal_nan=b.dtype.kind == "f"), f.name


def check_report(case: Path, *options: str) -> tuple[int, dict | None, str]:
    """Exit code, JSON report (None when none was written) and stderr of ``caselint check
    CASE --no-cache --format json`` with ``options``."""
    out = case.parent / f"report-{case.stem}.json"
    out.unlink(missing_ok=True)
    done = subprocess.run([sys.executable, "-m", "caselint", "check", str(case), "--no-cache",
                           "--format", "json", "--output", str(out), *options],
                          capture_output=True, text=True, timeout=600)
    if not out.is_file():
        return done.returncode, None, done.stderr
    report = json.loads(out.read_text())
    for case_report in report["cases"]:
        case_report.pop("duration_s", None)
    return done.returncode, report, done.stderr
