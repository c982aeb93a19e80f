"""A decomposed case larger than the memory limit, checked streamed: peak memory, time, same
report as the unlimited check.

The case is the one of ``bench_partitions.py`` (the benchmark duct, hexahedra graded to
the walls, ``--procs`` processor folders in slabs, binary files with addressing files). It
is checked with ``caselint check CASE --no-cache --format json`` in fresh processes:

- ``whole``: ``--memory-limit off``, the whole mesh in memory (the reference report);
- ``streamed``: ``--memory-limit LIMIT``: the estimate of the whole mesh is over the
  limit, so the check streams it (``caselint.partition.streaming``: merged on disk one
  processor folder at a time, analysed partition by partition, whole-mesh arrays
  memory-mapped in a scratch folder);
- ``streamed in cgroup`` (``--cgroup``, Linux with the cgroup v1 memory controller and the
  right to make a group, e.g. as root): the same inside a memory cgroup whose limit is
  LIMIT, so the kernel holds the process's memory, page cache of its maps included, to
  it. Skipped with a note where the group cannot be made.

Recorded per run: wall time, exit code, ``VmHWM`` (peak resident set: *includes* the
pages of the memory maps the process touched, which the kernel may drop or write back at
any time), the peak of ``RssAnon`` (private memory, sampled every 20 ms by this script
from /proc/PID/status: the memory that must stay under the limit), and in the cgroup its
``memory.max_usage_in_bytes`` (everything charged to the group, page cache included, at
most the limit), ``memory.failcnt`` (times the limit was hit and pages reclaimed) and
whether the out-of-memory killer ran. Results go into ``benchmarks/README.md`` between
the stream-results markers.

With ``--cluster N`` the streamed check also runs with ``--partitions auto --scheduler``
on a Dask ``LocalCluster`` of N worker processes started by this script (its workers'
largest peak resident set recorded). Every report is compared with the first way's.

Recorded too: the wall time per cell and the largest growth of the used space of the
temporary folder's disk during the run (the scratch arrays, which are unlinked as they
are mapped and so only seen there).

A mesh too large for memory (``--cells 100M``): ``--no-whole`` skips the whole-mesh run
(nothing to compare the report with), ``--limit default`` gives no ``--memory-limit``
(the default share of the memory available), the case is written slab by slab
(``duct_slabs.py``, implied from 20M cells; ``--gz`` compresses its files, a third of the
disk space) and ``--results stream-100m-results`` writes a README block of its own.

Run:  python benchmarks/bench_streaming.py [--cells 4M] [--procs 8] [--limit 1.2GB]
      [--cgroup] [--cluster N] [--work DIR] [--no-whole] [--slabs] [--gz] [--results NAME]
      [--no-readme]
      python benchmarks/bench_streaming.py --cells 100M --procs 64 --gz --no-whole \
      --limit default --work DIR --results stream-100m-results
Not collected by pytest. (A script of its own rather than a way of ``bench_partitions.py``:
that one measures the in-memory partitions and the Dask cluster.)
"""

from __future__ import annotations

import argparse
import contextlib
import json
import os
import platform
import shutil
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE))
sys.path.insert(0, str(HERE.parent / "tests"))

from bench_partitions import (  # noqa: E402
    make_case, parse_size, report_text, worker, workers_peak,
)
from bench_table import publish  # noqa: E402

CGROUP_ROOT = Path("/sys/fs/cgroup/memory")


def status_mb(pid: int, keys=("RssAnon", "RssFile", "VmHWM")) -> dict[str, float]:
    """Fields of /proc/PID/status in MB of 10^6 bytes (empty once the process is gone)."""
    out = {}
    try:
        for line in Path(f"/proc/{pid}/status").read_text().splitlines():
            key, _, value = line.partition(":")
            if key in keys:
                out[key] = int(value.split()[0]) * 1024 / 1e6
    except (OSError, ValueError, IndexError):
        pass
    return out


class Cgroup:
    """A cgroup v1 memory group with a limit (bytes), removed by :meth:`remove`."""

    def __init__(self, limit: int) -> None:
        self.path = CGROUP_ROOT / f"caselint-bench-{os.getpid()}"
        self.path.mkdir()
        (self.path / "memory.limit_in_bytes").write_text(str(limit))
        self.limit = int((self.path / "memory.limit_in_bytes").read_text())

    def enter(self) -> None:
        """Put the calling process in the group (run in the child before exec)."""
        (self.path / "cgroup.procs").write_text(str(os.getpid()))

    def readings(self) -> dict:
        """Peak usage (MB), times the limit was hit, whether the OOM killer ran."""
        oom = (self.path / "memory.oom_control").read_text()
        return {"max_usage_mb": int((self.path / "memory.max_usage_in_bytes").read_text()) / 1e6,
                "failcnt": int((self.path / "memory.failcnt").read_text()),
                "oom_killed": any(line.startswith("oom_kill ") and line.split()[1] != "0"
                                  for line in oom.splitlines()),
                "limit_mb": self.limit / 1e6}

    def remove(self) -> None:
        """Remove the group (its processes have ended)."""
        self.path.rmdir()


def make_cgroup(limit: int) -> tuple[Cgroup | None, str]:
    """A memory cgroup of ``limit`` bytes, or None and why not."""
    if not (CGROUP_ROOT / "memory.limit_in_bytes").is_file():
        return None, f"no cgroup v1 memory controller at {CGROUP_ROOT}"
    try:
        return Cgroup(limit), ""
    except OSError as exc:
        return None, f"cannot make a memory cgroup: {exc}"


def run_once(case: Path, out: Path, extra: list[str], group: Cgroup | None = None) -> dict:
    """One ``caselint check`` in a fresh process, its private memory sampled."""
    argv = ["check", str(case), "--no-cache", "--format", "json", "--output", str(out), *extra]
    child = subprocess.Popen([sys.executable, str(HERE / "bench_partitions.py"), "--worker",
                              *argv], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                             text=True, preexec_fn=group.enter if group else None)
    load = os.getloadavg()[0]
    peak = {"RssAnon": 0.0, "RssFile": 0.0, "disk": 0.0}
    done = threading.Event()
    disk_before = shutil.disk_usage(tempfile.gettempdir()).used

    def sample() -> None:
        while not done.is_set():
            now = status_mb(child.pid)
            now["disk"] = (shutil.disk_usage(tempfile.gettempdir()).used - disk_before) / 1e6
            for key in peak:
                peak[key] = max(peak[key], now.get(key, 0.0))
            time.sleep(0.02)

    sampler = threading.Thread(target=sample, daemon=True)
    sampler.start()
    stdout, stderr = child.communicate()
    done.set()
    sampler.join()
    lines = [line for line in stdout.splitlines() if line.startswith("{")]
    result = json.loads(lines[-1]) if lines else {"wall_s": float("nan"), "code": child.returncode,
                                                  "hwm_mb": float("nan")}
    result["hwm_mb"] *= 2**20 / 1e6             # bench_workers gives MiB
    result.update(anon_peak_mb=peak["RssAnon"], file_peak_mb=peak["RssFile"],
                  scratch_peak_gb=peak["disk"] / 1e3, load=load,
                  stderr=[line for line in stderr.splitlines() if line.strip()][-2:])
    if group is not None:
        result.update(group.readings())
    return result


def measure(case: Path, limit: str, cgroup: bool, whole: bool = True,
            workers: int = 0, local: bool = True) -> tuple[dict, str]:
    """The whole run (unless not ``whole``), the streamed run, (optionally) the streamed
    run in a cgroup and on a ``LocalCluster`` of ``workers`` processes (``--partitions
    auto --scheduler``); ``limit`` "default": no ``--memory-limit`` (the default share of
    the memory available); not ``local``: no streamed run here (with ``workers``, the
    cluster's alone). Each report is compared with the first run's."""
    rows, note = {}, ""
    limited = [] if limit == "default" else ["--memory-limit", limit]
    ways = [("whole", ["--memory-limit", "off"], None)] if whole else []
    if local:
        ways.append(("streamed", limited, None))
    group = None
    if cgroup:
        from caselint.mesh.limits import parse_size as size_of

        group, note = make_cgroup(size_of(limit))
        if group is not None:
            ways.append(("streamed in cgroup", limited, group))
    with contextlib.ExitStack() as stack:
        if workers:
            import distributed

            cluster = stack.enter_context(distributed.LocalCluster(
                n_workers=workers, threads_per_worker=1, processes=True,
                dashboard_address=None))
            ways.append((f"streamed on a {workers}-worker cluster",
                         [*limited, "--partitions", "auto", "--scheduler",
                          cluster.scheduler_address], None))
        try:
            for name, options, in_group in ways:
                out = case.parent / f"report-{name.replace(' ', '-')}.json"
                out.unlink(missing_ok=True)
                rows[name] = run_once(case, out, options, in_group)
                rows[name]["report"] = report_text(out)
                if "cluster" in name:
                    rows[name]["workers_mb"] = workers_peak(cluster.scheduler_address)
        finally:
            if group is not None:
                group.remove()
    first = next(iter(rows.values()))["report"]
    for index, row in enumerate(rows.values()):
        report = row.pop("report")
        row["same"] = None if index == 0 else (first is not None and report == first)
    return rows, note


def table(rows: dict, counts: dict, args, note: str) -> str:
    """The Markdown results block."""
    lines = [
        f"Measured {time.strftime('%Y-%m-%d')} on {os.cpu_count()} cores, Python "
        f"{platform.python_version()}, {platform.machine()}; {counts['cells']:,} hexahedra "
        f"({counts['faces']:,} faces, {counts['points']:,} points) in {args.procs} processor "
        f"folders (binary{', gzip' if args.gz else ''}, addressing files"
        f"{', written slab by slab by duct_slabs.py' if args.slabs else ''}); one run per way, "
        f"each in a fresh process; limit {args.limit}. MB = 10^6 bytes; scratch GB: the "
        f"largest growth of the used space of the temporary folder's disk during the run.",
        "",
        "| way | exit | wall s | us per cell | VmHWM MB | RssAnon peak MB | RssFile peak MB "
        "| scratch GB | cgroup max usage MB | cgroup failcnt | workers' peak RSS MB (each) "
        f"| report equal to {next(iter(rows))}'s | load average before |",
        "|---|---:|---:|---:|---:|---:|---:|---:|---:|---:|---:|---|---:|",
    ]
    for name, row in rows.items():
        usage = f"{row['max_usage_mb']:.0f} of {row['limit_mb']:.0f}" if "max_usage_mb" in row else "-"
        fails = str(row.get("failcnt", "-")) + (" (OOM kill)" if row.get("oom_killed") else "")
        same = "-" if row["same"] is None else "yes" if row["same"] else "no"
        workers = f"{row['workers_mb']:.0f}" if "workers_mb" in row else "-"
        lines.append(f"| {name} | {row['code']} | {row['wall_s']:.1f} | "
                     f"{row['wall_s'] / counts['cells'] * 1e6:.2f} | {row['hwm_mb']:.0f} | "
                     f"{row['anon_peak_mb']:.0f} | {row['file_peak_mb']:.0f} | "
                     f"{row['scratch_peak_gb']:.1f} | {usage} | {fails} | {workers} | {same} | "
                     f"{row['load']:.1f} |")
    if note:
        lines.append(f"\ncgroup run skipped: {note}")
    for name, row in rows.items():
        if row["code"] not in (0, 1) and row["stderr"]:
            lines.append(f"\n{name}: {row['stderr'][-1]}")
    return "\n".join(lines)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cells", default="4M", help="about this many cells (default 4M)")
    parser.add_argument("--procs", type=int, default=8, help="processor folders (default 8)")
    parser.add_argument("--limit", default="1.2GB", help="the memory limit (default 1.2GB)")
    parser.add_argument("--cgroup", action="store_true",
                        help="also run the streamed check inside a memory cgroup of the limit")
    parser.add_argument("--work", help="folder for the case (default: a temporary one; an "
                                       "existing case there is reused)")
    parser.add_argument("--cluster", type=int, default=0, metavar="N",
                        help="also stream on a LocalCluster of N worker processes")
    parser.add_argument("--cluster-only", action="store_true",
                        help="with --cluster: only the cluster's run (compare its report "
                             "with an earlier run's yourself)")
    parser.add_argument("--no-whole", action="store_true",
                        help="skip the whole-mesh run (a mesh too large for memory)")
    parser.add_argument("--slabs", action="store_true",
                        help="write the case slab by slab (duct_slabs.py; implied from 20M)")
    parser.add_argument("--gz", action="store_true", help="gzip the case's files")
    parser.add_argument("--results", default="stream-results",
                        help="name of the README block to write (default stream-results)")
    parser.add_argument("--no-readme", action="store_true", help="print the table only")
    args = parser.parse_args()
    args.slabs = args.slabs or parse_size(args.cells) >= 20_000_000
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(args.work or tmp)
        folder.mkdir(parents=True, exist_ok=True)
        found = existing_case(folder)
        if found is None:
            if args.slabs:
                from duct_slabs import make_slab_case

                found = make_slab_case(parse_size(args.cells), args.procs, folder, gz=args.gz,
                                       progress=True)
            else:
                found = make_case(parse_size(args.cells), args.procs, folder)
            (folder / "counts.json").write_text(json.dumps(found[1]))
        case, counts = found
        rows, note = measure(case, args.limit, args.cgroup, whole=not args.no_whole,
                             workers=args.cluster, local=not args.cluster_only)
    text = table(rows, counts, args, note)
    publish(text + "\n", f"<!-- {args.results}:start -->", f"<!-- {args.results}:end -->",
            readme=not args.no_readme)


def existing_case(folder: Path) -> tuple[Path, dict] | None:
    """The case made by an earlier run in ``folder``, with its counts, or None."""
    case, counts = folder / "duct.caselint.yaml", folder / "counts.json"
    if case.is_file() and counts.is_file():
        return case, json.loads(counts.read_text())
    return None


if __name__ == "__main__":
    if len(sys.argv) > 1 and sys.argv[1] == "--worker":
        worker(sys.argv[2:])
    else:
        main()
