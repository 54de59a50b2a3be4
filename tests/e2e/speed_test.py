#!/usr/bin/python3
"""End-to-end tests of speed-changed and tempo-changed airings through
`godwit locate` and `godwit reconcile`.

The airings are resampled outside the project, by scipy.signal.resample_poly
(Debian's python3-scipy): an airing at speed s is the master resampled by
1/s, played at the master's rate. The masters come from the generated demo
(fictional spots); the programme around them is synthesized here with numpy.

Tempo-changed airings (duration changed, pitch kept) are made by two
outside time-stretchers from Debian: sox's `tempo` effect (WSOLA) and
rubberband's phase vocoder (`rubberband -T`, package rubberband-cli).

Run by CTest: speed_test.py --godwit PATH --synth PATH
"""
import argparse
import datetime
import json
import os
import subprocess
import sys
import tempfile
import unittest
import wave
from fractions import Fraction

import shutil
import socket
import time

import numpy as np
from scipy.io import wavfile
from scipy.signal import resample_poly

ARGS = None
RATE = 44100
START = datetime.datetime(2026, 3, 14, 7, 0, 0)

# (spot, placed at s, speed as a fraction, aired fraction of the airing).
# 25/24 is the film-rate speed-up (common practice, from memory).
AIRINGS = [
    ("marlow-bakery", 20.0, Fraction(25, 24), 1.0),
    ("harbour-lights-cinema", 80.0, Fraction(50, 51), 0.6),
    ("tidewater-tyres-summer", 150.0, Fraction(101, 100), 1.0),
    ("pellham-garden-centre", 220.0, Fraction(200, 201), 1.0),
    ("tidewater-tyres-spring", 280.0, Fraction(1, 1), 1.0),
    ("harbour-lights-cinema", 340.0, Fraction(24, 25), 1.0),
]


def run(*args, check=None):
    p = subprocess.run([ARGS.godwit, *args], capture_output=True, text=True, timeout=600)
    if check is not None and p.returncode != check:
        raise AssertionError(f"exit {p.returncode}, expected {check}\nstdout: {p.stdout}\nstderr: {p.stderr}")
    return p


def read_mono(path):
    rate, x = wavfile.read(path)
    x = x.astype(np.float64) / 32768.0
    return rate, x.mean(axis=1) if x.ndim == 2 else x


def programme(seconds, seed):
    """Chords that change every 1.5-4 s over soft noise: not any master."""
    rng = np.random.default_rng(seed)
    n = int(seconds * RATE)
    out = np.zeros(n)
    t0 = 0
    while t0 < n:
        length = int(rng.uniform(1.5, 4.0) * RATE)
        t = np.arange(min(length, n - t0)) / RATE
        seg = sum(np.sin(2 * np.pi * f * t + rng.uniform(0, 6.3)) for f in rng.uniform(110, 1200, 4))
        out[t0:t0 + len(t)] = seg * np.hanning(len(t))
        t0 += len(t)
    out = 0.1 * out / np.sqrt(np.mean(out ** 2))
    return out + rng.normal(0, 0.01, n)


def write_wav(path, x):
    pcm = np.clip(np.round(x * 32767), -32768, 32767).astype("<i2")
    with wave.open(path, "wb") as w:
        w.setnchannels(1)
        w.setsampwidth(2)
        w.setframerate(RATE)
        w.writeframes(pcm.tobytes())


class SpeedChanged(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        demo = os.path.join(cls.tmp.name, "demo")
        subprocess.run([ARGS.synth, "demo", "--out", demo], check=True, capture_output=True)
        cls.lib = os.path.join(demo, "library")
        rng = np.random.default_rng(7)
        x = programme(420, 3)
        for spot, at, speed, aired in AIRINGS:
            rate, m = read_mono(os.path.join(cls.lib, spot + ".wav"))
            assert rate == RATE
            # Speed s = p/q: q output samples for every p input samples.
            clip = resample_poly(m, speed.denominator, speed.numerator)
            clip = clip[: int(len(clip) * aired)]
            clip = clip + rng.normal(0, np.sqrt(np.mean(clip ** 2)) * 10 ** (-10 / 20), len(clip))  # 10 dB SNR
            i = int(round(at * RATE))
            x[i:i + len(clip)] = clip
        cls.rec = os.path.join(cls.tmp.name, "kestrel-fm-20260314T070000.wav")
        write_wav(cls.rec, x)
        cls.common = ["--planner", "estimate", "--cache-dir", ""]
        p = run("locate", "--library", cls.lib, "--recording", cls.rec, *cls.common, check=0)
        cls.matches = json.loads(p.stdout)["matches"]

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def test_each_airing_found_with_its_speed_and_first_sample(self):
        for spot, at, speed, aired in AIRINGS:
            with self.subTest(spot=spot, at=at):
                hits = [m for m in self.matches if m["template"] == spot and abs(m["offset_s"] - at) < 0.5]
                self.assertEqual(len(hits), 1, self.matches)
                m = hits[0]
                # Targets of the speed search: speed within 0.05 %, offset within 1 ms.
                self.assertLess(abs(m["speed"] / float(speed) - 1), 0.0005, m)
                self.assertLess(abs(m["offset_s"] - at), 0.001, m)

    def test_nothing_found_where_nothing_aired(self):
        for m in self.matches:
            near = [a for a in AIRINGS if abs(m["offset_s"] - a[1]) < 1.0]
            self.assertTrue(near, m)

    def test_speed_search_off_finds_only_the_unchanged_airing(self):
        p = run("locate", "--library", self.lib, "--recording", self.rec, "--no-speed-search", *self.common, check=0)
        found = {(m["template"], round(m["offset_s"])) for m in json.loads(p.stdout)["matches"]}
        self.assertIn(("tidewater-tyres-spring", 280), found)
        self.assertNotIn(("marlow-bakery", 20), found)
        self.assertTrue(all(m["speed"] == 1 for m in json.loads(p.stdout)["matches"]))

    def test_reconcile_coverage_versions_and_verdicts_at_speed(self):
        sched = os.path.join(self.tmp.name, "plan.csv")
        rows = [("P1", "marlow-bakery", 20), ("P2", "harbour-lights-cinema", 80), ("P3", "tidewater-tyres-spring", 150),
                ("P4", "pellham-garden-centre", 220), ("P5", "tidewater-tyres-spring", 280),
                ("P6", "harbour-lights-cinema", 340)]
        with open(sched, "w") as f:
            f.write("slot,spot,planned,window_s\n")
            for slot, spot, at in rows:
                f.write(f"{slot},{spot},{(START + datetime.timedelta(seconds=at)).isoformat()},30\n")
        out = os.path.join(self.tmp.name, "report")
        p = run("reconcile", "--library", self.lib, "--schedule", sched, "--recording", self.rec, "--out", out,
                *self.common, check=0)
        self.assertIn("speed 1.0417", p.stdout)  # the printed table says so too
        with open(os.path.join(out, "reconcile.json")) as f:
            doc = json.load(f)
        by = {p["slot"]: p for p in doc["placements"]}
        expected = {"P1": "aired", "P2": "partial", "P3": "wrong_version", "P4": "aired", "P5": "aired", "P6": "aired"}
        self.assertEqual({s: p["status"] for s, p in by.items()}, expected)
        self.assertEqual(by["P3"]["detected_spot"], "tidewater-tyres-summer")
        self.assertAlmostEqual(by["P1"]["speed"], 25 / 24, delta=25 / 24 * 0.0005)
        self.assertAlmostEqual(by["P3"]["speed"], 1.01, delta=1.01 * 0.0005)
        self.assertAlmostEqual(by["P6"]["speed"], 0.96, delta=0.96 * 0.0005)
        self.assertEqual(by["P5"]["speed"], 1)
        # 60 % of the slowed airing went out: coverage is of the master.
        self.assertAlmostEqual(by["P2"]["coverage"], 0.6, delta=0.05)
        missing = by["P2"]["missing"]
        self.assertEqual(len(missing), 1)
        self.assertAlmostEqual(missing[0][0], 18.0, delta=1.0)  # 60 % of 30 s, in master seconds
        self.assertAlmostEqual(missing[0][1], 30.0, delta=0.01)
        for slot in ("P1", "P4", "P6"):
            self.assertGreater(by[slot]["coverage"], 0.95, by[slot])
        self.assertEqual(doc["unscheduled"], [])
        with open(os.path.join(out, "reconcile.html")) as f:
            html = f.read()
        self.assertIn("aired at 1.0417", html)


# (spot, placed at s, tempo, stretcher, aired fraction of the airing,
# polarity).
TEMPO_AIRINGS = [
    ("marlow-bakery", 20.0, 0.96, "sox", 1.0, 1),
    ("harbour-lights-cinema", 70.0, 1.04, "rubberband", 1.0, 1),
    ("pellham-garden-centre", 130.0, 1.02, "sox", 0.6, 1),
    ("tidewater-tyres-spring", 180.0, 0.975, "rubberband", 1.0, -1),
    ("marlow-bakery", 240.0, 1.0, "none", 1.0, 1),
]


def stretch(src, tempo, how, tmp):
    """The master time-stretched by the outside tool, mono at RATE."""
    out = os.path.join(tmp, "stretched.wav")
    if how == "sox":
        subprocess.run(["sox", "-q", src, "-c", "1", "-b", "16", out, "tempo", str(tempo)], check=True)
    else:
        mid = os.path.join(tmp, "rb.wav")
        subprocess.run(["rubberband", "-q", "-T", str(tempo), src, mid], check=True, capture_output=True)
        subprocess.run(["sox", "-q", mid, "-c", "1", "-b", "16", out], check=True)
    return read_mono(out)[1]


@unittest.skipIf(shutil.which("sox") is None or shutil.which("rubberband") is None,
                 "sox and rubberband-cli are needed (scripts/install-deps.sh installs them)")
class TempoChanged(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        demo = os.path.join(cls.tmp.name, "demo")
        subprocess.run([ARGS.synth, "demo", "--out", demo], check=True, capture_output=True)
        cls.lib = os.path.join(demo, "library")
        rng = np.random.default_rng(11)
        x = programme(300, 5)
        for spot, at, tempo, how, aired, polarity in TEMPO_AIRINGS:
            src = os.path.join(cls.lib, spot + ".wav")
            clip = read_mono(src)[1] if how == "none" else stretch(src, tempo, how, cls.tmp.name)
            clip = polarity * clip[: int(len(clip) * aired)]
            clip = clip + rng.normal(0, np.sqrt(np.mean(clip ** 2)) * 10 ** (-10 / 20), len(clip))  # 10 dB SNR
            i = int(round(at * RATE))
            x[i:i + len(clip)] = clip
        cls.rec = os.path.join(cls.tmp.name, "kestrel-fm-20260314T070000.wav")
        write_wav(cls.rec, x)
        cls.common = ["--planner", "estimate", "--cache-dir", ""]
        p = run("locate", "--library", cls.lib, "--recording", cls.rec, *cls.common, check=0)
        cls.matches = json.loads(p.stdout)["matches"]

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def test_each_airing_found_with_its_tempo_and_first_sample(self):
        for spot, at, tempo, how, aired, polarity in TEMPO_AIRINGS:
            with self.subTest(spot=spot, at=at, how=how):
                hits = [m for m in self.matches if m["template"] == spot and abs(m["offset_s"] - at) < 0.5]
                self.assertEqual(len(hits), 1, self.matches)
                m = hits[0]
                # The targets: tempo within 0.2 %, offset within 20 ms; a
                # tempo change is not a speed change.
                self.assertEqual(m["speed"], 1, m)
                self.assertLess(abs(m["tempo"] / tempo - 1), 0.002, m)
                self.assertLess(abs(m["offset_s"] - at), 0.020, m)
                self.assertEqual(m["polarity"], polarity, m)

    def test_nothing_found_where_nothing_aired(self):
        for m in self.matches:
            self.assertTrue([a for a in TEMPO_AIRINGS if abs(m["offset_s"] - a[1]) < 1.0], m)

    def test_reconcile_reports_tempo_coverage_and_verdicts(self):
        sched = os.path.join(self.tmp.name, "plan.csv")
        with open(sched, "w") as f:
            f.write("slot,spot,planned,window_s\n")
            for k, (spot, at, *_) in enumerate(TEMPO_AIRINGS):
                f.write(f"T{k + 1},{spot},{(START + datetime.timedelta(seconds=at)).isoformat()},30\n")
        out = os.path.join(self.tmp.name, "report")
        p = run("reconcile", "--library", self.lib, "--schedule", sched, "--recording", self.rec, "--out", out,
                *self.common, check=0)
        self.assertIn("tempo 0.9600", p.stdout)  # the printed table
        with open(os.path.join(out, "reconcile.json")) as f:
            doc = json.load(f)
        by = {p["slot"]: p for p in doc["placements"]}
        self.assertEqual({s: p["status"] for s, p in by.items()},
                         {"T1": "aired", "T2": "aired", "T3": "partial", "T4": "aired", "T5": "aired"})
        for k, (spot, at, tempo, how, aired, polarity) in enumerate(TEMPO_AIRINGS):
            with self.subTest(slot=f"T{k + 1}"):
                a = by[f"T{k + 1}"]
                self.assertEqual(a["speed"], 1, a)
                self.assertLess(abs(a["tempo"] / tempo - 1), 0.002, a)
                # Coverage is of the master: 60 % of the cut airing went out.
                self.assertAlmostEqual(a["coverage"], aired, delta=0.05, msg=a)
        with open(os.path.join(out, "reconcile.html")) as f:
            self.assertIn("pitch kept", f.read())

    def test_the_record_keeps_each_airings_tempo(self):
        """Reconciled with --state-dir (each piece searched through the store),
        the verdicts and tempos equal the plain reconcile's, and `godwit
        airings` gives every stretched airing its tempo back."""
        sched = os.path.join(self.tmp.name, "plan-store.csv")
        with open(sched, "w") as f:
            f.write("slot,spot,planned,window_s\n")
            for k, (spot, at, *_) in enumerate(TEMPO_AIRINGS):
                f.write(f"T{k + 1},{spot},{(START + datetime.timedelta(seconds=at)).isoformat()},30\n")
        state = os.path.join(self.tmp.name, "record")
        out = os.path.join(self.tmp.name, "report-store")
        run("reconcile", "--library", self.lib, "--schedule", sched, "--recording", self.rec, "--out", out,
            "--state-dir", state, *self.common, check=0)
        with open(os.path.join(out, "reconcile.json")) as f:
            stored_doc = json.load(f)
        p = run("airings", "--state-dir", state, "--from", "2026-03-14", "--to", "2026-03-14", check=0)
        airings = json.loads(p.stdout)
        airings = airings["airings"] if isinstance(airings, dict) else airings
        for spot, at, tempo, how, aired, polarity in TEMPO_AIRINGS:
            with self.subTest(spot=spot, at=at):
                when = START + datetime.timedelta(seconds=at)
                hits = [a for a in airings if a["spot"] == spot and
                        abs((datetime.datetime.fromisoformat(a["aired"]) - when).total_seconds()) < 0.5]
                self.assertEqual(len(hits), 1, airings)
                self.assertLess(abs(hits[0]["tempo"] / tempo - 1), 0.002, hits[0])
                self.assertEqual(hits[0]["speed"], 1, hits[0])
        self.assertEqual({p["slot"]: p["status"] for p in stored_doc["placements"]},
                         {"T1": "aired", "T2": "aired", "T3": "partial", "T4": "aired", "T5": "aired"})

    def test_daemon_jobs_find_the_same_and_honour_the_tempo_range(self):
        """A locate job through godwitd on loopback finds what the command
        line finds, tempo included; `max_tempo_change_pct` 0 turns the
        tempo fit off for that job."""
        state = os.path.join(self.tmp.name, "state")
        config = os.path.join(self.tmp.name, "godwitd.toml")
        with open(config, "w") as f:
            f.write(f'listen = "127.0.0.1:0"\nstate_dir = "{state}"\nroots = ["{self.tmp.name}"]\n'
                    f'library = "{self.lib}"\nplanner = "estimate"\nworkers = 1\n')
        log = open(os.path.join(self.tmp.name, "godwitd.log"), "a")
        proc = subprocess.Popen([ARGS.godwitd, "--config", config], stdout=subprocess.PIPE, stderr=log, text=True)
        try:
            port = json.loads(proc.stdout.readline())["port"]
            sock = socket.create_connection(("127.0.0.1", port), timeout=60)
            io = sock.makefile("rwb")

            def req(obj):
                io.write((json.dumps(obj) + "\n").encode())
                io.flush()
                return json.loads(io.readline())

            def locate(**fields):
                job = req({"op": "submit", "job": {"kind": "locate", "recordings": [self.rec], **fields}})["job"]
                end = time.time() + 300
                while req({"op": "status", "job": job})["state"] not in ("done", "failed", "cancelled"):
                    self.assertLess(time.time(), end, "the job did not finish")
                    time.sleep(0.2)
                return req({"op": "result", "job": job})["result"]["matches"]

            key = lambda m: (m["template"], round(m["offset_s"], 3), round(m["tempo"], 5), m["speed"])
            self.assertEqual(sorted(map(key, locate())), sorted(map(key, self.matches)))
            stretched = [a for a in TEMPO_AIRINGS if a[2] != 1]
            self.assertTrue(stretched)
            off = locate(max_tempo_change_pct=0)
            self.assertFalse([m for m in off if m["tempo"] != 1], off)
            for spot, at, *_ in stretched:
                self.assertFalse([m for m in off if m["template"] == spot and abs(m["offset_s"] - at) < 0.5], off)
            self.assertIn("'max_tempo_change_pct' must lie in",
                          req({"op": "submit", "job": {"kind": "locate", "recordings": [self.rec],
                                                       "max_tempo_change_pct": 11}})["error"]["message"])
            sock.close()
        finally:
            proc.terminate()
            proc.wait(timeout=60)
            log.close()


if __name__ == "__main__":
    parser = argparse.ArgumentParser()
    parser.add_argument("--godwit", required=True)
    parser.add_argument("--synth", required=True)
    parser.add_argument("--godwitd", required=True)
    ARGS, rest = parser.parse_known_args()
    unittest.main(argv=[sys.argv[0], "-v", *rest])
