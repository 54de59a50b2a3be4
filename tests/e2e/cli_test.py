#!/usr/bin/python3
# Over 400 lines: every scenario of the command line on one generated demo, read top to bottom.
"""End-to-end tests of the `godwit` command line on the generated demo.

Run by CTest: cli_test.py --godwit PATH --synth PATH
"""
import argparse
import csv
import datetime
import io
import json
import os
import random
import resource
import struct
import subprocess
import sys
import tempfile
import unittest

ARGS = None


def seconds_after_six(iso):
    """Seconds after 2026-03-14T06:00:00 of an ISO 8601 local time (Python's datetime as the reference)."""
    t = datetime.datetime.fromisoformat(iso)
    return (t - datetime.datetime(2026, 3, 14, 6, 0, 0)).total_seconds()


def run(*args, check=None):
    p = subprocess.run([ARGS.godwit, *args], capture_output=True, text=True, timeout=300)
    if check is not None and p.returncode != check:
        raise AssertionError(f"exit {p.returncode}, expected {check}\nstdout: {p.stdout}\nstderr: {p.stderr}")
    return p


def write_wav(path, frames, rate, float32=False):
    """frames: numpy array (n,) or (n, channels). PCM 16 or IEEE float 32, written by hand (the wave module has no
    float), so headers can state anything."""
    import numpy as np
    a = np.asarray(frames)
    if a.ndim == 1:
        a = a[:, None]
    ch = a.shape[1]
    if float32:
        data, tag, width = a.astype("<f4").tobytes(), 3, 4
    else:
        data, tag, width = (np.clip(a, -1, 1) * 32767).astype("<i2").tobytes(), 1, 2
    fmt = struct.pack("<HHIIHH", tag, ch, rate, rate * ch * width, ch * width, width * 8)
    body = b"WAVE" + b"fmt " + struct.pack("<I", len(fmt)) + fmt + b"data" + struct.pack("<I", len(data)) + data
    with open(path, "wb") as f:
        f.write(b"RIFF" + struct.pack("<I", len(body)) + body)


def read_master(path):
    """A demo master (16-bit PCM WAV) as mono float32 and its rate."""
    import numpy as np
    import wave
    with wave.open(path) as w:
        a = np.frombuffer(w.readframes(w.getnframes()), dtype="<i2").reshape(-1, w.getnchannels())
        return (a.mean(axis=1) / 32768).astype(np.float32), w.getframerate()


def limit_memory():
    resource.setrlimit(resource.RLIMIT_AS, (3 << 30, 3 << 30))  # a runaway allocation fails instead of swapping


class DemoLocate(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        cls.demo = os.path.join(cls.tmp.name, "demo")
        subprocess.run([ARGS.synth, "demo", "--out", cls.demo], check=True, capture_output=True)
        with open(os.path.join(cls.demo, "truth.json")) as f:
            cls.truth = json.load(f)
        cls.rec = cls.truth["recordings"][0]  # 06:00:00 - 06:05:00
        cls.lib = os.path.join(cls.demo, "library")
        cls.schedule = os.path.join(cls.demo, "schedules", "kestrel-fm-2026-03-14.csv")
        cls.common = ["--planner", "estimate", "--cache-dir", ""]
        # Airings wholly inside the first file, with their offsets in it.
        cls.in_first = []
        for a in cls.truth["airings"]:
            off = seconds_after_six(a["aired"])
            dur = {"marlow-bakery": 20, "tidewater-tyres-spring": 30, "tidewater-tyres-summer": 30,
                   "pellham-garden-centre": 15, "kestrel-fm-id": 5, "harbour-lights-cinema": 30}[a["spot"]]
            if off + dur <= 300:
                cls.in_first.append((a["spot"], off, a["polarity"]))
        # Airings that begin in the first file and are cut by its end (the
        # S004 straddle, 8 of its 20 s recorded here).
        cls.cut_by_end = [(a["spot"], seconds_after_six(a["aired"])) for a in cls.truth["airings"]
                          if seconds_after_six(a["aired"]) < 300 < seconds_after_six(a["aired"]) + 20
                          and a["spot"] == "marlow-bakery"]

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def locate(self, *extra, check=0):
        return run("locate", "--library", self.lib, "--recording", self.rec, *self.common, *extra, check=check)

    def test_samples_are_what_the_demo_generator_writes(self):
        # samples/kestrel-fm holds the demo's planned log and sidecars for people to read and copy; they must not
        # drift from what godwit-synth writes.
        samples = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "samples", "kestrel-fm")
        names = [os.path.join("schedules", "kestrel-fm-2026-03-14.csv")]
        names += [os.path.join("library", n) for n in sorted(os.listdir(self.lib)) if n.endswith(".meta.json")]
        self.assertEqual(len(names), 7)
        self.assertEqual(sorted(os.listdir(os.path.join(samples, "library"))), sorted(os.path.basename(n) for n in names[1:]))
        for n in names:
            with open(os.path.join(self.demo, n), "rb") as a, open(os.path.join(samples, n), "rb") as b:
                self.assertEqual(a.read(), b.read(), n)
        with open(os.path.join(samples, "jobs", "reconcile-morning.json")) as f:
            job = json.load(f)
        self.assertEqual([os.path.basename(r) for r in job["recordings"]],
                         [os.path.basename(r) for r in self.truth["recordings"]])

    def test_every_complete_airing_found_to_half_a_millisecond(self):
        doc = json.loads(self.locate().stdout)
        self.assertEqual(doc["analysis_rate_hz"], 8000)
        self.assertEqual(doc["recordings"][0]["path"], self.rec)
        self.assertAlmostEqual(doc["recordings"][0]["duration_s"], 300.0, places=3)
        self.assertEqual(doc["recordings"][0]["native_rate_hz"], 44100)
        matches = doc["matches"]
        self.assertEqual(len(self.in_first), 3)
        for spot, off, pol in self.in_first:
            hits = [m for m in matches if m["template"] == spot and abs(m["offset_s"] - off) < 0.5e-3]
            self.assertEqual(len(hits), 1, (spot, off, matches))
            self.assertEqual(hits[0]["polarity"], pol)
            self.assertGreater(abs(hits[0]["score"]), 0.9)
            self.assertLessEqual(abs(hits[0]["score"]), 1.0)
            self.assertEqual(hits[0]["recording"], self.rec)
        # An airing cut by the end of the file, if reported, is reported at
        # the time of its first sample (not of the cut).
        self.assertEqual(len(self.cut_by_end), 1)
        for m in matches:
            if any(m["template"] == s and abs(m["offset_s"] - o) < 1.0 for s, o in self.cut_by_end):
                self.assertTrue(any(abs(m["offset_s"] - o) < 0.5e-3 for s, o in self.cut_by_end), m)
        # Anything else is a sibling version found at the same airing.
        for m in matches:
            if any(m["template"] == s and abs(m["offset_s"] - o) < 0.5e-3 for s, o, _ in self.in_first):
                continue
            if any(m["template"] == s and abs(m["offset_s"] - o) < 0.5e-3 for s, o in self.cut_by_end):
                continue
            self.assertTrue(m["template"].startswith("tidewater-tyres"), m)
            self.assertTrue(any(s.startswith("tidewater-tyres") and abs(m["offset_s"] - o) < 0.01
                                for s, o, _ in self.in_first), m)

    def test_csv_parses_to_the_same_rows_as_json(self):
        doc = json.loads(self.locate().stdout)
        rows = list(csv.DictReader(io.StringIO(self.locate("--format", "csv").stdout)))
        # Something to compare: no rows and no matches would agree as well.
        self.assertGreaterEqual(len(doc["matches"]), len(self.in_first))
        self.assertEqual(len(rows), len(doc["matches"]))
        for r, m in zip(rows, doc["matches"]):
            self.assertEqual(r["template"], m["template"])
            self.assertEqual(r["recording"], m["recording"])
            self.assertAlmostEqual(float(r["offset_s"]), m["offset_s"], places=6)
            self.assertEqual(int(r["polarity"]), m["polarity"])

    def test_out_file_and_thread_independence(self):
        out1 = os.path.join(self.tmp.name, "one.json")
        out2 = os.path.join(self.tmp.name, "two.json")
        self.locate("--threads", "1", "--out", out1)
        self.locate("--threads", "2", "--out", out2)
        with open(out1) as a, open(out2) as b:
            one, two = json.load(a)["matches"], json.load(b)["matches"]
        # Something to compare: two empty lists would agree as well.
        self.assertGreaterEqual(len(one), len(self.in_first))
        self.assertEqual(one, two)

    def test_bad_recording_among_good_ones_exits_4_with_the_error_in_the_output(self):
        bad = os.path.join(self.tmp.name, "notes.flac")
        with open(bad, "w") as f:
            f.write("not audio\n")
        p = run("locate", "--library", self.lib, "--recording", self.rec, bad, *self.common, check=4)
        doc = json.loads(p.stdout)
        self.assertGreaterEqual(len(doc["matches"]), len(self.in_first))
        self.assertIn(doc["recordings"][1]["error"]["code"], ("unsupported", "corrupt"))
        self.assertIn("notes.flac", p.stderr)

    def test_only_bad_recordings_exit_3(self):
        p = run("locate", "--library", self.lib, "--recording", "/nonexistent/h06.flac", *self.common, check=3)
        self.assertIn("/nonexistent/h06.flac", p.stderr)

    def test_library_file_name_that_is_not_utf8(self):
        lib = os.path.join(os.fsencode(self.tmp.name), b"lib-latin1")
        os.makedirs(lib, exist_ok=True)
        with open(os.path.join(self.lib, "marlow-bakery.wav"), "rb") as src, \
                open(os.path.join(lib, b"marl\xf6w-bakery.wav"), "wb") as dst:
            dst.write(src.read())
        p = run("locate", "--library", os.fsdecode(lib), "--recording", self.rec, *self.common, check=0)
        doc = json.loads(p.stdout)
        self.assertEqual([t["id"] for t in doc["templates"]], ["marl\ufffdw-bakery"])
        self.assertIn(37.25, [m["offset_s"] for m in doc["matches"]])

    def test_non_finite_and_absurd_samples_read_as_silence(self):
        import numpy as np
        master, rate = read_master(os.path.join(self.lib, "marlow-bakery.wav"))
        rec = (0.02 * np.random.default_rng(6).standard_normal(rate * 60)).astype(np.float32)
        rec[20 * rate: 20 * rate + len(master)] += 0.5 * master
        for at_s, value in [(41.0, np.nan), (45.0, np.inf), (50.0, 3e38), (52.0, -np.inf)]:
            rec[int(at_s * rate)] = value
        path = os.path.join(self.tmp.name, "bad-samples.wav")
        write_wav(path, rec, rate, float32=True)
        p = run("locate", "--library", self.lib, "--recording", path, *self.common, check=0)
        doc = json.loads(p.stdout)
        for m in doc["matches"]:
            self.assertIsInstance(m["score"], float, m)
        self.assertEqual([(m["template"], round(m["offset_s"], 3)) for m in doc["matches"]], [("marlow-bakery", 20.0)])
        self.assertIn("4 sample(s) not finite", p.stderr)

    def test_absurd_sample_rates_and_channel_counts_are_unsupported(self):
        import numpy as np
        for name, rate, channels in [("one-hz.wav", 1, 1), ("forty-ch.wav", 44100, 40), ("too-fast.wav", 768000, 1)]:
            path = os.path.join(self.tmp.name, name)
            write_wav(path, np.full((200000 // channels, channels), 0.1), rate)
            p = subprocess.run([ARGS.godwit, "locate", "--library", self.lib, "--recording", path, *self.common],
                               capture_output=True, text=True, timeout=120, preexec_fn=limit_memory)
            self.assertEqual(p.returncode, 3, (name, p.stderr[-500:]))
            err = json.loads(p.stdout)["recordings"][0]["error"]
            self.assertEqual(err["code"], "unsupported", (name, err))
            self.assertIn("Hz", err["message"])

    def test_a_recording_that_breaks_part_way_exits_4(self):
        with open(self.rec, "rb") as f:
            data = f.read()
        cut = os.path.join(self.tmp.name, "cut.flac")
        with open(cut, "wb") as f:
            f.write(data[: len(data) // 2])
        doc = json.loads(run("locate", "--library", self.lib, "--recording", cut, *self.common, check=4).stdout)
        self.assertFalse(doc["complete"])
        self.assertEqual(doc["recordings"][0]["error"]["code"], "corrupt")
        self.assertGreater(doc["recordings"][0]["error"]["offset_s"], 60)

    def test_a_wav_cut_short_of_its_header_is_reported(self):
        import numpy as np
        master, rate = read_master(os.path.join(self.lib, "marlow-bakery.wav"))
        rec = (0.02 * np.random.default_rng(12).standard_normal(rate * 60)).astype(np.float32)
        rec[10 * rate: 10 * rate + len(master)] += 0.5 * master
        path = os.path.join(self.tmp.name, "short.wav")
        write_wav(path, rec, rate)
        os.truncate(path, os.path.getsize(path) * 6 // 10)  # the header still states 60 s
        doc = json.loads(run("locate", "--library", self.lib, "--recording", path, *self.common, check=4).stdout)
        self.assertFalse(doc["complete"])
        err = doc["recordings"][0]["error"]
        self.assertEqual(err["code"], "corrupt")
        self.assertIn("stated length", err["message"])
        self.assertAlmostEqual(err["offset_s"], 36.0, delta=0.1)
        self.assertEqual([(m["template"], round(m["offset_s"], 3)) for m in doc["matches"]], [("marlow-bakery", 10.0)])

    def test_random_bytes_are_not_a_readable_audio_file(self):
        path = os.path.join(self.tmp.name, "noise.wav")
        with open(path, "wb") as f:
            f.write(b"\xff\xfb" + random.Random(2).randbytes(20000))  # an MPEG frame sync, then nothing
        doc = json.loads(run("locate", "--library", self.lib, "--recording", path, *self.common, check=3).stdout)
        msg = doc["recordings"][0]["error"]["message"]
        self.assertIn("not a readable audio file", msg)
        self.assertNotIn("pipe", msg)

    def test_usage_errors_exit_2(self):
        run("locate", "--recording", self.rec, *self.common, check=2)  # no templates
        run("locate", "--library", self.lib, *self.common, check=2)  # no recordings
        run("locate", "--library", self.lib, "--recording", self.rec, "--threshold", "7", check=2)
        run("locate", "--library", self.lib, "--recording", self.rec, "--format", "xml", check=2)
        run("frobnicate", check=2)

    def test_search_flags_are_checked_as_a_daemon_job_is(self):
        # The flags land in the daemon's job fields (server/common/job_spec.h)
        # and are checked by its one check: its ranges (PROTOCOL.md: speed and
        # tempo 0..10, fft_size a power of two up to 2^24) and its message,
        # as a usage error here.
        p = self.locate("--fft-size", "1000", check=2)
        self.assertIn("'fft_size' must be a power of two", p.stderr)
        self.locate("--fft-size", str(1 << 25), check=2)
        self.locate("--max-speed-change", "10.5", check=2)
        self.locate("--max-tempo-change", "-1", check=2)
        self.locate("--threshold", "0.04", check=2)
        # 0 is in the daemon's range: the speed search off, as --no-speed-search.
        off = json.loads(self.locate("--max-speed-change", "0", "-q").stdout)
        none = json.loads(self.locate("--no-speed-search", "-q").stdout)
        self.assertEqual(off["matches"], none["matches"])
        self.assertTrue(off["matches"])

    def test_unwritable_output_exits_5_and_leaves_no_file(self):
        target = os.path.join(self.tmp.name, "no-such-dir", "out.json")
        p = self.locate("--out", target, check=5)
        self.assertIn("out.json", p.stderr)
        self.assertFalse(os.path.exists(target))

    def test_help_explains_every_option(self):
        p = run("locate", "--help", check=0)
        for opt in ["--template", "--library", "--recording", "--threshold", "--floor-k", "--rate", "--channel",
                    "--format", "--out", "--progress", "--threads", "--fft-size", "--planner", "--memory-mb",
                    "--cache-dir", "--no-refine", "Exit codes"]:
            self.assertIn(opt, p.stdout)

    def test_progress_goes_to_stderr_only(self):
        p = self.locate("--progress")
        self.assertIn("100%", p.stderr)
        json.loads(p.stdout)


class DemoReconcile(unittest.TestCase):
    """The demo morning end to end: every verdict, evidence against the synthesized truth."""

    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        cls.demo = os.path.join(cls.tmp.name, "demo")
        subprocess.run([ARGS.synth, "demo", "--out", cls.demo], check=True, capture_output=True)
        with open(os.path.join(cls.demo, "truth.json")) as f:
            cls.truth = json.load(f)
        cls.out = os.path.join(cls.tmp.name, "report")
        cls.proc = run("reconcile", "--library", os.path.join(cls.demo, "library"),
                       "--schedule", os.path.join(cls.demo, "schedules", "kestrel-fm-2026-03-14.csv"),
                       "--recording", *cls.truth["recordings"], "--out", cls.out,
                       "--planner", "estimate", "--cache-dir", "", check=0)
        with open(os.path.join(cls.out, "reconcile.json")) as f:
            cls.doc = json.load(f)

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def test_every_verdict_is_the_expected_one(self):
        got = {p["slot"]: p["status"] for p in self.doc["placements"]}
        self.assertEqual(got, self.truth["expected_verdicts"])
        self.assertEqual([u["spot"] for u in self.doc["unscheduled"]], self.truth["expected_unscheduled"])
        self.assertEqual([p["line"] for p in self.doc["log_problems"]], self.truth["expected_bad_log_lines"])
        self.assertEqual(self.doc["families"], [["tidewater-tyres-spring", "tidewater-tyres-summer"]])

    def test_evidence_matches_the_truth(self):
        truth = self.truth["airings"]
        found = [p for p in self.doc["placements"] if "aired" in p] + self.doc["unscheduled"]
        self.assertEqual(len(found), len(truth))
        for p in found:
            t = min(truth, key=lambda a: abs(seconds_after_six(a["aired"]) - seconds_after_six(p["aired"])))
            self.assertLess(abs(seconds_after_six(t["aired"]) - seconds_after_six(p["aired"])), 1e-3)  # 1 ms
            self.assertLess(abs(t["coverage"] - p["coverage"]), 0.05)
            self.assertEqual(t["polarity"], p["polarity"])
        s002 = next(p for p in self.doc["placements"] if p["slot"] == "S002")
        self.assertEqual(s002["detected_spot"], "tidewater-tyres-summer")
        scores = {v["spot"]: v["score"] for v in s002["versions"]}
        self.assertGreater(scores["tidewater-tyres-summer"], scores["tidewater-tyres-spring"] + 0.3)
        s007 = next(p for p in self.doc["placements"] if p["slot"] == "S007")
        self.assertEqual(s007["missing"], [[15.0, 30.0]])
        s004 = next(p for p in self.doc["placements"] if p["slot"] == "S004")
        self.assertTrue(s004["recording"].endswith("T060000.flac"))  # starts in the first file, ends in the next
        self.assertAlmostEqual(s004["offset_s"], 292.0, places=3)

    def test_excerpts_beside_the_report_named_by_the_json(self):
        listen = os.path.join(self.out, "listen")
        found = [p for p in self.doc["placements"] if "aired" in p] + self.doc["unscheduled"]
        self.assertEqual(len(found), len(self.truth["airings"]))  # else an empty report would pass
        named = set()
        for p in found:
            e = p["excerpt"]
            self.assertTrue(e["file"].startswith("listen/"), e)
            self.assertRegex(os.path.basename(e["file"]), r"^[A-Za-z0-9._-]+\.opus$")
            with open(os.path.join(self.out, e["file"]), "rb") as f:
                data = f.read()
            self.assertEqual(len(data), e["bytes"])
            # RFC 7845 (Ogg Opus) on RFC 3533 pages: the first page holds
            # OpusHead with its pre-skip; the last page's granule position less
            # the pre-skip is the length in 48 kHz samples.
            self.assertEqual(data[:4], b"OggS")
            head = data.index(b"OpusHead")
            pre_skip = struct.unpack_from("<H", data, head + 10)[0]
            last = data.rindex(b"OggS")
            granule = struct.unpack_from("<q", data, last + 6)[0]
            self.assertAlmostEqual((granule - pre_skip) / 48000, e["duration_s"], delta=0.002)
            self.assertAlmostEqual(e["from_s"], -2.0, places=3)
            named.add(e["file"])
            named.add(p["master_excerpt"])
        self.assertEqual({"listen/" + f for f in os.listdir(listen)}, named)
        self.assertIn("excerpts", self.proc.stderr)

    def test_no_excerpts_writes_none(self):
        out = os.path.join(self.tmp.name, "no-excerpts")
        run("reconcile", "--library", os.path.join(self.demo, "library"),
            "--schedule", os.path.join(self.demo, "schedules", "kestrel-fm-2026-03-14.csv"),
            "--recording", *self.truth["recordings"], "--out", out, "--no-excerpts", "-q",
            "--planner", "estimate", "--cache-dir", "", check=0)
        self.assertEqual(sorted(os.listdir(out)), ["reconcile.csv", "reconcile.html", "reconcile.json"])
        with open(os.path.join(out, "reconcile.json")) as f:
            doc = json.load(f)
        self.assertEqual([p["status"] for p in doc["placements"]], [p["status"] for p in self.doc["placements"]])
        self.assertFalse(any("excerpt" in p for p in doc["placements"] + doc["unscheduled"]))
        with open(os.path.join(out, "reconcile.html")) as f:
            self.assertNotIn("<audio", f.read())

    def test_csv_rows_equal_the_json(self):
        with open(os.path.join(self.out, "reconcile.csv"), newline="") as f:
            rows = list(csv.DictReader(f))
        self.assertEqual(len(rows), len(self.doc["placements"]) + len(self.doc["unscheduled"]))
        for r, p in zip(rows, self.doc["placements"]):
            self.assertEqual((r["slot"], r["spot"], r["status"]), (p["slot"], p["spot"], p["status"]))
            if "aired" in p:
                self.assertEqual(r["aired"], p["aired"])
                self.assertAlmostEqual(float(r["deviation_s"]), p["deviation_s"], places=3)
                self.assertEqual(r["detected_spot"], p["detected_spot"])
        self.assertEqual(rows[-1]["status"], "unscheduled")

    def test_printed_table_and_caution(self):
        self.assertIn("wrong_version", self.proc.stdout)
        # A totals line that agrees with the JSON summary; no negative zero.
        total = [l for l in self.proc.stdout.splitlines() if l.startswith("total:")]
        self.assertEqual(len(total), 1)
        s = self.doc["summary"]
        self.assertIn(f"{len(self.doc['placements'])} placements", total[0])
        for status in ("aired", "wrong_version", "partial", "missing", "late", "early"):
            if s[status]:
                self.assertIn(f"{s[status]} {status}", total[0])
        self.assertIn(f"{s['unscheduled']} unscheduled", total[0])
        self.assertNotIn("-0.000", self.proc.stdout)
        self.assertIn("evidence to verify by listening", self.proc.stderr)
        self.assertIn("indicative", self.proc.stderr)
        self.assertTrue(any("indicative" in c for c in self.doc["cautions"]))

    def test_loudness_of_each_airing_and_its_programme(self):
        # The demo's spots are mastered at the same RMS as its programme: their
        # BS.1770 loudness lies within a few LU of it, and a recorded airing reads
        # a plausible broadcast level (common practice: -30..-10 LUFS).
        aired = [p for p in self.doc["placements"] if "aired" in p]
        self.assertGreaterEqual(len(aired), 7)  # else an empty report would pass
        for p in aired:
            l = p["loudness"]
            self.assertTrue(-30 < l["spot_lufs"] < -10, p)
            self.assertTrue(-30 < l["programme_lufs"] < -10, p)
            self.assertAlmostEqual(l["spot_vs_programme_lu"], l["spot_lufs"] - l["programme_lufs"], delta=0.11)
            self.assertEqual(l["louder_than_programme"], l["spot_vs_programme_lu"] > l["margin_lu"])
            self.assertEqual(l["target_lufs"], -23.0)
        self.assertIn("line", json.dumps(self.doc["log_problems"]))

    def test_loudness_margin_and_target_are_configurable(self):
        out = os.path.join(self.tmp.name, "loud")
        run("reconcile", "--library", os.path.join(self.demo, "library"),
            "--schedule", os.path.join(self.demo, "schedules", "kestrel-fm-2026-03-14.csv"),
            "--recording", *self.truth["recordings"], "--out", out, "--format", "json",
            "--loudness-margin-lu", "10", "--loudness-target-lufs", "-24", "--planner", "estimate", "--cache-dir", "",
            check=0)
        doc = json.load(open(os.path.join(out, "reconcile.json")))
        aired = [p for p in doc["placements"] if "aired" in p]
        self.assertTrue(aired)
        for p in aired:
            self.assertEqual(p["loudness"]["target_lufs"], -24.0)
            self.assertFalse(p["loudness"]["louder_than_programme"])  # no demo spot is 10 LU louder
        self.assertFalse(os.path.exists(os.path.join(out, "reconcile.csv")))

    def reconcile_log(self, schedule, out, *extra, check=0):
        return run("reconcile", "--library", os.path.join(self.demo, "library"), "--schedule", schedule,
                   "--recording", *self.truth["recordings"], "--out", out, "--format", "json",
                   "--planner", "estimate", "--cache-dir", "", *extra, check=check)

    def test_semicolon_log_in_utc_with_the_station_zone_gives_the_plain_logs_verdicts(self):
        # The demo's log as a traffic system in another locale writes it: semicolons, its own column names in
        # another case, a space for the T, times in UTC (Z, +00:00, -0500) converted from the station's local
        # times by Python's zoneinfo (the IANA tz database, Debian's tzdata) -- the outside reference for what
        # godwit must convert back through ICU. Kestrel FM's zone here: Europe/Berlin (+01:00 in March 2026).
        import zoneinfo
        berlin = zoneinfo.ZoneInfo("Europe/Berlin")
        with open(os.path.join(self.demo, "schedules", "kestrel-fm-2026-03-14.csv"), newline="") as f:
            rows = list(csv.DictReader(f))
        lines = [" Slot ID ;SPOT;Air Time;Tolerance_S"]
        for i, r in enumerate(rows):
            try:
                local = datetime.datetime.fromisoformat(r["planned"]).replace(tzinfo=berlin)
            except ValueError:  # the demo's deliberately bad row (T25:00:00) stays bad
                lines.append(f"{r['slot']};{r['spot']};{r['planned']}Z;{r['window_s']}")
                continue
            u = local.astimezone(datetime.timezone.utc)
            planned = [u.strftime("%Y-%m-%d %H:%M:%SZ"), u.strftime("%Y-%m-%dT%H:%M:%S+00:00"),
                       (u - datetime.timedelta(hours=5)).strftime("%Y-%m-%d %H:%M:%S-0500")][i % 3]
            lines.append(f"{r['slot']};\"{r['spot']}\";{planned};{r['window_s']}")
        log = os.path.join(self.tmp.name, "kestrel-fm-2026-03-14-utc.csv")
        with open(log, "w", newline="") as f:
            f.write("\r\n".join(lines) + "\r\n")
        out = os.path.join(self.tmp.name, "utc")
        self.reconcile_log(log, out, "--time-zone", "Europe/Berlin", check=0)
        with open(os.path.join(out, "reconcile.json")) as f:
            doc = json.load(f)
        self.assertEqual({p["slot"]: p["status"] for p in doc["placements"]}, self.truth["expected_verdicts"])
        self.assertEqual([(p["slot"], p["planned"], p["status"], p.get("aired")) for p in doc["placements"]],
                         [(p["slot"], p["planned"], p["status"], p.get("aired")) for p in self.doc["placements"]])
        self.assertEqual(doc["unscheduled"], self.doc["unscheduled"])
        self.assertEqual([p["line"] for p in doc["log_problems"]], self.truth["expected_bad_log_lines"])

    def test_a_log_with_no_valid_row_exits_8_and_says_why_for_each_row(self):
        log = os.path.join(self.tmp.name, "all-utc.csv")
        with open(log, "w") as f:
            f.write("slot;spot;planned\nS001;marlow-bakery;2026-03-14T05:00:30Z\nS002;marlow-bakery;2026-02-30 06:00\n")
        out = os.path.join(self.tmp.name, "none")
        p = self.reconcile_log(log, out, check=8)
        self.assertIn("all-utc.csv:2: planned time '2026-03-14T05:00:30Z' has a UTC offset; set --time-zone to the "
                      "station's zone", p.stderr)
        self.assertIn("all-utc.csv:3: planned time '2026-02-30 06:00' has an invalid calendar date (February has 28 "
                      "days in 2026)", p.stderr)
        self.assertIn("no valid row", p.stderr)
        self.assertFalse(os.path.exists(os.path.join(out, "reconcile.json")))
        # An unknown zone is a usage error of the whole run.
        p = self.reconcile_log(log, out, "--time-zone", "Europe/Atlantis", check=2)
        self.assertIn("unknown time zone 'Europe/Atlantis'", p.stderr)
        helptext = run("reconcile", "--help", check=0).stdout
        self.assertIn("--time-zone", helptext)
        self.assertIn("8 the planned log has no valid row", helptext)

    def test_bad_planned_log_header_is_a_usage_error(self):
        bad = os.path.join(self.tmp.name, "bad.csv")
        with open(bad, "w") as f:
            f.write("slot,when\nS1,2026-03-14T06:00:00\n")
        p = run("reconcile", "--library", os.path.join(self.demo, "library"), "--schedule", bad,
                "--recording", *self.truth["recordings"], "--out", os.path.join(self.tmp.name, "x"),
                "--planner", "estimate", "--cache-dir", "", check=2)
        self.assertIn("spot", p.stderr)

    def reconcile_with(self, name, log_text, recordings, exit_code):
        log = os.path.join(self.tmp.name, name + ".csv")
        with open(log, "w") as f:
            f.write(log_text)
        out = os.path.join(self.tmp.name, name)
        p = run("reconcile", "--library", os.path.join(self.demo, "library"), "--schedule", log,
                "--recording", *recordings, "--out", out, "--format", "json", "--planner", "estimate",
                "--cache-dir", "", check=exit_code)
        with open(os.path.join(out, "reconcile.json")) as f:
            return p, json.load(f)

    def demo_log(self):
        with open(os.path.join(self.demo, "schedules", "kestrel-fm-2026-03-14.csv")) as f:
            return f.read()

    def test_placements_outside_the_recorded_time_are_not_recorded_never_missing(self):
        # Only the first file (06:00-06:05): S005 (06:06), S006 (06:07), S007
        # (06:08) and S009 (06:12) fall where nothing was recorded.
        p, doc = self.reconcile_with("first-file", self.demo_log(), self.truth["recordings"][:1], 0)
        got = {x["slot"]: x for x in doc["placements"]}
        for slot in ("S005", "S006", "S007", "S009"):
            self.assertEqual(got[slot]["status"], "not_recorded", slot)
            self.assertTrue(got[slot]["unrecorded"], slot)
        self.assertEqual(got["S001"]["status"], "aired")
        self.assertNotIn("missing", [x["status"] for x in doc["placements"]])
        self.assertEqual(doc["summary"]["not_recorded"], 4)
        self.assertIn("not recorded", p.stdout)

    def test_a_log_of_another_day_warns_and_exits_9(self):
        shifted = self.demo_log().replace("2026-03-14T", "2026-03-15T")
        p, doc = self.reconcile_with("next-day", shifted, self.truth["recordings"], 9)
        self.assertEqual({x["status"] for x in doc["placements"]}, {"not_recorded"})
        self.assertIn("dates", p.stderr)
        self.assertEqual(len(doc["unscheduled"]), len(self.truth["airings"]))

    def test_unknown_spot_ids_are_their_own_verdict_with_a_suggestion(self):
        log = self.demo_log() + "S010,Marlow-Bakery,2026-03-14T06:13:00,60\nS011,no-such-advertiser,2026-03-14T06:13:00,60\n"
        p, doc = self.reconcile_with("unknown", log, self.truth["recordings"], 0)
        got = {x["slot"]: x for x in doc["placements"]}
        self.assertEqual(got["S010"]["status"], "unknown_spot")
        self.assertEqual(got["S010"]["did_you_mean"], "marlow-bakery")
        self.assertEqual(got["S011"]["status"], "unknown_spot")
        self.assertNotIn("did_you_mean", got["S011"])
        self.assertIn("'Marlow-Bakery' is not in the library; did you mean 'marlow-bakery'", p.stderr)
        self.assertIn("no-such-advertiser", p.stderr)
        # The other verdicts are unchanged.
        self.assertEqual({k: v["status"] for k, v in got.items() if k in self.truth["expected_verdicts"]},
                         self.truth["expected_verdicts"])


if __name__ == "__main__":
    parser = argparse.ArgumentParser()
    parser.add_argument("--godwit", required=True)
    parser.add_argument("--synth", required=True)
    ARGS, rest = parser.parse_known_args()
    unittest.main(argv=[sys.argv[0], "-v", *rest])
