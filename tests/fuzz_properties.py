"""The properties every case file must satisfy, checked by the fuzz tests and the long run.

Loading ends in a :class:`~caselint.manifest.case.Case` whose numbers are all finite, or
in a :class:`~caselint.errors.CaseFileError` naming the file, a line inside it and, for
anything past the YAML syntax, the key. ``caselint check --format json`` exits 0, 1 or 2:
on 0 and 1 it prints strict JSON (NaN and infinity refused) valid against the report
schema, no rule crashes and nothing goes to stderr; on 2 it prints a ``file:line:``
message with the input's control characters escaped. Each example must finish within
:data:`MAX_SECONDS`. The case files come from tests/case_fuzzing.py.
"""

from __future__ import annotations

import dataclasses
import json
import math
import re
import time
import unicodedata
from pathlib import Path
from typing import Any

#: Seconds one example may take before it counts as a hang (generous: CI machines are slow).
MAX_SECONDS = 20.0

#: Errors about the whole file, which name no line.
WHOLE_FILE = ("the file holds no YAML document", "file not found", "is larger than")
#: Errors found before any key is known (syntax, encoding, structure), which may name no key.
NO_KEY = ("YAML syntax error", "unreadable character", "the file is not UTF-8",
          "the file holds no YAML document", "the top level must be a mapping",
          "a key must be a plain value", "nested too deeply", "is larger than",
          "missing required key", "unknown key ''", "unsupported tag")


def check_load(path: Path) -> str:
    """Load ``path``; return "ok" or "error". AssertionError says what broke the contract."""
    from caselint.errors import CaseFileError
    from caselint.manifest.loader import load_case

    text = path.read_text(encoding="utf-8", errors="replace")
    start = time.perf_counter()
    try:
        case = load_case(path)
    except CaseFileError as exc:
        assert_good_error(exc, path, text)
        outcome = "error"
    else:
        bad = list(non_finite(case))
        assert not bad, f"the Case holds non-finite numbers at {bad}"
        outcome = "ok"
    took = time.perf_counter() - start
    assert took < MAX_SECONDS, f"loading took {took:.1f} s"
    return outcome


def assert_good_error(exc: Any, path: Path, text: str) -> None:
    """A CaseFileError names the file, a line inside it and, past the syntax, a key;
    several problems are each such an error, listed one per line under a count."""
    from caselint.errors import MAX_REPORTED_PROBLEMS, CaseFileErrors

    if isinstance(exc, CaseFileErrors):
        from caselint.errors import printable

        lines = str(exc).split("\n")     # one line a problem, whatever its keys hold
        assert lines[0] == f"{path}: {len(exc.problems) + exc.more} problems", lines[0]
        assert len(lines) == 1 + len(exc.problems) + (1 if exc.more else 0), lines
        assert 2 <= len(exc.problems) <= MAX_REPORTED_PROBLEMS
        assert (exc.line, exc.key) == (exc.problems[0].line, exc.problems[0].key)
        for problem, line in zip(exc.problems, lines[1:]):
            assert line == f"  {printable(str(problem))}"
            assert_good_error(problem, path, text)
        return
    message = str(exc)
    assert exc.file == str(path), exc.file
    assert message.startswith(str(path)), message
    assert "Traceback" not in message and " object at 0x" not in message, message
    if exc.line is None:
        assert any(w in exc.message for w in WHOLE_FILE), f"no line in: {message}"
    else:
        n_lines = text.count("\n") + 1
        assert 1 <= exc.line <= n_lines + 1, f"line {exc.line} of {n_lines}: {message}"
        assert message.startswith(f"{path}:{exc.line}"), message
    if not exc.key:
        assert any(w in exc.message for w in NO_KEY), f"no key in: {message}"
    else:
        from caselint.errors import printable

        assert f"[{printable(exc.key)}]" in message, message


def non_finite(value: Any, path: str = "case"):
    """Yield the paths of non-finite floats inside a Case (raw document data excluded)."""
    if isinstance(value, float):
        if not math.isfinite(value):
            yield path
    elif dataclasses.is_dataclass(value) and not isinstance(value, type):
        for f in dataclasses.fields(value):
            if f.name not in ("document", "extensions", "lines"):
                yield from non_finite(getattr(value, f.name), f"{path}.{f.name}")
    elif isinstance(value, dict):
        for k, v in value.items():
            yield from non_finite(v, f"{path}.{k}")
    elif isinstance(value, (list, tuple)):
        for i, v in enumerate(value):
            yield from non_finite(v, f"{path}[{i}]")


def strict_json(text: str) -> Any:
    """Parse JSON refusing NaN, Infinity and -Infinity (Python's json accepts them)."""
    def refuse(constant: str) -> Any:
        raise ValueError(f"non-standard JSON constant {constant}")

    return json.loads(text, parse_constant=refuse)


_ERROR_LINE = re.compile(r"^caselint: error: (?P<rest>.*)$")


def check_cli(path: Path, run_cli: Any, validator: Any) -> int:
    """``caselint check PATH --format json``; return its exit code, assert the contract."""
    start = time.perf_counter()
    code, out, err = run_cli("check", str(path), "--format", "json")
    took = time.perf_counter() - start
    assert took < MAX_SECONDS, f"check took {took:.1f} s"
    assert code in (0, 1, 2), f"exit {code}: {err}"
    assert "Traceback" not in err, err
    if code == 2:
        assert out == "", out
        first = err.split("\n")[0]
        match = _ERROR_LINE.match(first)
        assert match, err
        rest_of_first = match["rest"]
        assert rest_of_first.startswith(f"{path}:"), err
        after = rest_of_first[len(str(path)) + 1:]
        several = re.fullmatch(r" (\d+) problems", after)
        if several:     # then one located problem per indented line
            listed = err.rstrip("\n").split("\n")[1:]
            assert 2 <= len(listed) <= int(several[1]) + 1, err
            for line in listed[:int(several[1])]:
                assert re.match(rf"  {re.escape(str(path))}:\d+:", line) or \
                    line.startswith("  ... and "), f"no line in: {line}"
        else:
            assert re.match(r"\d+:", after) or any(w in after for w in WHOLE_FILE), \
                f"no line in: {first}"
        # Control characters from the case file are escaped, never sent to the terminal;
        # newlines stay (a validation error lists further problems on indented lines).
        assert all(c == "\n" or c.isprintable() or unicodedata.category(c) == "Zs"
                   for c in err), repr(err)
        return code
    assert err == "", f"unexpected stderr: {err}"
    document = strict_json(out)
    errors = sorted(validator.iter_errors(document), key=str)
    assert not errors, f"report does not match its schema: {errors[0].message}"
    crashed = [c for case in document["cases"] for c in case["checks"] if c["outcome"] == "error"]
    assert not crashed, f"a rule crashed: {crashed[0]['rule']}: {crashed[0]['reason']}"
    return code
