#!/usr/bin/python3
"""End-to-end tests of the `godwit` command line on the generated demo.

Run by CTest: cli_test.py --godwit PATH --synth PATH
"""
import argparse
import csv
import io
import json
import os
import subprocess
import sys
import tempfile
import unittest

ARGS = None


def run(*args, check=None):
    p = subprocess.run([ARGS.godwit, *args], capture_output=True, text=True, timeout=300)
    if check is not None and p.returncode != check:
        raise AssertionError(f"exit {p.returncode}, expected {check}\nstdout: {p.stdout}\nstderr: {p.stderr}")
    return p


class DemoLocate(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.TemporaryDirectory()
        cls.demo = os.path.join(cls.tmp.name, "demo")
        subprocess.run([ARGS.synth, "demo", "--out", cls.demo], check=True, capture_output=True)
        with open(os.path.join(cls.demo, "truth.json")) as f:
            cls.truth = json.load(f)
        cls.rec = cls.truth["recording"]
        cls.lib = os.path.join(cls.demo, "library")
        cls.common = ["--planner", "estimate", "--cache-dir", ""]

    @classmethod
    def tearDownClass(cls):
        cls.tmp.cleanup()

    def locate(self, *extra, check=0):
        return run("locate", "--library", self.lib, "--recording", self.rec, *self.common, *extra, check=check)

    def test_every_planted_spot_found_to_half_a_millisecond(self):
        doc = json.loads(self.locate().stdout)
        self.assertEqual(doc["analysis_rate_hz"], 8000)
        self.assertEqual(doc["recordings"][0]["path"], self.rec)
        self.assertAlmostEqual(doc["recordings"][0]["duration_s"], 300.0, places=3)
        self.assertEqual(doc["recordings"][0]["native_rate_hz"], 44100)
        matches = doc["matches"]
        self.assertEqual(len(matches), len(self.truth["plants"]))
        for want, got in zip(sorted(self.truth["plants"], key=lambda p: p["offset_s"]), matches):
            self.assertEqual(got["template"], want["template"])
            self.assertEqual(got["polarity"], want["polarity"])
            self.assertLess(abs(got["offset_s"] - want["offset_s"]), 0.5e-3)
            self.assertGreater(abs(got["score"]), 0.9)
            self.assertLessEqual(abs(got["score"]), 1.0)
            self.assertEqual(got["recording"], self.rec)

    def test_csv_parses_to_the_same_rows_as_json(self):
        doc = json.loads(self.locate().stdout)
        rows = list(csv.DictReader(io.StringIO(self.locate("--format", "csv").stdout)))
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
            self.assertEqual(json.load(a)["matches"], json.load(b)["matches"])

    def test_bad_recording_among_good_ones_exits_4_with_the_error_in_the_output(self):
        bad = os.path.join(self.tmp.name, "notes.flac")
        with open(bad, "w") as f:
            f.write("not audio\n")
        p = run("locate", "--library", self.lib, "--recording", self.rec, bad, *self.common, check=4)
        doc = json.loads(p.stdout)
        self.assertEqual(len(doc["matches"]), len(self.truth["plants"]))
        self.assertIn(doc["recordings"][1]["error"]["code"], ("unsupported", "corrupt"))
        self.assertIn("notes.flac", p.stderr)

    def test_only_bad_recordings_exit_3(self):
        p = run("locate", "--library", self.lib, "--recording", "/nonexistent/h06.flac", *self.common, check=3)
        self.assertIn("/nonexistent/h06.flac", p.stderr)

    def test_usage_errors_exit_2(self):
        run("locate", "--recording", self.rec, *self.common, check=2)  # no templates
        run("locate", "--library", self.lib, *self.common, check=2)  # no recordings
        run("locate", "--library", self.lib, "--recording", self.rec, "--threshold", "7", check=2)
        run("locate", "--library", self.lib, "--recording", self.rec, "--format", "xml", check=2)
        run("frobnicate", check=2)

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


if __name__ == "__main__":
    parser = argparse.ArgumentParser()
    parser.add_argument("--godwit", required=True)
    parser.add_argument("--synth", required=True)
    ARGS, rest = parser.parse_known_args()
    unittest.main(argv=[sys.argv[0], "-v", *rest])
