"""Running the partition analyses: from the cache where nothing changed, else
in worker processes on this machine, or on a Dask cluster when a scheduler
address is given.

Partitions are independent, so the order they finish in does not matter:
results are put back in partition order, and every analysis is a pure
function of its partition and settings (fixed seeds, one BLAS thread per
worker), so the output is the same whichever way they ran.
"""
from __future__ import annotations

import os
from concurrent.futures import ProcessPoolExecutor, as_completed
from typing import Callable, Sequence

from . import __version__
from .analysis.params import AnalysisParams
from .analysis.partition import analyse_partition
from .cache import Cache, fingerprint
from .errors import SitegenError
from .model import PartitionInput, PartitionResult, RunReport
from .progress import Progress


def analysis_version() -> str:
    """The tool's version plus a digest of the analysis code, so a cached result made by
    other code (even under the same version number) is never reused."""
    import hashlib
    from pathlib import Path

    here = Path(__file__).resolve().parent
    h = hashlib.sha256(__version__.encode())
    for path in sorted([here / "model.py", here / "cache.py", *(here / "analysis").glob("*.py")]):
        h.update(path.name.encode() + b"\0" + path.read_bytes())
    return f"{__version__}+{h.hexdigest()[:12]}"


def _one_thread() -> None:
    """Worker start-up: one BLAS/OpenMP thread per process, so workers do not fight over cores."""
    for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ[var] = "1"
    try:
        from threadpoolctl import threadpool_limits

        threadpool_limits(1)
    except Exception:  # pragma: no cover - threadpoolctl ships with scikit-learn
        pass


def _analyse(part: PartitionInput, params: AnalysisParams) -> PartitionResult:
    _one_thread()
    return analyse_partition(part, params)


def worker_count(setting: int, jobs: int) -> int:
    """Workers to start: the setting, or every core when it is 0; never more than jobs."""
    cores = len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else (os.cpu_count() or 1)
    wanted = setting or cores
    return max(1, min(wanted, jobs))


def analyse_all(
    parts: Sequence[PartitionInput],
    params: AnalysisParams,
    cache: Cache | None,
    *,
    workers: int = 0,
    scheduler: str = "",
    progress: Progress | None = None,
) -> tuple[list[PartitionResult], RunReport]:
    """Analyse every partition, taking unchanged ones from ``cache``."""
    progress = progress or Progress(quiet=True)
    results: list[PartitionResult | None] = [None] * len(parts)
    todo: list[int] = []
    cached: list[tuple[str, str]] = []
    version = analysis_version()
    fps = [fingerprint(p, params, version) for p in parts]
    for i, (part, fp) in enumerate(zip(parts, fps)):
        hit = cache.get(fp) if cache is not None else None
        if hit is not None:
            results[i] = hit
            cached.append((part.season, part.leader))
        else:
            todo.append(i)
    if cached:
        progress.say(f"  {len(cached)} partition(s) unchanged, taken from the cache")
    if todo:
        names = ", ".join(f"{parts[i].season} / {parts[i].leader}" for i in todo[:8])
        more = f" and {len(todo) - 8} more" if len(todo) > 8 else ""
        progress.say(f"  analysing {len(todo)} partition(s): {names}{more}")

    def done(i: int, result: PartitionResult, count: int) -> None:
        result = _with_fingerprint(result, fps[i])
        results[i] = result
        if cache is not None:
            cache.put(fps[i], result)
        progress.step(count, len(todo), "partitions analysed")

    if scheduler and todo:
        _run_dask(scheduler, [parts[i] for i in todo], params, todo, done)
    elif todo:
        n = worker_count(workers, len(todo))
        if n == 1:
            for count, i in enumerate(todo, start=1):
                done(i, analyse_partition(parts[i], params), count)
        else:
            with ProcessPoolExecutor(max_workers=n, initializer=_one_thread) as pool:
                futures = {pool.submit(analyse_partition, parts[i], params): i for i in todo}
                for count, fut in enumerate(as_completed(futures), start=1):
                    done(futures[fut], fut.result(), count)
    report = RunReport(analysed=tuple((parts[i].season, parts[i].leader) for i in todo), cached=tuple(cached))
    return [r for r in results if r is not None], report


def _with_fingerprint(result: PartitionResult, fp: str) -> PartitionResult:
    from dataclasses import replace

    return replace(result, fingerprint=fp)


def _run_dask(address: str, parts: list[PartitionInput], params: AnalysisParams, index: list[int],
              done: Callable[[int, PartitionResult, int], None]) -> None:
    """Send each partition to a Dask distributed scheduler; Dask retries a job whose worker died."""
    try:
        from distributed import Client, as_completed as dask_completed
    except ImportError:
        raise SitegenError("analysis.scheduler is set but Dask is not installed; "
                           "install it with: pip install 'sitegen[dask]'") from None
    try:
        client = Client(address, timeout="20s")
    except Exception as exc:  # noqa: BLE001 - any connection failure is a user-facing error
        raise SitegenError(f"cannot reach the Dask scheduler at {address!r} ({exc}); "
                           "check the address and that the scheduler is running") from None
    try:
        futures = [client.submit(_analyse, p, params, key=f"sitegen-{p.season}-{p.leader}-{i}", retries=3, pure=False)
                   for i, p in zip(index, parts)]
        position = {f.key: i for f, i in zip(futures, index)}
        for count, fut in enumerate(dask_completed(futures), start=1):
            done(position[fut.key], fut.result(), count)
    finally:
        client.close()
