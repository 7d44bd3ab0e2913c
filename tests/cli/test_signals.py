"""Ctrl-C and SIGTERM stop a build within seconds: every worker ends, nothing is written.

The build runs as a real process in a session of its own. Ctrl-C is sent as a terminal sends
it, to the whole process group (workers included); SIGTERM only to the main process, as a
service manager does. Both arrive in the middle of the production-size demo's build.
"""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest


def _group_alive(pgid: int) -> bool:
    try:
        os.killpg(pgid, 0)
    except ProcessLookupError:
        return False
    return True


@pytest.mark.slow
@pytest.mark.parametrize("jobs", [1, 2])
@pytest.mark.parametrize(
    ("sig", "code", "word"),
    [(signal.SIGINT, 130, "interrupted"), (signal.SIGTERM, 143, "terminated")],
)
def test_signal_stops_everything_and_writes_nothing(
    tmp_path: Path, jobs: int, sig: signal.Signals, code: int, word: str
) -> None:
    out = tmp_path / "out"
    proc = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "obvert.cli",
            "build",
            "--demo",
            "griddle_line",  # minutes of work: the signal always lands mid-build
            "--out",
            str(out),
            "--jobs",
            str(jobs),
        ],
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
        start_new_session=True,
    )
    time.sleep(12.0)  # workers started, compiled, and inside their first nodes
    assert proc.poll() is None, proc.communicate()
    if sig == signal.SIGINT:
        os.killpg(proc.pid, sig)  # as a terminal's Ctrl-C: the whole group
    else:
        proc.send_signal(sig)  # as a service manager: the main process only
    sent = time.monotonic()
    try:
        _, err = proc.communicate(timeout=20.0)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
    took = time.monotonic() - sent
    assert proc.returncode == code, err
    assert word in err and "nothing was written" in err
    assert "Traceback" not in err
    assert took < 10.0, took
    deadline = time.monotonic() + 5.0
    while _group_alive(proc.pid) and time.monotonic() < deadline:
        time.sleep(0.1)
    assert not _group_alive(proc.pid), "a worker outlived the build"
    assert not out.exists()
