"""Plan many case files: in worker processes, streamed, in input order.

:func:`plan_stream` takes the case files as any iterable (a list, or the lines of a file
read as they come) and yields one :class:`Outcome` per file, in the order given. At most
``window`` files are in flight at once, so memory stays flat however many cases there
are, and the first outcome comes out as soon as it is planned, before the last file is
read. Each worker loads, plans and serialises its case (to one JSON line); the caller
is the only writer. A file that cannot be read, validated or planned gives an outcome
with its one-line error instead of a result, and the others go on.
"""

from __future__ import annotations

import itertools
import json
import os
from collections import deque
from collections.abc import Generator, Iterable, Iterator, Mapping
from dataclasses import dataclass
from typing import Any

from vascplan.errors import InputError

WINDOW_PER_JOB = 4
"""Batches in flight per worker: enough to keep every worker busy, few enough to stay small."""

BATCH = 4
"""Files sent to a worker at once (fewer messages between processes)."""


@dataclass(frozen=True)
class Outcome:
    """One case file's result: its JSON line, or the error line (then ``ok`` is False).

    Attributes
    ----------
    case : str
        The file as given.
    ok : bool
        False when the file failed; ``line`` is then ``{"case": ..., "error": ...}``.
    line : str
        One compact JSON object, no newline.
    """

    case: str
    ok: bool
    line: str


@dataclass(frozen=True)
class _Job:
    weights: Mapping[str, float]
    limits: Mapping[str, float]
    top: int | None
    all_routes: bool = False


def default_jobs() -> int:
    """The cores this process may use (all of them, by default)."""
    try:
        return max(1, len(os.sched_getaffinity(0)))
    except AttributeError:  # not on Linux
        return max(1, os.cpu_count() or 1)


def _dumps(data: Any) -> str:
    return json.dumps(data, ensure_ascii=False, separators=(",", ":"))


def _plan_batch(paths: list[str], job: _Job) -> list[Outcome]:
    return [plan_one(path, job) for path in paths]


def plan_one(path: str, job: _Job) -> Outcome:
    """Load, validate, plan and serialise one case file; an InputError becomes its line."""
    from vascplan.case.load import load_case
    from vascplan.routes.plan import plan_case

    try:
        result = plan_case(load_case(path), weights=job.weights, limits=job.limits,
                           top=job.top, source=path, all_routes=job.all_routes)
    except InputError as exc:
        return Outcome(path, False, _dumps({"case": path, "error": str(exc)}))
    return Outcome(path, True, _dumps(result.to_dict()))


def plan_stream(
    paths: Iterable[str],
    *,
    jobs: int = 1,
    weights: Mapping[str, float] | None = None,
    limits: Mapping[str, float] | None = None,
    top: int | None = None,
    all_routes: bool = False,
    window: int | None = None,
    batch: int = BATCH,
) -> Generator[Outcome, None, None]:
    """Plan every case file of ``paths``, yielding outcomes in input order.

    Parameters
    ----------
    paths : iterable of str
        Case files; read lazily, never all at once.
    jobs : int
        Worker processes; 1 plans in this process.
    weights, limits : mapping of str to float, optional
        Overrides, as :func:`vascplan.routes.plan.plan_case`.
    top : int, optional
        Keep only the best ``top`` routes of each case.
    all_routes : bool
        Also the routes with no path (``plan --all``).
    window : int, optional
        Batches in flight at most (default ``WINDOW_PER_JOB`` per job).
    batch : int
        Files per batch sent to a worker.

    Yields
    ------
    Outcome
        One per file, in the order of ``paths``.
    """
    job = _Job(dict(weights or {}), dict(limits or {}), top, all_routes)
    it = iter(paths)
    if jobs <= 1:
        for path in it:
            yield plan_one(path, job)
        return
    # Two files at least before starting workers: one case is planned here.
    head = [p for _, p in zip(range(2), it, strict=False)]
    if len(head) < 2:
        for path in head:
            yield plan_one(path, job)
        return
    yield from _pooled(itertools.chain(head, it), job, jobs, window or WINDOW_PER_JOB * jobs,
                       max(1, batch))


def _pooled(paths: Iterator[str], job: _Job, jobs: int, window: int,
            batch: int) -> Generator[Outcome, None, None]:
    import multiprocessing
    from concurrent.futures import Future, ProcessPoolExecutor

    import vascplan.routes.plan  # noqa: F401  (loaded once, before the workers fork)

    methods = multiprocessing.get_all_start_methods()
    context = multiprocessing.get_context("fork" if "fork" in methods else None)
    pending: deque[Future[list[Outcome]]] = deque()
    with ProcessPoolExecutor(max_workers=jobs, mp_context=context) as pool:
        while chunk := list(itertools.islice(paths, batch)):
            pending.append(pool.submit(_plan_batch, chunk, job))
            if len(pending) >= window:
                yield from pending.popleft().result()
        while pending:
            yield from pending.popleft().result()
