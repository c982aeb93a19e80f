"""The long fuzz run: at least 10,000 generated case files per property, result recorded.

    python benchmarks/fuzz_long.py                 # 10,000 examples each
    python benchmarks/fuzz_long.py --examples 500 --no-record

It runs the two properties of tests/fuzz_properties.py on case files from
tests/case_fuzzing.py (the same ones the bounded tests in tests/test_fuzz_case_file.py and
tests/test_fuzz_check.py run a few hundred times):

- *load*: ``caselint.manifest.loader.load_case`` on a generated case file, in-process;
- *check*: ``caselint check CASE --format json`` through ``caselint.cli.main``,
  in-process, against a small hexahedral mesh with the groups the case files name.

Unlike the tests it does not stop at the first failure: each failure is counted and the
first few distinct ones are written down with the text that caused them. The result
(examples, failures, duration, slowest example, peak memory, date, seed) goes to
benchmarks/fuzz-latest.md unless ``--no-record`` is given.
"""

from __future__ import annotations

import argparse
import datetime as dt
import os
import sys
import tempfile
import time
import traceback
from dataclasses import dataclass, field
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))

from bench_workers import hwm_mb  # noqa: E402  (benchmarks/ is not a package)

TESTS = HERE.parent / "tests"
RESULT = HERE / "fuzz-latest.md"
#: Distinct failures written down per property (all are counted).
MAX_RECORDED = 10


@dataclass
class Tally:
    """What one property's run found."""

    name: str
    examples: int = 0
    outcomes: dict[str, int] = field(default_factory=dict)
    failures: int = 0
    distinct: dict[str, str] = field(default_factory=dict)   # first line -> input text
    seconds: float = 0.0
    slowest: float = 0.0

    def record(self, outcome: str, took: float) -> None:
        self.examples += 1
        self.outcomes[outcome] = self.outcomes.get(outcome, 0) + 1
        self.slowest = max(self.slowest, took)

    def fail(self, exc: BaseException, text: str) -> None:
        self.failures += 1
        if isinstance(exc, AssertionError):
            head = f"AssertionError: {exc}".split("\n")[0]
        else:
            last = traceback.extract_tb(exc.__traceback__)[-1]
            head = f"{type(exc).__name__}: {exc} (at {Path(last.filename).name}:{last.lineno})"
        head = head[:300]
        if head not in self.distinct and len(self.distinct) < MAX_RECORDED:
            self.distinct[head] = text


def run(examples: int, seed: int, only: str | None = None) -> tuple[list[Tally], float]:
    """Run the properties ``examples`` times each; return their tallies and the seconds."""
    from hypothesis import HealthCheck, Phase, given, settings
    from hypothesis import seed as hypothesis_seed
    from jsonschema import Draft202012Validator

    import case_fuzzing as cf
    import fuzz_properties as fp
    from caselint.report.json_report import report_schema
    from test_cli import run_cli

    folder = Path(tempfile.mkdtemp(prefix="caselint-fuzz-"))
    cf.write_meshes(folder)
    validator = Draft202012Validator(report_schema())
    case = folder / "case.yaml"
    options = settings(max_examples=examples, deadline=None, database=None,
                       phases=[Phase.generate], suppress_health_check=list(HealthCheck))
    tallies = []

    def property_runner(tally: Tally, check) -> None:
        @hypothesis_seed(seed)
        @options
        @given(cf.case_texts)
        def one(text: str) -> None:
            case.write_text(text, encoding="utf-8", errors="surrogatepass")
            start = time.perf_counter()
            try:
                outcome = check(case)
            except Exception as exc:  # noqa: BLE001 - every failure is counted, not raised
                tally.fail(exc, text)
                outcome = "FAILED"
            tally.record(str(outcome), time.perf_counter() - start)

        start = time.perf_counter()
        one()
        tally.seconds = time.perf_counter() - start
        tallies.append(tally)

    began = time.perf_counter()
    if only in (None, "load"):
        property_runner(Tally("load"), fp.check_load)
    if only in (None, "check"):
        property_runner(Tally("check"),
                        lambda path: f"exit {fp.check_cli(path, run_cli, validator)}")
    return tallies, time.perf_counter() - began


def markdown(tallies: list[Tally], seconds: float, seed: int) -> str:
    """The result as the Markdown page recorded in the repository."""
    import hypothesis

    from caselint import __version__

    now = dt.datetime.now(dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC")
    total = sum(t.examples for t in tallies)
    failures = sum(t.failures for t in tallies)
    lines = [
        "# Latest long fuzz run",
        "",
        "Written by `benchmarks/fuzz_long.py` (see its docstring); do not edit by hand.",
        "",
        f"- date: {now}",
        f"- caselint {__version__}, hypothesis {hypothesis.__version__}, "
        f"Python {sys.version.split()[0]}, {os.cpu_count()} CPUs",
        f"- seed: {seed}",
        f"- examples: {total} in total; failures: {failures}",
        f"- duration: {seconds:.0f} s; peak memory (VmHWM): {hwm_mb():.0f} MB",
        "",
        "| property | examples | failures | outcomes | seconds | slowest example (s) |",
        "|---|---:|---:|---|---:|---:|",
    ]
    for t in tallies:
        outcomes = ", ".join(f"{k}: {v}" for k, v in sorted(t.outcomes.items()))
        lines.append(f"| {t.name} | {t.examples} | {t.failures} | {outcomes} | "
                     f"{t.seconds:.0f} | {t.slowest:.2f} |")
    for t in tallies:
        if not t.distinct:
            continue
        lines += ["", f"## Failures of `{t.name}` (first {len(t.distinct)} distinct)", ""]
        for head, text in t.distinct.items():
            shown = text if len(text) < 1500 else text[:1500] + "\n... (cut)"
            lines += [f"- {head}", "", "```yaml", shown.replace("```", "` ` `"), "```", ""]
    return "\n".join(lines) + "\n"


def main(argv: list[str] | None = None) -> int:
    """Run the long fuzz; exit 1 when any example failed."""
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--examples", type=int, default=10_000,
                        help="examples per property (default: 10000)")
    parser.add_argument("--seed", type=int, default=20_261_202)
    parser.add_argument("--only", choices=("load", "check"),
                        help="run one property (implies --no-record)")
    parser.add_argument("--no-record", action="store_true",
                        help=f"print the result instead of writing {RESULT.name}")
    args = parser.parse_args(argv)
    os.environ["CASELINT_DISABLE_PLUGIN_AUTOLOAD"] = "1"  # installed packs stay out, as in tests
    os.environ.pop("CASELINT_DEBUG", None)
    sys.path.insert(0, str(TESTS))
    tallies, seconds = run(args.examples, args.seed, args.only)
    text = markdown(tallies, seconds, args.seed)
    if args.no_record or args.only:
        print(text)
    else:
        RESULT.write_text(text, encoding="utf-8")
        print(f"wrote {RESULT}")
        for t in tallies:
            print(f"{t.name}: {t.examples} examples, {t.failures} failures, {t.seconds:.0f} s")
    return 1 if any(t.failures for t in tallies) else 0


if __name__ == "__main__":
    sys.exit(main())
