"""Batch speed: many annual series, local worker processes against a local Dask cluster.

Data: ``--series`` seeded simulated series (default 1,000) of ``--length`` annual values
(default 50) in one wide CSV file, the same kind of processes as ``compare_speed.py`` (AR, MA,
ARMA and random walks on the log scale, invented for timing only).

Each run is the full default work of ``batch FILE --horizon 5``: ``compare_models`` (exhaustive
search, benchmarks, hindcast, residual checks) and a 5-year forecast for every series, records
streamed to a JSON file as they come, exactly as the command line does.

* local: ``run_batch(..., workers=2)`` (two worker processes).
* Dask: a ``LocalCluster`` of two worker processes with one thread each, started in this
  process, each worker warmed on one series (as the local workers are, forked from this
  warmed process), then ``run_batch(..., scheduler=cluster)``. The cluster's start-up and
  warm-up are reported separately and not in the run's wall time.

Peak memory is measured over this process and all its descendants (worker processes, the Dask
worker processes), sampled every 0.1 s, as the largest sum of resident set sizes (RSS: pages
shared between processes, e.g. what forked workers share with the parent, counted once per
process: an upper bound, the figure compared with the target) and of proportional set sizes
(PSS: a page shared by k processes counts 1/k in each; pages shared with programs outside the
tree are split with them too, so on a busy machine this is a lower bound).
CPU seconds of the same processes are reported beside the wall time: on a shared machine the
gap between the two is time spent waiting for a core.

Run: ``.venv/bin/python benchmarks/batch_speed.py [--series 1000] [--workers 2] [--no-dask]``.
"""

from __future__ import annotations

import argparse
import hashlib
import json
import os
import platform
import tempfile
import threading
import time
import warnings
from pathlib import Path

import numpy as np
from scipy.signal import lfilter

import forecasting_core as fc
from forecasting_core._batch import compute_one, iter_batch
from forecasting_core._cli_models import JsonListWriter

PROCESSES = [
    ((0.6,), (), 0),
    ((), (0.5,), 0),
    ((0.5,), (0.3,), 0),
    ((1.0, -0.5), (), 0),
    ((0.4,), (), 1),
    ((), (0.4,), 1),
    ((), (), 1),
]


def write_file(path: Path, series: int, length: int) -> None:
    """One wide CSV: a ``year`` column and one column per simulated series."""
    cols = []
    for k in range(series):
        rng = np.random.default_rng([11, k])
        ar, ma, d = PROCESSES[k % len(PROCESSES)]
        e = rng.normal(scale=0.1, size=length + 100)
        x = lfilter(np.r_[1.0, ma], np.r_[1.0, -np.asarray(ar)], e)[100:]
        if d:
            x = np.cumsum(x)
        cols.append(np.exp(np.log(500.0 + 10 * (k % 50)) + x))
    years = range(2026 - length, 2026)
    with open(path, "w", encoding="utf-8") as fh:
        fh.write("year," + ",".join(f"stock_{k:04d}_t" for k in range(series)) + "\n")
        for i, year in enumerate(years):
            fh.write(f"{year}," + ",".join(f"{c[i]:.2f}" for c in cols) + "\n")


# ---------------------------------------------------------------------------------------------
# Memory of the process tree
# ---------------------------------------------------------------------------------------------


def _pss_proc(pid: int) -> int:
    """Proportional set size in bytes from /proc/PID/smaps_rollup (0 when unreadable)."""
    try:
        with open(f"/proc/{pid}/smaps_rollup", encoding="ascii") as fh:
            for line in fh:
                if line.startswith("Pss:"):
                    return int(line.split()[1]) * 1024
    except (OSError, ValueError):
        pass
    return 0


def _tree_proc(root: int) -> tuple[int, int]:
    """(RSS, PSS) in bytes of ``root`` and its descendants, from /proc (no psutil)."""
    parent: dict[int, int] = {}
    rss: dict[int, int] = {}
    page = os.sysconf("SC_PAGE_SIZE")
    for entry in os.listdir("/proc"):
        if not entry.isdigit():
            continue
        try:
            with open(f"/proc/{entry}/stat", encoding="ascii", errors="replace") as fh:
                fields = fh.read().rsplit(")", 1)[1].split()
            with open(f"/proc/{entry}/statm", encoding="ascii") as fh:
                rss[int(entry)] = int(fh.read().split()[1]) * page
            parent[int(entry)] = int(fields[1])
        except (OSError, IndexError, ValueError):
            continue
    total_rss = total_pss = 0
    todo = [root]
    while todo:
        pid = todo.pop()
        total_rss += rss.get(pid, 0)
        total_pss += _pss_proc(pid)
        todo.extend(c for c, p in parent.items() if p == pid)
    return total_rss, total_pss


def _tree_psutil(root: int, cpu: dict[int, tuple[float, float]]) -> tuple[int, int]:
    """(RSS, PSS) in bytes of ``root`` and its descendants; CPU seconds per pid into ``cpu``."""
    import psutil

    me = psutil.Process(root)
    total_rss = total_pss = 0
    for proc in [me, *me.children(recursive=True)]:
        try:
            total_rss += proc.memory_info().rss
            total_pss += _pss_proc(proc.pid)
            t = proc.cpu_times()
            used = t.user + t.system
            cpu[proc.pid] = (cpu.get(proc.pid, (used, used))[0], used)
        except psutil.Error:
            pass
    return total_rss, total_pss


class PeakMemory:
    """Samples the memory of this process tree in a thread.

    ``peak_pss`` is the largest sum of proportional set sizes (each shared page divided among
    the processes that share it: the memory the tree really holds; forked workers share most
    of their pages with this process); ``peak_rss`` the largest sum of resident set sizes
    (shared pages counted once per process: an upper bound). With psutil it also sums the CPU
    seconds the tree used while sampling (``cpu``; None without psutil), which shows how much
    of the wall time went to waiting for a busy machine.
    """

    def __init__(self, every: float = 0.1) -> None:
        self._cpu: dict[int, tuple[float, float]] = {}
        try:
            import psutil  # noqa: F401

            self._measure = lambda pid: _tree_psutil(pid, self._cpu)
            self.method = "psutil"
        except ImportError:
            self._measure, self.method = _tree_proc, "/proc"
        self._every, self.peak_rss, self.peak_pss = every, 0, 0
        self._stop = threading.Event()
        self._thread = threading.Thread(target=self._run, daemon=True)

    @property
    def cpu(self) -> float | None:
        """CPU seconds (user + system) of the process tree between the first and last sample."""
        if self.method != "psutil":
            return None
        return sum(last - first for first, last in self._cpu.values())

    def _sample(self) -> None:
        rss, pss = self._measure(os.getpid())
        self.peak_rss, self.peak_pss = max(self.peak_rss, rss), max(self.peak_pss, pss)

    def _run(self) -> None:
        while not self._stop.is_set():
            self._sample()
            self._stop.wait(self._every)

    def __enter__(self) -> PeakMemory:
        self._sample()
        self._thread.start()
        return self

    def __exit__(self, *exc: object) -> None:
        self._stop.set()
        self._thread.join()
        self._sample()


# ---------------------------------------------------------------------------------------------
# Runs
# ---------------------------------------------------------------------------------------------


def run(path: Path, out: Path, label: str, **engine) -> dict:
    """One batch run, records streamed to ``out``; wall time, peak memory, failures, hash."""
    failed = 0
    done = 0

    def progress(d: int, total: int, _name: str) -> None:
        nonlocal done
        done = d
        if d % max(total // 10, 1) == 0 or d == total:
            print(f"  {label}: {d}/{total} series, {time.perf_counter() - start:.1f} s", flush=True)

    with PeakMemory() as mem:
        start = time.perf_counter()
        with open(out, "w", encoding="utf-8") as fh:
            writer = JsonListWriter(fh)
            for record in iter_batch(path, 5, progress=progress, **engine):
                writer.add(record)
                failed += "error" in record
            writer.close()
        wall = time.perf_counter() - start
    return {
        "wall": wall,
        "peak_pss": mem.peak_pss,
        "peak_rss": mem.peak_rss,
        "cpu": mem.cpu,
        "method": mem.method,
        "series": done,
        "failed": failed,
        "sha256": hashlib.sha256(out.read_bytes()).hexdigest(),
    }


def warm_worker(path: str) -> None:
    """Load the compiled code in a Dask worker and forecast one series (cluster start-up)."""
    import forecasting_core
    from forecasting_core._batch import compute_one as one

    forecasting_core.warm_up()
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        one(next(iter(forecasting_core.read_table(path).series.values())), 5)


def machine() -> str:
    cpu = platform.processor() or "unknown CPU"
    try:
        with open("/proc/cpuinfo", encoding="utf-8") as fh:
            cpu = next(line.split(":", 1)[1].strip() for line in fh if line.startswith("model name"))
    except (OSError, StopIteration):
        pass
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else os.cpu_count()
    load = ", ".join(f"{x:.1f}" for x in os.getloadavg())
    return f"{cpu}; {cores} cores available; load average {load}; Python {platform.python_version()}"


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--series", type=int, default=1000, help="number of series (default 1000)")
    parser.add_argument("--length", type=int, default=50, help="annual values per series (default 50)")
    parser.add_argument("--workers", type=int, default=2, help="local workers and Dask workers (default 2)")
    parser.add_argument("--no-dask", action="store_true", help="local run only")
    args = parser.parse_args()

    print(f"Machine: {machine()}")
    print(f"haulcast {fc.__version__}; {args.series} series of {args.length} annual values, horizon 5")
    fc.warm_up()  # compiled screening code loaded before workers start (forked workers share it)
    results = {}
    with tempfile.TemporaryDirectory(prefix="haulcast-batch-") as tmp:
        path = Path(tmp) / "stocks.csv"
        write_file(path, args.series, args.length)
        # Not timed: one series inline, so that every compiled function is loaded (from numba's
        # disk cache, or compiled once) before the workers start.
        first = next(iter(fc.read_table(path).series.items()))
        t0 = time.perf_counter()
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            compute_one(first[1], 5)
        print(f"Warm-up on one series (not timed): {time.perf_counter() - t0:.1f} s")
        results["local"] = run(path, Path(tmp) / "local.json", "local", workers=args.workers)
        startup = None
        if not args.no_dask:
            try:
                from distributed import LocalCluster
            except ImportError:
                print("Dask run skipped: dask/distributed not installed (pip install '.[cluster]').")
            else:
                t0 = time.perf_counter()
                with LocalCluster(
                    n_workers=args.workers, threads_per_worker=1, processes=True,
                    dashboard_address=None,
                ) as cluster:  # fmt: skip
                    from distributed import Client

                    with Client(cluster, set_as_default=False) as client:
                        client.run(warm_worker, str(path))  # as the forked local workers are
                    startup = time.perf_counter() - t0
                    results["Dask"] = run(path, Path(tmp) / "dask.json", "Dask", scheduler=cluster)

    print()
    names = list(results)
    width = 26
    print(f"{'':{width}}" + "".join(f"{n:>14}" for n in names) + ("      Dask/local" if len(names) == 2 else ""))

    def row(label: str, values: list[float], fmt: str, ratio: bool = True) -> None:
        cells = "".join(f"{v:>14{fmt}}" for v in values)
        tail = f"{values[1] / values[0]:>16.2f}" if ratio and len(values) == 2 and values[0] else ""
        print(f"{label:{width}}{cells}{tail}")

    row("wall time (s)", [results[n]["wall"] for n in names], ".1f")
    row("ms per series", [1000 * results[n]["wall"] / max(results[n]["series"], 1) for n in names], ".0f")
    row("peak memory, RSS sum (MB)", [results[n]["peak_rss"] / 2**20 for n in names], ".0f")
    row("peak memory, PSS sum (MB)", [results[n]["peak_pss"] / 2**20 for n in names], ".0f")
    if all(results[n]["cpu"] is not None for n in names):
        row("CPU s, all processes", [results[n]["cpu"] for n in names], ".1f")
        row("CPU ms per series", [1000 * results[n]["cpu"] / max(results[n]["series"], 1) for n in names], ".0f")
    row("failed series", [results[n]["failed"] for n in names], "d", ratio=False)
    if startup is not None:
        print(f"Dask cluster start-up and worker warm-up (not in the wall time): {startup:.1f} s")
    if len(names) == 2:
        same = results["local"]["sha256"] == results["Dask"]["sha256"]
        print(f"Records identical (JSON SHA-256): {'yes' if same else 'NO'}")
    print(
        f"Memory of this process and all its descendants, sampled every 0.1 s with "
        f"{results['local']['method']}: RSS counts shared pages once per process (upper bound), PSS splits them."
    )
    print(
        f"Targets (1000 series, 2 workers): wall <= 60 s, peak memory < 1536 MB. "
        f"Projected at this rate for 1000 series: "
        f"{results['local']['wall'] / max(results['local']['series'], 1) * 1000:.0f} s local."
    )
    print(json.dumps({n: {k: v for k, v in r.items() if k != "method"} for n, r in results.items()}))


if __name__ == "__main__":
    main()
