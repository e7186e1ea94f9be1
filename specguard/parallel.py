"""Spread the analysis of many spec files over worker processes.

The parent reads every spec's bytes (and answers what it can from the result
cache); only the files left to analyse go to the workers, in chunks, as
(index, path, rel, bytes, size, key, context), where the context indexes a table
of (root, options) pairs that the workers inherit. Each worker parses its own library files
(``LibraryCache`` per process: no shared mutable state) and stores its own cache
entries (atomic replace, so concurrent writers are safe). The parent puts the
results back by index, so the report is the same as a serial run's.

Workers start with ``fork`` on Linux (they inherit the loaded modules and the
policy: no start-up cost, nothing pickled on the way in), ``spawn`` elsewhere.
"""

from __future__ import annotations

import os
import sys

_STATE: dict = {}


def default_jobs() -> int:
    try:
        return max(1, len(os.sched_getaffinity(0)))  # type: ignore[attr-defined]
    except (AttributeError, OSError):
        return max(1, os.cpu_count() or 1)


def _block_signals():
    import signal

    wanted = {signal.SIGINT, signal.SIGTERM}
    if not hasattr(signal, "pthread_sigmask"):
        return None
    return signal.pthread_sigmask(signal.SIG_BLOCK, wanted)


def _unblock_signals(previous) -> None:
    import signal

    if previous is not None:
        signal.pthread_sigmask(signal.SIG_SETMASK, previous)


def _init(contexts, debug, cache_settings) -> None:
    import signal

    if hasattr(signal, "pthread_sigmask"):  # forked while the parent blocked them
        signal.pthread_sigmask(signal.SIG_UNBLOCK, {signal.SIGINT, signal.SIGTERM})
    from .source import Limits
    from .source.library import LibraryCache

    _STATE.clear()
    _STATE.update(contexts=contexts, debug=debug, libs=LibraryCache(Limits()))
    if cache_settings is not None:
        from .cache import ResultCache

        _STATE["cache"] = ResultCache(*cache_settings)
    else:
        _STATE["cache"] = None


def _run_chunk(chunk):
    from .pipeline import analyse_one

    s = _STATE
    out = []
    for index, path, rel, raw, size, key, context in chunk:
        root, options = s["contexts"][context]
        out.append((index, analyse_one(path, rel, raw, size, root, s["libs"], options, s["debug"], s["cache"], key)))
    cache = s["cache"]
    problem = cache.write_problem if cache is not None else None
    return out, problem


def run_work(work, contexts, debug, jobs, result_cache):
    """Yield (index, FileResult) for every item of ``work`` (in completion order);
    ``contexts`` holds the (root, options) pairs the items index."""
    if not work:
        return
    if jobs is None:
        from .pipeline import PARALLEL_MIN_FILES

        jobs = default_jobs() if len(work) > PARALLEL_MIN_FILES else 1
    jobs = max(1, min(jobs, len(work)))
    if jobs == 1:
        from .pipeline import analyse_one
        from .source import Limits
        from .source.library import LibraryCache

        libs = LibraryCache(Limits())
        for index, path, rel, raw, size, key, context in work:
            root, options = contexts[context]
            yield index, analyse_one(path, rel, raw, size, root, libs, options, debug, result_cache, key)
        return
    import multiprocessing
    from concurrent.futures import ProcessPoolExecutor, as_completed
    from concurrent.futures.process import BrokenProcessPool

    method = "fork" if sys.platform.startswith("linux") else "spawn"
    context = multiprocessing.get_context(method)
    # Chunks amortise the per-task overhead; several per worker keep the cores busy
    # to the end and let the progress line move.
    size = max(1, min(32, -(-len(work) // (jobs * 4))))
    chunks = [work[i : i + size] for i in range(0, len(work), size)]
    settings = result_cache.settings() if result_cache is not None else None
    pending = {}
    with ProcessPoolExecutor(
        max_workers=jobs, mp_context=context, initializer=_init, initargs=(contexts, debug, settings)
    ) as pool:
        # Workers are forked while the chunks are submitted. A SIGINT/SIGTERM handler
        # that raised inside the interpreter's fork hooks would be swallowed
        # ("Exception ignored in ..."), so the signals wait until the submissions are
        # done and then arrive at a safe point; the workers unblock them in _init.
        blocked = _block_signals()
        try:
            for chunk in chunks:
                pending[pool.submit(_run_chunk, chunk)] = chunk
        finally:
            _unblock_signals(blocked)
        for future in as_completed(pending):
            try:
                results, problem = future.result()
            except BrokenProcessPool as exc:
                from .pipeline import internal_error

                for index, _path, rel, *_ in pending[future]:
                    yield index, internal_error(rel, RuntimeError(f"a worker process died ({exc})"))
                continue
            if problem is not None and result_cache is not None and result_cache.write_problem is None:
                result_cache.write_problem = problem
            yield from results
