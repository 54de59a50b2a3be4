#!/usr/bin/python3
"""Memory of godwitd opening a long journal of finished jobs (retention, issue 16).

Writes STATE/journal.jsonl with JOBS finished locate jobs of RECORDINGS
recordings and 50 masters each (and an empty result each), starts each
godwitd given on the journal's copy, and prints its peak and steady resident
memory once it listens, side by side.

  journal_memory_bench.py --godwitd build/server/godwitd [--godwitd OTHER] [--jobs 10000] [--recordings 100]
"""
import argparse
import json
import os
import shutil
import subprocess
import tempfile
import time


def write_state(state, jobs, recordings):
    os.makedirs(os.path.join(state, "results"))
    now = time.strftime("%Y-%m-%dT%H:%M:%SZ", time.gmtime())  # young: no retention by age
    with open(os.path.join(state, "journal.jsonl"), "w") as f:
        for i in range(jobs):
            jid = "j%015x" % i
            spec = {"kind": "locate", "threshold": 0.3,
                    "recordings": ["/srv/godwit/airchecks/kestrel-fm/2026/03/kestrel-fm-20260314T%06d.flac" % k
                                   for k in range(recordings)],
                    "templates": ["/srv/godwit/spots/spot-%03d.wav" % k for k in range(50)]}
            f.write(json.dumps({"event": "submit", "job": jid, "spec": spec, "submitted": now},
                               sort_keys=True) + "\n")
            f.write(json.dumps({"event": "done", "job": jid}, sort_keys=True) + "\n")
            with open(os.path.join(state, "results", jid + ".json"), "w") as r:
                r.write("{}\n")


def status_kb(pid, key):
    with open(f"/proc/{pid}/status") as f:
        for line in f:
            if line.startswith(key + ":"):
                return int(line.split()[1])
    return 0


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--godwitd", action="append", required=True)
    ap.add_argument("--jobs", type=int, default=10000)
    ap.add_argument("--recordings", type=int, default=100)
    a = ap.parse_args()
    with tempfile.TemporaryDirectory() as t:
        base = os.path.join(t, "base")
        write_state(base, a.jobs, a.recordings)
        mb = os.path.getsize(os.path.join(base, "journal.jsonl")) / 1e6
        print(f"journal: {a.jobs} finished jobs of {a.recordings} recordings, {mb:.0f} MB")
        for i, exe in enumerate(a.godwitd):
            state = os.path.join(t, f"s{i}")
            shutil.copytree(base, state)
            # A far retention: nothing is forgotten by age (the jobs are what is measured).
            cfg = os.path.join(t, f"c{i}.toml")
            with open(cfg, "w") as f:
                f.write(f'listen = "127.0.0.1:0"\nstate_dir = "{state}"\nplanner = "estimate"\n')
            start = time.time()
            p = subprocess.Popen([exe, "--config", cfg], stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, text=True)
            p.stdout.readline()
            opened = time.time() - start
            time.sleep(1)
            print(f"{exe}: listening after {opened:.2f} s, resident {status_kb(p.pid, 'VmRSS') / 1024:.0f} MB, "
                  f"peak {status_kb(p.pid, 'VmHWM') / 1024:.0f} MB")
            p.terminate()  # ours, by PID
            p.wait(timeout=60)
            p.stdout.close()


if __name__ == "__main__":
    main()
