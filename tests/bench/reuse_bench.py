#!/usr/bin/python3
"""Each hour searched once: CPU of a day through the drop folder, hour by hour, beside one `godwit locate` of the
same files; and the time to re-reconcile the stored day with an edited planned log.

The day: an hour of air from godwit-synth's day (tools/air_day.h: its library, its planned log), made into HOURS
distinct hour files by sox (each a different gain, mono FLAC at 22.05 kHz, so that no file's SHA-256 repeats and
every hour is searched for real), the log's first hour repeated for each. EXTRA masters that never aired (sox
noise, 30 s each) make the library larger.

  1. `godwit locate` of the files in one process: CPU (user + system, getrusage of the child).
  2. godwitd with the store of record, the drop folder and the schedules folder: the files dropped one at a time,
     each located and its day reconciled before the next; godwitd's CPU over the whole day.
  3. `godwit reconcile --state-dir` of the stored day with its log edited (every placement moved 20 s): wall
     time, CPU, and how many (piece x master) searches ran (0 expected), and whether the families (sibling
     discovery) were found again (0 expected: read back from the store).
With --excerpts the drop folder also writes the day's excerpts to listen to each hour (godwitd's default).

Run: tests/bench/reuse_bench.py --godwit build/server/godwit --godwitd build/server/godwitd \\
       --synth build/tools/godwit-synth [--hours 24] [--extra-masters 0] [--work DIR] [--skip-drop] [--excerpts]\n       [--fill-threads N]
"""
import argparse
import csv
import datetime
import json
import os
import resource
import shutil
import signal
import subprocess
import sys
import tempfile
import time

COMMON = ["--planner", "estimate", "--cache-dir", "", "--quiet", "--threads", "1"]


def child_cpu():
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def timed(args):
    cpu0, t0 = child_cpu(), time.time()
    p = subprocess.run(args, capture_output=True, text=True)
    if p.returncode not in (0, 4, 9):
        sys.exit(f"{' '.join(args)} exited {p.returncode}\n{p.stderr}")
    return time.time() - t0, child_cpu() - cpu0, p


def make_day(a, work):
    seed_day = os.path.join(work, "seed-day")
    if not os.path.exists(os.path.join(seed_day, "planned.csv")):
        subprocess.run([a.synth, "day", "--out", seed_day, "--hours", "1", "--file-min", "60", "--start",
                        "2026-05-20T00:00:00"], check=True, capture_output=True)
    first = sorted(os.listdir(os.path.join(seed_day, "air")))[0]
    day = os.path.join(work, f"day-{a.hours}h-{a.extra_masters}x")
    air, lib, sched = (os.path.join(day, d) for d in ("air", "library", "schedules"))
    for d in (air, lib, sched):
        os.makedirs(d, exist_ok=True)
    files = []
    for h in range(a.hours):
        out = os.path.join(air, f"bench-fm-20260520T{h:02d}0000.flac")
        if not os.path.exists(out):
            subprocess.run(["sox", os.path.join(seed_day, "air", first), "-r", "22050", "-c", "1", out + ".tmp.flac",
                            "gain", f"-{0.05 * (h + 1):.2f}"], check=True)
            os.rename(out + ".tmp.flac", out)
        files.append(out)
    for f in os.listdir(os.path.join(seed_day, "library")):
        if not os.path.exists(os.path.join(lib, f)):
            shutil.copy(os.path.join(seed_day, "library", f), lib)
    for k in range(a.extra_masters):
        out = os.path.join(lib, f"unaired-{k:03d}.wav")
        if not os.path.exists(out):
            subprocess.run(["sox", "-R", "-n", "-r", "22050", "-c", "1", out, "synth", "30", "pinknoise",
                            "tremolo", str(1 + k % 7), "60", "gain", f"-{10 + k % 5}"], check=True)
    with open(os.path.join(seed_day, "planned.csv")) as f:
        rows = list(csv.reader(f))
    planned = [rows[0]]
    for h in range(a.hours):
        for r in rows[1:]:
            t = datetime.datetime.fromisoformat(r[2])
            if not (datetime.datetime(2026, 5, 20) <= t < datetime.datetime(2026, 5, 20, 1)):
                continue
            planned.append([f"H{h:02d}{r[0]}", r[1], (t + datetime.timedelta(hours=h)).isoformat(), *r[3:]])
    log = os.path.join(sched, "bench-fm-2026-05-20.csv")
    with open(log, "w", newline="") as f:
        csv.writer(f).writerows(planned)
    return lib, log, files


def drop_day(a, work, lib, log, files):
    state, drop = os.path.join(work, "state"), os.path.join(work, "drop")
    for d in (state, drop):
        shutil.rmtree(d, ignore_errors=True)
    config = os.path.join(work, "godwitd.toml")
    with open(config, "w") as f:
        f.write(f'listen = "127.0.0.1:0"\nstate_dir = "{state}"\nroots = ["{work}", "/tmp"]\n'
                f'library = "{lib}"\nplanner = "estimate"\nworkers = 1\nthreads_per_job = 1\n'
                f'excerpts = {"true" if a.excerpts else "false"}\n')
    result = os.path.join(drop, "results", "bench-fm-2026-05-20.reconcile.json")
    cpu0, t0 = child_cpu(), time.time()
    with open(os.path.join(work, "godwitd.log"), "w") as logf:
        proc = subprocess.Popen([a.godwitd, "--config", config, "--drop", drop, "--schedules", os.path.dirname(log),
                                 "--drop-stable-s", "0.5", "--drop-poll-s", "0.2"],
                                stdout=subprocess.PIPE, stderr=logf, text=True)
        json.loads(proc.stdout.readline())
        searches = []
        for i, rec in enumerate(files):
            shutil.copy(rec, os.path.join(drop, "incoming", os.path.basename(rec) + ".part"))
            os.rename(os.path.join(drop, "incoming", os.path.basename(rec) + ".part"),
                      os.path.join(drop, "incoming", os.path.basename(rec)))
            while True:
                if os.path.exists(result):
                    try:
                        with open(result) as f:
                            doc = json.load(f)
                        if len(doc["recordings"]) == i + 1:
                            break
                    except ValueError:
                        pass
                if proc.poll() is not None:
                    sys.exit("godwitd ended; see " + os.path.join(work, "godwitd.log"))
                time.sleep(0.2)
            with open(os.path.join(drop, "results", os.path.basename(rec) + ".json")) as f:
                located = json.load(f)
            searches.append((located["searches"], doc["searches"]))
            print(f"  hour {i + 1:2d}: {time.time() - t0:7.1f} s; its locate searched {located['searches']['searched']}"
                  f" (piece x master), the day searched {doc['searches']['searched']} and reused "
                  f"{doc['searches']['reused']}", flush=True)
        proc.send_signal(signal.SIGTERM)
        proc.wait(timeout=120)
        proc.stdout.close()
    return time.time() - t0, child_cpu() - cpu0, state, drop, searches


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--godwit", required=True)
    ap.add_argument("--godwitd", required=True)
    ap.add_argument("--synth", required=True)
    ap.add_argument("--hours", type=int, default=24)
    ap.add_argument("--extra-masters", type=int, default=0)
    ap.add_argument("--work", default="")
    ap.add_argument("--skip-drop", action="store_true", help="only the re-reconcile (its store made by a reconcile)")
    ap.add_argument("--excerpts", action="store_true",
                    help="the drop folder writes the day's excerpts to listen to (godwitd's default; off otherwise)")
    ap.add_argument("--fill-threads", type=int, default=1,
                    help="with --skip-drop: engine threads of the first reconcile that fills the store (not measured)")
    a = ap.parse_args()
    work = a.work or tempfile.mkdtemp(prefix="reuse-bench-")
    os.makedirs(work, exist_ok=True)
    lib, log, files = make_day(a, work)
    masters = len([f for f in os.listdir(lib) if f.endswith(".wav")])
    print(f"reuse_bench: {a.hours} hour files x {masters} masters (work folder {work})", flush=True)
    if not a.skip_drop:
        wall, cpu, p = timed([a.godwit, "locate", "-l", lib, "-r", *files, "-o", os.path.join(work, "locate.json"),
                              *COMMON])
        print(f"one godwit locate of the {a.hours} files: {cpu:8.1f} s CPU ({wall:.1f} s wall)", flush=True)
        dwall, dcpu, state, drop, _ = drop_day(a, work, lib, log, files)
        print(f"the drop folder, hour by hour, each day reconciled: {dcpu:8.1f} s CPU ({dwall:.1f} s wall)")
        print(f"ratio {dcpu / cpu:.3f} (target <= 1.15)", flush=True)
        recs = sorted(os.path.join(drop, "done", f) for f in os.listdir(os.path.join(drop, "done")))
    else:
        state = os.path.join(work, "state-cli")
        shutil.rmtree(state, ignore_errors=True)
        recs = files
        fill = COMMON[:-1] + [str(a.fill_threads)]
        wall, cpu, p = timed([a.godwit, "reconcile", "-l", lib, "-s", log, "-r", *recs, "-o",
                              os.path.join(work, "first"), "--format", "json", "--no-excerpts", "--state-dir", state,
                              *fill])
        print(f"first reconcile of the day into the store: {cpu:.1f} s CPU ({wall:.1f} s wall)", flush=True)
    edited = os.path.join(work, "edited", "bench-fm-2026-05-20.csv")
    os.makedirs(os.path.dirname(edited), exist_ok=True)
    with open(log) as f:
        rows = list(csv.reader(f))
    for r in rows[1:]:
        r[2] = (datetime.datetime.fromisoformat(r[2]) + datetime.timedelta(seconds=20)).isoformat()
    with open(edited, "w", newline="") as f:
        csv.writer(f).writerows(rows)
    wall, cpu, p = timed([a.godwit, "reconcile", "-l", lib, "-s", edited, "-r", *recs, "-o",
                          os.path.join(work, "again"), "--format", "json", "--no-excerpts", "--state-dir", state,
                          *COMMON])
    with open(os.path.join(work, "again", "reconcile.json")) as f:
        s = json.load(f)["searches"]
    print(f"re-reconcile of the stored day, log edited: {wall:.2f} s wall, {cpu:.2f} s CPU (target <= 5 s for "
          f"24 h x 100 masters); searched {s['searched']}, reused {s['reused']} (piece x master); evidence "
          f"gathered {s['evidence_gathered']}, reused {s['evidence_reused']}; families found "
          f"{s.get('families_found', '-')}, reused {s.get('families_reused', '-')}")


if __name__ == "__main__":
    main()
