#!/usr/bin/python3
"""godwitd benchmark: request latency under load, with and without hostile
clients, and job throughput vs the CLI.

Usage: daemon_bench.py --godwit PATH --godwitd PATH --synth PATH [--jobs 6] [--clients 50] [--seconds 5]
                       [--hostile] [--hostile-seconds 10] [--hostile-nice 19] [--no-throughput]

1. The same locate jobs (the demo library against each of the demo's three
   aircheck files, repeated) run once through `godwit locate` one after
   another, and once through godwitd (all submitted, one worker, same engine
   threads): total wall time side by side, overhead in percent (target < 5).
2. While a long job runs, `clients` connections each send status and health
   requests back to back for `seconds`: p50 and p99 latency.
3. With --hostile, the same again for --hostile-seconds (clients back to
   back, then each sending one request every 20 ms: 2 500 requests a
   second in all, as well-behaved clients that poll would), each first
   alone and then while hostile clients (hostile_clients.py: 100 000-deep nesting,
   32 MiB lines, 16 MiB requests, slowloris lines, connection floods,
   invalid UTF-8, binary garbage) hammer the daemon from other loopback
   addresses: latency side by side (target: p99 of status <= 10 ms), and
   per hostile kind the requests answered or closed within their deadline
   (target: all). Well-behaved and hostile clients run in two processes
   of their own (asyncio; threads), apart from this one; the hostile one,
   standing for other hosts, in a session of its own whose scheduling
   group runs at nice +19 (--hostile-nice; hostile_clients.py says why);
   with --clients-nice N the well-behaved ones too, in a group at nice N. The daemon's cores are
   also given by thread: io, requests, heavy (long lines), jobs.
"""
import argparse
import asyncio
import json
import multiprocessing
import os
import resource
import shutil
import socket
import subprocess
import tempfile
import threading
import time

import hostile_clients

READ_TIMEOUT_S = 3  # the daemon's, in this benchmark: slowloris lines are closed within the run


def well_behaved(port, job, clients, seconds, queue, start_at, interval_s, clients_nice=None):
    """`clients` connections, each sending status and health alternately: back to back (interval_s 0), or
    one every interval_s (a late answer delays the next request, no burst follows); latencies by op."""
    if clients_nice is not None:  # they stand for other hosts: a scheduling group of their own (see --clients-nice)
        os.setsid()
        with open("/proc/self/autogroup", "w") as f:
            f.write(str(clients_nice))
    async def one(k, lat, stop):
        reader, writer = await asyncio.open_connection("127.0.0.1", port)
        reqs = [(json.dumps({"op": "status", "job": job}) + "\n").encode(), b'{"op":"health"}\n']
        n = k
        due = time.perf_counter() + interval_s * k / clients  # spread over the interval
        while time.time() < stop:
            if interval_s:
                await asyncio.sleep(max(0.0, due - time.perf_counter()))
                due = max(due + interval_s, time.perf_counter())
            op = n % 2
            t = time.perf_counter()
            writer.write(reqs[op])
            line = await reader.readline()
            lat[op].append(time.perf_counter() - t)
            if not json.loads(line)["ok"]:
                raise AssertionError(line)
            n += 1
        writer.close()

    async def all_clients():
        lat = ([], [])
        while time.time() < start_at:
            await asyncio.sleep(0.005)
        stop = time.time() + seconds
        await asyncio.gather(*(one(k, lat, stop) for k in range(clients)))
        return lat

    status, health = asyncio.run(all_clients())
    queue.put({"status": status, "health": health})


def percentiles(xs):
    xs = sorted(xs)
    if not xs:
        return {"n": 0}
    return {"n": len(xs), "p50_ms": 1e3 * xs[len(xs) // 2], "p99_ms": 1e3 * xs[int(len(xs) * 0.99)],
            "max_ms": 1e3 * xs[-1]}


def machine_cpu_s():
    """CPU seconds the whole machine spent busy, and in all."""
    with open("/proc/stat") as f:
        v = [int(x) for x in f.readline().split()[1:]]
    tick = os.sysconf("SC_CLK_TCK")
    return (sum(v) - v[3] - v[4]) / tick, sum(v) / tick


def process_cpu_s(pid):
    with open(f"/proc/{pid}/stat") as f:
        v = f.read().rsplit(")", 1)[1].split()
    return (int(v[11]) + int(v[12])) / os.sysconf("SC_CLK_TCK")


def thread_cpu_s(pid):
    """CPU seconds of each live thread of `pid`: {tid: (name, nice, seconds)}."""
    out = {}
    for tid in os.listdir(f"/proc/{pid}/task"):
        try:
            with open(f"/proc/{pid}/task/{tid}/stat") as f:
                head, tail = f.read().rsplit(")", 1)
        except OSError:
            continue  # ended meanwhile
        v = tail.split()
        out[int(tid)] = (head.split("(", 1)[1], int(v[16]), (int(v[11]) + int(v[12])) / os.sysconf("SC_CLK_TCK"))
    return out


def daemon_cpu_split(pid, before, after, total_s):
    """The daemon's CPU seconds by what its threads do: io (the main thread, which runs the I/O loop), heavy
    (threads named gw-heavy*: long request lines, when the daemon has them), requests (the other threads at the
    daemon's own nice value) and jobs (the rest: job threads run below requests, and threads that ended)."""
    own_nice = after.get(pid, before.get(pid, ("", 0, 0)))[1]
    split = {"io": 0.0, "requests": 0.0, "heavy": 0.0}
    for tid, (name, nice, s) in after.items():
        used = s - before.get(tid, (name, nice, 0.0))[2]
        if tid == pid:
            split["io"] += used
        elif name.startswith("gw-heavy"):
            split["heavy"] += used
        elif nice == own_nice:
            split["requests"] += used
    split["jobs"] = max(0.0, total_s - sum(split.values()))
    return split


def latency_run(port, job, clients, seconds, hostile, interval_s=0.0, daemon_pid=None, hostile_nice=19, clients_nice=None):
    """Well-behaved clients for `seconds` (and hostile ones beside them): their percentiles, the hostile tally,
    and where the machine's CPU went meanwhile (cores busy: the daemon, split by its threads' work, the clients,
    everything else)."""
    busy0, all0 = machine_cpu_s()
    d0 = process_cpu_s(daemon_pid) if daemon_pid else 0
    t0 = thread_cpu_s(daemon_pid) if daemon_pid else {}
    c0 = resource.getrusage(resource.RUSAGE_CHILDREN)
    ctx = multiprocessing.get_context("fork")
    q_good, q_bad = ctx.Queue(), ctx.Queue()
    start_at = time.time() + 3.0  # both processes connect (and the hostile one makes its lines) first
    good = ctx.Process(target=well_behaved, args=(port, job, clients, seconds, q_good, start_at, interval_s, clients_nice))
    procs = [good]
    if hostile:
        procs.append(ctx.Process(target=hostile_clients.run, args=(port, seconds, READ_TIMEOUT_S, q_bad, start_at, hostile_nice)))
    for p in procs:
        p.start()
    lat = q_good.get(timeout=seconds + 120)
    tally = q_bad.get(timeout=seconds + 120) if hostile else None
    for p in procs:
        p.join(60)
    busy1, all1 = machine_cpu_s()
    c1 = resource.getrusage(resource.RUSAGE_CHILDREN)
    wall = (all1 - all0) / os.cpu_count()
    daemon = (process_cpu_s(daemon_pid) - d0) if daemon_pid else 0
    split = daemon_cpu_split(daemon_pid, t0, thread_cpu_s(daemon_pid), daemon) if daemon_pid else {}
    clients_s = (c1.ru_utime + c1.ru_stime) - (c0.ru_utime + c0.ru_stime)
    cpu = {"busy": (busy1 - busy0) / wall, "daemon": daemon / wall, "clients": clients_s / wall,
           "others": (busy1 - busy0 - daemon - clients_s) / wall}
    cpu_daemon = {k: v / wall for k, v in split.items()}
    return {"status": percentiles(lat["status"]), "health": percentiles(lat["health"]),
            "all": percentiles(lat["status"] + lat["health"]), "cpu": cpu,
            "cpu_daemon": cpu_daemon}, tally


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--godwit", required=True)
    ap.add_argument("--godwitd", required=True)
    ap.add_argument("--synth", required=True)
    ap.add_argument("--jobs", type=int, default=6)
    ap.add_argument("--clients", type=int, default=50)
    ap.add_argument("--seconds", type=float, default=5)
    ap.add_argument("--hostile", action="store_true", help="also measure latency beside hostile clients")
    ap.add_argument("--hostile-seconds", type=float, default=10)
    ap.add_argument("--hostile-nice", type=int, default=19,
                    help="nice value of the hostile clients' scheduling group (they stand for other hosts)")
    ap.add_argument("--idle-class", action="store_true",
                    help="the daemon with idle_class = true (jobs and long lines in Linux's idle scheduling class)")
    ap.add_argument("--clients-nice", type=int, default=None,
                    help="run the well-behaved clients in a scheduling group of their own at this nice value "
                         "(root for a negative one; they stand for other hosts: their own wait for a core is then "
                         "not counted as the daemon's latency); default: in the benchmark's group")
    ap.add_argument("--no-throughput", action="store_true", help="skip the throughput comparison")
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
        for r in ([] if a.no_throughput else jobs):
            args = [a.godwit, "locate", "--library", f"{demo}/library", *sum((["--recording", x] for x in r), []), *common]
            subprocess.run(args, check=True, capture_output=True)
        cli_s = time.time() - t0

        cfg = os.path.join(tmp, "d.toml")
        open(cfg, "w").write(f'listen = "127.0.0.1:0"\nstate_dir = "{tmp}/state"\nroots = ["{demo}"]\n'
                             f'library = "{demo}/library"\nplanner = "estimate"\nworkers = 1\nthreads_per_job = 2\n'
                             f'log_level = "warn"\nidle_class = {"true" if a.idle_class else "false"}\n'
                             f'[limits]\nread_timeout_s = {READ_TIMEOUT_S}\n')
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
        if not a.no_throughput:
            t0 = time.time()
            ids = [req(f, {"op": "submit", "job": {"kind": "locate", "recordings": r}})["job"] for r in jobs]
            for i in ids:
                while req(f, {"op": "status", "job": i})["state"] not in ("done", "failed"):
                    time.sleep(0.05)
            daemon_s = time.time() - t0
            print(f"throughput: {a.jobs} locate jobs of 20 min audio, 6 masters, 2 engine threads")
            print(f"  godwit locate (one after another)   {cli_s:7.2f} s")
            print(f"  godwitd (submitted together)        {daemon_s:7.2f} s")
            print(f"  overhead {100 * (daemon_s / cli_s - 1):+.1f} %   (target < 5 %)", flush=True)

        # Untimed names (hard links: a symbolic link would resolve to the
        # timed name): each file is searched on its own, whereas the timed
        # originals repeated would be one timeline searched once.
        loops = []
        for i in range(300 if a.hostile else 60):
            loops.append(os.path.join(demo, "airchecks", f"loop-{i:03d}.flac"))
            os.link(recs[i % 3], loops[-1])
        long_job = req(f, {"op": "submit", "job": {"kind": "locate", "recordings": loops}})["job"]
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
        print(f"latency: {a.clients} clients, status+health back to back for {a.seconds:.0f} s while a job runs ({running})")
        print(f"  requests {len(lat)}   p50 {1e3 * lat[len(lat) // 2]:.2f} ms   p99 {1e3 * lat[int(len(lat) * 0.99)]:.2f} ms"
              f"   max {1e3 * lat[-1]:.2f} ms", flush=True)
        for interval_s in ([0.0, 0.02] if a.hostile else []):
            runs = {}
            for hostile in (False, True):
                runs[hostile] = latency_run(port, long_job, a.clients, a.hostile_seconds, hostile, interval_s,
                                            daemon.pid, a.hostile_nice, a.clients_nice)
            running = req(f, {"op": "status", "job": long_job})["state"]
            pace = "back to back" if not interval_s else f"each one request every {1e3 * interval_s:.0f} ms"
            print(f"latency beside hostile clients: {a.clients} well-behaved clients (asyncio, own process), "
                  f"status+health {pace} for {a.hostile_seconds:.0f} s while a job runs ({running}), "
                  f"alone and beside hostile clients (own process, nice +{a.hostile_nice}); "
                  + (f"well-behaved clients in a group of their own at nice {a.clients_nice}; " if a.clients_nice is not None else "") +
                  f"daemon read_timeout_s = {READ_TIMEOUT_S}")
            print(f"  {'':24} {'alone':>28} {'beside hostile clients':>28}")
            for op in ("status", "health", "all"):
                cells = []
                for hostile in (False, True):
                    p = runs[hostile][0][op]
                    cells.append(f"n {p['n']:6d} p50 {p['p50_ms']:5.2f} p99 {p['p99_ms']:6.2f}")
                print(f"  {op + ' (ms)':24} {cells[0]:>28} {cells[1]:>28}")
            for op in ("status", "all"):
                print(f"  max {op} (ms)             {runs[False][0][op]['max_ms']:28.2f} {runs[True][0][op]['max_ms']:28.2f}")
            cells = [" ".join(f"{k} {v:.2f}" for k, v in runs[h][0]["cpu"].items()) for h in (False, True)]
            print(f"  cores busy: {cells[0]}  |  {cells[1]}   (of {os.cpu_count()}; others: not this benchmark)")
            cells = [" ".join(f"{k} {v:.2f}" for k, v in runs[h][0]["cpu_daemon"].items()) for h in (False, True)]
            print(f"  daemon's cores by thread: {cells[0]}  |  {cells[1]}")
            print(f"  target: p99 of status <= 10 ms beside hostile clients: "
                  f"{'met' if runs[True][0]['status']['p99_ms'] <= 10 else 'MISSED'}")
            tally = runs[True][1]
            print(f"  hostile requests answered (or, for unfinished lines, closed) within their deadline:")
            for kind, t in sorted(tally.items()):
                print(f"    {kind:10} {t['within_deadline']:6d} of {t['requests']:6d}   missed {t['missed']:4d}"
                      f"   worst {t['worst_s']:.3f} s   sent {t['sent_bytes'] / 2**20:8.1f} MiB")
            print(f"  target: all within their deadline: "
                  f"{'met' if all(t['missed'] == 0 for t in tally.values()) else 'MISSED'}", flush=True)
        req(f, {"op": "cancel", "job": long_job})
    finally:
        if daemon and daemon.poll() is None:
            daemon.terminate()
            daemon.wait()
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main()
