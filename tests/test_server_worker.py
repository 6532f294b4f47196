"""The language server's worker: one child process, newest version wins, killed work stops."""

from __future__ import annotations

import asyncio
import sys
from fractions import Fraction
from pathlib import Path

import pytest

from pactlang.editor.worker import CHECK, PAYOUTS, Superseded, Worker, WorkerFailed

pytestmark = pytest.mark.asyncio

POOL = (Path(__file__).parent.parent / "agreements" / "licence_pool.deal").read_text()
# 24 parties paid by the nucleolus: the payout job runs for seconds, long enough to be stopped
SLOW = ('agreement "Shared yard"\nshares cost in kEUR\n'
        + "".join(f"party op{i:02d}: buses {10 + (i * 7) % 31}\n" for i in range(24))
        + "worth S = 8 * max(buses in S) + 20 * count(S)\npayout by nucleolus\nrequire stable\n")


def alive(pid: int) -> bool:
    try:
        return "\nState:\tZ" not in Path(f"/proc/{pid}/status").read_text()
    except OSError:
        return False


async def test_payouts_come_back_exact():
    worker = Worker()
    try:
        payouts, why = await asyncio.wait_for(worker.submit("a", 1, PAYOUTS, POOL, "pool.deal", None), 60)
        # hand-computed: lab_coast 20% of 330 = 66, lab_north 140, the rest 124 to lab_south
        assert payouts == {"lab_north": Fraction(140), "lab_south": Fraction(124), "lab_coast": Fraction(66)}
        assert why is None
        results, problems = await asyncio.wait_for(worker.submit("a", 1, CHECK, POOL, "pool.deal", 5.0), 60)
        assert problems == [] and [r.status for r in results] == ["holds", "holds", "holds"]
        assert worker.started == 1  # both jobs of the version in one child
    finally:
        worker.close()


async def test_the_same_job_asked_twice_runs_once():
    worker = Worker()
    try:
        first = worker.submit("a", None, PAYOUTS, POOL, "pool.deal", None)
        again = worker.submit("a", None, PAYOUTS, POOL, "pool.deal", None)
        assert again is first
        assert (await asyncio.wait_for(first, 60))[0]["lab_north"] == 140
    finally:
        worker.close()


async def test_a_newer_version_stops_the_running_job_and_runs_alone():
    worker = Worker()
    try:
        old = worker.submit("a", 1, PAYOUTS, SLOW, "yard.deal", None)
        other = worker.submit("b", 1, PAYOUTS, POOL, "pool.deal", None)  # another document waits its turn
        await asyncio.sleep(0.5)
        first = worker.process.pid
        new = worker.submit("a", 2, PAYOUTS, POOL, "pool.deal", None)
        with pytest.raises(Superseded):
            await old
        assert not alive(first) or await _gone(first)
        assert (await asyncio.wait_for(other, 60))[0]["lab_south"] == 124
        assert (await asyncio.wait_for(new, 60))[0]["lab_south"] == 124
    finally:
        worker.close()


async def test_cancelling_a_document_kills_its_running_job():
    worker = Worker()
    try:
        job = worker.submit("a", 1, CHECK, SLOW, "yard.deal", 60.0)
        await asyncio.sleep(0.5)
        pid = worker.process.pid
        worker.cancel("a")
        with pytest.raises(Superseded):
            await job
        assert await _gone(pid)
    finally:
        worker.close()


async def test_a_child_that_dies_fails_the_job_and_the_next_one_starts_afresh():
    worker = Worker([sys.executable, "-c", "import os; os._exit(3)"])
    try:
        with pytest.raises(WorkerFailed, match=r"exit code 3"):
            await asyncio.wait_for(worker.submit("a", 1, PAYOUTS, POOL, "pool.deal", None), 60)
        with pytest.raises(WorkerFailed):
            await asyncio.wait_for(worker.submit("a", 2, PAYOUTS, POOL, "pool.deal", None), 60)
        assert worker.started == 2
    finally:
        worker.close()


async def test_an_exception_in_the_job_is_reported_with_its_traceback():
    worker = Worker()
    try:
        with pytest.raises(WorkerFailed, match=r"AgreementError|unknown-party|diary"):
            await asyncio.wait_for(worker.submit("a", 1, PAYOUTS, POOL.replace("{lab_north}", "{diary}"),
                                                 "pool.deal", None), 60)
    finally:
        worker.close()


async def _gone(pid: int) -> bool:
    for _ in range(100):
        if not alive(pid):
            return True
        await asyncio.sleep(0.05)
    return False
