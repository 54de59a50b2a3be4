#!/usr/bin/python3
"""godwitd's error boundary: a job that throws, or that crashes the daemon.

Run by CTest: error_boundary_test.py --godwitd PATH

Uses the daemon's fault injection (GODWIT_FAULT, DEVELOPERS.md; off unless
set): every job's worker throws a std::exception (job_throw), throws
something else (job_throw_other) or aborts the process (job_abort).

- A job whose worker throws fails with `internal` and the daemon carries on:
  it answers, and the next job fails the same way on the same worker.
- A job that crashes the daemon (SIGABRT) leaves a "crashed" line in the
  journal; after 3 such crashes the next start fails it with `internal`
  instead of running it into the crash once more, and the daemon stays up.

Real godwitd processes on loopback ports with real TCP clients (daemon_test.py's
Daemon and Client); the audio is a few seconds of noise written here.
"""
import argparse
import json
import os
import random
import resource
import shutil
import signal
import struct
import subprocess
import sys
import tempfile
import time
import unittest
import wave

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import daemon_test  # noqa: E402  (its ARGS and DEMO are set here)
from daemon_test import Daemon, wait_state  # noqa: E402

ARGS = None


def write_noise(path, seconds, seed):
    rng = random.Random(seed)
    with wave.open(path, "wb") as w:
        w.setnchannels(1)
        w.setsampwidth(2)
        w.setframerate(8000)
        w.writeframes(b"".join(struct.pack("<h", rng.randint(-3000, 3000)) for _ in range(int(seconds * 8000))))


class ErrorBoundaryTests(unittest.TestCase):
    def setUp(self):
        self.tmp = tempfile.mkdtemp(prefix="godwitd-boundary-")
        os.makedirs(os.path.join(self.tmp, "root"))
        self.data = os.path.join(self.tmp, "data")
        os.makedirs(os.path.join(self.data, "library"))
        write_noise(os.path.join(self.data, "library", "spot.wav"), 2, 1)
        self.rec = os.path.join(self.data, "air-20260314T060000.wav")
        write_noise(self.rec, 6, 2)
        daemon_test.DEMO = self.data  # the Daemon's roots and library
        self.daemons = []

    def tearDown(self):
        for d in self.daemons:
            d.stop(signal.SIGKILL)
        shutil.rmtree(self.tmp, ignore_errors=True)

    def start(self, fault):
        d = Daemon(self.tmp, env={"GODWIT_FAULT": fault})
        self.daemons.append(d)
        return d

    def submit(self, c):
        r = c.req({"op": "submit", "job": {"kind": "locate", "recordings": [self.rec]}})
        self.assertTrue(r["ok"], r)
        return r["job"]

    def check_thrown(self, fault, words):
        d = self.start(fault)
        c = d.connect()
        for _ in range(2):  # the worker that caught the first is still there for the second
            st = wait_state(c, self.submit(c))
            self.assertEqual(st["state"], "failed", st)
            self.assertEqual(st["error"]["code"], "internal", st)
            self.assertIn(words, st["error"]["message"], st)
        self.assertTrue(c.req({"op": "health"})["ok"])
        self.assertIsNone(d.proc.poll())

    def test_a_job_that_throws_fails_with_internal_and_the_daemon_carries_on(self):
        self.check_thrown("job_throw", "fault injected by GODWIT_FAULT=job_throw")

    def test_a_job_that_throws_something_else_fails_with_internal(self):
        self.check_thrown("job_throw_other", "not a std::exception")

    def test_a_job_that_crashes_the_daemon_three_times_is_failed_at_the_next_start(self):
        state = os.path.join(self.tmp, "state")
        config = os.path.join(self.tmp, "godwitd.toml")
        env = {**os.environ, "GODWIT_FAULT": "job_abort"}
        job = None
        for crash in range(1, 4):
            log = open(os.path.join(self.tmp, f"godwitd-{crash}.log"), "w")
            if crash == 1:
                d = self.start("job_abort")  # writes the config; the job is submitted to it
                proc = d.proc
                # The worker may abort the daemon before the answer is sent:
                # the job's id is read from the journal below.
                d.connect().send_raw((json.dumps({"op": "submit", "job": {"kind": "locate", "recordings": [self.rec]}})
                                      + "\n").encode())
            else:  # the journal's job runs at start, maybe before the daemon says it listens
                proc = subprocess.Popen([daemon_test.ARGS.godwitd, "--config", config], stdout=subprocess.DEVNULL,
                                        stderr=log, env=env)
            self.assertEqual(proc.wait(timeout=60), -signal.SIGABRT, f"start {crash}")
            with open(os.path.join(state, "journal.jsonl")) as f:
                lines = f.read().splitlines()
            job = job or next(json.loads(l)["job"] for l in lines if '"submit"' in l)
            notes = [json.loads(l) for l in lines if '"crashed"' in l]
            self.assertEqual(notes, [{"event": "crashed", "job": job}] * crash)
        d = self.start("job_abort")  # still injecting: the job must not run again
        c = d.connect()
        st = c.req({"op": "status", "job": job})
        self.assertEqual(st["state"], "failed", st)
        self.assertEqual(st["error"]["code"], "internal", st)
        self.assertIn("crashed 3 times", st["error"]["message"], st)
        time.sleep(1)
        self.assertIsNone(d.proc.poll())
        self.assertTrue(c.req({"op": "health"})["ok"])
        d.stop()
        with open(os.path.join(state, "journal.jsonl")) as f:
            ends = [json.loads(l) for l in f if '"failed"' in l]
        self.assertEqual([e["job"] for e in ends], [job])  # failed once, in the journal too


if __name__ == "__main__":
    parser = argparse.ArgumentParser()
    parser.add_argument("--godwitd", required=True)
    ARGS, rest = parser.parse_known_args()
    daemon_test.ARGS = ARGS
    resource.setrlimit(resource.RLIMIT_CORE, (0, 0))  # the aborted daemons leave no core files
    prog = unittest.main(argv=[sys.argv[0], "-v", *rest], exit=False)
    sys.exit(0 if prog.result.wasSuccessful() else 1)
