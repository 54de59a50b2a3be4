#!/usr/bin/python3
"""End-to-end tests of a daemon serving several stations (config [[stations]]).

Two fictional stations, Kestrel FM and Heron Radio, get the same three hour
files under the same names in their own drop folders, each with its own
planned log (Heron's lacks slot S001): each station's day is reconciled and
recorded under its own name, and `godwit airings --station` tells them
apart. A third, Osprey AM, names its files another way (its name_pattern):
a reconcile job naming the station finds the same airings at the same
times. Config mistakes (an unknown zone, a missing folder, a station named
twice, a shared drop folder) stop godwitd at start with exit code 2 (usage,
README "Exit codes") and a message naming the station, before it listens.

Run by CTest: stations_test.py --godwit PATH --godwitd PATH --synth PATH
"""
import argparse
import json
import os
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


def run(*args, check=0):
    p = subprocess.run([ARGS.godwit, *args], capture_output=True, text=True, timeout=300)
    if check is not None and p.returncode != check:
        raise AssertionError(f"godwit {' '.join(args)} exited {p.returncode}\n{p.stdout}\n{p.stderr}")
    return p


def placement_airings(doc):
    """Every airing of a reconcile document, in time order: (aired, status, slot)."""
    out = [(p["aired"], p["status"], p["slot"]) for p in doc["placements"] if "aired" in p]
    out += [(a["aired"], "unscheduled", None) for a in doc["unscheduled"]]
    return sorted(out)


class Daemon:
    """A godwitd on a loopback port with `config` (TOML text), its log in `tmp`. Shared by retention_test.py."""

    def __init__(self, tmp, config, name="godwitd"):
        self.path = os.path.join(tmp, name + ".toml")
        with open(self.path, "w") as f:
            f.write(config)
        self.log_path = os.path.join(tmp, name + ".log")
        self.log = open(self.log_path, "a")
        self.proc = subprocess.Popen([ARGS.godwitd, "--config", self.path], stdout=subprocess.PIPE, stderr=self.log,
                                     text=True)
        line = self.proc.stdout.readline()
        if not line:
            self.proc.wait(timeout=30)
            raise AssertionError("godwitd did not start: " + self.log_text())
        self.port = json.loads(line)["port"]
        self.sock = socket.create_connection(("127.0.0.1", self.port), timeout=120)
        self.fh = self.sock.makefile("rw")

    def req(self, obj):
        self.fh.write(json.dumps(obj) + "\n")
        self.fh.flush()
        return json.loads(self.fh.readline())

    def wait_done(self, job, timeout=300):
        end = time.time() + timeout
        while time.time() < end:
            st = self.req({"op": "status", "job": job})
            if st.get("state") in ("done", "failed", "cancelled"):
                return st
            time.sleep(0.3)
        raise AssertionError(f"job {job} not over after {timeout} s: {st}")

    def log_text(self):
        self.log.flush()
        with open(self.log_path) as f:
            return f.read()

    def wait_log(self, text, timeout=120):
        end = time.time() + timeout
        while time.time() < end:
            if text in self.log_text():
                return
            time.sleep(0.2)
        raise AssertionError(f"no '{text}' in the log after {timeout} s:\n{self.log_text()}")

    def stop(self, sig=signal.SIGTERM):
        try:
            self.fh.close()
            self.sock.close()
        except OSError:
            pass
        if self.proc.poll() is None:
            self.proc.send_signal(sig)  # ours, by PID
            self.proc.wait(timeout=120)
        self.proc.stdout.close()
        self.log.close()


def start_fails(tmp, config):
    """godwitd with `config` must refuse to start: (exit code, stderr, stdout)."""
    path = os.path.join(tmp, "bad.toml")
    with open(path, "w") as f:
        f.write(config)
    p = subprocess.run([ARGS.godwitd, "--config", path], capture_output=True, text=True, timeout=60)
    return p.returncode, p.stderr, p.stdout


class Stations(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        t = cls.tmp.name
        cls.demo = os.path.join(t, "demo")
        subprocess.run([ARGS.synth, "demo", "--out", cls.demo], check=True, capture_output=True)
        cls.lib = os.path.join(cls.demo, "library")
        cls.names = sorted(os.listdir(os.path.join(cls.demo, "airchecks")))
        kestrel_log = os.path.join(cls.demo, "schedules", "kestrel-fm-2026-03-14.csv")
        cls.sched = {"kestrel-fm": os.path.join(t, "sched-kestrel"), "heron-radio": os.path.join(t, "sched-heron")}
        os.makedirs(cls.sched["kestrel-fm"])
        os.makedirs(cls.sched["heron-radio"])
        shutil.copy(kestrel_log, cls.sched["kestrel-fm"])
        with open(kestrel_log) as f, open(os.path.join(cls.sched["heron-radio"], "heron-radio-2026-03-14.csv"), "w") as g:
            g.writelines(line for line in f if not line.startswith("S001,"))
        cls.kestrel_log = kestrel_log
        cls.drop = {s: os.path.join(t, "drop-" + s) for s in ("kestrel-fm", "heron-radio", "osprey-am")}
        cls.state = os.path.join(t, "state")
        cls.config = (f'listen = "127.0.0.1:0"\nstate_dir = "{cls.state}"\nroots = ["{t}"]\n'
                      f'library = "{cls.lib}"\nplanner = "estimate"\nworkers = 1\nthreads_per_job = 1\n'
                      'excerpts = false\n[drop_folder]\nstable_s = 1\npoll_s = 0.2\n'
                      f'[[stations]]\nname = "kestrel-fm"\ndrop = "{cls.drop["kestrel-fm"]}"\n'
                      f'schedules = "{cls.sched["kestrel-fm"]}"\n'
                      f'[[stations]]\nname = "heron-radio"\ndrop = "{cls.drop["heron-radio"]}"\n'
                      f'schedules = "{cls.sched["heron-radio"]}"\ntime_zone = "Europe/London"\n'
                      f'[[stations]]\nname = "osprey-am"\ndrop = "{cls.drop["osprey-am"]}"\n'
                      'name_pattern = "osprey_%d.%m.%Y_%H-%M-%S"\n')
        cls.d = Daemon(t, cls.config)
        # The same files, under the same names, into both stations' drop folders at once.
        for s in ("kestrel-fm", "heron-radio"):
            for n in cls.names:
                shutil.copy(os.path.join(cls.demo, "airchecks", n), os.path.join(cls.drop[s], "incoming", n))
        cls.docs = {}
        end = time.time() + 600
        for s, log in (("kestrel-fm", "kestrel-fm-2026-03-14"), ("heron-radio", "heron-radio-2026-03-14")):
            result = os.path.join(cls.drop[s], "results", log + ".reconcile.json")
            while time.time() < end:
                if os.path.exists(result):
                    with open(result) as f:
                        doc = json.load(f)
                    if len(doc["recordings"]) == len(cls.names):
                        cls.docs[s] = doc
                        break
                time.sleep(0.3)
        time.sleep(0.5)  # the store is written before the day's JSON

    @classmethod
    def tearDownClass(cls):
        cls.d.stop()
        cls.tmp.cleanup()

    def airings(self, *args):
        return json.loads(run("airings", *args, "--from", "2026-03-14", "--to", "2026-03-14").stdout)

    def test_two_stations_files_of_one_name_each_recorded_under_its_station(self):
        self.assertEqual(sorted(self.docs), ["heron-radio", "kestrel-fm"], self.d.log_text())
        # Each station's day read its own folder's files and its own log.
        for s in ("kestrel-fm", "heron-radio"):
            self.assertEqual(sorted(os.path.basename(r["path"]) for r in self.docs[s]["recordings"]), self.names)
            self.assertTrue(all(r["path"].startswith(self.drop[s]) for r in self.docs[s]["recordings"]))
            for n in self.names:  # each file's own locate document, no "-2" renames
                self.assertTrue(os.path.exists(os.path.join(self.drop[s], "results", n + ".json")))
        self.assertIn("S001", [p["slot"] for p in self.docs["kestrel-fm"]["placements"]])
        self.assertNotIn("S001", [p["slot"] for p in self.docs["heron-radio"]["placements"]])
        with sqlite3.connect(os.path.join(self.state, "store.sqlite")) as c:
            rows = c.execute("SELECT s.name, r.path FROM recordings r JOIN stations s ON s.id = r.station_id "
                             "WHERE s.name <> 'osprey-am'").fetchall()
            self.assertEqual(sorted(s for s, _ in rows), ["heron-radio"] * 3 + ["kestrel-fm"] * 3)
            for s, path in rows:
                self.assertTrue(path.startswith(self.drop[s]), (s, path))
            zone = dict(c.execute("SELECT name, time_zone FROM stations").fetchall())
            self.assertEqual(zone["heron-radio"], "Europe/London")
            for s in ("kestrel-fm", "heron-radio"):
                keys = [k for (k,) in c.execute("SELECT j.key FROM jobs j JOIN stations s ON s.id = j.station_id "
                                                "WHERE s.name = ?", (s,))]
                self.assertTrue(keys)
                self.assertTrue(all(k.startswith(f"drop-day-{s}-2026-03-14@") for k in keys), keys)
            # Placements per station as its own log planned them.
            for s in ("kestrel-fm", "heron-radio"):
                n = c.execute("SELECT count(*) FROM placements p JOIN stations s ON s.id = p.station_id WHERE s.name = ?",
                              (s,)).fetchone()[0]
                self.assertEqual(n, len(self.docs[s]["placements"]))

    def test_every_drop_folder_log_line_names_its_station(self):
        # The same file names in two stations' folders: a line must say whose folder it is.
        lines = self.d.log_text().splitlines()
        unnamed = [l for l in lines if "drop folder:" in l or
                   ("drop folder " in l and "drop folder (station " not in l and "] station " not in l)]
        self.assertEqual(unnamed, [])
        for s in ("kestrel-fm", "heron-radio"):
            ours = [l for l in lines if f"drop folder (station {s})" in l]
            for n in self.names:
                self.assertTrue(any(f"processing {n}" in l for l in ours), (s, n, ours))
            self.assertTrue(any("reconciled over" in l for l in ours), (s, ours))

    def test_airings_by_station_separate_them(self):
        for where in (("--connect", f"127.0.0.1:{self.d.port}"), ("--state-dir", self.state)):
            both = self.airings(*where)
            for s in ("kestrel-fm", "heron-radio"):
                got = self.airings(*where, "--station", s)
                self.assertTrue(all(a["station"] == s for a in got))
                self.assertEqual([(a["aired"], a["status"], a.get("slot")) for a in got], placement_airings(self.docs[s]))
                self.assertEqual(got, [a for a in both if a["station"] == s])
            # Heron's log has no S001: its airing there is unscheduled, Kestrel's is not.
            k = {a["aired"]: a["status"] for a in self.airings(*where, "--station", "kestrel-fm")}
            h = {a["aired"]: a["status"] for a in self.airings(*where, "--station", "heron-radio")}
            self.assertEqual(sorted(k), sorted(h))  # the same audio: the same airings
            self.assertNotEqual(k, h)

    def test_a_reconcile_job_naming_a_station_uses_its_file_name_pattern_and_library(self):
        # Osprey AM's logger writes osprey_14.03.2026_06-00-00.flac for kestrel-fm-20260314T060000.flac.
        folder = os.path.join(self.tmp.name, "osprey-air")
        os.makedirs(folder, exist_ok=True)
        recs = []
        for n in self.names:
            stamp = n.split("-")[-1].split(".")[0]  # 20260314T060000
            name = f"osprey_{stamp[6:8]}.{stamp[4:6]}.{stamp[0:4]}_{stamp[9:11]}-{stamp[11:13]}-{stamp[13:15]}.flac"
            recs.append(os.path.join(folder, name))
            shutil.copy(os.path.join(self.demo, "airchecks", n), recs[-1])
        r = self.d.req({"op": "submit", "job": {"kind": "reconcile", "station": "osprey-am",
                                                "schedule": self.kestrel_log, "recordings": recs}})
        self.assertTrue(r["ok"], r)
        self.assertEqual(self.d.wait_done(r["job"])["state"], "done")
        doc = self.d.req({"op": "result", "job": r["job"]})["result"]
        self.assertEqual(placement_airings(doc), placement_airings(self.docs["kestrel-fm"]))
        got = self.airings("--state-dir", self.state, "--station", "osprey-am")
        self.assertEqual([(a["aired"], a["status"], a.get("slot")) for a in got], placement_airings(doc))
        # A station that is not configured is refused before the job is queued.
        bad = self.d.req({"op": "submit", "job": {"kind": "reconcile", "station": "plover-fm",
                                                  "schedule": self.kestrel_log, "recordings": recs}})
        self.assertEqual(bad["error"]["code"], "bad_request")
        self.assertIn("heron-radio, kestrel-fm, osprey-am", bad["error"]["message"])


class ConfigErrors(unittest.TestCase):
    def test_mistakes_stop_the_daemon_at_start_with_a_clear_message(self):
        with tempfile.TemporaryDirectory() as t:
            os.makedirs(os.path.join(t, "lib"))
            head = f'listen = "127.0.0.1:0"\nstate_dir = "{t}/state"\nlibrary = "{t}/lib"\n'

            def station(name, drop, extra=""):
                return f'[[stations]]\nname = "{name}"\ndrop = "{t}/{drop}"\n{extra}'

            cases = [
                (station("kestrel-fm", "d1", 'time_zone = "Europe/Atlantis"\n'),
                 "station 'kestrel-fm': time_zone: unknown time zone 'Europe/Atlantis'"),
                (station("kestrel-fm", "d1", f'schedules = "{t}/no-such"\n'),
                 f"station 'kestrel-fm': schedules '{t}/no-such' does not exist"),
                (station("kestrel-fm", "d1", f'library = "{t}/no-lib"\n'),
                 f"station 'kestrel-fm': library '{t}/no-lib' does not exist"),
                (station("kestrel-fm", "d1") + station("kestrel-fm", "d2"), "station 'kestrel-fm' is named twice"),
                (station("kestrel-fm", "d1") + station("heron-radio", "d1"), "share a drop folder"),
                (f'drop = "{t}/d0"\n' + station("kestrel-fm", "d1"), "'drop' is set at the top level"),
            ]
            for config, says in cases:
                code, err, out = start_fails(t, head + config)
                self.assertEqual(code, 2, err)
                self.assertIn(says, err)
                self.assertEqual(out, "")  # never listened
                self.assertFalse(os.path.exists(os.path.join(t, "d1")))  # nothing made


if __name__ == "__main__":
    parser = argparse.ArgumentParser()
    parser.add_argument("--godwit", required=True)
    parser.add_argument("--godwitd", required=True)
    parser.add_argument("--synth", required=True)
    ARGS, rest = parser.parse_known_args()
    unittest.main(argv=[sys.argv[0], "-v", *rest])
