"""The worker supervisor starts a child again when it dies on its own, and never undoes a stop."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from scheduler import supervise as sup

ROOT = Path(__file__).resolve().parents[2]


def test_a_child_that_dies_is_started_again(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(sup, "_FIRST_PAUSE_S", 0.1)
    count = tmp_path / "runs"
    # Dies with status 3 twice, then exits cleanly.
    script = (
        "import pathlib, sys; p = pathlib.Path(sys.argv[1]); n = int(p.read_text() or 0) + 1 "
        "if p.exists() else 1; p.write_text(str(n)); sys.exit(3 if n < 3 else 0)"
    )
    said: list[str] = []
    assert sup.supervise([sys.executable, "-c", script, str(count)], say=said.append) == 0
    assert count.read_text() == "3"
    assert said == [
        "worker stopped with status 3; starting it again in 0 s",
        "worker stopped with status 3; starting it again in 0 s",
    ]


def test_sigterm_stops_child_and_supervisor(tmp_path: Path) -> None:
    code = (
        "import sys, time; sys.path.insert(0, sys.argv[1]); from scheduler.supervise import supervise; "
        "sys.exit(supervise([sys.executable, '-c', 'import time; time.sleep(60)']))"
    )
    proc = subprocess.Popen([sys.executable, "-c", code, str(ROOT)])
    time.sleep(2)
    started = time.monotonic()
    os.kill(proc.pid, signal.SIGTERM)
    assert proc.wait(20) == 128 + signal.SIGTERM
    assert time.monotonic() - started < 10, "the stop must not wait for a restart"
