#!/usr/bin/python3
"""End-to-end tests of retention in godwitd ([retention] and a station's retention_days).

The record: two fictional stations' days are written with `godwit reconcile
--state-dir` — Kestrel FM's 500 days ago and 10 days ago, Heron Radio's 10
days ago — and godwitd is started on that state folder with the default
retention (400 days) and Heron kept 5 days: exactly Kestrel's old day and
Heron's day go (their rows counted in the log), and Kestrel's recent day is
left row for row as it was.

Finished jobs: with a retention of a few seconds, finished jobs are
forgotten with their results and the journal is rewritten without them
while jobs are still running and queued; the daemon is then killed
(SIGKILL) and restarted: every acknowledged unfinished job is there and
runs to its end.

Run by CTest: retention_test.py --godwit PATH --godwitd PATH --synth PATH
"""
import argparse
import datetime
import os
import re
import shutil
import signal
import sqlite3
import subprocess
import sys
import tempfile
import time
import unittest

import stations_test
from stations_test import Daemon

ARGS = None
COMMON = ["--planner", "estimate", "--cache-dir", "", "--no-excerpts"]


def rows(db, station):
    """Every row retention may touch of `station`, as comparable tuples."""
    with sqlite3.connect(db) as c:
        q = lambda sql: sorted(c.execute(sql, (station,)).fetchall())
        return {
            "placements": q("SELECT p.id, slot, planned_local, status, detection_id FROM placements p JOIN stations s "
                            "ON s.id = p.station_id WHERE s.name = ?"),
            "detections": q("SELECT d.id, recording_id, spot, aired_local, score FROM detections d JOIN stations s "
                            "ON s.id = d.station_id WHERE s.name = ?"),
            "recordings": q("SELECT r.id, path, start_local FROM recordings r JOIN stations s ON s.id = r.station_id "
                            "WHERE s.name = ?"),
            "searches": q("SELECT recording_id, master_id FROM searches x JOIN stations s ON s.id = x.station_id "
                          "WHERE s.name = ?"),
            "jobs": q("SELECT j.id, key FROM jobs j JOIN stations s ON s.id = j.station_id WHERE s.name = ?"),
        }


class RecordRetention(unittest.TestCase):
    def test_old_days_go_exactly_and_recent_ones_stay(self):
        with tempfile.TemporaryDirectory() as t:
            demo = os.path.join(t, "demo")
            subprocess.run([ARGS.synth, "demo", "--out", demo], check=True, capture_output=True)
            lib = os.path.join(demo, "library")
            state = os.path.join(t, "state")
            today = datetime.datetime.now(datetime.timezone.utc).date()
            for station, ago in (("kestrel-fm", 500), ("kestrel-fm", 10), ("heron-radio", 10)):
                day = today - datetime.timedelta(days=ago)
                folder = os.path.join(t, f"{station}-{ago}")
                os.makedirs(folder)
                recs = []
                for n in sorted(os.listdir(os.path.join(demo, "airchecks"))):
                    recs.append(os.path.join(folder, n.replace("20260314", day.strftime("%Y%m%d"))))
                    shutil.copy(os.path.join(demo, "airchecks", n), recs[-1])
                log = os.path.join(folder, f"{station}-{day.isoformat()}.csv")
                with open(os.path.join(demo, "schedules", "kestrel-fm-2026-03-14.csv")) as f, open(log, "w") as g:
                    g.write(f.read().replace("2026-03-14", day.isoformat()))
                stations_test.run("reconcile", "--library", lib, "--schedule", log, "--recording", *recs, "--out",
                                  os.path.join(folder, "out"), "--state-dir", state, "--station", station, *COMMON)
            db = os.path.join(state, "store.sqlite")
            kestrel, heron = rows(db, "kestrel-fm"), rows(db, "heron-radio")
            self.assertEqual(len(kestrel["recordings"]), 6)
            self.assertEqual(len(kestrel["jobs"]), 2)
            self.assertGreater(len(heron["detections"]), 5)
            # The old day's rows, found by the day they belong to (an outside view: the dates written above).
            with sqlite3.connect(db) as c:
                old_det = c.execute("SELECT count(*) FROM detections d JOIN recordings r ON r.id = d.recording_id "
                                    "WHERE r.path LIKE ?", (f"%/kestrel-fm-500/%",)).fetchone()[0]
                old_pl = c.execute("SELECT count(*) FROM placements WHERE job_id = (SELECT job_id FROM recordings "
                                   "WHERE path LIKE ? LIMIT 1)", (f"%/kestrel-fm-500/%",)).fetchone()[0]
            self.assertGreater(old_det, 5)

            config = (f'listen = "127.0.0.1:0"\nstate_dir = "{state}"\nlibrary = "{lib}"\nplanner = "estimate"\n'
                      f'[[stations]]\nname = "heron-radio"\ndrop = "{t}/drop-heron"\nretention_days = 5\n')
            d = Daemon(t, config)
            try:
                d.wait_log("retention: station kestrel-fm")
                d.wait_log("retention: station heron-radio")
                log = d.log_text()
            finally:
                d.stop()
            after_k, after_h = rows(db, "kestrel-fm"), rows(db, "heron-radio")
            # Heron: its whole day (10 days ago, over its 5); its job stays, named by the masters it wrote.
            self.assertEqual(after_h, {k: [] if k != "jobs" else heron["jobs"] for k in after_h})
            # Kestrel: the recent day row for row; nothing of the old one.
            recent = lambda table, key: [r for r in kestrel[table] if key(r)]
            old_paths = {r[1] for r in kestrel["recordings"] if "/kestrel-fm-500/" in r[1]}
            old_ids = {r[0] for r in kestrel["recordings"] if r[1] in old_paths}
            self.assertEqual(after_k["recordings"], recent("recordings", lambda r: r[0] not in old_ids))
            self.assertEqual(after_k["detections"], recent("detections", lambda r: r[1] not in old_ids))
            self.assertEqual(after_k["searches"], recent("searches", lambda r: r[0] not in old_ids))
            self.assertEqual(len(after_k["jobs"]), 1)
            self.assertEqual(len(after_k["placements"]), len(kestrel["placements"]) - old_pl)
            # The log counts what went.
            m = re.search(r"retention: station kestrel-fm: deleted the days before (\S+): (\d+) detection\(s\), "
                          r"(\d+) placement\(s\), (\d+) recording\(s\), (\d+) search\(es\), (\d+) job\(s\)", log)
            self.assertTrue(m, log)
            self.assertEqual(m.group(1), (today - datetime.timedelta(days=400)).isoformat())
            self.assertEqual([int(x) for x in m.groups()[1:]], [old_det, old_pl, 3, len(kestrel["searches"]) // 2, 1])


class JobRetention(unittest.TestCase):
    def test_a_restart_after_retention_keeps_acknowledged_unfinished_jobs(self):
        with tempfile.TemporaryDirectory() as t:
            demo = os.path.join(t, "demo")
            subprocess.run([ARGS.synth, "demo", "--out", demo], check=True, capture_output=True)
            recs = sorted(os.path.join(demo, "airchecks", n) for n in os.listdir(os.path.join(demo, "airchecks")))
            state = os.path.join(t, "state")
            base = (f'listen = "127.0.0.1:0"\nstate_dir = "{state}"\nroots = ["{demo}"]\nlibrary = "{demo}/library"\n'
                    'planner = "estimate"\nworkers = 1\nthreads_per_job = 1\n')
            # Finished jobs kept about 4 s; a retention pass every 1.8 s.
            d = Daemon(t, base + "[retention]\nfinished_jobs_days = 0.00005\ninterval_h = 0.0005\n")
            try:
                quick = []
                for r in recs[:2]:
                    j = d.req({"op": "submit", "job": {"kind": "locate", "recordings": [r], "max_speed_change_pct": 0}})
                    self.assertTrue(j["ok"], j)
                    quick.append(j["job"])
                for j in quick:
                    self.assertEqual(d.wait_done(j)["state"], "done")
                    self.assertTrue(os.path.exists(os.path.join(state, "results", j + ".json")))
                slow = []
                for _ in range(4):  # one runs, the others wait: about 7 s each
                    j = d.req({"op": "submit", "job": {"kind": "locate", "recordings": recs}})
                    self.assertTrue(j["ok"], j)
                    slow.append(j["job"])
                end = time.time() + 60
                while time.time() < end and any(d.req({"op": "status", "job": j}).get("ok") for j in quick):
                    time.sleep(0.2)
                for j in quick:
                    self.assertEqual(d.req({"op": "status", "job": j})["error"]["code"], "unknown_job")
                    self.assertFalse(os.path.exists(os.path.join(state, "results", j + ".json")))
                d.wait_log("finished job(s) older than")
                before = {j: d.req({"op": "status", "job": j}) for j in slow}
                with open(os.path.join(state, "journal.jsonl")) as f:
                    journal = f.read()
            finally:
                d.stop(signal.SIGKILL)
            unfinished = [j for j, s in before.items() if s.get("state") in ("queued", "running")]
            self.assertGreaterEqual(len(unfinished), 1, before)
            # Rewritten without the forgotten jobs, while the others were waiting.
            for j in quick:
                self.assertNotIn(j, journal)
            for j in unfinished:
                self.assertIn(j, journal)

            d = Daemon(t, base, name="godwitd-2")
            try:
                for j in quick:
                    self.assertEqual(d.req({"op": "status", "job": j})["error"]["code"], "unknown_job")
                for j in unfinished:
                    self.assertIn(d.req({"op": "status", "job": j})["state"], ("queued", "running"))
                for j in unfinished:
                    self.assertEqual(d.wait_done(j)["state"], "done")
                    self.assertGreaterEqual(len(d.req({"op": "result", "job": j})["result"]["matches"]), 3)
            finally:
                d.stop()


if __name__ == "__main__":
    parser = argparse.ArgumentParser()
    parser.add_argument("--godwit", required=True)
    parser.add_argument("--godwitd", required=True)
    parser.add_argument("--synth", required=True)
    ARGS, rest = parser.parse_known_args()
    stations_test.ARGS = ARGS
    unittest.main(argv=[sys.argv[0], "-v", *rest])
