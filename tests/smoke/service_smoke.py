"""Service smoke test of a plain install (a script): ``VENV/bin/python tests/smoke/service_smoke.py``.

Run with the Python of a virtualenv that has only ``pip install -e .`` (no test extras), as `.ci/run`
does: it proves that the README's install gives a working service. It uses that install's own
``soakline`` command to start the API and a Celery worker on this machine's PostgreSQL
(127.0.0.1:5432) and Redis (127.0.0.1:6379), creates a planner token, submits a small batch with
``soakline submit --wait``, and reads its flags with ``soakline flags``. It creates and drops its own
database and uses its own queue, and needs nothing outside the plain install (httpx, psycopg and redis
are service dependencies). Exit status 0 when every step passed; any failure prints the logs.
"""

from __future__ import annotations

import json
import os
import secrets
import socket
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import httpx
import psycopg
import redis

PG_ADMIN = "host=127.0.0.1 port=5432 user=postgres dbname=postgres connect_timeout=3"
REDIS_URL = "redis://127.0.0.1:6379/0"
DEADLINE_S = 150.0
BATCH = """\
batch: "smoke: three plates"
schedule:
  - {name: heat, duration: "40 min", ambient: "860 degC", htc: "150 W/m^2/K"}
  - {name: soak, duration: "15 min", ambient: "860 degC", htc: "150 W/m^2/K"}
  - {name: quench, duration: "10 min", ambient: "60 degC", medium: oil-agitated}
parts:
  - id: S-20
    shape: plate
    thickness: "20 mm"
    material: "4140"
    initial: "20 degC"
    targets: [{step: soak, at: core, hold_above: "845 degC", for: "10 min"}]
  - id: S-90
    shape: plate
    thickness: "90 mm"
    material: "4140"
    initial: "20 degC"
    targets: [{step: soak, at: core, hold_above: "845 degC", for: "10 min"}]
  - id: S-B60
    shape: bar
    diameter: "60 mm"
    material: "1045"
    initial: "20 degC"
    targets: [{step: quench, at: core, fall_below: "300 degC", within: "8 min"}]
"""


class SmokeFailure(RuntimeError):
    """A step of the smoke test did not do what a user expects."""


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def _soakline() -> str:
    exe = Path(sys.executable).with_name("soakline")
    if not exe.is_file():
        raise SmokeFailure(f"{exe} is missing: run this with the Python of a venv with soakline installed")
    return str(exe)


def _run(args: list[str], env: dict[str, str], timeout: float) -> subprocess.CompletedProcess[str]:
    return subprocess.run(args, env=env, capture_output=True, text=True, timeout=timeout)


def _wait_health(url: str, proc: subprocess.Popen[bytes], until: float) -> None:
    while time.monotonic() < until:
        if proc.poll() is not None:
            raise SmokeFailure(f"soakline serve exited with {proc.returncode}")
        try:
            if httpx.get(url, timeout=2).status_code == 200:
                return
        except httpx.HTTPError:
            pass
        time.sleep(0.3)
    raise SmokeFailure(f"{url} did not answer 200")


def smoke(tmp: Path) -> str:
    soakline = _soakline()
    name = f"soakline_smoke_{secrets.token_hex(4)}"
    queue = f"soakline-smoke-{secrets.token_hex(4)}"
    port = _free_port()
    env = {k: v for k, v in os.environ.items() if not k.startswith("SOAKLINE_")}
    env.update(
        SOAKLINE_DATABASE_URL=f"postgresql+psycopg://postgres@127.0.0.1:5432/{name}",
        SOAKLINE_BROKER_URL=REDIS_URL,
        SOAKLINE_QUEUE=queue,
        SOAKLINE_API_URL=f"http://127.0.0.1:{port}",
        SOAKLINE_DB_WAIT_S="20",
    )
    until = time.monotonic() + DEADLINE_S
    procs: list[subprocess.Popen[bytes]] = []
    with psycopg.connect(PG_ADMIN, autocommit=True) as admin:
        admin.execute(f'CREATE DATABASE "{name}"')
    try:
        for args, log in (
            ([soakline, "serve", "--port", str(port)], "api.log"),
            ([soakline, "worker", "--concurrency", "1", "--loglevel", "warning"], "worker.log"),
        ):
            with (tmp / log).open("wb") as out:
                procs.append(subprocess.Popen(args, env=env, stdout=out, stderr=subprocess.STDOUT))
        _wait_health(f"http://127.0.0.1:{port}/health", procs[0], until)

        made = _run([soakline, "token", "create", "smoke", "--role", "planner"], env, 60)
        if made.returncode != 0:
            raise SmokeFailure(f"token create exited {made.returncode}: {made.stderr}")
        env["SOAKLINE_TOKEN"] = made.stdout.split()[-1]

        file = tmp / "smoke.yaml"
        file.write_text(BATCH)
        left = max(10.0, until - time.monotonic())
        sent = _run([soakline, "submit", str(file), "--wait", "--timeout", f"{left - 5:.0f}"], env, left)
        # Exit 1: done with a flagged part (the 90 mm plate cannot hold 845 degC for 10 of 15 min).
        if sent.returncode != 1 or "done" not in sent.stdout:
            raise SmokeFailure(f"submit --wait exited {sent.returncode}:\n{sent.stdout}\n{sent.stderr}")
        batch_id = int(sent.stdout.split()[1])

        listed = _run([soakline, "flags", "--batch", str(batch_id), "--json"], env, 60)
        if listed.returncode != 0:
            raise SmokeFailure(f"flags exited {listed.returncode}: {listed.stderr}")
        flags = json.loads(listed.stdout)
        parts = {f["part"] for f in flags["items"]}
        if "S-90" not in parts or "S-20" in parts:
            raise SmokeFailure(f"expected S-90 flagged and S-20 not: {parts}")
        return f"batch {batch_id} done, {flags['total']} open flag(s) on {', '.join(sorted(parts))}"
    finally:
        for proc in procs:
            proc.terminate()
        for proc in procs:
            try:
                proc.wait(30)
            except subprocess.TimeoutExpired:
                proc.kill()
        with psycopg.connect(PG_ADMIN, autocommit=True) as admin:
            admin.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')
        client = redis.Redis.from_url(REDIS_URL, socket_connect_timeout=2)
        for key in client.scan_iter(match=f"*{queue}*"):
            client.delete(key)
        client.close()


def main() -> int:
    started = time.monotonic()
    with tempfile.TemporaryDirectory() as tmpdir:
        tmp = Path(tmpdir)
        try:
            what = smoke(tmp)
        except (SmokeFailure, subprocess.TimeoutExpired, OSError, psycopg.Error) as exc:
            print(f"service smoke test FAILED: {exc}", file=sys.stderr)
            for log in sorted(tmp.glob("*.log")):
                print(f"--- {log.name} (last 3000 characters)", file=sys.stderr)
                print(log.read_text(errors="replace")[-3000:], file=sys.stderr)
            return 1
    print(f"service smoke test (plain install): {what} in {time.monotonic() - started:.1f} s")
    return 0


if __name__ == "__main__":
    sys.exit(main())
