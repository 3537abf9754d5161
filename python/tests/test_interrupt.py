"""Ctrl-C during an audit: the process sends SIGINT to itself while a long audit runs
and expects KeyboardInterrupt soon after, the worker thread stopped and joined, and
the package usable again.

The audit runs on a worker thread; the calling thread waits with the GIL released
and takes it back every 100 ms to run Python's signal handlers. On KeyboardInterrupt
it raises the library's Cancel flag and joins the worker, which stops at its next
check: between files of a folder, and after the file being read.
"""

from __future__ import annotations

import os
import signal
import threading
import time

import numpy as np
import polars as pl
import pytest

import gapcert


def _log(rows: int, seed: int) -> pl.DataFrame:
    """An invented sweep: `rows` runs on 1,000 held-out splits, each claiming 90 %."""
    rng = np.random.default_rng(seed)
    return pl.DataFrame(
        {
            "index": np.arange(rows),
            "holdout_n": rng.integers(500, 5000, rows),
            "holdout_misclassified": rng.integers(0, 400, rows),
            "claimed_accuracy": np.full(rows, 0.9),
        }
    ).select(
        pl.format("r{}", "index").alias("run"),
        "holdout_n",
        "holdout_misclassified",
        "claimed_accuracy",
        pl.format("s{}", pl.col("index") % 1000).alias("holdout_set"),
    )


def _tasks() -> int:
    """Threads of this process (Linux)."""
    return len(os.listdir("/proc/self/task"))


def _interrupted(path, after: float):
    """Audits `path`, sending SIGINT to this process `after` seconds in; returns the
    seconds from the signal to KeyboardInterrupt."""
    sent = {}

    def interrupt():
        sent["at"] = time.monotonic()
        os.kill(os.getpid(), signal.SIGINT)

    previous = signal.signal(signal.SIGINT, signal.default_int_handler)
    timer = threading.Timer(after, interrupt)
    try:
        timer.start()
        with pytest.raises(KeyboardInterrupt):
            gapcert.audit(path)
        return time.monotonic() - sent["at"]
    finally:
        timer.cancel()
        signal.signal(signal.SIGINT, previous)


@pytest.fixture(scope="module")
def big_log(tmp_path_factory):
    """One CSV log of 2,000,000 runs (52 MB): an uninterrupted audit takes about 20 s
    on the two-core build machine."""
    path = tmp_path_factory.mktemp("big") / "sweep.csv"
    _log(2_000_000, 1).write_csv(path)
    return path


@pytest.fixture(scope="module")
def big_folder(tmp_path_factory):
    """A sweep folder of 200 logs of 4,000 runs each. (Not more files: the library's
    reading of folders of about a thousand CSV logs overflows a thread's stack, see
    test_folders.py.)"""
    folder = tmp_path_factory.mktemp("sweep")
    frame = _log(800_000, 2)
    for number in range(200):
        frame.slice(number * 4000, 4000).write_csv(folder / f"run-{number:03d}.csv")
    return folder


@pytest.mark.skipif(not os.path.isdir("/proc/self/task"), reason="counts threads in /proc")
def test_ctrl_c_stops_an_audit_of_one_large_log(big_log):
    # A small audit first, so that the library's thread pool exists before counting.
    gapcert.audit("fixtures/demo/runs.csv")
    threads = _tasks()
    took = _interrupted(big_log, after=0.3)
    print(f"\none log of 2,000,000 runs: KeyboardInterrupt {took:.2f} s after SIGINT")
    # The library checks the flag once the file is read (about 2 s for 2 million
    # rows), not during the 20 s of the audit proper.
    assert took < 8.0, f"KeyboardInterrupt {took:.2f} s after SIGINT"
    # At most as many: a thread an earlier test left (a pool's idle worker) may end
    # meanwhile, but the audit's worker must not outlive the interrupt.
    assert _tasks() <= threads, "the worker thread was not joined"
    # The package works again afterwards.
    assert gapcert.audit("fixtures/demo/runs.csv").summary["runs"] == 21


def test_ctrl_c_stops_an_audit_of_a_folder_between_files(big_folder):
    took = _interrupted(big_folder, after=0.1)
    print(f"\na folder of 200 logs: KeyboardInterrupt {took:.2f} s after SIGINT")
    assert took < 2.0, f"KeyboardInterrupt {took:.2f} s after SIGINT"
    assert gapcert.audit("fixtures/demo/runs.csv").summary["runs"] == 21


def test_ctrl_c_stops_an_audit_of_a_frame(big_log):
    frame = pl.read_csv(big_log)
    sent = {}

    def interrupt():
        sent["at"] = time.monotonic()
        os.kill(os.getpid(), signal.SIGINT)

    previous = signal.signal(signal.SIGINT, signal.default_int_handler)
    # The frame's conversion to Arrow IPC takes a moment: the signal goes out once the
    # extension has the bytes (a thread watching would be racy; 0.5 s is ample).
    timer = threading.Timer(0.5, interrupt)
    try:
        timer.start()
        with pytest.raises(KeyboardInterrupt):
            gapcert.audit(frame)
        took = time.monotonic() - sent["at"]
    finally:
        timer.cancel()
        signal.signal(signal.SIGINT, previous)
    print(f"\na frame of 2,000,000 runs: KeyboardInterrupt {took:.2f} s after SIGINT")
    assert took < 8.0, f"KeyboardInterrupt {took:.2f} s after SIGINT"


def test_the_gil_is_released_during_an_audit(tmp_path):
    """Another Python thread keeps running while an audit runs."""
    path = tmp_path / "medium.csv"
    _log(300_000, 3).write_csv(path)
    ticks = []
    stop = threading.Event()

    def count():
        while not stop.is_set():
            ticks.append(time.monotonic())
            time.sleep(0.01)

    counter = threading.Thread(target=count)
    counter.start()
    try:
        started = time.monotonic()
        gapcert.audit(path)
        ended = time.monotonic()
    finally:
        stop.set()
        counter.join()
    during = [t for t in ticks if started < t < ended]
    # One tick per 10 ms at most; with the GIL held throughout there would be none.
    assert ended - started > 0.5
    assert len(during) > 0.5 * (ended - started) / 0.01, (len(during), ended - started)
