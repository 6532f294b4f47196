"""Jobs (document text + what to compute) -> verdicts or payouts, in one child process that can be killed.

The stability check and the payout rules are CPU-bound solver work that can
run for many seconds and take gigabytes (a 24-party nucleolus). A thread
cannot be stopped, so the language server hands this work to a single child
process (`python -m pactlang.editor.worker`) and kills it when the text the
work was for is gone: a newer version arrived or the document was closed.
The next job starts a fresh child. One job runs at a time; jobs wait in
order, and those of a superseded version are dropped before they start.

The wire: the parent writes one pickled `(kind, text, path, time_limit)`
tuple per job to the child's standard input, the child writes one pickled
`(ok, value)` back on its standard output. Both ends are this module, so
the pickles never come from anyone else.
"""

from __future__ import annotations

import asyncio
import os
import pickle
import subprocess
import sys
import threading
import time
import traceback
from dataclasses import dataclass, field

CHECK = "check"
PAYOUTS = "payouts"


class Superseded(Exception):
    """The job's text is gone (a newer version or a closed document): its result is not wanted."""


class WorkerFailed(Exception):
    """The job raised inside the child, or the child died on its own."""


# ---------------------------------------------------------------- the child


def compute(kind: str, text: str, path: str, time_limit: float | None, cache: dict):
    """One job's answer: `run_check`'s pair for CHECK, `compute_payouts`' pair for PAYOUTS."""
    from ..resolve import resolve
    from ..parse import parse_text
    from .snapshot import compute_payouts, run_check

    key = (text, path)
    model = cache.get(key)
    if model is None:  # the check and the payouts of one version share the model
        cache.clear()
        model = cache[key] = resolve(parse_text(text), path)
    if kind == CHECK:
        return run_check(model, time_limit)
    return compute_payouts(model)


def child_main() -> None:
    """Answer jobs from standard input until it closes."""
    jobs = sys.stdin.buffer
    _exit_with(os.getppid())
    answers = os.fdopen(os.dup(1), "wb")
    os.dup2(2, 1)  # a stray print in the library must not corrupt the answers
    sys.stdout = sys.stderr
    from .. import check, resolve, worths  # noqa: F401  (loaded while idle, not when a job waits)

    cache: dict = {}
    while True:
        try:
            kind, text, path, time_limit = pickle.load(jobs)
        except EOFError:
            return
        try:
            answer = (True, compute(kind, text, path, time_limit, cache))
        except Exception:
            answer = (False, traceback.format_exc())
        pickle.dump(answer, answers)
        answers.flush()


def _exit_with(parent: int) -> None:
    """End this process when the server that started it is gone, even mid-job."""
    def watch() -> None:
        while os.getppid() == parent:
            time.sleep(1.0)
        os._exit(0)

    threading.Thread(target=watch, name="pactlang-parent-watch", daemon=True).start()


# ---------------------------------------------------------------- the parent


@dataclass
class Job:
    uri: str
    version: int | None
    kind: str
    text: str
    path: str
    time_limit: float | None
    future: asyncio.Future = field(default_factory=lambda: asyncio.get_running_loop().create_future())


def _settle(future: asyncio.Future, value=None, error: BaseException | None = None) -> None:
    if future.done():
        return
    if error is None:
        future.set_result(value)
    else:
        future.set_exception(error)
        future.exception()  # retrieved: nobody may be waiting, and that is fine


class Worker:
    """One child process running one job at a time, newest version first to go."""

    def __init__(self, command: list[str] | None = None):
        self.command = command or [sys.executable, "-m", "pactlang.editor.worker"]
        self.process: subprocess.Popen | None = None
        self.queue: list[Job] = []
        self.running: Job | None = None
        self.wake = asyncio.Event()
        self.runner: asyncio.Task | None = None
        self.started = 0  # child processes started, for tests and the log

    def submit(self, uri: str, version: int | None, kind: str, text: str, path: str,
               time_limit: float | None) -> asyncio.Future:
        """Queue a job; every job for another version of the same document is
        dropped, and the same job asked for again shares the first one's answer."""
        self.cancel(uri, keep_version=version)
        for waiting in ([self.running] if self.running else []) + self.queue:
            if (waiting.uri, waiting.version, waiting.kind, waiting.text, waiting.path, waiting.time_limit) == (
                    uri, version, kind, text, path, time_limit) and not waiting.future.done():
                return waiting.future
        job = Job(uri, version, kind, text, path, time_limit)
        self.queue.append(job)
        self.wake.set()
        if self.runner is None or self.runner.done():
            self.runner = asyncio.get_running_loop().create_task(self._run())
        return job.future

    def cancel(self, uri: str, keep_version: int | None | object = object()) -> None:
        """Drop the document's jobs (those of `keep_version` stay); kill the child if it runs one."""
        def gone(job: Job) -> bool:
            return job.uri == uri and job.version != keep_version

        for job in [j for j in self.queue if gone(j)]:
            self.queue.remove(job)
            _settle(job.future, error=Superseded())
        if self.running is not None and gone(self.running):
            _settle(self.running.future, error=Superseded())
            self.kill()

    def kill(self, respawn: bool = True) -> None:
        """Stop the child at once and start a fresh one, which loads the
        library while the user types (the next job finds it ready)."""
        process, self.process = self.process, None
        if process is None:
            return
        try:
            process.kill()
        except ProcessLookupError:
            pass
        # reap it without blocking the event loop (a zombie would hold its memory entry)
        threading.Thread(target=process.wait, name="pactlang-reap", daemon=True).start()
        if respawn:
            try:
                self._spawn()
            except OSError:  # the next job tries again and reports it
                pass

    def close(self) -> None:
        for job in self.queue:
            _settle(job.future, error=Superseded())
        self.queue.clear()
        if self.running is not None:
            _settle(self.running.future, error=Superseded())
        self.kill(respawn=False)
        if self.runner is not None:
            self.runner.cancel()

    def _spawn(self) -> subprocess.Popen:
        if self.process is None or self.process.poll() is not None:
            self.process = subprocess.Popen(self.command, stdin=subprocess.PIPE, stdout=subprocess.PIPE)
            self.started += 1
        return self.process

    async def _run(self) -> None:
        while True:
            if not self.queue:
                self.wake.clear()
                await self.wake.wait()
                continue
            job = self.running = self.queue.pop(0)
            try:
                process = self._spawn()
                value = await _exchange(process, (job.kind, job.text, job.path, job.time_limit))
            except WorkerFailed as exc:
                if not job.future.done():  # nobody killed it: the child died on its own
                    self.kill(respawn=False)
                    _settle(job.future, error=exc)
            except Exception as exc:  # the child could not start: fail this job, keep serving
                self.kill(respawn=False)
                _settle(job.future, error=WorkerFailed(f"the worker process could not run: {exc}"))
            else:
                ok, answer = value
                _settle(job.future, answer if ok else None, None if ok else WorkerFailed(answer))
            finally:
                self.running = None


def _exchange(process: subprocess.Popen, job: tuple) -> asyncio.Future:
    """Send one job and await its answer; a thread waits on the pipe so the
    event loop never blocks. Killing the child ends the wait with EOFError."""
    loop = asyncio.get_running_loop()
    future = loop.create_future()

    def talk() -> None:
        try:
            pickle.dump(job, process.stdin)
            process.stdin.flush()
            outcome = (pickle.load(process.stdout), None)
        except (EOFError, OSError, ValueError, pickle.UnpicklingError) as exc:
            try:
                code = process.wait(timeout=2)
            except subprocess.TimeoutExpired:
                code = None
            outcome = (None, WorkerFailed(f"the worker process stopped (exit code {code}): {type(exc).__name__}"))
        except BaseException as exc:  # noqa: BLE001  (handed to the loop, never lost)
            outcome = (None, exc)
        try:
            loop.call_soon_threadsafe(_settle, future, *outcome)
        except RuntimeError:  # the loop closed while we waited: nobody is listening
            pass

    threading.Thread(target=talk, name="pactlang-worker-io", daemon=True).start()
    return future


if __name__ == "__main__":
    child_main()
