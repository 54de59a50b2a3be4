#!/usr/bin/python3
# Over 400 lines: the daemon's harness (Daemon, Client) and every scenario against a real process; others import the harness.
"""godwitd end to end: a real daemon process on a loopback port, real TCP clients.

Run by CTest: daemon_test.py --godwit PATH --godwitd PATH --synth PATH
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
import threading
import time
import unittest
import warnings

ARGS = None
DEMO = None  # shared demo data, made once
DEMO_TRUTH = None
DEMO_RECS = None


class Daemon:
    """A godwitd started for one test; ended by PID."""

    def __init__(self, tmp, extra_config="", args=(), state=None, env=None):
        self.tmp = tmp
        self.state = state or os.path.join(tmp, "state")
        self.config = os.path.join(tmp, "godwitd.toml")
        with open(self.config, "w") as f:
            f.write(f'listen = "127.0.0.1:0"\nstate_dir = "{self.state}"\nroots = ["{DEMO}", "{tmp}/root"]\n'
                    f'library = "{DEMO}/library"\nplanner = "estimate"\nworkers = 1\nthreads_per_job = 1\n'
                    + extra_config)
        self.proc = subprocess.Popen([ARGS.godwitd, "--config", self.config, *args], stdout=subprocess.PIPE,
                                     stderr=open(os.path.join(tmp, "godwitd.log"), "a"), text=True,
                                     env={**os.environ, **(env or {})})
        line = self.proc.stdout.readline()
        if not line:
            raise AssertionError("godwitd did not start: " + open(os.path.join(tmp, "godwitd.log")).read())
        self.port = json.loads(line)["port"]

    def connect(self):
        return Client(self.port)

    def stop(self, sig=signal.SIGTERM):
        if self.proc.poll() is None:
            self.proc.send_signal(sig)
            self.proc.wait(timeout=60)


class Client:
    def __init__(self, port, timeout=30):
        self.sock = socket.create_connection(("127.0.0.1", port), timeout=timeout)
        self.f = self.sock.makefile("rwb")

    def send_raw(self, data):
        self.f.write(data)
        self.f.flush()

    def read(self):
        line = self.f.readline()
        return json.loads(line) if line else None

    def req(self, obj):
        self.send_raw((json.dumps(obj) + "\n").encode())
        return self.read()

    def close(self):
        self.sock.close()


def wait_state(c, job, states=("done", "failed", "cancelled"), timeout=120):
    end = time.time() + timeout
    while time.time() < end:
        st = c.req({"op": "status", "job": job})
        if st["state"] in states:
            return st
        time.sleep(0.1)
    raise AssertionError(f"job {job} did not reach {states}")


def long_job():
    # The three demo files, many times over: tens of seconds of work.
    return {"kind": "locate", "recordings": DEMO_RECS * 12}


class DaemonTests(unittest.TestCase):
    def setUp(self):
        self.tmp = tempfile.mkdtemp(prefix="godwitd-test-")
        os.makedirs(os.path.join(self.tmp, "root"))
        self.daemons = []

    def tearDown(self):
        for d in self.daemons:
            d.stop(signal.SIGKILL)
        if os.environ.get("KEEP_TMP"):  # for a post-mortem of a failing test
            print("kept", self.tmp)
        else:
            shutil.rmtree(self.tmp, ignore_errors=True)

    def start(self, **kw):
        d = Daemon(self.tmp, **kw)
        self.daemons.append(d)
        return d

    def test_submit_result_equals_the_cli_output(self):
        d = self.start()
        c = d.connect()
        r = c.req({"op": "submit", "id": "a1", "job": {"kind": "locate", "recordings": [DEMO_RECS[0]], "fft_size": 1048576}})
        self.assertTrue(r["ok"], r)
        self.assertEqual(r["id"], "a1")
        self.assertEqual(wait_state(c, r["job"])["state"], "done")
        res = c.req({"op": "result", "job": r["job"]})["result"]
        cli = subprocess.run([ARGS.godwit, "locate", "--library", f"{DEMO}/library", "--recording", DEMO_RECS[0],
                              "--planner", "estimate", "--cache-dir", "", "--fft-size", "1048576", "-q"],
                             capture_output=True, text=True, check=True)
        ref = json.loads(cli.stdout)
        self.assertEqual(res["matches"], ref["matches"])
        self.assertEqual(res["recordings"], ref["recordings"])
        self.assertGreaterEqual(len(res["matches"]), 3)

    def test_fifty_concurrent_clients(self):
        d = self.start()
        errors = []

        def one(i):
            try:
                c = d.connect()
                for _ in range(20):
                    h = c.req({"op": "health", "id": i})
                    if not h["ok"] or h["id"] != i:
                        errors.append(h)
                c.close()
            except Exception as e:  # noqa: BLE001 - collected and asserted below
                errors.append(repr(e))

        threads = [threading.Thread(target=one, args=(i,)) for i in range(50)]
        [t.start() for t in threads]
        [t.join(60) for t in threads]
        self.assertEqual(errors, [])

    def test_malformed_oversized_and_unknown_requests_keep_the_connection(self):
        d = self.start(extra_config="[limits]\nmax_line_bytes = 4096\n")
        c = d.connect()
        c.send_raw(b"{this is not json\n")
        self.assertEqual(c.read()["error"]["code"], "bad_request")
        c.send_raw(b'{"op": "' + b"x" * 10000 + b'"}\n')
        self.assertEqual(c.read()["error"]["code"], "too_large")
        self.assertEqual(c.req({"op": "frobnicate"})["error"]["code"], "bad_request")
        self.assertEqual(c.req([1, 2])["error"]["code"], "bad_request")
        self.assertEqual(c.req({"op": "status", "job": "nope"})["error"]["code"], "unknown_job")
        self.assertEqual(c.req({"op": "submit", "job": {"kind": "locate", "recordings": "x"}})["error"]["code"],
                         "bad_request")
        self.assertTrue(c.req({"op": "health"})["ok"])

    def test_slow_client_is_dropped_and_others_are_not(self):
        d = self.start(extra_config="[limits]\nread_timeout_s = 1\n")
        slow = d.connect()
        slow.send_raw(b'{"op": "hea')
        other = d.connect()
        time.sleep(2.0)
        self.assertTrue(other.req({"op": "health"})["ok"])
        slow.sock.settimeout(3)
        self.assertEqual(slow.sock.recv(100), b"")  # closed by the daemon

    def test_paths_outside_the_roots_are_forbidden(self):
        d = self.start()
        c = d.connect()
        os.symlink("/etc", os.path.join(self.tmp, "root", "escape"))
        for bad in ["/etc/passwd", f"{DEMO}/../../etc/passwd", os.path.join(self.tmp, "root", "escape", "passwd")]:
            r = c.req({"op": "submit", "job": {"kind": "locate", "recordings": [bad]}})
            self.assertEqual(r["error"]["code"], "forbidden", (bad, r))
        r = c.req({"op": "submit", "job": {"kind": "locate", "templates": ["/etc/hostname"], "recordings": [DEMO_RECS[0]]}})
        self.assertEqual(r["error"]["code"], "forbidden")

    def test_token_required_when_configured(self):
        tok = os.path.join(self.tmp, "token")
        with open(tok, "w") as f:
            f.write("correct-horse-battery-staple\n")
        d = self.start(args=("--token-file", tok))
        c = d.connect()
        self.assertEqual(c.req({"op": "health"})["error"]["code"], "forbidden")
        self.assertEqual(c.req({"op": "health", "token": "correct-horse-battery-stapl"})["error"]["code"], "forbidden")
        self.assertTrue(c.req({"op": "health", "token": "correct-horse-battery-staple"})["ok"])

    def test_beyond_loopback_without_token_refuses_to_start(self):
        p = subprocess.run([ARGS.godwitd, "--listen", "0.0.0.0:0", "--state-dir", os.path.join(self.tmp, "s")],
                           capture_output=True, text=True, timeout=30)
        self.assertEqual(p.returncode, 2)
        self.assertIn("token", p.stderr)

    def test_cancel_takes_effect_within_a_second(self):
        d = self.start()
        c = d.connect()
        job = c.req({"op": "submit", "job": long_job()})["job"]
        wait_state(c, job, ("running",))
        time.sleep(0.5)
        t0 = time.time()
        self.assertTrue(c.req({"op": "cancel", "job": job})["ok"])
        self.assertEqual(wait_state(c, job, timeout=5)["state"], "cancelled")
        self.assertLess(time.time() - t0, 1.5)

    def test_full_queue_answers_busy(self):
        d = self.start(extra_config="[limits]\nmax_queued = 2\n")
        c = d.connect()
        codes = []
        for _ in range(6):
            r = c.req({"op": "submit", "job": long_job()})
            codes.append("ok" if r["ok"] else r["error"]["code"])
        self.assertIn("busy", codes)
        self.assertLessEqual(codes.count("ok"), 3)  # one running, two queued
        jobs = c.req({"op": "jobs", "state": "queued"})["jobs"]
        self.assertLessEqual(len(jobs), 2)

    def test_kill_minus_nine_mid_job_then_restart_loses_nothing(self):
        d = self.start()
        c = d.connect()
        first = c.req({"op": "submit", "job": long_job()})["job"]
        second = c.req({"op": "submit", "job": {"kind": "locate", "recordings": [DEMO_RECS[1]]}})["job"]
        wait_state(c, first, ("running",))
        time.sleep(1.0)
        d.stop(signal.SIGKILL)
        d2 = self.start(state=d.state)
        c2 = d2.connect()
        for job in (first, second):
            self.assertEqual(wait_state(c2, job, timeout=300)["state"], "done", job)
            self.assertIn("matches", c2.req({"op": "result", "job": job})["result"])
        leftovers = [n for n in os.listdir(os.path.join(d.state, "results")) if not n.endswith(".json")]
        self.assertEqual(leftovers, [])
        # After another restart the results are still served.
        d2.stop()
        d3 = self.start(state=d.state)
        self.assertTrue(d3.connect().req({"op": "result", "job": second})["ok"])

    def test_watch_streams_progress_and_the_end(self):
        d = self.start()
        w = d.connect()
        self.assertTrue(w.req({"op": "watch"})["ok"])
        c = d.connect()
        job = c.req({"op": "submit", "job": {"kind": "locate", "recordings": DEMO_RECS}})["job"]
        states = []
        while True:
            ev = w.read()
            if ev.get("job") == job and ev.get("event") == "state":
                states.append(ev["state"])
                if ev["state"] == "done":
                    break
        self.assertEqual(states, ["queued", "running", "done"])

    def test_client_subcommands(self):
        d = self.start()
        addr = f"127.0.0.1:{d.port}"
        p = subprocess.run([ARGS.godwit, "submit", "--connect", addr, "--recording", DEMO_RECS[0], "--wait"],
                           capture_output=True, text=True, timeout=120)
        self.assertEqual(p.returncode, 0, p.stderr)
        self.assertGreaterEqual(len(json.loads(p.stdout)["matches"]), 3)
        h = subprocess.run([ARGS.godwit, "health", "--connect", addr], capture_output=True, text=True, timeout=30)
        self.assertEqual(json.loads(h.stdout)["workers"], 1)
        bad = subprocess.run([ARGS.godwit, "status", "nope", "--connect", addr], capture_output=True, text=True)
        self.assertEqual(bad.returncode, 6)
        down = subprocess.run([ARGS.godwit, "health", "--connect", "127.0.0.1:1"], capture_output=True, text=True)
        self.assertEqual(down.returncode, 7)

    def test_drop_folder(self):
        drop = os.path.join(self.tmp, "drop")
        os.makedirs(os.path.join(drop, "work"))
        # Claimed before a "crash": picked up again at start.
        shutil.copy(DEMO_RECS[2], os.path.join(drop, "work", "h0610.flac"))
        d = self.start(args=("--drop", drop, "--drop-stable-s", "1", "--drop-poll-s", "0.2"))
        # A file still being written is not taken early.
        src = open(DEMO_RECS[0], "rb").read()
        part = os.path.join(drop, "incoming", "h0600.flac")
        with open(part, "wb") as f:
            f.write(src[: len(src) // 2])
            f.flush()
            time.sleep(2.5)
            self.assertTrue(os.path.exists(part), "taken while still open for writing")
            f.write(src[len(src) // 2:])
        # A corrupt file lands in failed/ with its reason.
        with open(os.path.join(drop, "incoming", "broken.flac"), "wb") as f:
            f.write(b"fLaC" + b"\x00" * 5000)
        end = time.time() + 120
        want = [os.path.join(drop, "results", "h0600.flac.json"), os.path.join(drop, "results", "h0610.flac.json"),
                os.path.join(drop, "failed", "broken.flac.error.json")]
        while time.time() < end and not all(os.path.exists(w) for w in want):
            time.sleep(0.2)
        for w in want:
            self.assertTrue(os.path.exists(w), w)
        self.assertTrue(os.path.exists(os.path.join(drop, "done", "h0600.flac")))
        self.assertTrue(os.path.exists(os.path.join(drop, "done", "h0610.flac")))
        self.assertTrue(os.path.exists(os.path.join(drop, "failed", "broken.flac")))
        with open(want[0]) as f:
            self.assertGreaterEqual(len(json.load(f)["matches"]), 3)
        with open(want[2]) as f:
            self.assertTrue(json.load(f)["message"])

    def test_connection_limit_answers_busy_and_others_continue(self):
        d = self.start(extra_config="[limits]\nmax_connections = 3\n")
        held = [d.connect() for _ in range(3)]
        for c in held:
            self.assertTrue(c.req({"op": "health"})["ok"])
        extra = d.connect()
        self.assertEqual(extra.read()["error"]["code"], "busy")
        self.assertTrue(held[0].req({"op": "health"})["ok"])

    def test_ipv6_loopback(self):
        try:
            probe = socket.socket(socket.AF_INET6)
            probe.bind(("::1", 0))
            probe.close()
        except OSError:
            self.skipTest("no IPv6 loopback on this machine")
        p = subprocess.Popen([ARGS.godwitd, "--listen", "[::1]:0", "--state-dir", os.path.join(self.tmp, "s6"),
                              "--planner", "estimate"], stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, text=True)
        try:
            port = json.loads(p.stdout.readline())["port"]
            s6 = socket.create_connection(("::1", port), timeout=10)
            f = s6.makefile("rwb")
            f.write(b'{"op":"health","id":6}\n')
            f.flush()
            r = json.loads(f.readline())
            self.assertTrue(r["ok"])
            self.assertEqual(r["id"], 6)
            s6.close()
        finally:
            p.terminate()
            p.wait(timeout=30)

    def test_fft_costs_measured_by_jobs_are_kept_for_the_next_start(self):
        # A fresh state folder: the first job measures the FFT sizes it
        # needs; they are shared with later jobs and saved at exit, so a
        # restarted daemon does not measure them again.
        d = self.start()
        c = d.connect()
        r = c.req({"op": "submit", "job": {"kind": "locate", "recordings": DEMO_RECS[:1]}})
        self.assertEqual(wait_state(c, r["job"])["state"], "done")
        sizes = {t["fft_size"] for t in c.req({"op": "result", "job": r["job"]})["result"]["templates"]}
        d.stop()
        with open(os.path.join(d.state, "fft-costs.json")) as f:
            saved = json.load(f)
        self.assertTrue(sizes <= {int(k) for k in saved}, (sizes, sorted(saved)))

    def test_reconcile_job_over_tcp_gives_the_demo_verdicts(self):
        d = self.start()
        c = d.connect()
        r = c.req({"op": "submit", "job": {"kind": "reconcile", "library": f"{DEMO}/library",
                                           "schedule": f"{DEMO}/schedules/kestrel-fm-2026-03-14.csv",
                                           "recordings": DEMO_RECS}})
        self.assertTrue(r["ok"], r)
        self.assertEqual(wait_state(c, r["job"])["state"], "done")
        doc = c.req({"op": "result", "job": r["job"]})["result"]
        self.assertEqual({p["slot"]: p["status"] for p in doc["placements"]}, DEMO_TRUTH["expected_verdicts"])

    def test_reconcile_jobs_read_utc_logs_in_the_station_zone_and_refuse_logs_without_a_valid_row(self):
        # The daemon's time_zone setting serves jobs that give none; a job's own time_zone is checked before
        # it is queued; a log with no valid row fails its job with no_placements. The UTC times are the demo's
        # local times in Europe/Berlin (+01:00 on 2026-03-14, IANA tz database; Python's zoneinfo agrees).
        bad = subprocess.run([ARGS.godwitd, "--listen", "127.0.0.1:0", "--state-dir", os.path.join(self.tmp, "s"),
                              "--time-zone", "Europe/Atlantis"], capture_output=True, text=True, timeout=30)
        self.assertEqual(bad.returncode, 2)
        self.assertIn("unknown time zone 'Europe/Atlantis'", bad.stderr)
        drop = os.path.join(self.tmp, "drop")
        schedules = os.path.join(self.tmp, "root", "schedules")
        os.makedirs(schedules)
        d = self.start(extra_config='time_zone = "Europe/Berlin"\n',
                       args=("--drop", drop, "--schedules", schedules, "--drop-stable-s", "1", "--drop-poll-s", "0.2"))
        c = d.connect()
        with open(f"{DEMO}/schedules/kestrel-fm-2026-03-14.csv") as f:
            plain = f.read().splitlines()
        utc_log = os.path.join(schedules, "kestrel-fm-2026-03-14.csv")
        with open(utc_log, "w") as f:
            f.write("Slot;Spot ID;Scheduled;Window\n")
            for line in plain[1:]:
                slot, spot, planned, window = line.split(",")
                if planned.endswith("T25:00:00"):
                    f.write(f"{slot};{spot};{planned};{window}\n")
                    continue
                h = int(planned[11:13]) - 1  # the demo's hours are 06 and later: no change of day
                f.write(f"{slot};{spot};{planned[:10]} {h:02d}{planned[13:]}Z;{window}\n")
        job = {"kind": "reconcile", "library": f"{DEMO}/library", "schedule": utc_log, "recordings": DEMO_RECS}
        r = c.req({"op": "submit", "job": job})
        self.assertTrue(r["ok"], r)
        self.assertEqual(wait_state(c, r["job"])["state"], "done")
        doc = c.req({"op": "result", "job": r["job"]})["result"]
        self.assertEqual({p["slot"]: p["status"] for p in doc["placements"]}, DEMO_TRUTH["expected_verdicts"])
        self.assertEqual(doc["placements"][0]["planned"], "2026-03-14T06:00:30")
        refused = c.req({"op": "submit", "job": {**job, "time_zone": "Europe/Atlantis"}})
        self.assertEqual(refused["error"]["code"], "bad_request")
        self.assertIn("unknown time zone 'Europe/Atlantis'", refused["error"]["message"])
        # A job's own zone wins over the daemon's: in America/New_York (-04:00 on 2026-03-14) the same UTC
        # times are five hours earlier on the station's clock.
        ny = c.req({"op": "submit", "job": {**job, "time_zone": "America/New_York"}})
        self.assertTrue(ny["ok"], ny)
        self.assertEqual(wait_state(c, ny["job"])["state"], "done")
        ny_doc = c.req({"op": "result", "job": ny["job"]})["result"]
        self.assertEqual(ny_doc["placements"][0]["planned"], "2026-03-14T01:00:30")  # -04:00 in March 2026
        empty_log = os.path.join(self.tmp, "root", "no-valid-row.csv")
        with open(empty_log, "w") as f:
            f.write("slot,spot,planned\nS1,marlow-bakery,2026-02-30T06:00:00\nS2,marlow-bakery,noon\n")
        r = c.req({"op": "submit", "job": {**job, "schedule": empty_log}})
        self.assertTrue(r["ok"], r)
        st = wait_state(c, r["job"])
        self.assertEqual(st["state"], "failed")
        self.assertEqual(st["error"]["code"], "no_placements")
        self.assertIn("February has 28 days in 2026", st["error"]["message"])
        self.assertIn("line 3: planned time 'noon' is not a date-time", st["error"]["message"])
        # The drop folder's day is read in the daemon's zone too.
        os.makedirs(os.path.join(drop, "incoming"), exist_ok=True)
        for rec in DEMO_RECS:
            tmpname = os.path.join(drop, "incoming", "." + os.path.basename(rec))
            shutil.copy(rec, tmpname)
            os.rename(tmpname, os.path.join(drop, "incoming", os.path.basename(rec)))
        report = os.path.join(drop, "results", "kestrel-fm-2026-03-14.reconcile.json")
        end = time.time() + 180
        day = {"placements": []}  # none written: all rows rejected (the zone not applied)
        while time.time() < end:
            if os.path.exists(report):
                with open(report) as f:
                    day = json.load(f)
                if len(day["recordings"]) == 3:
                    break
            time.sleep(0.3)
        self.assertEqual({p["slot"]: p["status"] for p in day["placements"]}, DEMO_TRUTH["expected_verdicts"])

    def test_reconcile_job_files_are_served_and_fetched(self):
        import base64
        d = self.start()
        c = d.connect()
        job = {"kind": "reconcile", "library": f"{DEMO}/library",
               "schedule": f"{DEMO}/schedules/kestrel-fm-2026-03-14.csv", "recordings": DEMO_RECS}
        r = c.req({"op": "submit", "job": job})
        self.assertTrue(r["ok"], r)
        self.assertEqual(c.req({"op": "files", "job": r["job"]})["error"]["code"], "unknown_job")  # not done yet
        self.assertEqual(wait_state(c, r["job"])["state"], "done")
        doc = c.req({"op": "result", "job": r["job"]})["result"]
        files = c.req({"op": "files", "job": r["job"]})
        self.assertTrue(files["ok"], files)
        names = {f["name"]: f["bytes"] for f in files["files"]}
        self.assertIn("reconcile.html", names)
        named = {p["excerpt"]["file"] for p in doc["placements"] if "aired" in p}
        named |= {u["excerpt"]["file"] for u in doc["unscheduled"]}
        named |= {p["master_excerpt"] for p in doc["placements"] + doc["unscheduled"] if "master_excerpt" in p}
        self.assertEqual(set(names) - {"reconcile.html"}, named)
        one = sorted(named)[0]
        got = c.req({"op": "file", "job": r["job"], "name": one})
        self.assertTrue(got["ok"], got)
        data = base64.b64decode(got["base64"])
        self.assertEqual(len(data), names[one])
        with open(os.path.join(d.state, "results", r["job"], one), "rb") as f:
            self.assertEqual(f.read(), data)
        self.assertEqual(data[:4], b"OggS")  # RFC 3533: an Ogg page
        for bad in ("../" + r["job"] + ".json", "/etc/passwd", "listen/../reconcile.html", "nothing.opus"):
            e = c.req({"op": "file", "job": r["job"], "name": bad})
            self.assertEqual(e["error"]["code"], "not_found", bad)
        self.assertEqual(c.req({"op": "file", "job": r["job"]})["error"]["code"], "bad_request")
        # The client fetches the lot into a folder where the page plays.
        out = os.path.join(self.tmp, "fetched")
        p = subprocess.run([ARGS.godwit, "fetch", "--connect", f"127.0.0.1:{d.port}", r["job"], "--out", out],
                           capture_output=True, text=True, timeout=60)
        self.assertEqual(p.returncode, 0, p.stderr)
        with open(os.path.join(out, "reconcile.json")) as f:
            self.assertEqual(json.load(f), doc)
        with open(os.path.join(out, "reconcile.html")) as f:
            page = f.read()
        for name in named:
            self.assertIn(f'src="{name}"', page)
            self.assertTrue(os.path.isfile(os.path.join(out, name)), name)
        # A job may do without excerpts.
        r2 = c.req({"op": "submit", "job": dict(job, excerpts=False)})
        self.assertTrue(r2["ok"], r2)
        wait_state(c, r2["job"])
        self.assertEqual([f["name"] for f in c.req({"op": "files", "job": r2["job"]})["files"]], ["reconcile.html"])
        self.assertEqual(c.req({"op": "submit", "job": dict(job, excerpts="no")})["error"]["code"], "bad_request")

    def test_inline_spot_is_located(self):
        import base64
        d = self.start()
        c = d.connect()
        wav = open(f"{DEMO}/library/marlow-bakery.wav", "rb").read()
        r = c.req({"op": "submit", "job": {"kind": "locate", "recordings": [DEMO_RECS[0]],
                                           "inline": [{"id": "inline-marlow", "format": "wav",
                                                       "audio_base64": base64.b64encode(wav).decode()}]}})
        self.assertTrue(r["ok"], r)
        wait_state(c, r["job"])
        m = c.req({"op": "result", "job": r["job"]})["result"]["matches"]
        # 37.25 s, and the airing cut by the end of this file (8 of its 20 s
        # recorded), at its first sample.
        self.assertEqual([x["offset_s"] for x in m if x["template"] == "inline-marlow"], [37.25, 292.0])
        bad = c.req({"op": "submit", "job": {"kind": "locate", "recordings": [DEMO_RECS[0]],
                                             "inline": [{"id": "../x", "audio_base64": "AAAA"}]}})
        self.assertEqual(bad["error"]["code"], "bad_request")
        junk = c.req({"op": "submit", "job": {"kind": "locate", "recordings": [DEMO_RECS[0]],
                                              "inline": [{"id": "x", "audio_base64": "not base64!"}]}})
        self.assertEqual(junk["error"]["code"], "bad_request")

    def test_drop_folder_reconciles_the_day_as_hours_arrive(self):
        drop = os.path.join(self.tmp, "drop")
        d = self.start(args=("--drop", drop, "--schedules", f"{DEMO}/schedules", "--drop-stable-s", "1",
                             "--drop-poll-s", "0.2"))
        os.makedirs(os.path.join(drop, "incoming"), exist_ok=True)
        report = os.path.join(drop, "results", "kestrel-fm-2026-03-14.reconcile.json")
        for rec in DEMO_RECS:
            tmpname = os.path.join(drop, "incoming", "." + os.path.basename(rec))
            shutil.copy(rec, tmpname)
            os.rename(tmpname, os.path.join(drop, "incoming", os.path.basename(rec)))  # moved in: complete
        end = time.time() + 180
        while time.time() < end:
            if len(os.listdir(os.path.join(drop, "done"))) == 3 and os.path.exists(report):
                with open(report) as f:
                    doc = json.load(f)
                if len(doc["recordings"]) == 3:
                    break
            time.sleep(0.3)
        with open(report) as f:
            doc = json.load(f)
        self.assertEqual({p["slot"]: p["status"] for p in doc["placements"]}, DEMO_TRUTH["expected_verdicts"])
        with open(report[: -len(".json")] + ".html") as f:
            page = f.read()
        self.assertEqual(page.count('class="placement"'), len(doc["placements"]))
        # Its excerpts, beside it, named by the page and the JSON.
        listen = os.path.join(drop, "results", "kestrel-fm-2026-03-14.listen")
        for p in doc["placements"]:
            if "aired" in p:
                self.assertTrue(p["excerpt"]["file"].startswith("kestrel-fm-2026-03-14.listen/"), p["excerpt"])
                self.assertIn(f'src="{p["excerpt"]["file"]}"', page)
                self.assertTrue(os.path.isfile(os.path.join(drop, "results", p["excerpt"]["file"])))
        self.assertFalse(any(n.startswith(".") for n in os.listdir(os.path.join(drop, "results"))
                             if n.endswith(".new")))
        self.assertTrue(os.listdir(listen))

    def test_drop_folder_interim_report_says_not_recorded_for_hours_not_arrived(self):
        drop = os.path.join(self.tmp, "drop1")
        self.start(args=("--drop", drop, "--schedules", f"{DEMO}/schedules", "--drop-stable-s", "1",
                         "--drop-poll-s", "0.2"))
        os.makedirs(os.path.join(drop, "incoming"), exist_ok=True)
        report = os.path.join(drop, "results", "kestrel-fm-2026-03-14.reconcile.json")
        first = DEMO_RECS[0]  # 06:00-06:05 only
        tmpname = os.path.join(drop, "incoming", "." + os.path.basename(first))
        shutil.copy(first, tmpname)
        os.rename(tmpname, os.path.join(drop, "incoming", os.path.basename(first)))
        end = time.time() + 120
        while time.time() < end and not os.path.exists(report):
            time.sleep(0.3)
        with open(report) as f:
            doc = json.load(f)
        got = {p["slot"]: p["status"] for p in doc["placements"]}
        for slot in ("S005", "S006", "S007", "S009"):  # planned after the hour that arrived
            self.assertEqual(got[slot], "not_recorded", slot)
        self.assertNotIn("missing", got.values())
        self.assertEqual(got["S001"], "aired")

    # Hostile input (issue 14). Each test reproduced its defect before the fix.

    def token_daemon(self, **kw):
        tok = os.path.join(self.tmp, "token")
        with open(tok, "w") as f:
            f.write("correct-horse-battery-staple\n")
        return self.start(args=("--token-file", tok, *kw.pop("args", ())), **kw), "correct-horse-battery-staple"

    def test_deeply_nested_id_without_token_is_refused_and_the_daemon_lives(self):
        d, token = self.token_daemon()
        c = d.connect()
        deep = 100000
        c.send_raw(b'{"op":"health","id":' + b"[" * deep + b"]" * deep + b"}\n")
        r = c.read()
        self.assertIsNotNone(r, "the daemon closed the connection (crashed?)")
        self.assertEqual(r["error"]["code"], "bad_request")
        self.assertIn("nest", r["error"]["message"])
        self.assertNotIn("id", r)
        # Deep nesting elsewhere in a request, and in objects, too.
        c.send_raw(b'{"op":"health","x":' + b'{"a":' * deep + b"1" + b"}" * deep + b"}\n")
        self.assertEqual(c.read()["error"]["code"], "bad_request")
        # Brackets inside strings do not count.
        self.assertTrue(c.req({"op": "health", "token": token, "id": "[" * 200})["ok"])
        # Ids are a string of bounded size or a number.
        for bad_id in [[1], {"a": 1}, "x" * 5000, True, None]:
            r = c.req({"op": "health", "token": token, "id": bad_id})
            self.assertEqual(r["error"]["code"], "bad_request", bad_id)
            self.assertNotIn("id", r)
        self.assertEqual(c.req({"op": "health", "token": token, "id": 7})["id"], 7)
        self.assertIsNone(d.proc.poll(), "godwitd died")
        self.assertTrue(d.connect().req({"op": "health", "token": token})["ok"])

    def test_file_names_that_are_not_utf8(self):
        bad = b"h\xe9-0600.flac"  # Latin-1, as some loggers write
        drop = os.path.join(self.tmp, "drop")
        for sub in ("work", "incoming"):
            os.makedirs(os.path.join(drop, sub))
        # Left in work/ by an earlier run: it aborted every start.
        shutil.copy(DEMO_RECS[0], os.path.join(os.fsencode(drop), b"work", bad))
        lib = os.path.join(self.tmp, "root", "lib")
        os.makedirs(lib)
        shutil.copy(f"{DEMO}/library/marlow-bakery.wav", os.path.join(os.fsencode(lib), b"marl\xf6w.wav"))
        d = self.start(args=("--drop", drop, "--drop-stable-s", "1", "--drop-poll-s", "0.2"))
        tmpname = os.path.join(os.fsencode(drop), b"incoming", b".x")
        shutil.copy(DEMO_RECS[1], tmpname)
        os.rename(tmpname, os.path.join(os.fsencode(drop), b"incoming", b"h\xe9-0605.flac"))
        results = os.path.join(drop, "results")
        want = {"h%E9-0600.flac.json", "h%E9-0605.flac.json"}
        end = time.time() + 120
        while time.time() < end and not want <= set(os.listdir(results)):
            self.assertIsNone(d.proc.poll(), "godwitd died")
            time.sleep(0.2)
        self.assertTrue(want <= set(os.listdir(results)), os.listdir(results))
        while time.time() < end and len(os.listdir(os.path.join(drop, "done"))) < 2:  # moved after its result
            time.sleep(0.2)
        with open(os.path.join(results, "h%E9-0600.flac.json")) as f:
            self.assertGreaterEqual(len(json.load(f)["matches"]), 3)
        self.assertEqual(sorted(os.listdir(os.path.join(drop, "done"))), ["h%E9-0600.flac", "h%E9-0605.flac"])
        # A library holding such a name: a clear error, not an exception's text.
        c = d.connect()
        r = c.req({"op": "submit", "job": {"kind": "locate", "library": lib, "recordings": [DEMO_RECS[0]]}})
        self.assertFalse(r["ok"], r)
        self.assertEqual(r["error"]["code"], "unsupported")
        self.assertIn("UTF-8", r["error"]["message"])
        self.assertNotIn("json.exception", r["error"]["message"])
        self.assertTrue(c.req({"op": "health"})["ok"])

    def test_a_fifo_under_a_root_does_not_freeze_the_daemon(self):
        d = self.start()
        fifo = os.path.join(self.tmp, "root", "h07.wav")
        os.mkfifo(fifo)
        c = Client(d.port, timeout=10)
        t0 = time.time()
        r = c.req({"op": "submit", "job": {"kind": "locate", "recordings": [fifo]}})
        self.assertEqual(r["error"]["code"], "unreadable", r)
        self.assertIn("regular file", r["error"]["message"])
        self.assertLess(time.time() - t0, 5)
        self.assertTrue(Client(d.port, timeout=10).req({"op": "health"})["ok"])
        # A planned log or a sidecar that is a FIFO would hold a worker forever.
        lib = os.path.join(self.tmp, "root", "lib")
        os.makedirs(lib)
        shutil.copy(f"{DEMO}/library/marlow-bakery.wav", lib)
        os.mkfifo(os.path.join(lib, "marlow-bakery.meta.json"))
        sched = os.path.join(self.tmp, "root", "kestrel-fm-2026-03-14.csv")
        os.mkfifo(sched)
        r = c.req({"op": "submit", "job": {"kind": "reconcile", "library": lib, "schedule": sched,
                                           "recordings": DEMO_RECS[:1]}})
        self.assertEqual(r["error"]["code"], "unreadable", r)
        os.remove(sched)
        shutil.copy(f"{DEMO}/schedules/kestrel-fm-2026-03-14.csv", sched)
        r = c.req({"op": "submit", "job": {"kind": "reconcile", "library": lib, "schedule": sched,
                                           "recordings": DEMO_RECS[:1]}})
        self.assertTrue(r["ok"], r)
        self.assertEqual(wait_state(c, r["job"], timeout=60)["state"], "done")

    def test_a_torn_journal_line_loses_no_acknowledged_job(self):
        d = self.start()
        c = d.connect()
        b = c.req({"op": "submit", "job": {"kind": "locate", "recordings": [DEMO_RECS[0]]}})["job"]
        self.assertEqual(wait_state(c, b)["state"], "done")
        d.stop()
        journal = os.path.join(d.state, "journal.jsonl")
        with open(journal) as f:
            lines = f.read().splitlines()
        submit_b = lines[0]
        torn = submit_b.replace(b, "j000000000000aaa")[: len(submit_b) // 2]
        with open(journal, "w") as f:  # a half line, then the next acknowledged job glued to it
            f.write(torn + "\n".join(lines) + "\n" + torn)  # and a torn tail
        d2 = self.start(state=d.state)
        c2 = d2.connect()
        self.assertEqual(c2.req({"op": "status", "job": b}).get("state"), "done")
        self.assertTrue(c2.req({"op": "result", "job": b})["ok"])
        self.assertEqual(c2.req({"op": "status", "job": "j000000000000aaa"})["error"]["code"], "unknown_job")
        # The torn tail was cut off: the next job starts on a line of its own.
        e = c2.req({"op": "submit", "job": {"kind": "locate", "recordings": [DEMO_RECS[1]]}})["job"]
        d2.stop(signal.SIGKILL)
        d3 = self.start(state=d.state)
        self.assertEqual(wait_state(d3.connect(), e)["state"], "done")

    def test_a_full_disk_tears_no_acknowledged_job(self):
        mnt = os.path.join(self.tmp, "small")
        os.makedirs(mnt)
        p = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=2m", "tmpfs", mnt], capture_output=True, text=True)
        if p.returncode != 0:
            self.skipTest("cannot mount a 2 MiB tmpfs here (needs root): " + p.stderr.strip())
        self.addCleanup(subprocess.run, ["umount", "-l", mnt])
        d = self.start(state=os.path.join(mnt, "state"))
        c = d.connect()
        first = c.req({"op": "submit", "job": {"kind": "locate", "recordings": [DEMO_RECS[0]]}})["job"]
        self.assertEqual(wait_state(c, first)["state"], "done")
        filler = os.path.join(mnt, "filler")
        fd = os.open(filler, os.O_WRONLY | os.O_CREAT)
        for chunk in (65536, 4096, 1):
            try:
                while True:
                    os.write(fd, b"\0" * chunk)
            except OSError:
                pass
        os.close(fd)
        # A long line: part of it fits in the journal's last page, then the disk is full.
        big = c.req({"op": "submit", "job": {"kind": "locate", "recordings": DEMO_RECS[:1] * 200}})
        self.assertFalse(big["ok"], big)
        self.assertEqual(big["error"]["code"], "io")
        os.remove(filler)
        second = c.req({"op": "submit", "job": {"kind": "locate", "recordings": [DEMO_RECS[1]]}})
        self.assertTrue(second["ok"], second)
        d.stop(signal.SIGKILL)
        d2 = self.start(state=d.state)
        c2 = d2.connect()
        self.assertEqual(wait_state(c2, second["job"])["state"], "done")
        self.assertEqual(c2.req({"op": "status", "job": first})["state"], "done")

    def test_a_library_symlink_leading_outside_the_roots_is_forbidden(self):
        outside = os.path.join(self.tmp, "outside")
        os.makedirs(outside)
        shutil.copy(f"{DEMO}/library/kestrel-fm-id.wav", os.path.join(outside, "secret.wav"))
        lib = os.path.join(self.tmp, "root", "lib")
        os.makedirs(lib)
        shutil.copy(f"{DEMO}/library/marlow-bakery.wav", lib)
        os.symlink(os.path.join(outside, "secret.wav"), os.path.join(lib, "kestrel-fm-id.wav"))
        d = self.start()
        c = d.connect()
        r = c.req({"op": "submit", "job": {"kind": "locate", "library": lib, "recordings": [DEMO_RECS[0]]}})
        self.assertEqual(r.get("error", {}).get("code"), "forbidden", r)
        self.assertIn("kestrel-fm-id.wav", r["error"]["message"])
        r = c.req({"op": "submit", "job": {"kind": "reconcile", "library": lib, "recordings": DEMO_RECS,
                                           "schedule": f"{DEMO}/schedules/kestrel-fm-2026-03-14.csv"}})
        self.assertEqual(r.get("error", {}).get("code"), "forbidden", r)
        # A link that stays inside the roots is fine.
        os.remove(os.path.join(lib, "kestrel-fm-id.wav"))
        os.symlink(f"{DEMO}/library/kestrel-fm-id.wav", os.path.join(lib, "kestrel-fm-id.wav"))
        r = c.req({"op": "submit", "job": {"kind": "locate", "library": lib, "recordings": [DEMO_RECS[0]]}})
        self.assertTrue(r["ok"], r)
        self.assertEqual(wait_state(c, r["job"])["state"], "done")

    def test_refused_inline_spots_and_killed_writes_leave_nothing_behind(self):
        import base64
        state = os.path.join(self.tmp, "state")
        drop = os.path.join(self.tmp, "drop")
        for sub in ("results", "inline/0123456789abcdef"):
            os.makedirs(os.path.join(state, sub))
        os.makedirs(os.path.join(drop, "results"))
        # Left by a kill mid-write, and by a kill between saving inline spots and journaling.
        stale = [os.path.join(state, "results", ".j0123456789abcde.json.tmp.4242"),
                 os.path.join(drop, "results", ".h0600.flac.json.tmp.4242"),
                 os.path.join(state, "inline", "0123456789abcdef", "x.wav")]
        for p in stale:
            with open(p, "w") as f:
                f.write("{")
        d = self.start(args=("--drop", drop), extra_config="[limits]\nmax_queued = 1\n")
        for p in stale:
            self.assertFalse(os.path.exists(p), p)
        c = d.connect()
        wav = base64.b64encode(open(f"{DEMO}/library/marlow-bakery.wav", "rb").read()).decode()
        junk = base64.b64encode(b"not audio at all" * 100).decode()
        refused = [{"inline": [{"id": "a", "audio_base64": "not base64!"}]},
                   {"inline": [{"id": "b", "audio_base64": junk}]},
                   {"inline": [{"id": "c", "audio_base64": wav}], "threshold": 7},
                   # A field of the wrong type after a spot was saved (found by fuzzing: the folder stayed).
                   {"inline": [{"id": "e", "audio_base64": wav}, {"id": "f", "audio_base64": wav, "format": 7}]}]
        for extra in refused:
            r = c.req({"op": "submit", "job": {"kind": "locate", "recordings": [DEMO_RECS[0]], **extra}})
            self.assertFalse(r["ok"], r)
        self.assertEqual(os.listdir(os.path.join(state, "inline")), [])
        # Refused by a full queue after its spots were saved.
        codes = []
        for _ in range(4):
            r = c.req({"op": "submit", "job": {**long_job(), "inline": [{"id": "d", "audio_base64": wav}]}})
            codes.append(r["job"] if r["ok"] else r["error"]["code"])
        self.assertIn("busy", codes)
        self.assertEqual(len(os.listdir(os.path.join(state, "inline"))), len([x for x in codes if x != "busy"]))

    def test_drop_folder_loses_and_strands_nothing(self):
        drop = os.path.join(self.tmp, "drop")
        for sub in ("incoming", "work"):
            os.makedirs(os.path.join(drop, sub))
        incoming = os.path.join(drop, "incoming")
        outside = os.path.join(self.tmp, "outside")
        os.makedirs(outside)
        shutil.copy(DEMO_RECS[1], os.path.join(outside, "secret.flac"))
        # A link left in work/: set aside at start, never read.
        os.symlink(os.path.join(outside, "secret.flac"), os.path.join(drop, "work", "w0600.flac"))
        d = self.start(args=("--drop", drop, "--drop-stable-s", "1", "--drop-poll-s", "0.2"))

        def move_in(src, name):
            tmp = os.path.join(incoming, "." + name)
            shutil.copy(src, tmp)
            os.rename(tmp, os.path.join(incoming, name))

        def wait_for(paths, timeout=120):
            end = time.time() + timeout
            while time.time() < end and not all(os.path.exists(p) for p in paths):
                time.sleep(0.2)
            for p in paths:
                self.assertTrue(os.path.exists(p), p)

        results, done, failed = (os.path.join(drop, x) for x in ("results", "done", "failed"))
        # The same name twice: both kept, neither result overwritten.
        move_in(DEMO_RECS[0], "h0600.flac")
        wait_for([os.path.join(done, "h0600.flac")])  # its result is written first
        move_in(DEMO_RECS[1], "h0600.flac")
        wait_for([os.path.join(done, "h0600-2.flac")])
        with open(os.path.join(results, "h0600.flac.json")) as a, open(os.path.join(results, "h0600-2.flac.json")) as b:
            self.assertNotEqual(json.load(a)["matches"], json.load(b)["matches"])
        self.assertEqual(sorted(os.listdir(done)), ["h0600-2.flac", "h0600.flac"])
        # A writer appending in chunks, closing the file after each.
        data = open(DEMO_RECS[2], "rb").read()
        chunks = [data[i: i + len(data) // 4 + 1] for i in range(0, len(data), len(data) // 4 + 1)]
        for chunk in chunks:
            with open(os.path.join(incoming, "h0610.flac"), "ab") as f:
                f.write(chunk)
            time.sleep(0.3)
        # A writer's partial file, renamed when complete.
        with open(os.path.join(incoming, "h0615.flac.part"), "wb") as f:
            f.write(data)
        time.sleep(2.5)
        self.assertTrue(os.path.exists(os.path.join(incoming, "h0615.flac.part")), "a .part file was taken")
        os.rename(os.path.join(incoming, "h0615.flac.part"), os.path.join(incoming, "h0615.flac"))
        # Links, folders, dangling links: set aside with a reason.
        os.symlink(os.path.join(outside, "secret.flac"), os.path.join(incoming, "link.flac"))
        os.symlink(os.path.join(outside, "nothing.flac"), os.path.join(incoming, "dangling.flac"))
        os.makedirs(os.path.join(incoming, "folder.flac"))
        wait_for([os.path.join(done, "h0610.flac"), os.path.join(done, "h0615.flac")] +
                 [os.path.join(failed, n + ".error.json") for n in ("w0600.flac", "link.flac", "dangling.flac",
                                                                    "folder.flac")])
        self.assertEqual(open(os.path.join(done, "h0610.flac"), "rb").read(), data)
        self.assertFalse(any(n.startswith("h0610-") for n in os.listdir(results)), os.listdir(results))
        for n, why in (("w0600.flac", "link"), ("link.flac", "link"), ("dangling.flac", "link"),
                       ("folder.flac", "folder")):
            with open(os.path.join(failed, n + ".error.json")) as f:
                self.assertIn(why, json.load(f)["message"])
            self.assertTrue(os.path.lexists(os.path.join(failed, n)), n)
            self.assertFalse(os.path.exists(os.path.join(results, n + ".json")), n)
        self.assertEqual(os.listdir(incoming), [])
        self.assertTrue(os.path.exists(os.path.join(outside, "secret.flac")))
        with open(os.path.join(self.tmp, "godwitd.log")) as f:
            log = f.read()
        for n in ("link.flac", "dangling.flac", "folder.flac", "w0600.flac"):
            self.assertIn(n, log)

    def test_large_answers_are_refused_and_finished_jobs_are_paged_and_pruned(self):
        state = os.path.join(self.tmp, "state")
        os.makedirs(state)
        n = 90000  # a `jobs` answer of over 8 MiB
        with open(os.path.join(state, "journal.jsonl"), "w") as f:
            for i in range(n):
                job = f"j{i:015x}"
                f.write(json.dumps({"event": "submit", "job": job, "spec": {"kind": "locate", "recordings": []},
                                    "submitted": f"2026-12-01T{i // 3600 % 24:02d}:{i // 60 % 60:02d}:{i % 60:02d}Z"})
                        + "\n" + json.dumps({"event": "cancelled", "job": job}) + "\n")
        # The oldest job had report files (a reconcile job's page and excerpts).
        files = os.path.join(state, "results", f"j{0:015x}")
        os.makedirs(os.path.join(files, "listen"))
        with open(os.path.join(files, "listen", "S001_20260314T060037.250.opus"), "wb") as f:
            f.write(b"OggS")
        d = self.start(extra_config="[limits]\nmax_finished_jobs = 500\nmax_reply_bytes = 2048\n")
        self.assertFalse(os.path.exists(files))  # pruned with its job
        c = d.connect()
        r = c.req({"op": "jobs", "id": "page1"})
        self.assertIsNotNone(r, "connection closed without an answer")
        # 500 jobs are over 2048 bytes: refused, with the id, and the connection stays usable.
        self.assertEqual(r["error"]["code"], "too_large", r)
        self.assertEqual(r["id"], "page1")
        seen = []
        cursor = None
        while True:
            req = {"op": "jobs", "limit": 15}
            if cursor:
                req["cursor"] = cursor
            r = c.req(req)
            self.assertTrue(r["ok"], r)
            self.assertLessEqual(len(r["jobs"]), 15)
            seen += [j["job"] for j in r["jobs"]]
            cursor = r.get("next")
            if not cursor:
                break
        self.assertEqual(seen, [f"j{i:015x}" for i in range(n - 500, n)])  # the newest, oldest first, each once
        self.assertEqual(c.req({"op": "status", "job": f"j{0:015x}"})["error"]["code"], "unknown_job")
        self.assertEqual(c.req({"op": "jobs", "limit": 0})["error"]["code"], "bad_request")
        with open(os.path.join(state, "journal.jsonl")) as f:
            self.assertLessEqual(len(f.readlines()), 1000)  # rewritten without the pruned jobs
        # A finished job beyond the bound is pruned at once, with its result.
        job = c.req({"op": "submit", "job": {"kind": "locate", "recordings": DEMO_RECS}})["job"]
        self.assertEqual(wait_state(c, job)["state"], "done")
        self.assertEqual(c.req({"op": "status", "job": f"j{n - 500:015x}"})["error"]["code"], "unknown_job")
        r = c.req({"op": "result", "job": job, "id": 9})
        self.assertEqual(r.get("error", {}).get("code"), "too_large", r)  # the locate document is over 2048 bytes
        self.assertEqual(r["id"], 9)
        self.assertTrue(c.req({"op": "health"})["ok"])

    def test_jobs_listing_too_many_files_are_refused_before_any_is_opened(self):
        # Found by fuzzing the request path: a 10 MiB submit naming one
        # recording 200 000 times held a handler thread for its 200 000
        # opens (the hours limit was checked after them); four such held
        # every handler, and every other client waited.
        import base64
        import struct
        pcm = struct.pack("<100h", *range(100))
        tiny = (b"RIFF" + struct.pack("<I", 36 + len(pcm)) + b"WAVEfmt " + struct.pack("<IHHIIHH", 16, 1, 1, 8000, 16000, 2, 16)
                + b"data" + struct.pack("<I", len(pcm)) + pcm)
        d = self.start()
        huge = [{"kind": "locate", "recordings": [DEMO_RECS[0]] * 200000},
                {"kind": "locate", "recordings": [DEMO_RECS[0]], "templates": [f"{DEMO}/library/marlow-bakery.wav"] * 200000},
                {"kind": "locate", "recordings": [DEMO_RECS[0]], "inline": [{"id": "x", "audio_base64": base64.b64encode(tiny).decode()}] * 30000},
                {"kind": "reconcile", "recordings": [DEMO_RECS[0]] * 200000, "library": f"{DEMO}/library",
                 "schedule": f"{DEMO}/schedules/kestrel-fm-2026-03-14.csv"}]
        hostile = [d.connect() for _ in huge]
        t0 = time.time()
        for c, job in zip(hostile, huge):
            c.send_raw((json.dumps({"op": "submit", "job": job}) + "\n").encode())
        time.sleep(0.2)
        t1 = time.time()
        self.assertTrue(Client(d.port, timeout=10).req({"op": "health"})["ok"])
        self.assertLess(time.time() - t1, 1.0, "other clients waited for the hostile submits")
        for c in hostile:
            r = c.read()
            self.assertEqual(r["error"]["code"], "too_large", r)
        self.assertLess(time.time() - t0, 5.0, "the hostile submits took long to refuse")
        with open(os.path.join(d.state, "journal.jsonl")) as f:
            self.assertEqual(f.read(), "")
        self.assertEqual(os.listdir(os.path.join(d.state, "inline")) if os.path.isdir(os.path.join(d.state, "inline"))
                         else [], [])

    def test_job_threads_run_below_request_threads(self):
        # Requests stay fast while jobs keep every core busy: the threads
        # running a job (and the engine's, which inherit it) are nicer by
        # job_nice than the ones answering requests.
        d = self.start(extra_config="job_nice = 7\n")
        c = d.connect()
        job = c.req({"op": "submit", "job": long_job()})["job"]
        wait_state(c, job, ("running",))
        nice, heavy = {}, {}
        for tid in os.listdir(f"/proc/{d.proc.pid}/task"):
            with open(f"/proc/{d.proc.pid}/task/{tid}/stat") as f:
                head, tail = f.read().rsplit(")", 1)
            fields = tail.split()
            # field 19 of proc(5), counted after the name; the threads for long request lines apart
            (heavy if head.split("(", 1)[1].startswith("gw-heavy") else nice)[int(tid)] = int(fields[16])
        base = nice[d.proc.pid]  # the I/O thread: 0, or what the test itself runs at (`nice ctest`)
        self.assertIn(base + 7, nice.values(), nice)
        self.assertEqual(set(nice.values()), {base, base + 7}, nice)
        # Long request lines run between requests and jobs (server.h: heavy_nice 5).
        self.assertEqual(set(heavy.values()), {min(base + 5, 19)}, heavy)
        self.assertTrue(c.req({"op": "cancel", "job": job})["ok"])

    def test_job_threads_run_in_the_idle_class(self):
        # With idle_class = true the threads running a job, the engine's and
        # those for long request lines are in Linux's idle scheduling class
        # (SCHED_IDLE, 5 in sched(7)'s numbering, proc(5) stat field 41); the
        # I/O and request threads are not. By default (false) all are in the
        # normal class (0).
        def policies(d):
            pol = {}
            for tid in os.listdir(f"/proc/{d.proc.pid}/task"):
                with open(f"/proc/{d.proc.pid}/task/{tid}/stat") as f:
                    head, tail = f.read().rsplit(")", 1)
                pol[int(tid)] = (head.split("(", 1)[1], int(tail.split()[38]))
            return pol

        for idle, want in ((True, 5), (False, 0)):
            d = self.start(extra_config="idle_class = true\n" if idle else "")
            c = d.connect()
            job = c.req({"op": "submit", "job": long_job()})["job"]
            wait_state(c, job, ("running",))
            time.sleep(0.5)  # the engine's threads started
            pol = policies(d)
            self.assertEqual(pol[d.proc.pid][1], 0, pol)  # the I/O thread
            self.assertEqual({p for n, p in pol.values() if n.startswith("gw-request")}, {0}, pol)
            self.assertEqual({p for n, p in pol.values() if n.startswith("gw-heavy")}, {want}, pol)
            # The job's threads (the worker's and the engine's, unnamed).
            others = {p for tid, (n, p) in pol.items() if tid != d.proc.pid and not n.startswith(("gw-request", "gw-heavy"))}
            self.assertIn(want, others, pol)
            if not idle:
                self.assertNotIn(5, {p for n, p in pol.values()}, pol)
            self.assertTrue(c.req({"op": "cancel", "job": job})["ok"])
            d.stop()

    def test_idle_connections_and_watchers_cannot_lock_clients_out(self):
        d = self.start(extra_config="[limits]\nmax_connections = 8\nmax_connections_per_address = 4\n"
                                    "idle_timeout_s = 2\nwatch_heartbeat_s = 1\n")
        held = [d.connect() for _ in range(4)]
        extra = d.connect()
        r = extra.read()
        self.assertEqual(r["error"]["code"], "busy", r)
        self.assertIn("127.0.0.1", r["error"]["message"])
        # Another address still gets in.
        s2 = socket.create_connection(("127.0.0.1", d.port), timeout=10, source_address=("127.0.0.2", 0))
        f2 = s2.makefile("rwb")
        f2.write(b'{"op":"health"}\n')
        f2.flush()
        self.assertTrue(json.loads(f2.readline())["ok"])
        s2.close()
        # Empty lines do not keep a connection open.
        t0 = time.time()
        closed = set()
        while time.time() - t0 < 8 and len(closed) < len(held):
            for i, c in enumerate(held):
                if i in closed:
                    continue
                try:
                    c.send_raw(b"\n")
                except OSError:
                    closed.add(i)
            time.sleep(0.3)
        self.assertEqual(len(closed), len(held), "connections kept open by empty lines")
        self.assertTrue(d.connect().req({"op": "health"})["ok"])
        # A watcher is not closed for idleness, and hears a heartbeat.
        w = d.connect()
        self.assertTrue(w.req({"op": "watch"})["ok"])
        time.sleep(3)
        self.assertEqual(w.read(), {"event": "heartbeat"})


if __name__ == "__main__":
    parser = argparse.ArgumentParser()
    parser.add_argument("--godwit", required=True)
    parser.add_argument("--godwitd", required=True)
    parser.add_argument("--synth", required=True)
    ARGS, rest = parser.parse_known_args()
    warnings.simplefilter("ignore", ResourceWarning)  # sockets left to the daemon to close are the point of some tests
    tmp = tempfile.mkdtemp(prefix="godwitd-demo-")
    try:
        DEMO = os.path.join(tmp, "demo")
        subprocess.run([ARGS.synth, "demo", "--out", DEMO], check=True, capture_output=True)
        with open(os.path.join(DEMO, "truth.json")) as f:
            DEMO_TRUTH = json.load(f)
        DEMO_RECS = DEMO_TRUTH["recordings"]
        prog = unittest.main(argv=[sys.argv[0], "-v", *rest], exit=False)
        code = 0 if prog.result.wasSuccessful() else 1
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    sys.exit(code)
