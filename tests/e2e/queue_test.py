#!/usr/bin/python3
"""Queue mode end to end: a real redis-server (started here, on a loopback
port, ended by its PID) and several real godwitd processes sharing jobs.

Run by CTest: queue_test.py --godwit PATH --godwitd PATH --synth PATH
"""
import argparse
import json
import os
import shutil
import signal
import socket
import subprocess
import sys
import tempfile
import time
import unittest

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import daemon_test  # noqa: E402  (Daemon, Client, wait_state)
from daemon_test import Client, Daemon, wait_state  # noqa: E402

ARGS = None


def free_port():
    s = socket.socket()
    s.bind(("127.0.0.1", 0))
    port = s.getsockname()[1]
    s.close()
    return port


class Redis:
    """redis-server on 127.0.0.1 with AOF persistence, fsync'ed on every write."""

    def __init__(self, tmp, port=None):
        self.dir = os.path.join(tmp, "redis")
        os.makedirs(self.dir, exist_ok=True)
        self.port = port or free_port()
        self.start()

    def start(self):
        self.proc = subprocess.Popen(["redis-server", "--port", str(self.port), "--bind", "127.0.0.1", "--dir", self.dir,
                                      "--appendonly", "yes", "--appendfsync", "always", "--save", "",
                                      "--protected-mode", "yes"],
                                     stdout=open(os.path.join(self.dir, "log"), "a"), stderr=subprocess.STDOUT)
        end = time.time() + 20
        while time.time() < end:
            if self.cli("PING").strip() == "PONG":
                return
            time.sleep(0.05)
        raise AssertionError("redis-server did not start")

    def cli(self, *args):
        p = subprocess.run(["redis-cli", "-h", "127.0.0.1", "-p", str(self.port), *args], capture_output=True,
                           text=True, timeout=30)
        return p.stdout

    def stop(self, sig=signal.SIGTERM):
        if self.proc.poll() is None:
            self.proc.send_signal(sig)
            self.proc.wait(timeout=30)


def strip(doc):
    """A locate document's matches, comparable across runs."""
    return sorted((m["template"], os.path.basename(m["recording"]), round(m["offset_s"], 5), m["polarity"])
                  for m in doc["matches"])


class QueueTests(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.demo_tmp = tempfile.mkdtemp(prefix="godwit-queue-demo-")
        demo = os.path.join(cls.demo_tmp, "demo")
        subprocess.run([ARGS.synth, "demo", "--out", demo], check=True, capture_output=True)
        daemon_test.ARGS = ARGS
        daemon_test.DEMO = demo
        cls.demo = demo
        with open(os.path.join(demo, "truth.json")) as f:
            cls.recs = json.load(f)["recordings"]

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.demo_tmp, ignore_errors=True)

    def setUp(self):
        self.tmp = tempfile.mkdtemp(prefix="godwit-queue-test-")
        os.makedirs(os.path.join(self.tmp, "root"))
        self.redis = Redis(self.tmp)
        self.stream = "godwit-test"
        self.daemons = []

    def tearDown(self):
        for d in self.daemons:
            d.stop(signal.SIGKILL)
        self.redis.stop(signal.SIGKILL)
        shutil.rmtree(self.tmp, ignore_errors=True)

    def start(self, name, claim_idle_s=3, attempts=3, args=(), span_s=3600):
        cfg = (f'[queue]\nurl = "redis://127.0.0.1:{self.redis.port}/{self.stream}"\ntemplates_per_task = 2\n'
               f'claim_idle_s = {claim_idle_s}\nmax_attempts = {attempts}\nworkers = 1\ntask_span_s = {span_s}\n')
        d = Daemon(self.tmp, extra_config=cfg, args=args, state=os.path.join(self.tmp, "state-" + name))
        self.daemons.append(d)
        return d

    def cli_locate(self, recordings):
        p = subprocess.run([ARGS.godwit, "locate", "--library", os.path.join(self.demo, "library"), "--recording",
                            *recordings, "--planner", "estimate", "--cache-dir", "", "--quiet"],
                           capture_output=True, text=True, timeout=600)
        self.assertIn(p.returncode, (0,), p.stderr)
        return json.loads(p.stdout)

    def cli_reconcile(self, recordings):
        out = os.path.join(self.tmp, "cli-reconcile")
        p = subprocess.run([ARGS.godwit, "reconcile", "--library", os.path.join(self.demo, "library"), "--schedule",
                            self.schedule, "--recording", *recordings, "--planner", "estimate", "--cache-dir", "",
                            "--out", out, "--format", "json", "--quiet"], capture_output=True, text=True, timeout=600)
        self.assertEqual(p.returncode, 0, p.stderr)
        with open(os.path.join(out, "reconcile.json")) as f:
            return json.load(f)

    @property
    def schedule(self):
        return os.path.join(self.demo, "schedules", "kestrel-fm-2026-03-14.csv")

    def assert_same_reconciliation(self, got, want):
        """Verdicts, detections, their times and evidence as one process gives them."""
        def view(doc):
            rows = []
            for p in doc["placements"] + doc["unscheduled"]:
                rows.append((p.get("slot", "-"), p.get("status", "unscheduled"), p.get("detected_spot", p.get("spot")),
                             p.get("aired"), p.get("coverage"), p.get("polarity"), p.get("speed"),
                             json.dumps(p.get("missing"))))
            return rows
        self.assertEqual(view(got), view(want))
        for key in ("summary", "families", "timeline_issues", "log_problems", "recordings", "rejected_weak_detections"):
            self.assertEqual(got[key], want[key], key)
        for a, b in zip(got["placements"] + got["unscheduled"], want["placements"] + want["unscheduled"]):
            for k in ("score", "offset_s"):
                if k in b:
                    self.assertAlmostEqual(a[k], b[k], delta=2e-4, msg=k)
            if "loudness" in b:
                self.assertEqual(a["loudness"], b["loudness"])

    def untimed_copies(self, n):
        """n copies of each demo recording under names that carry no start
        time: each is then searched on its own (one stream, and a task per
        batch of masters), as the original per-file split had it."""
        out = []
        for k in range(n):
            for i, rec in enumerate(self.recs):
                dst = os.path.join(self.tmp, "root", f"copy-{k}-{i}.flac")
                if not os.path.exists(dst):
                    shutil.copy(rec, dst)
                out.append(dst)
        return out

    def test_three_workers_share_a_job_and_the_merge_equals_one_process(self):
        ds = [self.start(n) for n in "abc"]
        c = ds[0].connect()
        # 6 recordings, each its own run split at its file into 3 pieces (its start, body and end: the pieces
        # the store of record keeps, stored_tasks.h), x 3 batches of 2 masters = 54 tasks.
        recs = self.untimed_copies(2)
        r = c.req({"op": "submit", "job": {"kind": "locate", "recordings": recs}})
        self.assertTrue(r["ok"], r)
        seen_progress = set()
        end = time.time() + 300
        while time.time() < end:
            st = c.req({"op": "status", "job": r["job"]})
            seen_progress.add(round(st["progress"], 3))
            if st["state"] in ("done", "failed"):
                break
            time.sleep(0.1)
        self.assertEqual(st["state"], "done", st)
        doc = c.req({"op": "result", "job": r["job"]})["result"]
        self.assertEqual(doc["tasks"], 54)
        self.assertTrue(doc["complete"])
        self.assertEqual(strip(doc), strip(self.cli_locate(recs)))
        self.assertEqual(len(doc["templates"]), 6)
        self.assertGreater(len([p for p in seen_progress if 0 < p < 1]), 0, seen_progress)  # progress across workers
        # Every worker took part, as the heartbeats in `cluster` say.
        time.sleep(6)
        cl = c.req({"op": "cluster"})
        self.assertTrue(cl["ok"], cl)
        done = {w["name"]: w["done"] for w in cl["workers"]}
        self.assertEqual(len(done), 3, cl)
        self.assertEqual(sum(done.values()), 54, cl)
        self.assertGreaterEqual(len([n for n in done.values() if n > 0]), 2, cl)
        self.assertEqual(cl["dead"], 0)
        h = c.req({"op": "health"})
        self.assertEqual(h["queue"]["workers"], 3)
        self.assertTrue(h["queue"]["reachable"])

    def test_a_worker_killed_mid_task_leaves_it_to_another(self):
        a = self.start("a")
        b = self.start("b")
        c = a.connect()
        recs = self.untimed_copies(4)  # 12 recordings x 3 pieces x 3 batches: 108 tasks
        r = c.req({"op": "submit", "job": {"kind": "locate", "recordings": recs}})
        # Kill b while it runs a task.
        end = time.time() + 120
        killed = False
        while time.time() < end and not killed:
            for w in c.req({"op": "cluster"}).get("workers", []):
                if w["running"] and w["name"].endswith(str(b.proc.pid)):
                    b.stop(signal.SIGKILL)
                    killed = True
            time.sleep(0.05)
        self.assertTrue(killed, "b never ran a task")
        st = wait_state(c, r["job"], timeout=300)
        self.assertEqual(st["state"], "done", st)
        doc = c.req({"op": "result", "job": r["job"]})["result"]
        self.assertEqual(doc["tasks"], 108)
        # Each task's matches once: the same multiset as one process gives
        # (the job holds four copies of each file, so each match is there four times).
        self.assertEqual(strip(doc), strip(self.cli_locate(recs)))
        self.assertEqual(c.req({"op": "cluster"})["dead"], 0)

    def test_a_redis_restart_loses_no_acknowledged_job(self):
        a = self.start("a")
        c = a.connect()
        r = c.req({"op": "submit", "job": {"kind": "locate", "recordings": self.untimed_copies(3)}})
        self.assertTrue(r["ok"])
        time.sleep(1.0)
        self.redis.stop(signal.SIGKILL)  # AOF with fsync on every write: nothing acknowledged is lost
        time.sleep(2.0)
        self.redis.start()
        st = wait_state(c, r["job"], timeout=300)
        self.assertEqual(st["state"], "done", st)
        doc = c.req({"op": "result", "job": r["job"]})["result"]
        self.assertEqual(strip(doc), strip(self.cli_locate(self.untimed_copies(3))))

    def test_a_file_in_the_drop_folder_is_shared_out_too(self):
        drop = os.path.join(self.tmp, "drop")
        a = self.start("a", args=("--drop", drop, "--drop-stable-s", "1", "--drop-poll-s", "0.2"))
        self.start("b")
        os.makedirs(os.path.join(drop, "incoming"), exist_ok=True)
        tmpname = os.path.join(drop, "incoming", ".h0600.flac")
        shutil.copy(self.recs[0], tmpname)
        os.rename(tmpname, os.path.join(drop, "incoming", "h0600.flac"))
        out = os.path.join(drop, "results", "h0600.flac.json")
        end = time.time() + 180
        while time.time() < end and not os.path.exists(out):
            time.sleep(0.2)
        with open(out) as f:
            doc = json.load(f)
        self.assertEqual(doc["tasks"], 9)  # 3 pieces x 6 masters in batches of 2: it went through the queue
        want = self.cli_locate([os.path.join(drop, "done", "h0600.flac")])
        self.assertEqual(strip(doc), strip(want))
        self.assertTrue(a.connect().req({"op": "health"})["queue"]["reachable"])

    def test_a_long_recording_is_split_into_spans_and_the_merge_equals_one_process(self):
        # The three demo files as one 840 s recording: its start (12 s), its
        # end (the last margin) and its body between them in spans of 140 s
        # from 12 s (boundaries at 152, 292, 432, 572, 712 s; task_plan.h):
        # an airing at 292-312 s just after one (its piece reads from before
        # it), one at 150.1 s astride another (the piece that owns it reads
        # past its end).
        longrec = os.path.join(self.tmp, "root", "kestrel-fm-long.flac")
        subprocess.run(["sox", *self.recs, longrec], check=True)
        ds = [self.start(n, span_s=140) for n in "abc"]
        c = ds[0].connect()
        r = c.req({"op": "submit", "job": {"kind": "locate", "recordings": [longrec]}})
        self.assertTrue(r["ok"], r)
        st = wait_state(c, r["job"], timeout=300)
        self.assertEqual(st["state"], "done", st)
        doc = c.req({"op": "result", "job": r["job"]})["result"]
        self.assertEqual(doc["tasks"], 8 * 3)  # start, 6 spans, end x 3 batches of 2 masters
        want = self.cli_locate([longrec])
        self.assertEqual(strip(doc), strip(want))
        # Every planted airing (truth.json), once, at its time (and siblings' matches, as one process has them).
        with open(os.path.join(self.demo, "truth.json")) as f:
            truth = json.load(f)
        for a in truth["airings"]:
            at_s = (int(a["aired"][11:13]) - 6) * 3600 + int(a["aired"][14:16]) * 60 + float(a["aired"][17:])
            # The version, or among the alternatives of an airing whose version is undetermined (cut before its tag).
            hits = [m for m in doc["matches"] if abs(m["offset_s"] - at_s) < 1e-3 and
                    (m["template"] == a["spot"] or (m.get("version_undetermined") and
                                                   a["spot"] in [x["template"] for x in m.get("alternatives", [])]))]
            self.assertEqual(len(hits), 1, (a, doc["matches"]))
        for a, b in zip(doc["matches"], want["matches"]):
            self.assertAlmostEqual(a["score"], b["score"], delta=2e-4)
        self.assertAlmostEqual(doc["recordings"][0]["duration_s"], 840, places=3)

    def test_a_reconcile_job_is_split_into_hour_tasks_and_its_day_rebuilt(self):
        # One run of 840 s (three files of 280 s), split at its files: each file's body, where each meets the
        # next, the run's start and end (7 pieces; a body under 1.5 spans of 240 s is whole) x 3 batches.
        ds = [self.start(n, span_s=240) for n in "ab"]
        c = ds[1].connect()
        r = c.req({"op": "submit", "job": {"kind": "reconcile", "library": os.path.join(self.demo, "library"),
                                           "schedule": self.schedule, "recordings": self.recs}})
        self.assertTrue(r["ok"], r)
        st = wait_state(c, r["job"], timeout=300)
        self.assertEqual(st["state"], "done", st)
        doc = c.req({"op": "result", "job": r["job"]})["result"]
        self.assertEqual(doc["tasks"], 21)
        with open(os.path.join(self.demo, "truth.json")) as f:
            truth = json.load(f)
        self.assertEqual({p["slot"]: p["status"] for p in doc["placements"]}, truth["expected_verdicts"])
        want = self.cli_reconcile(self.recs)
        self.assert_same_reconciliation(doc, want)
        # The day rebuilt here also cut its excerpts, as the command line does,
        # and serves them.
        excerpts = lambda d: sorted((p["excerpt"]["file"], p["excerpt"]["duration_s"])
                                    for p in d["placements"] + d["unscheduled"] if "excerpt" in p)
        self.assertTrue(excerpts(doc))
        self.assertEqual(excerpts(doc), excerpts(want))
        served = {f["name"] for f in c.req({"op": "files", "job": r["job"]})["files"]}
        self.assertLessEqual({f for f, _ in excerpts(doc)} | {"reconcile.html"}, served)
        cl = c.req({"op": "cluster"})
        self.assertEqual(sum(w["done"] for w in cl["workers"]), 21, cl)
        added = self.entries_added()
        # The same day again, as another job: the coordinating daemon finds every (piece x master) search in its
        # store of record and enqueues nothing; the same reconciliation.
        r = c.req({"op": "submit", "job": {"kind": "reconcile", "library": os.path.join(self.demo, "library"),
                                           "schedule": self.schedule, "recordings": self.recs}})
        self.assertTrue(r["ok"], r)
        st = wait_state(c, r["job"], timeout=300)
        self.assertEqual(st["state"], "done", st)
        again = c.req({"op": "result", "job": r["job"]})["result"]
        self.assertEqual(self.entries_added(), added)
        self.assertEqual(again["searches"]["searched"], 0, again["searches"])
        self.assertEqual(again["searches"]["reused"], doc["searches"]["searched"], again["searches"])
        self.assertEqual(doc["searches"]["searched"], 7 * 6)  # every piece for every master, the first time
        self.assertEqual(again["searches"]["evidence_gathered"], 0, again["searches"])
        self.assertEqual(sum(w["done"] for w in c.req({"op": "cluster"})["workers"]), 21)
        self.assert_same_reconciliation(again, want)
        self.assertEqual({k: v for k, v in again.items() if k != "searches"},
                         {k: v for k, v in doc.items() if k != "searches"})

    def entries_added(self):
        """How many tasks were ever added to the queue's stream (XINFO STREAM, Redis 7)."""
        info = self.redis.cli("XINFO", "STREAM", self.stream).split("\n")
        return int(info[info.index("entries-added") + 1])

    def test_the_drop_folders_day_is_reconciled_through_the_queue(self):
        drop = os.path.join(self.tmp, "drop")
        self.start("a", span_s=240, args=("--drop", drop, "--schedules", os.path.join(self.demo, "schedules"),
                                          "--drop-stable-s", "1", "--drop-poll-s", "0.2"))
        self.start("b", span_s=240)
        os.makedirs(os.path.join(drop, "incoming"), exist_ok=True)
        report = os.path.join(drop, "results", "kestrel-fm-2026-03-14.reconcile.json")
        for rec in self.recs:
            tmpname = os.path.join(drop, "incoming", "." + os.path.basename(rec))
            shutil.copy(rec, tmpname)
            os.rename(tmpname, os.path.join(drop, "incoming", os.path.basename(rec)))
        doc = None
        end = time.time() + 300
        while time.time() < end:
            if os.path.exists(report):
                with open(report) as f:
                    doc = json.load(f)
                if len(doc["recordings"]) == 3:
                    break
            time.sleep(0.3)
        self.assertIsNotNone(doc)
        self.assertEqual(len(doc["recordings"]), 3, doc["recordings"])
        self.assertEqual(doc["tasks"], 21)  # the day's run of 840 s went through the queue in 7 pieces
        done = sorted(os.path.join(drop, "done", os.path.basename(r)) for r in self.recs)
        want = self.cli_reconcile(done)
        self.assert_same_reconciliation(doc, want)
        with open(report[: -len(".json")] + ".html") as f:
            html = f.read()
        self.assertEqual(html.count('class="placement"'), len(doc["placements"]))

    def test_a_poison_task_lands_in_the_dead_letter_stream(self):
        a = self.start("a", attempts=2)
        c = a.connect()
        bad = os.path.join(self.tmp, "root", "broken-master.wav")
        with open(bad, "wb") as f:  # a master that no run can read: every attempt fails
            f.write(b"RIFF\x00\x00\x00\x00WAVEjunk")
        r = c.req({"op": "submit", "job": {"kind": "locate", "templates": [bad], "recordings": self.recs[:1]}})
        self.assertTrue(r["ok"], r)
        st = wait_state(c, r["job"], timeout=120)
        self.assertEqual(st["state"], "failed", st)
        self.assertIn("failed 2 times", st["error"]["message"])
        dead = self.redis.cli("XRANGE", self.stream + ":dead", "-", "+")
        self.assertIn("broken-master", dead)
        self.assertEqual(c.req({"op": "cluster"})["dead"], 3)  # each of the recording's 3 pieces reads the master


if __name__ == "__main__":
    parser = argparse.ArgumentParser()
    parser.add_argument("--godwit", required=True)
    parser.add_argument("--godwitd", required=True)
    parser.add_argument("--synth", required=True)
    ARGS, rest = parser.parse_known_args()
    unittest.main(argv=[sys.argv[0], "-v", *rest])
