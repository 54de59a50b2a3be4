#!/usr/bin/python3
"""godwitd benchmark: request latency under load, and job throughput vs the CLI.

Usage: daemon_bench.py --godwit PATH --godwitd PATH --synth PATH [--jobs 4] [--clients 50] [--seconds 5]

1. The same locate jobs (the demo library against each of the demo's three
   aircheck files, repeated) run once through `godwit locate` one after
   another, and once through godwitd (all submitted, one worker, same engine
   threads): total wall time side by side, overhead in percent (target < 5).
2. While a long job runs, `clients` connections each send status and health
   requests back to back for `seconds`: p50 and p99 latency.
"""
import argparse
import json
import os
import shutil
import socket
import subprocess
import tempfile
import threading
import time


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--godwit", required=True)
    ap.add_argument("--godwitd", required=True)
    ap.add_argument("--synth", required=True)
    ap.add_argument("--jobs", type=int, default=6)
    ap.add_argument("--clients", type=int, default=50)
    ap.add_argument("--seconds", type=float, default=5)
    a = ap.parse_args()
    tmp = tempfile.mkdtemp(prefix="godwit-dbench-")
    daemon = None
    try:
        demo = os.path.join(tmp, "demo")
        subprocess.run([a.synth, "demo", "--out", demo], check=True, capture_output=True)
        recs = json.load(open(os.path.join(demo, "truth.json")))["recordings"]
        jobs = [[recs[i % 3]] * 4 for i in range(a.jobs)]  # 20 min of audio each
        common = ["--planner", "estimate", "--cache-dir", "", "--threads", "2", "-q"]
        t0 = time.time()
        for r in jobs:
            args = [a.godwit, "locate", "--library", f"{demo}/library", *sum((["--recording", x] for x in r), []), *common]
            subprocess.run(args, check=True, capture_output=True)
        cli_s = time.time() - t0

        cfg = os.path.join(tmp, "d.toml")
        open(cfg, "w").write(f'listen = "127.0.0.1:0"\nstate_dir = "{tmp}/state"\nroots = ["{demo}"]\n'
                             f'library = "{demo}/library"\nplanner = "estimate"\nworkers = 1\nthreads_per_job = 2\n'
                             f'log_level = "warn"\n')
        daemon = subprocess.Popen([a.godwitd, "--config", cfg], stdout=subprocess.PIPE, text=True)
        port = json.loads(daemon.stdout.readline())["port"]

        def conn():
            s = socket.create_connection(("127.0.0.1", port))
            return s, s.makefile("rwb")

        def req(f, o):
            f.write((json.dumps(o) + "\n").encode())
            f.flush()
            return json.loads(f.readline())

        s, f = conn()
        t0 = time.time()
        ids = [req(f, {"op": "submit", "job": {"kind": "locate", "recordings": r}})["job"] for r in jobs]
        for i in ids:
            while req(f, {"op": "status", "job": i})["state"] not in ("done", "failed"):
                time.sleep(0.05)
        daemon_s = time.time() - t0
        print(f"throughput: {a.jobs} locate jobs of 20 min audio, 6 masters, 2 engine threads")
        print(f"  godwit locate (one after another)   {cli_s:7.2f} s")
        print(f"  godwitd (submitted together)        {daemon_s:7.2f} s")
        print(f"  overhead {100 * (daemon_s / cli_s - 1):+.1f} %   (target < 5 %)")

        long_job = req(f, {"op": "submit", "job": {"kind": "locate", "recordings": recs * 20}})["job"]
        lat = []
        lock = threading.Lock()
        stop = time.time() + a.seconds

        def hammer(k):
            _, g = conn()
            mine = []
            n = 0
            while time.time() < stop:
                t = time.perf_counter()
                r = req(g, {"op": "status", "job": long_job} if n % 2 else {"op": "health"})
                mine.append(time.perf_counter() - t)
                assert r["ok"], r
                n += 1
            with lock:
                lat.extend(mine)

        threads = [threading.Thread(target=hammer, args=(k,)) for k in range(a.clients)]
        [t.start() for t in threads]
        [t.join() for t in threads]
        lat.sort()
        running = req(f, {"op": "status", "job": long_job})["state"]
        req(f, {"op": "cancel", "job": long_job})
        print(f"latency: {a.clients} clients, status+health back to back for {a.seconds:.0f} s while a job runs ({running})")
        print(f"  requests {len(lat)}   p50 {1e3 * lat[len(lat) // 2]:.2f} ms   p99 {1e3 * lat[int(len(lat) * 0.99)]:.2f} ms"
              f"   max {1e3 * lat[-1]:.2f} ms")
    finally:
        if daemon and daemon.poll() is None:
            daemon.terminate()
            daemon.wait()
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main()
