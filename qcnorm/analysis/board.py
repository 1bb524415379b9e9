"""A task board shared by the calling thread and one helper thread (analyze() at large n).

Work is posted as small pure tasks (one transform candidate, one distribution family).
The helper thread takes tasks in order; the calling thread, whenever it needs results,
takes tasks from the same board instead of waiting idle. Urgent tasks (those the calling
thread is about to wait for) go to the front. Every task computes the same numbers
whichever thread runs it, and results are collected in the order they were posted, so
the answer does not depend on the scheduling.

Without threads (``threaded=False``) every task runs at once, in the calling thread, in
the order posted: the one-thread route.
"""

from __future__ import annotations

import threading
from collections import deque
from collections.abc import Callable, Sequence
from concurrent.futures import Future
from typing import Any

__all__ = ["TaskBoard"]


def _run_into(fut: Future, fn: Callable[..., Any], args: tuple) -> None:
    if not fut.set_running_or_notify_cancel():
        return
    try:
        fut.set_result(fn(*args))
    except BaseException as exc:  # noqa: BLE001 - handed to whoever reads the future
        fut.set_exception(exc)


class TaskBoard:
    """Tasks for this thread and, when ``threaded``, one helper thread."""

    def __init__(self, threaded: bool, name: str = "qcnorm-lane"):
        self._cv = threading.Condition()
        self._queue: deque[tuple[Future, Callable[..., Any], tuple]] = deque()
        self._closed = False
        self._thread: threading.Thread | None = None
        if threaded:
            self._thread = threading.Thread(target=self._work, name=name, daemon=True)
            self._thread.start()

    @property
    def threaded(self) -> bool:
        return self._thread is not None

    def post(self, fn: Callable[..., Any], *args: Any, urgent: bool = False) -> Future:
        """Post ``fn(*args)``; an urgent task goes before those already waiting."""
        fut: Future = Future()
        if self._thread is None:
            _run_into(fut, fn, args)
            return fut
        with self._cv:
            if self._closed:
                raise RuntimeError("task board already closed")
            (self._queue.appendleft if urgent else self._queue.append)((fut, fn, args))
            self._cv.notify()
        return fut

    def run_all(self, thunks: Sequence[Callable[[], Any]]) -> list[Any]:
        """Run the thunks (urgent, the first ones first) and return their results in order;
        an exception of a thunk is raised here."""
        futs: list = [None] * len(thunks)
        # appendleft in reverse keeps their order on the board; without threads, run in order
        for i in (reversed(range(len(thunks))) if self.threaded else range(len(thunks))):
            futs[i] = self.post(thunks[i], urgent=True)
        return [f.result() for f in self.wait(futs)]

    def wait(self, futs: Sequence[Future]) -> Sequence[Future]:
        """Help with waiting tasks until every future in ``futs`` is done."""
        while True:
            pending = [f for f in futs if not f.done()]
            if not pending:
                return futs
            item = None
            with self._cv:
                if self._queue:
                    item = self._queue.popleft()
            if item is not None:
                _run_into(*item)
            else:
                pending[0].exception()  # blocks until that one is done (never raises here)

    def _work(self) -> None:
        while True:
            with self._cv:
                while not self._queue and not self._closed:
                    self._cv.wait()
                if not self._queue:
                    return
                item = self._queue.popleft()
            _run_into(*item)

    def close(self) -> None:
        """Cancel what is still waiting and let the helper thread end; safe to call twice."""
        with self._cv:
            self._closed = True
            for fut, _fn, _args in self._queue:
                fut.cancel()
            self._queue.clear()
            self._cv.notify_all()
