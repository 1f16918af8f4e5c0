"""`motorshelf serve` under load, on loopback only (127.0.0.1), each server a fresh process.

Figures:
* serve_select_median / serve_select_p95: ``POST /api/select`` of every demo envelope
  (``queries/*.toml``) on a warm server holding the demo catalogue, ROUNDS rounds (the answer is
  the whole ``select --out result.json --units si`` document, rejected candidates included);
* serve_select_<envelope>: the median of each envelope, its p95 in the note, side by side with
  the same work in this process (``Catalog.select(envelope, out="result.json", units="si")``, a
  plain ``Catalog`` reading the file for every selection) as a ratio (in-process time over served
  time: above 1 the server's kept catalogue frames and provenance pay off);
* serve_catalogue_100k: the catalogue page of a 100k-motor catalogue, filtered (mass and voltage
  ranges) and sorted (stall torque, descending), warm server, median of PAGE_RUNS;
* serve_soak: CLIENTS concurrent clients for SOAK_SECONDS mixing page views (catalogue, record,
  shelf), selections and stock takes; every answer must be 200 and the shelf's movement sum must
  equal what the successful takes produced.  Bounded in time and count, stops by itself.
"""
from __future__ import annotations

import http.client
import json
import os
import random
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

from benchmarks.bench_startup import ENV, EXE, ROOT
from benchmarks.common import report

HOST = "127.0.0.1"
ROUNDS = 10
PAGE_RUNS = 10
N_BIG = 100_000
CLIENTS = 20
SOAK_SECONDS = float(os.environ.get("MOTORSHELF_BENCH_SOAK_SECONDS", "60"))
MAX_REQUESTS = 200_000       # a bound besides the time
PAGE = ("/catalogue?kind=motors&units=datasheet&mass.max=500&nominal_voltage.min=12"
        "&sort=stall_torque&order=desc&per=50")
STOCK_ITEM = {"record_id": "brackwater-bs2860-36", "location": "Bench / soak", "condition": "new"}


def _free_port() -> int:
    with socket.socket() as s:
        s.bind((HOST, 0))
        return s.getsockname()[1]


class Server:
    """``motorshelf --db DB serve`` on a free loopback port, stopped on exit."""

    def __init__(self, db: Path):
        self.db, self.port = db, _free_port()

    def __enter__(self):
        self.proc = subprocess.Popen([EXE, "--db", str(self.db), "serve", "--host", HOST, "--port", str(self.port)],
                                     stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, env=ENV)
        deadline = time.monotonic() + 120
        while time.monotonic() < deadline:
            try:
                status, _ = request(self.port, "GET", "/api/health")
                if status == 200:
                    return self
            except OSError:
                pass
            if self.proc.poll() is not None:
                raise RuntimeError(f"the server stopped: {self.proc.stderr.read().decode()[-2000:]}")
            time.sleep(0.1)
        raise RuntimeError("the server did not answer within 120 s")

    def __exit__(self, *exc):
        self.proc.terminate()
        try:
            self.proc.wait(30)
        except subprocess.TimeoutExpired:
            self.proc.kill()
            self.proc.wait(30)


def request(port, method, path, body=None, headers=None, conn=None, timeout=120.0):
    """(status, body bytes) of one request (on ``conn`` when given: a kept-alive connection)."""
    own = conn is None
    conn = conn or http.client.HTTPConnection(HOST, port, timeout=timeout)
    try:
        conn.request(method, path, body=body, headers=headers or {})
        resp = conn.getresponse()
        return resp.status, resp.read()
    finally:
        if own:
            conn.close()


def _pct(values, q):
    values = sorted(values)
    return values[min(len(values) - 1, int(round(q * (len(values) - 1))))]


def _cpu_seconds(pid) -> float | None:
    """User + system CPU time [s] of the process ``pid`` so far (Linux /proc), None where unknown."""
    try:
        fields = Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split()
        return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")
    except (OSError, ValueError, IndexError):
        return None


def _reference_loop() -> float:
    """Seconds of a fixed pure-Python loop (3 million additions), median of 3: how fast this shared
    machine runs at the moment, to read the figures of one run against another's."""
    def loop():
        total = 0
        for i in range(3_000_000):
            total += i
        return total

    times = []
    for _ in range(3):
        t = time.perf_counter()
        loop()
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def bench_select(port, demo: Path, server_pid=None) -> None:
    paths = sorted((ROOT / "queries").glob("*.toml"))
    envelopes = [p.read_bytes() for p in paths]
    headers = {"Content-Type": "application/toml"}
    conn = http.client.HTTPConnection(HOST, port, timeout=120)
    for body in envelopes:                  # warm-up: every envelope once
        status, _ = request(port, "POST", "/api/select", body, headers, conn)
        assert status == 200, status
    times = {p.stem: [] for p in paths}
    cpu_before = _cpu_seconds(server_pid)
    for _ in range(ROUNDS):
        for p, body in zip(paths, envelopes):
            t = time.perf_counter()
            status, data = request(port, "POST", "/api/select", body, headers, conn)
            times[p.stem].append(time.perf_counter() - t)
            assert status == 200 and data.startswith(b"{"), status
    conn.close()
    every = [t for ts in times.values() for t in ts]
    cpu = (_cpu_seconds(server_pid) - cpu_before) / len(every) if cpu_before is not None else float("nan")
    local = _in_process(demo, paths)
    med, p95 = statistics.median(every), _pct(every, 0.95)
    note = (f"{len(envelopes)} demo envelopes x {ROUNDS} rounds, warm server, answer = the select --out JSON; "
            f"server CPU {cpu * 1e3:.0f} ms per request; load average {os.getloadavg()[0]:.1f} on "
            f"{os.cpu_count()} cores; reference loop {_reference_loop() * 1e3:.0f} ms (the machine's speed now)")
    report("serve_select_median", med, "s", statistics.median([t for ts in local.values() for t in ts]),
           "<= 0.1 s", med <= 0.1, note + "; baseline: the same selections in one process")
    report("serve_select_p95", p95, "s", None, "<= 0.2 s", p95 <= 0.2, note)
    for name, ts in times.items():
        report(f"serve_select_{name}", statistics.median(ts), "s", statistics.median(local[name]), None, None,
               f"p95 {_pct(ts, 0.95) * 1e3:.0f} ms served; baseline Catalog.select(out='result.json', "
               f"units='si') in one process, median of {ROUNDS}")


def _in_process(demo: Path, paths) -> dict:
    """envelope -> times [s] of ``Catalog.select(envelope, out=result.json, units="si")`` in this process."""
    import catalog

    cat = catalog.open(demo)
    out: dict = {p.stem: [] for p in paths}
    with tempfile.TemporaryDirectory() as d:
        target = Path(d) / "result.json"
        for p in paths:                      # warm-up: imports and first reads
            cat.select(p, out=target, units="si")
        for _ in range(ROUNDS):
            for p in paths:
                t = time.perf_counter()
                cat.select(p, out=target, units="si")
                out[p.stem].append(time.perf_counter() - t)
    return out


def bench_big_page(folder: Path) -> None:
    from benchmarks.data import write_motor_csv

    csv = write_motor_csv(folder / "big.csv", N_BIG)
    db = folder / "big.duckdb"
    subprocess.run([EXE, "--db", str(db), "import", str(csv)], check=True, capture_output=True, env=ENV)
    with Server(db) as srv:
        conn = http.client.HTTPConnection(HOST, srv.port, timeout=300)
        status, first = request(srv.port, "GET", PAGE, conn=conn)     # warm: the server reads the catalogue once
        assert status == 200 and b"motors match" in first, status
        times = []
        for _ in range(PAGE_RUNS):
            t = time.perf_counter()
            status, _ = request(srv.port, "GET", PAGE, conn=conn)
            times.append(time.perf_counter() - t)
            assert status == 200
        conn.close()
    med = statistics.median(times)
    report("serve_catalogue_100k", med, "s", None, "<= 0.3 s", med <= 0.3,
           f"catalogue page of {N_BIG} motors filtered by mass and voltage, sorted by stall torque; median of "
           f"{PAGE_RUNS}, warm server")


def bench_soak(demo: Path) -> None:
    envelopes = [p.read_bytes() for p in sorted((ROOT / "queries").glob("*.toml"))]
    ids = ["sorvanto-00341-06", "vaskeline-vk-c2232-24", "brackwater-bs2860-36", "kettlebrook-kb126-22-24"]
    pages = [PAGE.replace("mass.max=500", "mass.max=300"), "/catalogue", "/shelf",
             *[f"/records/{i}" for i in ids], "/api/motors?mass.max=0.2", "/api/health"]
    with Server(demo) as srv:
        port = srv.port
        status, _ = request(port, "POST", "/api/stock/receive", json.dumps(
            {**STOCK_ITEM, "quantity": 100_000, "person": "bench"}).encode(), {"Content-Type": "application/json"})
        assert status == 200, status
        before = _on_hand(port)
        counts = {"page": 0, "select": 0, "take": 0}
        errors, lat = [], {"page": [], "select": [], "take": []}
        lock = threading.Lock()
        budget = [MAX_REQUESTS]
        deadline = time.monotonic() + SOAK_SECONDS

        def client(seed):
            rng = random.Random(seed)
            conn = http.client.HTTPConnection(HOST, port, timeout=120)
            try:
                while time.monotonic() < deadline:
                    with lock:
                        if budget[0] <= 0:
                            return
                        budget[0] -= 1
                    roll = rng.random()
                    t = time.perf_counter()
                    if roll < 0.5:
                        kind, (status, _body) = "page", request(port, "GET", rng.choice(pages), conn=conn)
                    elif roll < 0.75:
                        kind, (status, _body) = "select", request(port, "POST", "/api/select", rng.choice(envelopes),
                                                                  {"Content-Type": "application/toml"}, conn)
                    else:
                        body = json.dumps({**STOCK_ITEM, "quantity": 1, "person": f"client {seed}",
                                           "project": "soak"}).encode()
                        kind, (status, _body) = "take", request(port, "POST", "/api/stock/take", body,
                                                                {"Content-Type": "application/json"}, conn)
                    dt = time.perf_counter() - t
                    with lock:
                        lat[kind].append(dt)
                        if status == 200:
                            counts[kind] += 1
                        else:
                            errors.append((kind, status, _body[:200]))
            except OSError as exc:
                with lock:
                    errors.append(("connection", 0, str(exc).encode()))
            finally:
                conn.close()

        threads = [threading.Thread(target=client, args=(k,)) for k in range(CLIENTS)]
        t0 = time.perf_counter()
        for th in threads:
            th.start()
        for th in threads:
            th.join(SOAK_SECONDS + 300)
        elapsed = time.perf_counter() - t0
        after = _on_hand(port)
    total = sum(counts.values())
    sum_ok = before - after == counts["take"]
    ok = not errors and sum_ok and total > 0
    p95 = {k: (_pct(v, 0.95) if v else float("nan")) for k, v in lat.items()}
    note = (f"{CLIENTS} clients, {elapsed:.0f} s, {total} requests ({counts['page']} pages, {counts['select']} "
            f"selections, {counts['take']} takes), {len(errors)} errors; on hand {before} -> {after} "
            f"({'equals' if sum_ok else 'DIFFERS FROM'} the takes); p95 page {p95['page'] * 1e3:.0f} ms, "
            f"select {p95['select'] * 1e3:.0f} ms, take {p95['take'] * 1e3:.0f} ms")
    if errors:
        note += f"; first error {errors[0]}"
    report("serve_soak_throughput", total / elapsed, "req/s", None, "no error, movement sum exact", ok, note)


def _on_hand(port) -> int:
    status, body = request(port, "GET", f"/api/records/{STOCK_ITEM['record_id']}")
    assert status == 200, status
    return sum(s["on_hand"] for s in json.loads(body)["stock"] if s["location"] == STOCK_ITEM["location"])


def main(parts=("select", "soak", "page")) -> int:
    """Every figure; ``python -m benchmarks.bench_serve select`` runs only the selection figures."""
    from catalog.demo import build

    with tempfile.TemporaryDirectory() as d:
        folder = Path(d)
        demo = folder / "demo.duckdb"
        build(demo, out=lambda *a, **k: None)
        if "select" in parts:
            with Server(demo) as srv:
                bench_select(srv.port, demo, srv.proc.pid)
        if "soak" in parts:
            bench_soak(demo)
        if "page" in parts:
            bench_big_page(folder)
    return 0


if __name__ == "__main__":
    sys.exit(main(tuple(sys.argv[1:]) or ("select", "soak", "page")))
