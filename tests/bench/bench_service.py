"""Service throughput benchmark (a script, not a test): run ``.venv/bin/python tests/bench/bench_service.py``.

Prints, in one run, on this machine's PostgreSQL and Redis:
  * submit latency (POST /batches until 202) for a 100-part batch: median and p99 of 100 submits,
  * parts per second end-to-end (submit to done) for a 500-part batch with 1 and with 2 Celery worker
    processes, and the ratio of the two,
  * the same batch through ``soakline run`` (no servers), for comparison.
It creates and drops its own database and uses its own queue name. Options: --parts N, --submits N.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import secrets
import statistics
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

from service.helpers import LAUNCH, batch_doc, free_port  # noqa: E402

PG_ADMIN = "host=127.0.0.1 port=5432 user=postgres dbname=postgres connect_timeout=3"


def _wait_http(url: str, timeout: float = 60) -> None:
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        try:
            if httpx.get(url, timeout=1).status_code == 200:
                return
        except httpx.HTTPError:
            pass
        time.sleep(0.2)
    raise SystemExit(f"{url} did not come up")


def _start(args: list[str], env: dict[str, str], log: Path) -> subprocess.Popen[bytes]:
    with log.open("wb") as out:
        return subprocess.Popen(args, env=env, stdout=out, stderr=subprocess.STDOUT, cwd=ROOT)


def _soakline_run(doc: dict[str, Any], tmp: Path) -> float | None:
    """Seconds for ``soakline run`` on the batch, None when that command is not available yet."""
    import yaml

    file = tmp / "bench.yaml"
    file.write_text(yaml.safe_dump(doc))
    cmd = [
        sys.executable,
        "-c",
        "from scheduler.cli import main; main()",
        "run",
        str(file),
        "--json",
        str(tmp / "out.json"),
    ]
    start = time.perf_counter()
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    done = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True)
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    elapsed = time.perf_counter() - start
    cpu = after.ru_utime + after.ru_stime - before.ru_utime - before.ru_stime
    print(f"  soakline run CPU: {1000 * cpu / len(doc['parts']):.1f} ms per part")
    if done.returncode not in (0, 1) or not (tmp / "out.json").is_file():
        print(f"  soakline run unavailable (exit {done.returncode}): {done.stderr.strip()[-300:]}")
        return None
    return elapsed


def _cpu_s(root: int) -> float:
    """CPU seconds (user + system) used so far by a process and its living descendants (Linux /proc).

    On a machine shared with other work the wall time of a run says more about the neighbours than
    about soakline; CPU seconds per part do not."""
    ticks = os.sysconf("SC_CLK_TCK")
    parents: dict[int, int] = {}
    used: dict[int, float] = {}
    for entry in Path("/proc").iterdir():
        if not entry.name.isdigit():
            continue
        try:
            fields = (entry / "stat").read_text().rsplit(")", 1)[1].split()
        except OSError:
            continue
        parents[int(entry.name)] = int(fields[1])
        used[int(entry.name)] = (int(fields[11]) + int(fields[12])) / ticks
    total, todo = 0.0, [root]
    while todo:
        pid = todo.pop()
        total += used.get(pid, 0.0)
        todo += [child for child, parent in parents.items() if parent == pid]
    return total


def _run_batch(client: httpx.Client, doc: dict[str, Any]) -> tuple[float, str]:
    start = time.perf_counter()
    batch_id = client.post("/batches", json=doc, timeout=120).raise_for_status().json()["id"]
    while (status := client.get(f"/batches/{batch_id}").json()["status"]) not in ("done", "failed"):
        time.sleep(0.1)
    return time.perf_counter() - start, status


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--parts", type=int, default=500)
    parser.add_argument("--submit-parts", type=int, default=100)
    parser.add_argument("--submits", type=int, default=100)
    opts = parser.parse_args()

    name = f"soakline_bench_{secrets.token_hex(4)}"
    with psycopg.connect(PG_ADMIN, autocommit=True) as admin:
        admin.execute(f'CREATE DATABASE "{name}"')
    port = free_port()
    env = {k: v for k, v in os.environ.items() if not k.startswith("SOAKLINE_")}
    env.update(
        SOAKLINE_DATABASE_URL=f"postgresql+psycopg://postgres@127.0.0.1:5432/{name}",
        SOAKLINE_BROKER_URL="redis://127.0.0.1:6379/0",
        SOAKLINE_QUEUE=f"soakline-bench-{secrets.token_hex(4)}",
        PYTHONPATH=str(ROOT),
    )
    procs: list[subprocess.Popen[bytes]] = []
    figures: dict[str, float | None] = {}
    with tempfile.TemporaryDirectory() as tmpdir:
        tmp = Path(tmpdir)
        try:
            procs.append(_start([*LAUNCH, "serve", "--port", str(port)], env, tmp / "api.log"))
            _wait_http(f"http://127.0.0.1:{port}/health")
            token = subprocess.run(
                [*LAUNCH, "token", "create", "bench", "--role", "planner"],
                env=env,
                capture_output=True,
                text=True,
            ).stdout.split()[-1]
            client = httpx.Client(
                base_url=f"http://127.0.0.1:{port}", headers={"Authorization": f"Bearer {token}"}
            )
            doc = batch_doc(opts.parts, label="bench")

            # Submit latency first, with no worker computing beside the API.
            small = batch_doc(opts.submit_parts, label="latency")
            latencies = []
            for _ in range(opts.submits):
                t0 = time.perf_counter()
                client.post("/batches", json=small, timeout=60).raise_for_status()
                latencies.append(time.perf_counter() - t0)
            latencies.sort()
            p99 = latencies[min(len(latencies) - 1, int(0.99 * len(latencies)))]
            figures |= {"submit_median_ms": statistics.median(latencies) * 1000, "submit_p99_ms": p99 * 1000}
            print(
                f"submit latency, {opts.submit_parts}-part batch ({opts.submits} submits): median "
                f"{figures['submit_median_ms']:.0f} ms, p99 {figures['submit_p99_ms']:.0f} ms (goal < 100 ms)"
            )
            # The latency batches are not computed: the workers see only the measured batch.
            _purge(env["SOAKLINE_QUEUE"], env["SOAKLINE_DATABASE_URL"])

            for processes in (1, 2):
                worker = [*LAUNCH[:-1], "worker", f"--concurrency={processes}", "--loglevel=WARNING"]
                proc = _start([*worker, "-Q", env["SOAKLINE_QUEUE"]], env, tmp / f"worker{processes}.log")
                time.sleep(4)
                _run_batch(client, batch_doc(20, label="warm-up"))  # imports, first engine call
                cpu = _cpu_s(proc.pid)
                took, status = _run_batch(client, doc)
                cpu = _cpu_s(proc.pid) - cpu
                figures[f"parts_per_s_{processes}"] = opts.parts / took
                figures[f"worker_cpu_ms_per_part_{processes}"] = 1000 * cpu / opts.parts
                print(
                    f"service, {processes} worker process(es): {opts.parts} parts in {took:.2f} s "
                    f"= {opts.parts / took:.1f} parts/s (batch {status}); workers' CPU "
                    f"{1000 * cpu / opts.parts:.1f} ms per part"
                )
                proc.terminate()
                proc.wait(60)
            one, two = figures["parts_per_s_1"] or 1.0, figures["parts_per_s_2"] or 0.0
            print(f"2 workers against 1: {two / one:.2f} x (goal 1.6 x); 2 workers: goal 200 parts/s")

            local_s = _soakline_run(doc, tmp)
            figures["run_parts_per_s"] = None if local_s is None else opts.parts / local_s
            if local_s is not None:
                print(
                    f"soakline run (one process): {opts.parts} parts in {local_s:.2f} s "
                    f"= {opts.parts / local_s:.1f} parts/s"
                )
            print(json.dumps(figures))
            client.close()
        finally:
            for proc in procs:
                proc.terminate()
            for proc in procs:
                try:
                    proc.wait(30)
                except subprocess.TimeoutExpired:
                    proc.kill()
            _purge(env["SOAKLINE_QUEUE"], None)
            with psycopg.connect(PG_ADMIN, autocommit=True) as admin:
                admin.execute(f'DROP DATABASE IF EXISTS "{name}" WITH (FORCE)')


def _purge(queue: str, database_url: str | None) -> None:
    """Empty our queue on the shared Redis and, given the database, mark its waiting jobs done."""
    import redis

    client = redis.Redis.from_url("redis://127.0.0.1:6379/0", socket_connect_timeout=2)
    for key in client.scan_iter(match=f"*{queue}*"):
        client.delete(key)
    client.close()
    if database_url is not None:
        dsn = database_url.replace("postgresql+psycopg://", "postgresql://")
        with psycopg.connect(dsn, autocommit=True) as conn:
            conn.execute("UPDATE jobs SET status = 'done' WHERE status = 'queued'")
            conn.execute("UPDATE batches SET status = 'done' WHERE status = 'queued'")


if __name__ == "__main__":
    main()
