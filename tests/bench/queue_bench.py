#!/usr/bin/python3
"""Queue mode throughput: the same locate job through one daemon without
the queue, then through 1, 2 and 4 daemons sharing a Redis stream (a
redis-server started here on a loopback port, AOF fsync'ed on every write).

Prints, side by side: job wall time, tasks per second, and the per-task
overhead = (workers x wall - sum of the tasks' own run times) / tasks, the
run times read from the workers' logs.

Then a reconcile job over one long run (the demo's 14 minutes repeated into
--day-minutes of consecutive files), split into spans of --span-s: one
daemon without the queue against 1 and 2 workers, so the cost of reading
each span's margins and of rebuilding the day in the merge shows beside the
gain. Not run in CI.

queue_bench.py --godwit PATH --godwitd PATH --synth PATH [--copies N] [--day-minutes M --span-s S]
"""
import argparse
import datetime
import json
import os
import re
import shutil
import signal
import subprocess
import sys
import tempfile
import time

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "e2e"))
import daemon_test  # noqa: E402
from daemon_test import Daemon, wait_state  # noqa: E402
from queue_test import Redis  # noqa: E402

STAMP = re.compile(r"^\[(\S+ \S+)\] \[godwitd\] \[info\] task (\w+) (?:of job \S+ started|done)")


def task_seconds(log_path):
    """Sum of started -> done durations of the tasks in one worker log."""
    started, total, n = {}, 0.0, 0
    for line in open(log_path):
        m = STAMP.match(line)
        if not m:
            continue
        t = datetime.datetime.strptime(m.group(1), "%Y-%m-%d %H:%M:%S.%f").timestamp()
        if "started" in line:
            started[m.group(2)] = t
        elif m.group(2) in started:
            total += t - started.pop(m.group(2))
            n += 1
    return total, n


def long_day(demo, minutes):
    """Consecutive files of the demo's three (14 min each) as one run."""
    recs = json.load(open(os.path.join(demo, "truth.json")))["recordings"]
    out, start = [], datetime.datetime(2026, 3, 14, 6, 0, 0)
    for k in range(max(1, round(minutes / 14))):
        name = (start + datetime.timedelta(minutes=14 * k)).strftime("kestrel-fm-%Y%m%dT%H%M%S.flac")
        path = os.path.join(demo, "day", name)
        os.makedirs(os.path.dirname(path), exist_ok=True)
        subprocess.run(["sox", *recs, path], check=True)
        out.append(path)
    return out


def run(tmp, job, workers, redis, tpt, span_s=3600, tag="w"):
    daemons = []
    for i in range(max(1, workers)):
        cfg = "" if redis is None else (
            f'[queue]\nurl = "redis://127.0.0.1:{redis.port}/bench"\ntemplates_per_task = {tpt}\nclaim_idle_s = 30\n'
            f'task_span_s = {span_s}\n')
        home = os.path.join(tmp, f"{tag}{workers}-{i}")
        os.makedirs(os.path.join(home, "root"), exist_ok=True)
        d = Daemon(home, extra_config=cfg, state=os.path.join(tmp, f"state-{tag}{workers}-{i}"))
        daemons.append(d)
    try:
        c = daemons[0].connect()
        t0 = time.time()
        r = c.req({"op": "submit", "job": job})
        st = wait_state(c, r["job"], timeout=3600)
        wall = time.time() - t0
        assert st["state"] == "done", st
        doc = c.req({"op": "result", "job": r["job"]})["result"]
        busy, n = 0.0, 0
        for d in daemons:
            b, k = task_seconds(os.path.join(d.tmp, "godwitd.log"))
            busy += b
            n += k
        return wall, doc.get("tasks", 0), busy, n
    finally:
        for d in daemons:
            d.stop(signal.SIGKILL)


def main():
    p = argparse.ArgumentParser()
    p.add_argument("--godwit", required=True)
    p.add_argument("--godwitd", required=True)
    p.add_argument("--synth", required=True)
    p.add_argument("--copies", type=int, default=4, help="the demo's three files, this many times (default 4; 0: skip)")
    p.add_argument("--templates-per-task", type=int, default=1, help="masters per task (default 1: the most tasks)")
    p.add_argument("--day-minutes", type=float, default=126, help="length of the reconcile run (default 126; 0: skip)")
    p.add_argument("--span-s", type=float, default=1800, help="task span of the reconcile run (default 1800)")
    a = p.parse_args()
    tmp = tempfile.mkdtemp(prefix="godwit-queue-bench-")
    try:
        demo = os.path.join(tmp, "demo")
        subprocess.run([a.synth, "demo", "--out", demo], check=True, capture_output=True)
        daemon_test.ARGS = a
        daemon_test.DEMO = demo
        recs = json.load(open(os.path.join(demo, "truth.json")))["recordings"] * a.copies
        tpt = a.templates_per_task
        job = {"kind": "locate", "recordings": recs}
        redis = Redis(tmp)
        print(f"queue bench: {len(recs)} recordings of 5 min x 6 masters, tasks of 1 recording x {tpt} master(s), "
              f"{os.cpu_count()} cores")
        try:
            if recs:
                local_wall, _, _, _ = run(tmp, job, 0, None, tpt)
                print(f"  {'one daemon, no queue':28s} wall {local_wall:7.2f} s")
            for w in (1, 2, 4) if recs else ():
                wall, tasks, busy, n = run(tmp, job, w, redis, tpt)
                overhead_ms = (w * wall - busy) / max(1, n) * 1e3
                print(f"  {f'{w} worker(s) on the queue':28s} wall {wall:7.2f} s   {tasks / wall:6.2f} tasks/s   "
                      f"per-task overhead {overhead_ms:6.1f} ms   (tasks run {n}, of {tasks})")
            if a.day_minutes > 0:
                day = long_day(demo, a.day_minutes)
                job = {"kind": "reconcile", "library": os.path.join(demo, "library"),
                       "schedule": os.path.join(demo, "schedules", "kestrel-fm-2026-03-14.csv"), "recordings": day}
                print(f"reconcile of one run of {14 * len(day)} min ({len(day)} files) x 6 masters, spans of "
                      f"{a.span_s:.0f} s, 25 masters per task")
                local_wall, _, _, _ = run(tmp, job, 0, None, 25, tag="r")
                print(f"  {'one daemon, no queue':28s} wall {local_wall:7.2f} s")
                for w in (1, 2):
                    wall, tasks, busy, n = run(tmp, job, w, redis, 25, a.span_s, tag="r")
                    print(f"  {f'{w} worker(s) on the queue':28s} wall {wall:7.2f} s   {tasks} tasks, "
                          f"{busy:7.2f} s in tasks   merge and day rebuilt in {max(0.0, wall - busy / w):6.2f} s or less"
                          f"   speed-up {local_wall / wall:5.2f}x")
        finally:
            redis.stop()
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main()
