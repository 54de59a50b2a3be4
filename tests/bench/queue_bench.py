#!/usr/bin/python3
"""Queue mode throughput: the same locate job through one daemon without
the queue, then through 1, 2 and 4 daemons sharing a Redis stream (a
redis-server started here on a loopback port, AOF fsync'ed on every write).

Prints, side by side: job wall time, tasks per second, and the per-task
overhead = (workers x wall - sum of the tasks' own run times) / tasks, the
run times read from the workers' logs. Not run in CI.

queue_bench.py --godwit PATH --godwitd PATH --synth PATH [--copies N]
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

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), ".."))
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


TPT = 1


def run(tmp, recs, workers, redis):
    daemons = []
    for i in range(max(1, workers)):
        cfg = "" if redis is None else (
            f'[queue]\nurl = "redis://127.0.0.1:{redis.port}/bench"\ntemplates_per_task = {TPT}\nclaim_idle_s = 30\n')
        d = Daemon(os.path.join(tmp, f"w{workers}-{i}"), extra_config=cfg, state=os.path.join(tmp, f"state-{workers}-{i}"))
        daemons.append(d)
    try:
        c = daemons[0].connect()
        t0 = time.time()
        r = c.req({"op": "submit", "job": {"kind": "locate", "recordings": recs}})
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
    p.add_argument("--copies", type=int, default=4, help="the demo's three files, this many times (default 4)")
    p.add_argument("--templates-per-task", type=int, default=1, help="masters per task (default 1: the most tasks)")
    a = p.parse_args()
    global TPT
    TPT = a.templates_per_task
    tmp = tempfile.mkdtemp(prefix="godwit-queue-bench-")
    try:
        demo = os.path.join(tmp, "demo")
        subprocess.run([a.synth, "demo", "--out", demo], check=True, capture_output=True)
        daemon_test.ARGS = a
        daemon_test.DEMO = demo
        recs = json.load(open(os.path.join(demo, "truth.json")))["recordings"] * a.copies
        for sub in ["w0-0"] + [f"w{w}-{i}" for w in (1, 2, 4) for i in range(w)]:
            os.makedirs(os.path.join(tmp, sub, "root"), exist_ok=True)
        print(f"queue bench: {len(recs)} recordings of 5 min x 6 masters, tasks of 1 recording x {TPT} master(s), "
              f"{os.cpu_count()} cores")
        local_wall, _, _, _ = run(tmp, recs, 0, None)
        print(f"  {'one daemon, no queue':28s} wall {local_wall:7.2f} s")
        redis = Redis(tmp)
        try:
            for w in (1, 2, 4):
                wall, tasks, busy, n = run(tmp, recs, w, redis)
                overhead_ms = (w * wall - busy) / max(1, n) * 1e3
                print(f"  {f'{w} worker(s) on the queue':28s} wall {wall:7.2f} s   {tasks / wall:6.2f} tasks/s   "
                      f"per-task overhead {overhead_ms:6.1f} ms   (tasks run {n}, of {tasks})")
        finally:
            redis.stop()
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main()
