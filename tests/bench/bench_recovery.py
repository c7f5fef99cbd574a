"""Recovery benchmark (a script, not a test): ``.venv/bin/python tests/bench/bench_recovery.py``.

With the default lease, sweep interval and group size (nothing but the database, broker and queue set),
an API process and two single-process Celery workers on this machine's PostgreSQL and a redis-server of
our own (loopback, a random port, no persistence) compute one batch three times and print:

  * the batch undisturbed (the reference);
  * one worker SIGKILLed (with its pool) a third of the way through: the seconds from the kill to the
    batch being done, against what the reference needed for the same remaining work;
  * Redis stopped a third of the way through (its queue lost) and started again two seconds later:
    the seconds from the restart to the batch being done.

Every run ends with each part's result stored exactly once. It creates and drops its own database.
Options: --parts N (plates with an oil quench; default 3000).
"""

from __future__ import annotations

import argparse
import os
import secrets
import shutil
import signal
import subprocess
import sys
import tempfile
import time
from pathlib import Path
from typing import Any

import httpx
import psycopg

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT / "tests"))
sys.path.insert(0, str(ROOT))  # first: a tests/models folder must not shadow the models package

from service.helpers import HERE, LAUNCH, free_port  # noqa: E402

PG_ADMIN = "host=127.0.0.1 port=5432 user=postgres dbname=postgres connect_timeout=3"


def batch(n: int) -> dict[str, Any]:
    """n plates of 20..80 mm of a steel with temperature-dependent properties, quenched in oil."""
    return {
        "batch": "recovery",
        "schedule": [
            {"name": "heat", "duration": "40 min", "ambient": "860 degC", "htc": "150 W/m^2/K"},
            {"name": "soak", "duration": "30 min", "ambient": "860 degC", "htc": "150 W/m^2/K"},
            {"name": "quench", "duration": "10 min", "ambient": "60 degC", "medium": "oil-agitated"},
        ],
        "parts": [
            {
                "id": f"R-{i:04d}",
                "shape": "plate",
                "thickness": f"{20 + (i * 7) % 61} mm",
                "material": "4140",
                "initial": "20 degC",
                "targets": [{"step": "soak", "at": "core", "hold_above": "845 degC", "for": "10 min"}],
            }
            for i in range(n)
        ],
    }


class Rig:
    """API, workers and a redis-server of our own, all subprocesses, stopped by :meth:`close`."""

    def __init__(self, tmp: Path, database: str) -> None:
        self.tmp = tmp
        self.redis_port = free_port()
        self.env = {k: v for k, v in os.environ.items() if not k.startswith("SOAKLINE_")}
        self.env.update(
            SOAKLINE_DATABASE_URL=f"postgresql+psycopg://postgres@127.0.0.1:5432/{database}",
            SOAKLINE_BROKER_URL=f"redis://127.0.0.1:{self.redis_port}/0",
            SOAKLINE_QUEUE="recovery",
            PYTHONPATH=str(ROOT),
        )
        self.redis: subprocess.Popen[bytes] | None = None
        self.procs: list[subprocess.Popen[bytes]] = []
        self.port = free_port()

    def _start(self, args: list[str], log: str, group: bool = False) -> subprocess.Popen[bytes]:
        with (self.tmp / log).open("ab") as out:
            proc = subprocess.Popen(
                args, env=self.env, stdout=out, stderr=subprocess.STDOUT, cwd=ROOT, start_new_session=group
            )
        self.procs.append(proc)
        return proc

    def start_redis(self) -> None:
        exe = shutil.which("redis-server") or "redis-server"
        args = [
            exe,
            "--port",
            str(self.redis_port),
            "--bind",
            "127.0.0.1",
            "--save",
            "",
            "--appendonly",
            "no",
        ]
        with (self.tmp / "redis.log").open("ab") as out:
            self.redis = subprocess.Popen(args, stdout=out, stderr=subprocess.STDOUT)
        time.sleep(0.5)

    def stop_redis(self) -> None:
        if self.redis is not None:
            self.redis.terminate()
            self.redis.wait(10)

    def start_api(self) -> None:
        self._start([*LAUNCH, "serve", "--port", str(self.port)], "api.log")
        end = time.monotonic() + 60
        while time.monotonic() < end:
            try:
                if httpx.get(f"http://127.0.0.1:{self.port}/health", timeout=1).status_code == 200:
                    return
            except httpx.HTTPError:
                pass
            time.sleep(0.2)
        raise SystemExit("the API did not come up")

    def start_worker(self, name: str) -> subprocess.Popen[bytes]:
        args = [sys.executable, str(HERE / "launch.py"), "worker", "--concurrency=1", "--loglevel=WARNING"]
        args += ["-Q", "recovery", "--without-gossip", "--without-mingle", f"--hostname={name}@%h"]
        proc = self._start(args, f"{name}.log", group=True)
        time.sleep(4)
        return proc

    def token(self) -> str:
        made = subprocess.run(
            [*LAUNCH, "token", "create", f"bench-{secrets.token_hex(2)}", "--role", "planner"],
            env=self.env,
            capture_output=True,
            text=True,
        )
        return made.stdout.split()[-1]

    def close(self) -> None:
        for proc in self.procs:
            if proc.poll() is None:
                try:
                    os.killpg(proc.pid, signal.SIGTERM)
                except (ProcessLookupError, PermissionError):
                    proc.terminate()
        for proc in self.procs:
            try:
                proc.wait(30)
            except subprocess.TimeoutExpired:
                proc.kill()
        self.stop_redis()


def counts(database: str, batch_id: int) -> tuple[str, int, int]:
    """Batch status, results stored, and the most results any one part has."""
    with psycopg.connect(f"host=127.0.0.1 user=postgres dbname={database}") as conn:
        status = conn.execute("SELECT status FROM batches WHERE id = %s", (batch_id,)).fetchone()
        done, most = conn.execute(
            "SELECT count(*), coalesce(max(n), 0) FROM (SELECT count(*) AS n FROM results "
            "WHERE batch_id = %s GROUP BY part_id) AS per_part",
            (batch_id,),
        ).fetchone() or (0, 0)
    return (status[0] if status else "missing", int(done), int(most))


def run(rig: Rig, client: httpx.Client, database: str, n: int, disturb: Any = None) -> dict[str, float]:
    """Submit, disturb at a third of the parts (``disturb()`` returns when it is done), wait for done."""
    start = time.monotonic()
    batch_id = client.post("/batches", json=batch(n), timeout=120).raise_for_status().json()["id"]
    marks: dict[str, float] = {}
    disturbed = disturb is None
    while True:
        status, done, most = counts(database, batch_id)
        if not disturbed and done >= n // 3:
            marks["at_parts"] = done
            marks["disturbed"] = time.monotonic() - start
            marks |= disturb()
            disturbed = True
        if status in ("done", "failed"):
            break
        if time.monotonic() - start > 1800:
            raise SystemExit(f"batch {batch_id} not done after 30 min ({done}/{n})")
        time.sleep(0.25)
    marks["total"] = time.monotonic() - start
    if status != "done" or done != n or most != 1:
        raise SystemExit(f"batch {batch_id}: {status}, {done} results of {n}, at most {most} per part")
    return marks


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--parts", type=int, default=3000)
    opts = parser.parse_args()
    n = opts.parts
    database = f"soakline_recovery_{secrets.token_hex(4)}"
    with psycopg.connect(PG_ADMIN, autocommit=True) as admin:
        admin.execute(f'CREATE DATABASE "{database}"')
    with tempfile.TemporaryDirectory() as tmpdir:
        rig = Rig(Path(tmpdir), database)
        try:
            rig.start_redis()
            rig.start_api()
            headers = {"Authorization": f"Bearer {rig.token()}"}
            workers = [rig.start_worker("w1"), rig.start_worker("w2")]
            with httpx.Client(base_url=f"http://127.0.0.1:{rig.port}", headers=headers) as client:
                ref = run(rig, client, database, n)
                print(f"reference: {n} parts in {ref['total']:.1f} s (2 workers, default settings)")

                def kill() -> dict[str, float]:
                    os.killpg(workers[0].pid, signal.SIGKILL)
                    return {"kill": time.monotonic()}

                killed = run(rig, client, database, n, kill)
                after = killed["total"] - killed["disturbed"]
                left = ref["total"] * (1 - killed["at_parts"] / n)
                print(
                    f"SIGKILL of one of two workers at {killed['at_parts']:.0f}/{n} parts: done "
                    f"{after:.1f} s after the kill (the reference finished the same remaining parts in "
                    f"{left:.1f} s with two workers); total {killed['total']:.1f} s"
                )
                workers[0] = rig.start_worker("w1b")

                def redis_loss() -> dict[str, float]:
                    rig.stop_redis()
                    time.sleep(2)
                    rig.start_redis()
                    return {"restarted": time.monotonic()}

                lost = run(rig, client, database, n, redis_loss)
                print(
                    f"Redis stopped at {lost['at_parts']:.0f}/{n} parts (queue lost), started again 2 s "
                    f"later: done {lost['total'] - lost['disturbed'] - 2.5:.1f} s after the restart; "
                    f"total {lost['total']:.1f} s"
                )
        finally:
            rig.close()
            with psycopg.connect(PG_ADMIN, autocommit=True) as admin:
                admin.execute(f'DROP DATABASE IF EXISTS "{database}" WITH (FORCE)')


if __name__ == "__main__":
    main()
