#!/usr/bin/python3
"""The HTML report in headless Chromium (Debian's chromium package).

Run by CTest: report_test.py --godwit PATH --synth PATH --artifacts DIR

- The demo's report: every placement row with its verdict, the SVG timeline
  with one slot per placement, the summary counts and both cautions, as
  Chromium's DOM after loading the page (--dump-dom), against the JSON.
- A long day (24 h, 300 placements): renders (load to DOM) in under 2 s
  beyond Chromium's own start, measured against a blank page in the same run.
- Screenshots of both are kept in DIR as test artifacts.
"""
import argparse
import html.parser
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
import unittest

ARGS = None
CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync"]


def chromium(*args, profile):
    exe = shutil.which("chromium") or shutil.which("chromium-browser")
    if not exe:
        raise AssertionError("chromium is not installed (scripts/install-deps.sh installs it)")
    return subprocess.run([exe, *CHROMIUM_FLAGS, f"--user-data-dir={profile}", *args], capture_output=True,
                          text=True, timeout=120)


class DomSummary(html.parser.HTMLParser):
    """Collects what the checks need from the rendered DOM."""

    def __init__(self):
        super().__init__()
        self.rows = []        # (slot, status) of tr.placement
        self.slots = 0        # g.slot in the timeline
        self.detections = 0
        self.counts = {}
        self.ids = set()
        self._count_status = None
        self._in_cautions = False
        self.cautions = ""

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if "id" in a:
            self.ids.add(a["id"])
        cls = a.get("class", "")
        if tag == "tr" and cls == "placement":
            self.rows.append((a.get("data-slot"), a.get("data-status")))
        if tag == "g" and cls == "slot":
            self.slots += 1
        if tag == "rect" and cls == "detection":
            self.detections += 1
        if tag == "span" and cls == "count":
            self._count_status = a.get("data-status")
        if tag == "div" and a.get("id") == "cautions":
            self._in_cautions = True

    def handle_endtag(self, tag):
        if tag == "div":
            self._in_cautions = False

    def handle_data(self, data):
        if self._in_cautions:
            self.cautions += data
        if self._count_status and data.strip().isdigit():
            self.counts[self._count_status] = int(data.strip())
            self._count_status = None


class ReportInChromium(unittest.TestCase):
    @classmethod
    def setUpClass(cls):
        cls.tmp = tempfile.mkdtemp(prefix="godwit-report-")
        cls.profile = os.path.join(cls.tmp, "profile")
        demo = os.path.join(cls.tmp, "demo")
        subprocess.run([ARGS.synth, "demo", "--out", demo], check=True, capture_output=True)
        truth = json.load(open(os.path.join(demo, "truth.json")))
        cls.out = os.path.join(cls.tmp, "report")
        subprocess.run([ARGS.godwit, "reconcile", "--library", f"{demo}/library", "--schedule",
                        f"{demo}/schedules/kestrel-fm-2026-03-14.csv", "--recording", *truth["recordings"],
                        "--out", cls.out, "--planner", "estimate", "--cache-dir", "", "-q"],
                       check=True, capture_output=True)
        cls.doc = json.load(open(os.path.join(cls.out, "reconcile.json")))
        os.makedirs(ARGS.artifacts, exist_ok=True)

    @classmethod
    def tearDownClass(cls):
        shutil.rmtree(cls.tmp, ignore_errors=True)

    def dom(self, path):
        p = chromium("--dump-dom", "file://" + path, profile=self.profile)
        self.assertEqual(p.returncode, 0, p.stderr[-2000:])
        d = DomSummary()
        d.feed(p.stdout)
        return d

    def test_demo_report_has_every_placement_the_timeline_and_the_cautions(self):
        page = os.path.join(self.out, "reconcile.html")
        d = self.dom(page)
        self.assertEqual(d.rows, [(p["slot"], p["status"]) for p in self.doc["placements"]])
        self.assertEqual(d.slots, len(self.doc["placements"]))
        self.assertEqual(d.detections, sum(1 for p in self.doc["placements"] if "aired" in p) + len(self.doc["unscheduled"]))
        for status, n in self.doc["summary"].items():
            self.assertEqual(d.counts.get(status), n, status)
        self.assertTrue({"cautions", "summary", "timeline", "placements", "unscheduled"} <= d.ids)
        self.assertIn("evidence to verify by listening", d.cautions)
        self.assertIn("indicative", d.cautions)
        shot = os.path.join(ARGS.artifacts, "report-demo.png")
        p = chromium("--window-size=1400,1300", f"--screenshot={shot}", "file://" + page, profile=self.profile)
        self.assertEqual(p.returncode, 0)
        self.assertGreater(os.path.getsize(shot), 20000)

    def test_long_day_renders_in_under_two_seconds(self):
        page = os.path.join(self.tmp, "long.html")
        subprocess.run([ARGS.synth, "report-fixture", "--placements", "300", "--out", page], check=True)
        blank = os.path.join(self.tmp, "blank.html")
        open(blank, "w").write("<!doctype html><title>blank</title><p>blank</p>")
        self.dom(blank)  # warm the profile
        def timed(path):
            t0 = time.perf_counter()
            d = self.dom(path)
            return time.perf_counter() - t0, d
        t_blank = min(timed(blank)[0] for _ in range(2))
        t_long, d = min((timed(page) for _ in range(2)), key=lambda x: x[0])
        print(f"\n  chromium load-to-DOM: blank page {t_blank:.2f} s, 24 h / 300 placements {t_long:.2f} s "
              f"(report cost {t_long - t_blank:.2f} s, limit 2 s)", file=sys.stderr)
        self.assertEqual(len(d.rows), 300)
        self.assertEqual(d.slots, 300)
        self.assertLess(t_long - t_blank, 2.0)
        shot = os.path.join(ARGS.artifacts, "report-long-day.png")
        p = chromium("--window-size=1400,1300", f"--screenshot={shot}", "file://" + page, profile=self.profile)
        self.assertEqual(p.returncode, 0)


if __name__ == "__main__":
    parser = argparse.ArgumentParser()
    parser.add_argument("--godwit", required=True)
    parser.add_argument("--synth", required=True)
    parser.add_argument("--artifacts", required=True)
    ARGS, rest = parser.parse_known_args()
    unittest.main(argv=[sys.argv[0], "-v", *rest])
