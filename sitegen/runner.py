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
import sys
from dataclasses import replace
from concurrent.futures import FIRST_COMPLETED, Future, ProcessPoolExecutor, ThreadPoolExecutor, wait
from typing import Iterable, Sequence

from .analysis.params import AnalysisParams
from .analysis.embed import place_map
from .cache import Cache
from .errors import SitegenError
from .model import DeckData, MapLayout, MapSample, PartitionInput, PartitionResult, RunReport, SeasonSplit
from .progress import Progress
from .resources import usable_cores
from .reuse import keys
from .reuse.keys import analysis_version
from .reuse.partition_key import fingerprint

__all__ = ["Analyses", "analyse_all", "analyse_partition", "analysis_version", "draw_map", "worker_count"]


_PR_SET_PDEATHSIG = 1


def _die_with_parent(parent: int) -> None:
    """Worker start-up: end this worker when the building process ends, however it ends (a
    killed build's workers would otherwise wait for work forever). On Linux the kernel sends
    SIGKILL when the parent dies (prctl PR_SET_PDEATHSIG); elsewhere a thread checks the parent."""
    armed = False
    if sys.platform.startswith("linux"):
        try:
            import ctypes
            import signal

            libc = ctypes.CDLL(None, use_errno=True)
            armed = libc.prctl(_PR_SET_PDEATHSIG, int(signal.SIGKILL), 0, 0, 0) == 0
        except (OSError, AttributeError):
            armed = False
    if os.getppid() != parent:  # the parent died before the signal was armed
        os._exit(1)
    if not armed:
        import threading
        import time

        def watch() -> None:
            while os.getppid() == parent:
                time.sleep(0.5)
            os._exit(1)

        threading.Thread(target=watch, name="sitegen-parent-watch", daemon=True).start()


def _start_worker(parent: int) -> None:
    """Worker start-up: die with the building process, one BLAS thread (see :func:`_one_thread`)."""
    _die_with_parent(parent)
    _one_thread()


def _one_thread() -> None:
    """Worker start-up: one BLAS/OpenMP thread per process, so workers do not fight over cores."""
    for var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
        os.environ[var] = "1"
    try:
        from threadpoolctl import threadpool_limits

        threadpool_limits(1)
    except Exception:  # pragma: no cover - threadpoolctl ships with scikit-learn
        pass


def analyse_partition(part: PartitionInput, params: AnalysisParams) -> PartitionResult:
    """:func:`sitegen.analysis.partition.analyse_partition`, imported at first use.

    The analysis code brings in scikit-learn and openTSNE (1.3 s), which the
    building process itself never uses: only its workers do. So it is
    imported at a worker's first job, not when this module is, and
    :meth:`Analyses.start_workers` has the workers import it while this
    process reads the data.
    """
    from .analysis import partition

    return partition.analyse_partition(part, params)


def draw_map(sample: MapSample, params: AnalysisParams,
             previous: tuple[MapSample, MapLayout] | None = None) -> MapLayout:
    """:func:`sitegen.analysis.partition.draw_map`, imported at first use."""
    from .analysis import partition

    return partition.draw_map(sample, params, previous)


def _import_analysis() -> None:
    """Worker start-up work: import the analysis code (and its libraries) once, early."""
    from .analysis import partition

    del partition  # imported for its side effect only


def _analyse(part: PartitionInput, params: AnalysisParams) -> PartitionResult:
    _one_thread()
    return analyse_partition(part, params)


def worker_count(setting: int, jobs: int) -> int:
    """Workers to start: the setting, or every core when it is 0; never more than jobs."""
    wanted = setting or usable_cores()
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
    with Analyses(params, cache, workers=workers, scheduler=scheduler, progress=progress) as runs:
        runs.add(parts)
        results, report = runs.finish()
        seasons = list(dict.fromkeys(p.season for p in parts))  # parts come in publication order
        results = runs.draw_maps(results, seasons)
        return results, replace(report, mapped=runs.mapped)


class Analyses:
    """Partition analyses handed in a batch at a time (a season, say), run while the next batch is read.

    :meth:`add` takes unchanged partitions from the cache and starts the
    rest; :meth:`wait_below` holds the caller until few enough are still
    queued, so a reader that hands in one season at a time keeps at most a
    season or two of card rows in memory; :meth:`finish` waits for the rest
    and returns every result in the order the partitions were added.
    """

    def __init__(self, params: AnalysisParams, cache: Cache | None, *, workers: int = 0, scheduler: str = "",
                 progress: Progress | None = None) -> None:
        self.params, self.cache, self.scheduler = params, cache, scheduler
        self.workers = workers
        self.progress = progress or Progress(quiet=True)
        self.version = analysis_version()
        self._results: list[PartitionResult | None] = []
        self._keys: list[tuple[str, str]] = []
        self._fps: list[str] = []
        self._todo: list[int] = []
        self._cached: list[int] = []
        self._pending: dict = {}  # future -> partition index
        self._done = 0
        self._pool: ProcessPoolExecutor | None = None
        self._client = None
        self._inline = False
        self._forked_clean = False
        self._map_keys: set[str] = set()
        # Maps (see plan_maps): season ranks once planned, each mapped partition's cache key,
        # layouts known, maps taken from the cache, maps started.
        self._rank: dict[str, int] | None = None
        self._all_added = False  # set by draw_maps: no partition of any season is still to come
        self._map_key: dict[int, str] = {}
        self._layouts: dict[int, MapLayout] = {}
        self._map_hits: set[int] = set()
        self._map_started: list[int] = []
        self._map_running: dict = {}  # future -> partition index
        # Further cache keys this build used (season splits, records, summaries), kept from pruning.
        self._other_keys: set[str] = set()
        #: (season, leader) of every map drawn afresh by :meth:`draw_maps`.
        self.mapped: tuple[tuple[str, str], ...] = ()

    def __enter__(self) -> "Analyses":
        return self

    def start_workers(self) -> None:
        """Start the local worker processes now, while this process is small: they are forked
        from it, and a fork made after the data is loaded would count every loaded page."""
        if self.scheduler or self._pool is not None or self._inline:
            return
        n = worker_count(self.workers, 1 << 30)
        self._inline = n == 1
        if not self._inline:
            # vl-convert's JavaScript engine runs threads that a forked child does not get: a worker
            # forked after this process used it would hang in it (a second build in one process).
            self._forked_clean = "vl_convert" not in sys.modules
            self._pool = ProcessPoolExecutor(max_workers=n, initializer=_start_worker, initargs=(os.getpid(),))
            self._pool.submit(int).result()  # the first job makes the pool start every worker
            for _ in range(n):  # not waited for: each worker imports the analysis code while the data is read
                self._pool.submit(_import_analysis)

    def __exit__(self, *exc) -> None:
        self.close()

    def close(self) -> None:
        for fut in self._pending:
            fut.cancel()
        if self._pool is not None:
            self._pool.shutdown(wait=True, cancel_futures=True)
            self._pool = None
        if self._client is not None:
            self._client.close()
            self._client = None

    def add(self, parts: Sequence[PartitionInput]) -> int:
        """Look each partition up in the cache and start the analysis of those not found; how many were started.

        Partitions go to the local workers largest first (by card rows): the
        last few jobs are then short, and no worker waits long for the last one.
        """
        todo = []
        cached = 0
        for part, fp in zip(parts, _fingerprints(parts, self.params, self.version)):
            i = len(self._results)
            self._keys.append((part.season, part.leader))
            self._fps.append(fp)
            hit = self.cache.get(fp) if self.cache is not None else None
            self._results.append(hit)
            if hit is not None:
                self._cached.append(i)
                cached += 1
            else:
                todo.append((i, part))
        if cached:
            self.progress.say(f"  {cached} partition(s) unchanged, taken from the cache")
        if not todo:
            return 0
        names = ", ".join(f"{p.season} / {p.leader}" for _, p in todo[:8])
        more = f" and {len(todo) - 8} more" if len(todo) > 8 else ""
        self.progress.say(f"  analysing {len(todo)} partition(s): {names}{more}")
        self._todo.extend(i for i, _ in todo)
        if self.scheduler:
            self._submit_dask(todo)
            return len(todo)
        self.start_workers()
        if not self._inline:
            todo.sort(key=lambda job: -len(job[1].cards))
        for i, part in todo:
            if self._inline:
                self._store(i, analyse_partition(part, self.params))
                self._advance_maps()
            else:
                self._pending[self._pool.submit(analyse_partition, part, self.params)] = i
        return len(todo)

    def add_known(self, partitions: Sequence[tuple[str, str, str]]) -> bool:
        """Add partitions known by (season, leader, fingerprint) alone, all from the cache; when
        any result is missing, add none and return False (the caller reads the rows instead)."""
        if self.cache is None:
            return False
        hits = [self.cache.get(fp) for _, _, fp in partitions]
        if any(hit is None for hit in hits):
            return False
        for (season, leader, fp), hit in zip(partitions, hits):
            self._cached.append(len(self._results))
            self._keys.append((season, leader))
            self._fps.append(fp)
            self._results.append(hit)
        if partitions:
            self.progress.say(f"  {len(partitions)} partition(s) unchanged, taken from the cache")
        return True

    def fingerprints(self, count: int) -> list[str]:
        """The fingerprints of the last ``count`` partitions added."""
        return self._fps[len(self._fps) - count:] if count else []

    def added(self, parts: Sequence[PartitionInput]) -> list[tuple[str, str, str]]:
        """(season, leader, fingerprint) of ``parts``, the partitions :meth:`add` took last."""
        return [(p.season, p.leader, fp) for p, fp in zip(parts, self.fingerprints(len(parts)))]

    # -- reuse of earlier builds' seasons (the cache keys are made in sitegen.reuse.keys)

    def keep_keys(self, used: Iterable[str]) -> None:
        """Keep these further cache entries (season splits, records, summaries) when pruning."""
        self._other_keys.update(used)

    def prune_cache(self) -> None:
        """Delete every cache entry this build did not use."""
        if self.cache is not None:
            self.cache.prune(self.kept_keys)

    def known_seasons(self, data: DeckData, by_leader: bool) -> tuple[dict[str, str], dict[str, tuple]]:
        """Each season's key (see :func:`sitegen.partitions.season_keys`), and the seasons whose
        rows are as at a build the cache remembers, with their partitions, added here (their
        results are all in the cache). Without a cache, none."""
        from .partitions import season_keys

        if self.cache is None:
            return {}, {}
        found_keys = season_keys(data, keys.split_salt(self.version, self.params, by_leader))
        self.keep_keys(found_keys.values())
        known = {}
        for season, key in found_keys.items():
            found = self.cache.get(key, SeasonSplit)
            if found is not None and self.add_known(found.partitions):
                known[season] = found.partitions
        return found_keys, known

    def remember_splits(self, season_keys: dict[str, str], known: dict[str, tuple],
                        parts: Sequence[PartitionInput]) -> None:
        """File how each season not ``known`` was cut (``parts``, just added) under its key."""
        if self.cache is None:
            return
        mine: dict[str, list[tuple[str, str, str]]] = {season: [] for season in season_keys if season not in known}
        for season, leader, fp in self.added(parts):
            if season in mine:
                mine[season].append((season, leader, fp))
        for season, partitions in mine.items():
            self.cache.put(season_keys[season], SeasonSplit(partitions=tuple(partitions)))

    def season_memo(self, settings_json: str, card_table):
        """Season records of a season folder, kept in the cache (see sitegen.load.folder) under
        keys salted with the settings (one canonical text), the card table and the code; or None."""
        from .load.folder import SeasonMemo

        if self.cache is None:
            return None
        return SeasonMemo(self.cache, keys.record_salt(self.version, settings_json, card_table), self.add_known)

    def idle_pool(self) -> ProcessPoolExecutor | None:
        """The local worker pool, for chart checks once every analysis and map is done; None
        without one, or when its workers were forked after this process had used vl-convert."""
        return self._pool if not self._pending and not self._map_running and self._forked_clean else None

    def wait_below(self, queued: int) -> None:
        """Collect finished analyses until at most ``queued`` are still running or waiting."""
        while len(self._pending) > queued:
            self._collect_some()

    def finish(self) -> tuple[list[PartitionResult], RunReport]:
        """Every result in the order added (maps not yet drawn: see :meth:`draw_maps`),
        and which partitions were analysed or cached. The workers stay up for the maps."""
        self.wait_below(0)
        report = RunReport(analysed=tuple(self._keys[i] for i in self._todo),
                           cached=tuple(self._keys[i] for i in self._cached))
        return [r for r in self._results if r is not None], report

    def plan_maps(self, seasons: Sequence[str]) -> None:
        """From now on, start each map as soon as its partition is analysed and the map it
        starts from is known, while other analyses still run (a worker that would wait for the
        last analysis draws a map meanwhile). :meth:`draw_maps` then waits for the rest."""
        if self._rank is None:
            self._rank = {s: i for i, s in enumerate(seasons)}
            self._advance_maps()

    def draw_maps(self, results: Sequence[PartitionResult], seasons: Sequence[str]) -> list[PartitionResult]:
        """``results`` with their maps drawn: each leader's maps in season order, each started
        from that leader's previous map, so chains of different leaders run side by side.

        A map is cached under a digest of its partition's fingerprint and of the map it
        started from, so an unchanged season whose previous map is unchanged is not drawn again.
        Maps already started (see :meth:`plan_maps`, whose season order then holds) are waited for.
        """
        self.plan_maps(seasons)
        self.wait_below(0)
        self._all_added = True
        self._advance_maps()
        started, drawn = len(self._map_started), len(self._map_started) - len(self._map_running)
        if started:
            self.progress.say(f"  drawing {started} map(s), {len(self._map_hits)} unchanged")
        while self._map_running:
            drawn += self._maps_done(self._wait_any(list(self._map_running)))
            self._advance_maps()
            self.progress.step(drawn, len(self._map_started), "maps drawn")
        self._map_keys = set(self._map_key.values())
        self.mapped = tuple(self._keys[i] for i in sorted(self._map_started))
        index = {key: i for i, key in enumerate(self._keys)}
        out = []
        for r in results:
            i = index.get((r.season, r.leader))
            if i in self._layouts:
                out.append(replace(place_map(r, self._layouts[i]), rows_key=_placed_key(r, self._layouts[i])))
            else:
                out.append(replace(r, rows_key=f"analysis:{r.fingerprint}") if r.fingerprint else r)
        return out

    def _advance_maps(self) -> None:
        """Look up or start every map that can be: walking each leader's partitions in season
        order up to the first not yet analysed (a later map's key depends on it)."""
        if self._rank is None:
            return
        rank = self._rank
        chains: dict[str, list[int]] = {}
        for i in sorted(range(len(self._keys)), key=lambda i: (rank.get(self._keys[i][0], len(rank)), i)):
            chains.setdefault(self._keys[i][1], []).append(i)
        # Seasons handed in one at a time (a season folder): a map waits until every season before
        # its own has been added, since any of them may hold the map it must start from.
        added = {season for season, _ in self._keys}
        missing = [rank[s] for s in rank if s not in added]
        horizon = len(rank) if self._all_added or not missing else min(missing)
        for chain in chains.values():
            previous = None
            for i in chain:
                r = self._results[i]
                if r is None or rank.get(r.season, len(rank)) > horizon:
                    break
                if r.map_sample is None:
                    continue
                if i not in self._map_key:
                    self._map_key[i] = keys.map_key(r.fingerprint, self._map_key[previous] if previous is not None else None)
                    hit = self.cache.get(self._map_key[i], MapLayout) if self.cache is not None else None
                    if hit is not None:
                        self._layouts[i] = hit
                        self._map_hits.add(i)
                if i not in self._layouts and i not in self._map_started and (previous is None or previous in self._layouts):
                    start = (self._results[previous].map_sample, self._layouts[previous]) if previous is not None else None
                    self._map_started.append(i)
                    self._map_running[self._start_map(r.map_sample, start)] = i
                previous = i

    def _maps_done(self, finished) -> int:
        """Keep the layouts of finished maps (and cache them); how many there were."""
        done = 0
        for fut in sorted((f for f in finished if f in self._map_running), key=lambda f: self._map_running[f]):
            i = self._map_running.pop(fut)
            self._layouts[i] = fut.result()
            if self.cache is not None:
                self.cache.put(self._map_key[i], self._layouts[i])
            done += 1
        return done

    @property
    def kept_keys(self) -> set[str]:
        """Every cache key this build used (results and maps): the rest may be pruned."""
        return set(self._fps) | self._map_keys | self._other_keys

    def _start_map(self, sample, previous):
        if self.scheduler:
            if self._client is None:
                self._client = _dask_client(self.scheduler)
            return self._client.submit(draw_map, sample, self.params, previous, retries=3, pure=False)
        self.start_workers()
        if self._inline:
            fut: Future = Future()
            fut.set_result(draw_map(sample, self.params, previous))
            return fut
        return self._pool.submit(draw_map, sample, self.params, previous)

    def _wait_any(self, futures: list) -> set:
        if not futures:
            return set()
        if self.scheduler:
            from distributed import wait as dask_wait

            return set(dask_wait(futures, return_when="FIRST_COMPLETED").done)
        return set(wait(futures, return_when=FIRST_COMPLETED).done)

    def _store(self, i: int, result: PartitionResult) -> None:
        result = _with_fingerprint(result, self._fps[i])
        self._results[i] = result
        if self.cache is not None:
            self.cache.put(self._fps[i], result)
        self._done += 1
        self.progress.step(self._done, len(self._todo), "partitions analysed")

    def _collect_some(self) -> None:
        finished = self._wait_any([*self._pending, *self._map_running])
        for fut in sorted((f for f in finished if f in self._pending), key=lambda f: self._pending[f]):
            i = self._pending.pop(fut)
            self._store(i, fut.result())
        self._maps_done(finished)
        self._advance_maps()

    def _submit_dask(self, todo: list[tuple[int, PartitionInput]]) -> None:
        """Send each partition to the Dask scheduler; Dask retries a job whose worker died."""
        if self._client is None:
            self._client = _dask_client(self.scheduler)
        for i, part in todo:
            fut = self._client.submit(_analyse, part, self.params, key=f"sitegen-{part.season}-{part.leader}-{i}",
                                      retries=3, pure=False)
            self._pending[fut] = i


def _fingerprints(parts: Sequence[PartitionInput], params: AnalysisParams, version: str) -> list[str]:
    """Each partition's fingerprint, one thread per core: hashing and sorting release the GIL
    for much of their work, and the workers are idle while this process makes them (at 1M
    decks, 70 partitions on 2 cores: 2.3 s one at a time, 1.5 s two at a time)."""
    threads_wanted = worker_count(0, len(parts))
    if threads_wanted < 2:
        return [fingerprint(p, params, version) for p in parts]
    with ThreadPoolExecutor(max_workers=threads_wanted) as threads:
        return list(threads.map(lambda p: fingerprint(p, params, version), parts))


def _placed_key(result: PartitionResult, layout: MapLayout) -> str:
    """``rows_key`` of a result with a map placed into it: its fingerprint and the map's points
    (a map drawn again from another start may come out the same, and so the same rows)."""
    return keys.placed_key(result.fingerprint, layout.coords) if result.fingerprint else ""


def _with_fingerprint(result: PartitionResult, fp: str) -> PartitionResult:
    return replace(result, fingerprint=fp)


def _dask_client(address: str):
    try:
        from distributed import Client
    except ImportError:
        raise SitegenError("analysis.scheduler is set but Dask is not installed; "
                           "install it with: pip install 'sitegen[dask]'") from None
    try:
        return Client(address, timeout="20s")
    except Exception as exc:  # noqa: BLE001 - any connection failure is a user-facing error
        raise SitegenError(f"cannot reach the Dask scheduler at {address!r} ({exc}); "
                           "check the address and that the scheduler is running") from None
