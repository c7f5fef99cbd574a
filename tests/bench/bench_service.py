"""Service throughput benchmark (a script, not a test): run ``.venv/bin/python tests/bench/bench_service.py``.

Prints, in one run, on this machine's PostgreSQL and Redis:
  * parts per second end-to-end (submit to done) for a 500-part batch with 2 Celery worker processes,
  * the same batch through ``soakline run`` (no servers), for comparison,
  * submit latency (POST /batches until 202) for a 100-part batch.
It creates and drops its own database and uses its own queue name. Options: --parts N, --submits N.
"""

from __future__ import annotations

import argparse
import json
import os
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
    done = subprocess.run(cmd, cwd=ROOT, capture_output=True, text=True)
    elapsed = time.perf_counter() - start
    if done.returncode not in (0, 1) or not (tmp / "out.json").is_file():
        print(f"  soakline run unavailable (exit {done.returncode}): {done.stderr.strip()[-300:]}")
        return None
    return elapsed


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--parts", type=int, default=500)
    parser.add_argument("--submit-parts", type=int, default=100)
    parser.add_argument("--submits", type=int, default=10)
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
            worker = [
                *LAUNCH[:-1],
                "worker",
                "--concurrency=2",
                "--loglevel=WARNING",
                "-Q",
                env["SOAKLINE_QUEUE"],
            ]
            procs.append(_start(worker, env, tmp / "worker.log"))
            time.sleep(3)
            client = httpx.Client(
                base_url=f"http://127.0.0.1:{port}", headers={"Authorization": f"Bearer {token}"}
            )
            doc = batch_doc(opts.parts, label="bench")
            start = time.perf_counter()
            batch_id = client.post("/batches", json=doc, timeout=120).raise_for_status().json()["id"]
            while (status := client.get(f"/batches/{batch_id}").json()["status"]) not in ("done", "failed"):
                time.sleep(0.1)
            service_s = time.perf_counter() - start
            print(
                f"service, 2 worker processes: {opts.parts} parts in {service_s:.2f} s "
                f"= {opts.parts / service_s:.1f} parts/s (batch {status})"
            )

            local_s = _soakline_run(doc, tmp)
            if local_s is not None:
                print(
                    f"soakline run (one process): {opts.parts} parts in {local_s:.2f} s "
                    f"= {opts.parts / local_s:.1f} parts/s"
                )

            small = batch_doc(opts.submit_parts, label="latency")
            latencies = []
            for _ in range(opts.submits):
                t0 = time.perf_counter()
                client.post("/batches", json=small, timeout=60).raise_for_status()
                latencies.append(time.perf_counter() - t0)
            median_ms, max_ms = statistics.median(latencies) * 1000, max(latencies) * 1000
            print(
                f"submit latency, {opts.submit_parts}-part batch ({opts.submits} submits): "
                f"median {median_ms:.0f} ms, max {max_ms:.0f} ms"
            )
            print(
                json.dumps(
                    {
                        "service_parts_per_s": opts.parts / service_s,
                        "run_parts_per_s": None if local_s is None else opts.parts / local_s,
                        "submit_median_ms": statistics.median(latencies) * 1000,
                    }
                )
            )
            client.close()
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


if __name__ == "__main__":
    main()
