#!/usr/bin/python3
# Over 400 lines: every scenario of the record shares one fixture, two stations' mornings made once (minutes of audio).
"""End-to-end tests of the store of record, with real files and real SQLite.

Two fictional stations' mornings (the demo's Kestrel FM, and the same audio
as Heron Radio a day later) are reconciled with --state-dir, one of them
twice; then `godwit airings` and `godwit proof` are checked against the
reconcile JSON, locally and through godwitd. A writer of large jobs is
killed (SIGKILL) mid-write, and the store is checked: intact, every job it
acknowledged whole, no job in part.

Run by CTest: store_test.py --godwit PATH --godwitd PATH --synth PATH [--store-bench PATH]
"""
import argparse
import csv
import hashlib
import io
import json
import os
import random
import shutil
import signal
import socket
import sqlite3
import subprocess
import sys
import tempfile
import time
import unittest

ARGS = None
COMMON = ["--planner", "estimate", "--cache-dir", "", "--no-excerpts"]


def run(*args, check=0):
    p = subprocess.run([ARGS.godwit, *args], capture_output=True, text=True, timeout=300)
    if check is not None and p.returncode != check:
        raise AssertionError(f"godwit {' '.join(args)} exited {p.returncode}\n{p.stdout}\n{p.stderr}")
    return p


def sha256(path):
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()


def placement_airings(doc):
    """(station-independent) every airing of a reconcile document: assigned ones with their slot and verdict,
    then the unscheduled ones."""
    out = []
    for p in doc["placements"]:
        if "aired" in p:
            out.append({"aired": p["aired"], "status": p["status"], "slot": p["slot"], "spot": p["spot"],
                        "score": p["score"], "coverage": p["coverage"], "recording": p["recording"],
                        "offset_s": p["offset_s"]})
    for a in doc["unscheduled"]:
        out.append({"aired": a["aired"], "status": "unscheduled", "slot": None, "spot": a["spot"],
                    "score": a["score"], "coverage": a["coverage"], "recording": a["recording"],
                    "offset_s": a["offset_s"]})
    return sorted(out, key=lambda a: a["aired"])


class Record(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        t = cls.tmp.name
        demo = os.path.join(t, "demo")
        subprocess.run([ARGS.synth, "demo", "--out", demo], check=True, capture_output=True)
        cls.lib = os.path.join(demo, "library")
        cls.kestrel_log = os.path.join(demo, "schedules", "kestrel-fm-2026-03-14.csv")
        cls.kestrel_recs = sorted(os.path.join(demo, "airchecks", f) for f in os.listdir(os.path.join(demo, "airchecks")))
        # Heron Radio: the same morning a day later, its files and log renamed.
        heron = os.path.join(t, "heron")
        os.makedirs(os.path.join(heron, "airchecks"))
        cls.heron_recs = []
        for r in cls.kestrel_recs:
            name = os.path.basename(r).replace("kestrel-fm-20260314", "heron-radio-20260315")
            shutil.copy(r, os.path.join(heron, "airchecks", name))
            cls.heron_recs.append(os.path.join(heron, "airchecks", name))
        cls.heron_log = os.path.join(heron, "heron-radio-2026-03-15.csv")
        with open(cls.kestrel_log) as f, open(cls.heron_log, "w") as g:
            g.write(f.read().replace("2026-03-14", "2026-03-15"))
        cls.state = os.path.join(t, "state")
        cls.docs = {}
        # Kestrel twice (the second run must replace, not add), Heron once.
        for name, log, recs in (("kestrel-1", cls.kestrel_log, cls.kestrel_recs),
                                ("kestrel-2", cls.kestrel_log, cls.kestrel_recs),
                                ("heron", cls.heron_log, cls.heron_recs)):
            out = os.path.join(t, "out-" + name)
            run("reconcile", "--library", cls.lib, "--schedule", log, "--recording", *recs, "--out", out,
                "--state-dir", cls.state, *COMMON)
            with open(os.path.join(out, "reconcile.json")) as f:
                cls.docs[name] = json.load(f)

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def db(self):
        return sqlite3.connect(os.path.join(self.state, "store.sqlite"))

    def airings(self, *args, check=0):
        p = run("airings", "--state-dir", self.state, *args, check=check)
        return json.loads(p.stdout) if check == 0 else p

    def test_a_second_run_of_a_day_replaces_its_rows(self):
        self.assertEqual(self.docs["kestrel-1"]["placements"], self.docs["kestrel-2"]["placements"])
        with self.db() as c:
            one = len(placement_airings(self.docs["kestrel-1"]))
            two = len(placement_airings(self.docs["heron"]))
            self.assertEqual(c.execute("SELECT count(*) FROM detections").fetchone()[0], one + two)
            self.assertEqual(c.execute("SELECT count(*) FROM placements").fetchone()[0],
                             len(self.docs["kestrel-1"]["placements"]) + len(self.docs["heron"]["placements"]))
            self.assertEqual(c.execute("SELECT count(*) FROM jobs").fetchone()[0], 3)
            self.assertEqual(sorted(r[0] for r in c.execute("SELECT name FROM stations")), ["heron-radio", "kestrel-fm"])
            self.assertEqual(c.execute("SELECT count(*) FROM recordings").fetchone()[0], 6)
            # Every detection written by the latest job of its station.
            self.assertEqual(c.execute("SELECT count(DISTINCT job_id) FROM detections").fetchone()[0], 2)
            self.assertEqual(c.execute("PRAGMA integrity_check").fetchone()[0], "ok")
            self.assertEqual(c.execute("PRAGMA foreign_key_check").fetchall(), [])
            self.assertEqual(c.execute("PRAGMA journal_mode").fetchone()[0], "wal")

    def check_against(self, got, doc, station, recs):
        want = placement_airings(doc)
        self.assertEqual(len(got), len(want))
        hashes = {os.path.abspath(r): sha256(r) for r in recs}
        for g, w in zip(got, want):
            self.assertEqual(g["station"], station)
            self.assertEqual(g["aired"], w["aired"])
            self.assertEqual(g["status"], w["status"])
            self.assertEqual(g.get("slot"), w["slot"])
            self.assertAlmostEqual(g["score"], w["score"], places=4)
            self.assertAlmostEqual(g["coverage"], w["coverage"], places=3)
            self.assertAlmostEqual(g["offset_s"], w["offset_s"], places=6)
            self.assertEqual(g["recording"], os.path.abspath(w["recording"]))
            self.assertEqual(g["recording_sha256"], hashes[g["recording"]])

    def test_airings_match_the_reconcile_documents(self):
        got = self.airings("--from", "2026-03-14", "--to", "2026-03-15")
        self.assertEqual([a["aired"] for a in got], sorted(a["aired"] for a in got))  # time order
        self.check_against([a for a in got if a["station"] == "kestrel-fm"], self.docs["kestrel-2"], "kestrel-fm",
                           self.kestrel_recs)
        self.check_against([a for a in got if a["station"] == "heron-radio"], self.docs["heron"], "heron-radio",
                           self.heron_recs)
        # One station, one day; pages of 2 give the same airings.
        heron = self.airings("--station", "heron-radio", "--from", "2026-03-14", "--to", "2026-03-15")
        self.assertEqual(heron, [a for a in got if a["station"] == "heron-radio"])
        self.assertEqual(self.airings("--from", "2026-03-14", "--to", "2026-03-15", "--page", "2"), got)
        self.assertEqual(self.airings("--from", "2026-03-15T06:00:00", "--to", "2026-03-15T06:05:00",
                                      "--station", "heron-radio"),
                         [a for a in heron if a["aired"] < "2026-03-15T06:05"])
        # By advertiser and by spot.
        tyres = self.airings("--advertiser", "Tidewater Tyres", "--from", "2026-03-14", "--to", "2026-03-15")
        self.assertTrue(tyres)
        self.assertTrue(all(a["advertiser"] == "Tidewater Tyres" for a in tyres))
        bakery = self.airings("--spot", "marlow-bakery", "--from", "2026-03-14", "--to", "2026-03-14")
        self.assertEqual(len(bakery), 3)
        # CSV: the same rows.
        rows = list(csv.DictReader(io.StringIO(run("airings", "--state-dir", self.state, "--from", "2026-03-14",
                                                   "--to", "2026-03-15", "--format", "csv").stdout)))
        self.assertEqual([(r["station"], r["aired"], r["status"]) for r in rows],
                         [(a["station"], a["aired"], a["status"]) for a in got])

    def test_proof_of_performance_matches_the_reconcile_documents(self):
        out = os.path.join(self.tmp.name, "proof-tyres")
        run("proof", "--state-dir", self.state, "--advertiser", "Tidewater Tyres", "--from", "2026-03-14",
            "--to", "2026-03-15", "--out", out)
        with open(os.path.join(out, "proof.json")) as f:
            doc = json.load(f)
        self.assertEqual(doc["proof"]["advertiser"], "Tidewater Tyres")
        self.assertTrue(doc["proof"]["software"].startswith("godwit "))
        self.assertEqual(len(doc["cautions"]), 2)
        self.assertIn("listening", doc["cautions"][0])
        self.assertIn("indicative", doc["cautions"][1])
        owed_statuses = {"missing", "partial", "wrong_version", "not_recorded"}
        stations = {s["station"]: s for s in doc["stations"]}
        self.assertEqual(sorted(stations), ["heron-radio", "kestrel-fm"])
        total_owed = 0
        for name, key, recs in (("kestrel-fm", "kestrel-2", self.kestrel_recs), ("heron-radio", "heron", self.heron_recs)):
            want = [p for p in self.docs[key]["placements"] if p.get("advertiser") == "Tidewater Tyres"]
            got = stations[name]["placements"]
            self.assertEqual([(p["slot"], p["status"]) for p in got], [(p["slot"], p["status"]) for p in want])
            for g, w in zip(got, want):
                self.assertEqual(g["planned"], w["planned"])
                if "aired" in w:
                    self.assertEqual(g["airing"]["aired"], w["aired"])
                    self.assertEqual(g["airing"]["spot"], w["detected_spot"] if "version_undetermined_among" not in w
                                     else g["airing"]["spot"])
                    self.assertAlmostEqual(g["airing"]["coverage"], w["coverage"], places=3)
                    self.assertAlmostEqual(g["airing"]["loudness"]["spot_lufs"], w["loudness"]["spot_lufs"], places=1)
            owed = [p["slot"] for p in want if p["status"] in owed_statuses]
            self.assertEqual(stations[name]["owed"], owed)
            total_owed += len(owed)
            self.assertEqual({r["path"]: r["sha256"] for r in stations[name]["recordings"]},
                             {os.path.abspath(r): sha256(r) for r in recs})
        self.assertEqual(doc["totals"]["owed"], total_owed)
        self.assertGreater(total_owed, 0)
        per_day = sum(c["ordered"] for c in doc["totals_by_spot_day"])
        self.assertEqual(per_day, doc["totals"]["ordered"])
        # The CSV: one line per placement and unscheduled airing; the page: self-contained.
        with open(os.path.join(out, "proof.csv")) as f:
            rows = list(csv.DictReader(f))
        self.assertEqual(len(rows), doc["totals"]["ordered"] + doc["totals"]["unscheduled"])
        with open(os.path.join(out, "proof.html")) as f:
            page = f.read()
        self.assertIn('id="cautions"', page)
        for s in doc["stations"]:
            for p in s["placements"]:
                self.assertIn(f'data-slot="{p["slot"]}"', page)
            for r in s["recordings"]:
                self.assertIn(r["sha256"], page)
        self.assertNotIn("http://", page)
        self.assertNotIn("https://", page)
        self.assertNotIn("<script", page)

    def test_a_spot_that_did_not_air_is_owed(self):
        out = os.path.join(self.tmp.name, "proof-cinema")
        run("proof", "--state-dir", self.state, "--spot", "harbour-lights-cinema", "--from", "2026-03-14",
            "--to", "2026-03-14", "--out", out)
        with open(os.path.join(out, "proof.json")) as f:
            doc = json.load(f)
        [station] = doc["stations"]
        self.assertEqual([(p["slot"], p["status"], p["owed"]) for p in station["placements"]], [("S005", "missing", True)])

    def test_bad_requests_are_refused_with_reasons(self):
        p = run("airings", "--from", "2026-03-14", "--to", "2026-03-14", check=2)
        self.assertIn("--state-dir", p.stderr)
        p = self.airings("--station", "osprey-am", "--from", "2026-03-14", "--to", "2026-03-14", check=2)
        self.assertIn("heron-radio, kestrel-fm", p.stderr)
        self.assertEqual(p.stdout, "")
        p = self.airings("--from", "2026-03-14", "--to", "2026-02-30", check=2)
        self.assertIn("--to", p.stderr)
        p = run("airings", "--state-dir", os.path.join(self.tmp.name, "none"), "--from", "2026-03-14", "--to",
                "2026-03-14", check=3)
        self.assertIn("no store of record", p.stderr)
        self.assertFalse(os.path.exists(os.path.join(self.tmp.name, "none")))
        p = run("proof", "--state-dir", self.state, "--from", "2026-03-14", "--to", "2026-03-14", "--out",
                os.path.join(self.tmp.name, "x"), check=2)
        self.assertIn("--advertiser", p.stderr)

    def test_z_an_edited_log_replaces_the_days_plan(self):
        # Runs last (z): S005 taken out of Kestrel's log, under the same name in another folder.
        edited = os.path.join(self.tmp.name, "edited", os.path.basename(self.kestrel_log))
        os.makedirs(os.path.dirname(edited))
        with open(self.kestrel_log) as f, open(edited, "w") as g:
            g.writelines(line for line in f if not line.startswith("S005,"))
        run("reconcile", "--library", self.lib, "--schedule", edited, "--recording", *self.kestrel_recs, "--out",
            os.path.join(self.tmp.name, "out-edited"), "--state-dir", self.state, *COMMON)
        with self.db() as c:
            slots = [r[0] for r in c.execute("SELECT slot FROM placements p JOIN stations s ON s.id = p.station_id "
                                             "WHERE s.name = 'kestrel-fm' ORDER BY planned_local")]
        self.assertEqual(slots, [p["slot"] for p in self.docs["kestrel-2"]["placements"] if p["slot"] != "S005"])


class DaemonRecord(unittest.TestCase):
    """A reconcile job of godwitd is recorded, and `airings`/`proof` answer through it."""

    def test_reconcile_job_recorded_and_queried_over_tcp(self):
        with tempfile.TemporaryDirectory() as t:
            demo = os.path.join(t, "demo")
            subprocess.run([ARGS.synth, "demo", "--out", demo], check=True, capture_output=True)
            state = os.path.join(t, "state")
            config = os.path.join(t, "godwitd.toml")
            with open(config, "w") as f:
                f.write(f'listen = "127.0.0.1:0"\nstate_dir = "{state}"\nroots = ["{demo}"]\n'
                        f'library = "{demo}/library"\nplanner = "estimate"\nworkers = 1\nthreads_per_job = 1\n'
                        'excerpts = false\n')
            log = open(os.path.join(t, "godwitd.log"), "w")
            proc = subprocess.Popen([ARGS.godwitd, "--config", config], stdout=subprocess.PIPE, stderr=log, text=True)
            try:
                port = json.loads(proc.stdout.readline())["port"]
                recs = sorted(os.path.join(demo, "airchecks", f) for f in os.listdir(os.path.join(demo, "airchecks")))
                sock = socket.create_connection(("127.0.0.1", port), timeout=60)
                fh = sock.makefile("rw")

                def req(obj):
                    fh.write(json.dumps(obj) + "\n")
                    fh.flush()
                    return json.loads(fh.readline())

                job = req({"op": "submit", "job": {"kind": "reconcile", "library": f"{demo}/library",
                                                   "schedule": f"{demo}/schedules/kestrel-fm-2026-03-14.csv",
                                                   "recordings": recs}})
                self.assertTrue(job["ok"], job)
                end = time.time() + 240
                while time.time() < end:
                    st = req({"op": "status", "job": job["job"]})
                    if st["state"] in ("done", "failed", "cancelled"):
                        break
                    time.sleep(0.3)
                self.assertEqual(st["state"], "done", st)
                doc = req({"op": "result", "job": job["job"]})["result"]
                # The op, paged.
                page = req({"op": "airings", "from": "2026-03-14", "to": "2026-03-14", "limit": 3})
                self.assertTrue(page["ok"], page)
                self.assertEqual(len(page["airings"]), 3)
                self.assertIn("next", page)
                bad = req({"op": "airings", "from": "2026-03-14"})
                self.assertEqual(bad["error"]["code"], "bad_request")
                # The commands through the daemon.
                got = json.loads(run("airings", "--connect", f"127.0.0.1:{port}", "--from", "2026-03-14", "--to",
                                     "2026-03-14", "--page", "2").stdout)
                want = placement_airings(doc)
                self.assertEqual([(a["aired"], a["status"]) for a in got], [(a["aired"], a["status"]) for a in want])
                self.assertTrue(all(a["job"].startswith(job["job"] + "@") for a in got), got[0]["job"])
                out = os.path.join(t, "proof")
                run("proof", "--connect", f"127.0.0.1:{port}", "--advertiser", "Marlow Bakery", "--from",
                    "2026-03-14", "--to", "2026-03-14", "--out", out)
                with open(os.path.join(out, "proof.json")) as f:
                    proof = json.load(f)
                self.assertEqual([p["slot"] for p in proof["stations"][0]["placements"]],
                                 [p["slot"] for p in doc["placements"] if p.get("advertiser") == "Marlow Bakery"])
                self.assertTrue(os.path.exists(os.path.join(out, "proof.html")))
                fh.close()
                sock.close()
            finally:
                proc.send_signal(signal.SIGTERM)
                proc.wait(timeout=60)
                proc.stdout.close()
                log.close()


class DaemonLocateThenReconcile(unittest.TestCase):
    """A client's locate job keeps its searches in the store: a reconcile of the same hour afterwards searches
    nothing again, and both documents are what the command line gives without a store (godwit locate and
    godwit reconcile in one process: the reference)."""

    def test_a_locate_job_then_a_reconcile_of_its_file_search_it_once(self):
        with tempfile.TemporaryDirectory() as t:
            demo = os.path.join(t, "demo")
            subprocess.run([ARGS.synth, "demo", "--out", demo], check=True, capture_output=True)
            lib, log_csv = f"{demo}/library", f"{demo}/schedules/kestrel-fm-2026-03-14.csv"
            masters = len([f for f in os.listdir(lib) if f.endswith(".wav")])
            rec = sorted(os.path.join(demo, "airchecks", f) for f in os.listdir(os.path.join(demo, "airchecks")))[1]
            state = os.path.join(t, "state")
            config = os.path.join(t, "godwitd.toml")
            with open(config, "w") as f:
                f.write(f'listen = "127.0.0.1:0"\nstate_dir = "{state}"\nroots = ["{demo}"]\n'
                        f'library = "{lib}"\nplanner = "estimate"\nworkers = 1\nthreads_per_job = 1\n'
                        'excerpts = false\n')
            log = open(os.path.join(t, "godwitd.log"), "w")
            proc = subprocess.Popen([ARGS.godwitd, "--config", config], stdout=subprocess.PIPE, stderr=log, text=True)
            try:
                port = json.loads(proc.stdout.readline())["port"]
                sock = socket.create_connection(("127.0.0.1", port), timeout=60)
                fh = sock.makefile("rw")

                def req(obj):
                    fh.write(json.dumps(obj) + "\n")
                    fh.flush()
                    return json.loads(fh.readline())

                def job(spec):
                    r = req({"op": "submit", "job": spec})
                    self.assertTrue(r["ok"], r)
                    end = time.time() + 240
                    while time.time() < end:
                        st = req({"op": "status", "job": r["job"]})
                        if st["state"] in ("done", "failed", "cancelled"):
                            break
                        time.sleep(0.2)
                    self.assertEqual(st["state"], "done", st)
                    return req({"op": "result", "job": r["job"]})["result"]

                located = job({"kind": "locate", "recordings": [rec]})
                reconciled = job({"kind": "reconcile", "library": lib, "schedule": log_csv, "recordings": [rec]})
                fh.close()
                sock.close()
            finally:
                proc.send_signal(signal.SIGTERM)
                proc.wait(timeout=60)
                proc.stdout.close()
                log.close()
            # The hour alone is three pieces (its start, body and end: stored_tasks.h), each searched once for
            # every master by the locate job and read back by the reconcile job.
            self.assertIn("searches", located)  # it went through the store
            self.assertEqual((located["searches"]["searched"], located["searches"]["reused"]), (3 * masters, 0),
                             located["searches"])
            self.assertEqual((reconciled["searches"]["searched"], reconciled["searches"]["reused"]), (0, 3 * masters),
                             reconciled["searches"])
            # Its detections' evidence too, where the two jobs measure it alike.
            self.assertEqual(reconciled["searches"]["evidence_gathered"], 0, reconciled["searches"])
            # The same documents as one process without a store. The locate document's templates name the FFT
            # size each search ran with (chosen per piece's length, not a result): left out.
            want = json.loads(run("locate", "--library", lib, "--recording", rec, "--planner", "estimate",
                                  "--cache-dir", "", "--quiet").stdout)

            def plain(doc):
                doc = {k: v for k, v in doc.items() if k not in ("tasks", "searches")}
                if "templates" in doc:
                    doc["templates"] = [{k: v for k, v in x.items() if k != "fft_size"} for x in doc["templates"]]
                return doc
            self.assertTrue(want["matches"])
            self.assertEqual(plain(located), plain(want))
            out = os.path.join(t, "cli-reconcile")
            run("reconcile", "--library", lib, "--schedule", log_csv, "--recording", rec, "--out", out,
                "--format", "json", *COMMON, "--quiet")
            with open(os.path.join(out, "reconcile.json")) as f:
                want = json.load(f)
            self.assertEqual(plain(reconciled), want)


class DropFolderRecord(unittest.TestCase):
    """The drop folder's day report, rebuilt as hours arrive, is recorded once per day, not once per hour."""

    def test_day_rebuilt_hour_by_hour_is_recorded_without_duplicates(self):
        with tempfile.TemporaryDirectory() as t:
            demo = os.path.join(t, "demo")
            subprocess.run([ARGS.synth, "demo", "--out", demo], check=True, capture_output=True)
            state, drop = os.path.join(t, "state"), os.path.join(t, "drop")
            config = os.path.join(t, "godwitd.toml")
            with open(config, "w") as f:
                f.write(f'listen = "127.0.0.1:0"\nstate_dir = "{state}"\nroots = ["{demo}", "{drop}"]\n'
                        f'library = "{demo}/library"\nplanner = "estimate"\nworkers = 1\nthreads_per_job = 1\n'
                        'excerpts = false\n')
            log = open(os.path.join(t, "godwitd.log"), "w")
            proc = subprocess.Popen([ARGS.godwitd, "--config", config, "--drop", drop, "--schedules",
                                     f"{demo}/schedules", "--drop-stable-s", "1", "--drop-poll-s", "0.2"],
                                    stdout=subprocess.PIPE, stderr=log, text=True)
            try:
                port = json.loads(proc.stdout.readline())["port"]
                recs = sorted(os.listdir(os.path.join(demo, "airchecks")))
                result = os.path.join(drop, "results", "kestrel-fm-2026-03-14.reconcile.json")
                for i, name in enumerate(recs):  # one hour file at a time, each reconciled before the next
                    shutil.copy(os.path.join(demo, "airchecks", name), os.path.join(drop, "incoming", name))
                    end = time.time() + 180
                    while time.time() < end:
                        if os.path.exists(result):
                            with open(result) as f:
                                doc = json.load(f)
                            if len(doc["recordings"]) == i + 1:
                                break
                        time.sleep(0.3)
                    if len(doc["recordings"]) != i + 1:
                        with open(os.path.join(t, "godwitd.log")) as f:
                            self.fail("the day was not rebuilt with hour %d: %s" % (i + 1, f.read()))
                time.sleep(0.5)  # the store is written before the day's JSON; nothing else is pending
                got = json.loads(run("airings", "--connect", f"127.0.0.1:{port}", "--from", "2026-03-14", "--to",
                                     "2026-03-14").stdout)
                want = placement_airings(doc)
                self.assertEqual([(a["aired"], a["status"], a.get("slot")) for a in got],
                                 [(a["aired"], a["status"], a["slot"]) for a in want])
                self.assertTrue(all(a["job"].startswith("drop-day-2026-03-14@") for a in got), got[0]["job"])
                with sqlite3.connect(os.path.join(state, "store.sqlite")) as c:
                    self.assertEqual(c.execute("SELECT count(*) FROM jobs").fetchone()[0], len(recs))
                    self.assertEqual(c.execute("SELECT count(*) FROM placements").fetchone()[0], len(doc["placements"]))
                    self.assertEqual(c.execute("SELECT count(*) FROM detections").fetchone()[0], len(want))
            finally:
                proc.send_signal(signal.SIGTERM)
                proc.wait(timeout=60)
                proc.stdout.close()
                log.close()


class CrashDuringWrite(unittest.TestCase):
    """SIGKILL while large jobs are written: what was acknowledged is there, whole; nothing is there in part."""

    AIRINGS = 4000  # per job: a transaction long enough to be killed inside

    def test_sigkill_mid_write_loses_nothing_committed(self):
        if not ARGS.store_bench:
            self.skipTest("store_bench not built (GODWIT_BUILD_BENCH=OFF)")
        rng = random.Random(16)
        with tempfile.TemporaryDirectory() as t:
            acknowledged = []
            for round_ in range(4):
                p = subprocess.Popen([ARGS.store_bench, "--fill-only", "--state-dir", t, "--stations", "3", "--days",
                                      "20", "--first-day", str(30 * round_), "--airings", str(self.AIRINGS)],
                                     stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
                first = p.stdout.readline()  # one job committed: the writer is under way
                if not first.startswith("committed "):
                    p.kill()
                    self.fail(first + p.communicate()[1])
                acknowledged.append(first.split()[1])
                time.sleep(rng.uniform(0.05, 1.0))
                p.send_signal(signal.SIGKILL)  # ours, by PID
                rest, _ = p.communicate(timeout=30)
                acknowledged += [line.split()[1] for line in rest.splitlines() if line.startswith("committed ")]
                self.assertEqual(p.returncode, -signal.SIGKILL)
            with sqlite3.connect(os.path.join(t, "store.sqlite")) as c:
                self.assertEqual(c.execute("PRAGMA integrity_check").fetchone()[0], "ok")
                self.assertEqual(c.execute("PRAGMA foreign_key_check").fetchall(), [])
                jobs = dict(c.execute("SELECT key, id FROM jobs").fetchall())
                for key in acknowledged:
                    self.assertIn(key, jobs)
                # Every stored job whole: all its detections, its searches, its recordings.
                for key, job_id in jobs.items():
                    n = c.execute("SELECT count(*) FROM detections WHERE job_id = ?", (job_id,)).fetchone()[0]
                    self.assertEqual(n, self.AIRINGS, key)
                    n = c.execute("SELECT count(*) FROM searches WHERE job_id = ?", (job_id,)).fetchone()[0]
                    self.assertEqual(n, 24 * 50, key)
                    n = c.execute("SELECT count(*) FROM recordings WHERE job_id = ?", (job_id,)).fetchone()[0]
                    self.assertEqual(n, 24, key)
                self.assertEqual(c.execute("SELECT count(*) FROM detections").fetchone()[0], self.AIRINGS * len(jobs))
                # No placement from a job that is not there.
                self.assertEqual(c.execute("SELECT count(*) FROM placements WHERE job_id NOT IN (SELECT id FROM jobs)")
                                 .fetchone()[0], 0)
            # Each kill landed before its writer was done.
            self.assertLess(len(jobs), 4 * 60)


if __name__ == "__main__":
    parser = argparse.ArgumentParser()
    parser.add_argument("--godwit", required=True)
    parser.add_argument("--godwitd", required=True)
    parser.add_argument("--synth", required=True)
    parser.add_argument("--store-bench", default="")
    ARGS, rest = parser.parse_known_args()
    unittest.main(argv=[sys.argv[0], "-v", *rest])
