#!/usr/bin/python3
# Over 400 lines: the kill phases, the ledger of what each restart must keep, and the full-disk cases share one harness.
"""godwitd under SIGKILL and a full disk: a bounded torture test.

Run by CTest: torture_test.py --godwit PATH --godwitd PATH --synth PATH [--kills 100] [--seed 1]

Builds on daemon_test.py (its Client and wait_state; its single kill and
full-disk tests stay there as the quick cases).

Kills (TortureTests.test_random_kills): `--kills` SIGKILLs of a real godwitd
on one state folder, each in a phase picked at random:
  startup  at a random moment of the start (journal replay, its compaction,
           temporaries and orphan inline spots removed), before or after the
           daemon says it listens;
  submit   a random 0-20 ms after a submit was sent, acknowledged or not;
  queued   with jobs queued behind a running one;
  running  at a random moment of a running job;
  result   as soon as a result's temporary file appears (mid-write).
After every restart: each acknowledged job is known (nothing lost), every
job has one submit line and at most one end line in the journal and is
listed once (nothing duplicated), every finished result is the command
line's document for the same job (each value equal; inline spots differ
only in where the daemon saved them) and byte-identical to every other
result of the same job, no temporary file of an earlier process is left in
the state folder, and every inline spot folder belongs to a journaled job.
At the end every acknowledged job is done.

Full disk (TortureTests.test_full_disk_*): the state folder on a 4 MiB tmpfs
(skipped where mounting is not permitted) filled while the journal, a
result, an inline spot, the journal's compaction at start and the FFT cost
cache at exit are written: the write fails cleanly, nothing acknowledged is
lost, no temporary file stays, and once space is back everything carries on.
"""
import argparse
import base64
import json
import os
import random
import re
import select
import shutil
import signal
import subprocess
import sys
import tempfile
import threading
import time
import unittest
import warnings

sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import daemon_test  # noqa: E402 - Client and wait_state, and its globals
from daemon_test import Client, wait_state  # noqa: E402

ARGS = None
DEMO = None
SHORT = []      # short recordings cut from the demo's airchecks (fast jobs)
KINDS = {}      # job kind -> (job object, CLI reference document)

TEMP_NAME = re.compile(r"^\..+\.tmp\.(\d+)$")  # atomic_file.cc: .NAME.tmp.PID


def spawn(config):
    with open(config + ".log", "a") as log:  # the daemon's log, kept beside its config
        return subprocess.Popen([ARGS.godwitd, "--config", config], stdout=subprocess.PIPE, stderr=log, text=True)


def listening_port(proc, timeout=30):
    """The port from the daemon's first line, or None if it ends first."""
    ready, _, _ = select.select([proc.stdout], [], [], timeout)
    if not ready:
        raise AssertionError("godwitd did not say it listens within %d s" % timeout)
    line = proc.stdout.readline()
    return json.loads(line)["port"] if line else None


def kill(proc):
    if proc.poll() is None:
        proc.send_signal(signal.SIGKILL)
    proc.wait(timeout=30)


def journal_events(state):
    """Journal lines as JobStore reads them (a line glued to a torn one counts)."""
    out = []
    try:
        with open(os.path.join(state, "journal.jsonl"), "rb") as f:
            text = f.read().decode("utf-8", "replace")
    except FileNotFoundError:
        return out
    for line in text.split("\n"):
        at = 0
        while at != -1:
            try:
                out.append(json.loads(line[at:]))
                break
            except ValueError:
                at = line.find('{"e', at + 1)
    return out


def temporaries(state, except_pid=None):
    found = []
    for d, _, files in os.walk(state):
        for n in files:
            m = TEMP_NAME.match(n)
            if m and int(m.group(1)) != except_pid:
                found.append(os.path.join(d, n))
    return found


def normalized(doc, kind):
    """The CLI's and the daemon's documents differ only where an inline spot was saved, and in how the daemon ran
    the search: as tasks (`tasks`) whose searches its store of record keeps (`searches`), each piece with the FFT
    size chosen for its length (stored_tasks.h; the matches and recordings are the same)."""
    doc = json.loads(json.dumps(doc))
    doc.pop("tasks", None)
    doc.pop("searches", None)
    for t in doc.get("templates", []):
        t.pop("fft_size", None)
    if kind == "inline":
        for t in doc.get("templates", []):
            t["path"] = os.path.basename(t["path"])
    return doc


class Ledger:
    """What the test knows of every job it submitted, across kills."""

    def __init__(self, state):
        self.state = state
        self.lock = threading.Lock()  # the watcher thread checks results too
        self.errors = []     # from the watcher thread
        self.acked = {}      # job id -> kind
        self.unacked = 0     # submits killed before their answer
        self.verified = {}   # job id -> result bytes, once checked against the CLI
        self.first_bytes = {}  # kind -> result bytes of its first verified job
        self.phases = {}
        self.evidence = {"temporaries_removed_at_start": 0, "killed_mid_result_write": 0,
                         "killed_before_listening": 0, "killed_after_listening": 0}

    def check(self, test, c, pid):
        """The invariants after a restart; `c` talks to the daemon with `pid`."""
        left = temporaries(self.state, except_pid=pid)
        test.assertEqual(left, [], "temporary files of an earlier process left after the start")
        events = journal_events(self.state)
        submits, ends = {}, {}
        for e in events:
            if e.get("event") == "submit":
                submits[e["job"]] = submits.get(e["job"], 0) + 1
            elif e.get("event") in ("done", "failed", "cancelled"):
                ends[e["job"]] = ends.get(e["job"], 0) + 1
        test.assertEqual([j for j, n in submits.items() if n > 1], [], "a job journaled twice")
        test.assertEqual([j for j, n in ends.items() if n > 1], [], "a job ended twice")
        listed, cursor = [], None
        while True:
            req = {"op": "jobs", "limit": 1000}
            if cursor:
                req["cursor"] = cursor
            r = c.req(req)
            test.assertTrue(r["ok"], r)
            listed += r["jobs"]
            cursor = r.get("next")
            if not cursor:
                break
        ids = [j["job"] for j in listed]
        test.assertEqual(len(ids), len(set(ids)), "a job listed twice")
        inline = os.path.join(self.state, "inline")
        used = set()
        for e in events:
            for t in e.get("spec", {}).get("templates", []):
                used.add(os.path.basename(os.path.dirname(t)))
        if os.path.isdir(inline):
            test.assertEqual(sorted(set(os.listdir(inline)) - used), [], "inline spots of an unjournaled submit")
        with self.lock:
            for j in listed:  # a submit killed before its answer may still have been journaled: a job all the same
                if j["job"] not in self.acked:
                    self.acked[j["job"]] = kind_of(j, events)
            pending = list(self.acked.items())
        test.assertEqual(self.errors, [])
        for job, kind in pending:
            if job in self.verified:
                continue
            st = c.req({"op": "status", "job": job})
            test.assertTrue(st["ok"], f"acknowledged job {job} lost: {st}; its journal lines: "
                                      f"{[e for e in events if e.get('job') == job]}")
            test.assertNotIn(st["state"], ("failed", "cancelled"), st)
            if st["state"] == "done":
                self.verify(test, c, job, kind)

    def verify(self, test, c, job, kind):
        """Checks a done job's result; from the watcher thread too (test may be None)."""
        r = c.req({"op": "result", "job": job})
        if r is None:
            raise ConnectionError("the daemon went away")  # killed meanwhile: checked after the restart
        expect(r["ok"], f"job {job}: no result: {r}")
        expect(normalized(r["result"], kind) == normalized(KINDS[kind][1], kind),
               f"job {job} ({kind}): the result differs from the command line's")
        with open(os.path.join(self.state, "results", job + ".json"), "rb") as f:
            data = f.read()
        with self.lock:
            if kind != "inline":  # the inline spot's saved path is the job's own
                # Byte for byte but the store's counts (a later job reads back what the first searched).
                same = json.dumps(normalized(json.loads(data), kind), sort_keys=True).encode()
                expect(same == self.first_bytes.setdefault(kind, same), f"job {job}: result bytes differ")
            self.verified[job] = data

    def watch(self, port):
        """Checks each job's result as soon as it is done, before later jobs can prune it."""
        def run():
            try:
                w, c = Client(port), Client(port)
                w.req({"op": "watch"})
                while True:
                    ev = w.read()
                    if ev is None:
                        return
                    if ev.get("event") == "state" and ev.get("state") == "done":
                        job = ev["job"]
                        with self.lock:
                            kind = self.acked.get(job) or kind_of({"job": job}, journal_events(self.state))
                            self.acked.setdefault(job, kind)
                        self.verify(None, c, job, kind)
            except (OSError, ValueError, ConnectionError):
                return  # the daemon was killed
            except AssertionError as e:
                self.errors.append(str(e))
        t = threading.Thread(target=run, daemon=True)
        t.start()
        return t


def expect(condition, message):
    if not condition:
        raise AssertionError(message)


def kind_of(listed_job, events):
    for e in events:
        if e.get("event") == "submit" and e.get("job") == listed_job["job"]:
            spec = e["spec"]
            if any("/inline/" in t for t in spec.get("templates", [])):
                return "inline"
            for k, (job, _) in KINDS.items():
                if k != "inline" and spec.get("recordings") == job["recordings"]:
                    return k
    raise AssertionError(f"job {listed_job} was never journaled")


def config_text(tmp, state, max_finished_jobs=25):
    return (f'listen = "127.0.0.1:0"\nstate_dir = "{state}"\nroots = ["{DEMO}", "{tmp}"]\n'
            f'library = "{DEMO}/library"\nplanner = "estimate"\nworkers = 1\nthreads_per_job = 1\n'
            f'log_level = "warn"\n[limits]\nmax_finished_jobs = {max_finished_jobs}\n')


class TortureTests(unittest.TestCase):
    def setUp(self):
        self.tmp = tempfile.mkdtemp(prefix="godwitd-torture-")
        self.procs = []
        self.startup_s = []  # spawn to listening, of each start

    def tearDown(self):
        for p in self.procs:
            if p.poll() is None:
                kill(p)
        shutil.rmtree(self.tmp, ignore_errors=True)

    def start(self, config):
        t0 = time.time()
        p = spawn(config)
        self.procs.append(p)
        port = listening_port(p)
        self.startup_s.append(time.time() - t0)
        if port is None:
            with open(config + ".log") as f:
                self.fail("godwitd ended at start: " + f.read()[-2000:])
        return p, Client(port)

    def submit(self, c, rng):
        kind = rng.choice(sorted(KINDS))
        r = c.req({"op": "submit", "job": KINDS[kind][0]})
        self.assertTrue(r["ok"], r)
        return r["job"], kind

    def test_random_kills(self):
        state = os.path.join(self.tmp, "state")
        config = os.path.join(self.tmp, "godwitd.toml")
        with open(config, "w") as f:  # few finished jobs kept: pruned often, the journal compacted at start
            f.write(config_text(self.tmp, state, max_finished_jobs=6))
        rng = random.Random(ARGS.seed)
        ledger = Ledger(state)
        phases = ["startup", "submit", "queued", "running", "result"]
        t0 = time.time()
        for n in range(ARGS.kills):
            phase = rng.choice(phases)
            ledger.phases[phase] = ledger.phases.get(phase, 0) + 1
            if temporaries(state):
                ledger.evidence["temporaries_removed_at_start"] += len(temporaries(state))
            if phase == "startup":
                p = spawn(config)
                self.procs.append(p)
                # Within the time a start takes here (the longest seen so far).
                time.sleep(rng.uniform(0, max(self.startup_s, default=0.1)))
                listened = bool(select.select([p.stdout], [], [], 0)[0])
                kill(p)
                ledger.evidence["killed_after_listening" if listened else "killed_before_listening"] += 1
                continue
            p, c = self.start(config)
            watcher = ledger.watch(c.sock.getpeername()[1])
            ledger.check(self, c, p.pid)
            if phase == "submit":
                kind = rng.choice(sorted(KINDS))
                c.send_raw((json.dumps({"op": "submit", "job": KINDS[kind][0]}) + "\n").encode())
                time.sleep(rng.uniform(0, 0.02))
                kill(p)
                try:
                    c.sock.settimeout(1)
                    r = c.read()
                except (OSError, ValueError):
                    r = None
                if r and r.get("ok"):
                    ledger.acked[r["job"]] = kind
                else:
                    ledger.unacked += 1
            elif phase == "queued":
                for _ in range(3):
                    job, kind = self.submit(c, rng)
                    ledger.acked[job] = kind
                time.sleep(rng.uniform(0, 0.3))
                kill(p)
            elif phase == "running":
                job, kind = self.submit(c, rng)
                ledger.acked[job] = kind
                wait_state(c, job, ("running", "done"), timeout=60)
                time.sleep(rng.uniform(0, 0.25))
                kill(p)
            elif phase == "result":
                job, kind = self.submit(c, rng)
                ledger.acked[job] = kind
                results = os.path.join(state, "results")
                end = time.time() + 60
                seen = False
                mine = os.path.join(results, job + ".json")
                while time.time() < end and not seen and not os.path.exists(mine):
                    seen = any(TEMP_NAME.match(x) for x in os.listdir(results))
                kill(p)
                if any(TEMP_NAME.match(x) for x in os.listdir(results)):
                    ledger.evidence["killed_mid_result_write"] += 1
            c.close()
            watcher.join(30)
            self.assertEqual(ledger.errors, [])
        # The last start: every acknowledged job finishes, in the order they
        # run, each checked as it ends (before later ones can prune it).
        p, c = self.start(config)
        watcher = ledger.watch(c.sock.getpeername()[1])
        ledger.check(self, c, p.pid)
        end = time.time() + 300
        for job in list(ledger.acked):
            while job not in ledger.verified and time.time() < end:  # the watcher checks it when done
                st = c.req({"op": "status", "job": job})
                self.assertTrue(st["ok"] or job in ledger.verified, st)
                self.assertNotIn(st.get("state"), ("failed", "cancelled"), st)
                time.sleep(0.05)
        self.assertEqual(ledger.errors, [])
        ledger.check(self, c, p.pid)
        self.assertEqual(sorted(ledger.verified), sorted(ledger.acked))
        # Nothing left to run: the next start compacts the journal to the
        # jobs it still knows (README: rewritten without the pruned ones).
        kill(p)
        p, c = self.start(config)
        events = journal_events(state)
        self.assertEqual([e for e in events if e.get("event") == "pruned"], [], "the journal was not compacted")
        self.assertLessEqual(len({e["job"] for e in events}), 6)
        runs = sum(1 for e in journal_events(state) if e.get("event") == "submit")
        summary = {"kills": ARGS.kills, "seed": ARGS.seed, "phases": ledger.phases,
                   "acknowledged_jobs": len(ledger.acked), "submits_killed_before_answer": ledger.unacked,
                   "results_verified": len(ledger.verified), "journal_submit_lines_at_end": runs,
                   "seconds": round(time.time() - t0, 1), **ledger.evidence}
        print("torture:", json.dumps(summary), file=sys.stderr)
        kill(p)

    # A full disk. The state folder lives on a small tmpfs; `fill` takes
    # every free byte, so the next write fails part way or at once.

    def small_state(self):
        mnt = os.path.join(self.tmp, "small")
        os.makedirs(mnt)
        p = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=4m", "tmpfs", mnt], capture_output=True, text=True)
        if p.returncode != 0:
            self.skipTest("cannot mount a 4 MiB tmpfs here (needs root): " + p.stderr.strip())
        self.addCleanup(subprocess.run, ["umount", "-l", mnt])
        return mnt

    def fill(self, mnt, leave_bytes=0):
        filler = os.path.join(mnt, "filler")
        fd = os.open(filler, os.O_WRONLY | os.O_CREAT | os.O_APPEND)
        for chunk in (65536, 4096, 1):
            try:
                while True:
                    os.write(fd, b"\0" * chunk)
            except OSError:
                pass
        os.close(fd)
        if leave_bytes:
            os.truncate(filler, max(0, os.path.getsize(filler) - leave_bytes))
        return filler

    def daemon_on(self, mnt, max_finished_jobs=25):
        state = os.path.join(mnt, "state")
        config = os.path.join(self.tmp, "godwitd.toml")
        with open(config, "w") as f:
            f.write(config_text(self.tmp, state, max_finished_jobs))
        return state, config

    def test_full_disk_during_journal_appends(self):
        mnt = self.small_state()
        state, config = self.daemon_on(mnt)
        p, c = self.start(config)
        ledger = Ledger(state)
        rng = random.Random(ARGS.seed)
        refused = 0
        # Holds the worker, so the jobs below stay queued and write no results.
        blocker = c.req({"op": "submit", "job": {**KINDS["b"][0], "recordings": [SHORT[1]] * 60}})["job"]
        for i in range(16):
            filler = self.fill(mnt, leave_bytes=rng.choice([0, 0, 4096]))
            # Lines of 300 B to 6 KB: each fails at another point of the journal's last page or the next.
            job = {"kind": "locate", "recordings": [SHORT[0]] * rng.randint(1, 80), "fft_size": 262144,
                   "templates": KINDS["a"][0]["templates"], "threshold": round(rng.uniform(0.3, 0.9), 7)}
            r = c.req({"op": "submit", "job": job})
            if not r["ok"]:
                self.assertEqual(r["error"]["code"], "io", r)
                refused += 1
            os.remove(filler)
            if r["ok"]:
                ledger.acked[r["job"]] = "many"
                self.assertTrue(c.req({"op": "cancel", "job": r["job"]})["ok"])  # only its journal lines matter
            r = c.req({"op": "submit", "job": KINDS["a"][0]})  # the next one is never lost
            self.assertTrue(r["ok"], r)
            ledger.acked[r["job"]] = "a"
        self.assertGreater(refused, 0, "the disk never filled")
        kill(p)
        p, c = self.start(config)
        self.assertEqual(temporaries(state, except_pid=p.pid), [])
        self.assertTrue(c.req({"op": "cancel", "job": blocker})["ok"])
        for job, kind in ledger.acked.items():
            st = c.req({"op": "status", "job": job})
            self.assertTrue(st["ok"], f"acknowledged job {job} lost after a full disk: {st}")
            if kind == "a":
                self.assertEqual(wait_state(c, job, timeout=300)["state"], "done", job)
                ledger.verify(self, c, job, kind)
        print(f"torture: full disk during journal appends: {refused} of 16 submits refused (io), "
              f"{len(ledger.acked)} acknowledged, none lost", file=sys.stderr)

    def test_full_disk_during_result_writes(self):
        mnt = self.small_state()
        state, config = self.daemon_on(mnt)
        p, c = self.start(config)
        slow = c.req({"op": "submit", "job": {**KINDS["b"][0], "recordings": [SHORT[1]] * 6}})["job"]
        queued = [c.req({"op": "submit", "job": KINDS["a"][0]})["job"] for _ in range(3)]
        wait_state(c, slow, ("running",))
        filler = self.fill(mnt)
        states = {j: wait_state(c, j, timeout=120) for j in [slow] + queued}
        for j, st in states.items():  # the result could not be written: failed, saying why
            self.assertEqual(st["state"], "failed", st)
            self.assertEqual(st["error"]["code"], "io", st)
            self.assertIn("space", st["error"]["message"].lower(), st)
        self.assertEqual(temporaries(state), [])
        os.remove(filler)
        kill(p)
        # Their end lines could not be written either: after a restart they run again.
        p, c = self.start(config)
        ledger = Ledger(state)
        for j in queued:
            st = wait_state(c, j, timeout=120)
            self.assertIn(st["state"], ("done", "failed"), st)
            if st["state"] == "done":
                ledger.verify(self, c, j, "a")
        self.assertEqual(temporaries(state, except_pid=p.pid), [])

    def test_full_disk_during_store_writes(self):
        mnt = self.small_state()
        state, config = self.daemon_on(mnt, max_finished_jobs=2)
        p, c = self.start(config)
        done = [c.req({"op": "submit", "job": KINDS["a"][0]})["job"] for _ in range(4)]
        # One worker runs them in order; the later ones read the first one's searches back from the store of
        # record and end within moments, so the first may be forgotten (max_finished_jobs) before it is polled.
        wait_state(c, done[-1])
        # An inline spot cannot be saved: refused, nothing kept.
        filler = self.fill(mnt)
        r = c.req({"op": "submit", "job": KINDS["inline"][0]})
        self.assertEqual(r.get("error", {}).get("code"), "io", r)
        self.assertEqual(os.listdir(os.path.join(state, "inline")) if os.path.isdir(os.path.join(state, "inline"))
                         else [], [])
        # The FFT cost cache at exit: a warning, no temporary left.
        p.send_signal(signal.SIGTERM)
        p.wait(timeout=60)
        self.assertEqual(temporaries(state), [])
        # The journal holds pruned jobs: compacted at start, which cannot be
        # written now. The daemon starts on the journal as it is.
        p, c = self.start(config)
        self.assertEqual(temporaries(state, except_pid=p.pid), [])
        self.assertEqual(sorted(j["job"] for j in c.req({"op": "jobs"})["jobs"]), sorted(done[-2:]))
        os.remove(filler)
        r = c.req({"op": "submit", "job": KINDS["inline"][0]})
        self.assertTrue(r["ok"], r)
        self.assertEqual(wait_state(c, r["job"])["state"], "done")
        kill(p)
        p, c = self.start(config)  # compacted now
        lines = open(os.path.join(state, "journal.jsonl")).read().splitlines()
        self.assertFalse(any('"pruned"' in x for x in lines), "the journal was not compacted")
        self.assertEqual(len(c.req({"op": "jobs"})["jobs"]), 2)


def cut(src, dst, start_s, length_s):
    subprocess.run(["sox", src, dst, "trim", str(start_s), str(length_s)], check=True)


def main():
    global ARGS, DEMO
    parser = argparse.ArgumentParser()
    parser.add_argument("--godwit", required=True)
    parser.add_argument("--godwitd", required=True)
    parser.add_argument("--synth", required=True)
    parser.add_argument("--kills", type=int, default=100)
    parser.add_argument("--seed", type=int, default=1)
    ARGS, rest = parser.parse_known_args()
    daemon_test.ARGS = ARGS
    warnings.simplefilter("ignore", ResourceWarning)
    tmp = tempfile.mkdtemp(prefix="godwitd-torture-demo-")
    try:
        DEMO = os.path.join(tmp, "demo")
        subprocess.run([ARGS.synth, "demo", "--out", DEMO], check=True, capture_output=True)
        recs = json.load(open(os.path.join(DEMO, "truth.json")))["recordings"]
        # 40 s around an airing of each file: jobs of a fraction of a second.
        for i, (rec, start) in enumerate(zip(recs, (30, 60, 20))):
            out = os.path.join(DEMO, "airchecks", f"short{i}.flac")
            cut(rec, out, start, 40)
            SHORT.append(out)
        lib = os.path.join(DEMO, "library")
        inline_wav = os.path.join(DEMO, "library", "kestrel-fm-id.wav")
        jobs = {
            "a": {"kind": "locate", "recordings": [SHORT[0]], "fft_size": 262144,
                  "templates": [f"{lib}/marlow-bakery.wav", f"{lib}/kestrel-fm-id.wav"]},
            "b": {"kind": "locate", "recordings": [SHORT[1]], "fft_size": 262144,
                  "templates": [f"{lib}/tidewater-tyres-spring.wav", f"{lib}/pellham-garden-centre.wav"]},
            "inline": {"kind": "locate", "recordings": [SHORT[2]], "fft_size": 262144,
                       "inline": [{"id": "station-id", "format": "wav",
                                   "audio_base64": base64.b64encode(open(inline_wav, "rb").read()).decode()}]},
        }
        for kind, job in jobs.items():
            templates = job.get("templates") or []
            if kind == "inline":  # the CLI reads the same audio under the same id
                os.makedirs(os.path.join(tmp, "inline"), exist_ok=True)
                templates = [os.path.join(tmp, "inline", "station-id.wav")]
                shutil.copy(inline_wav, templates[0])
            cli = subprocess.run([ARGS.godwit, "locate", *sum((["--template", t] for t in templates), []),
                                  "--recording", job["recordings"][0], "--planner", "estimate", "--cache-dir", "",
                                  "--fft-size", str(job["fft_size"]), "-q"], capture_output=True, text=True, check=True)
            KINDS[kind] = (job, json.loads(cli.stdout))
        prog = unittest.main(argv=[sys.argv[0], "-v", *rest], exit=False)
        code = 0 if prog.result.wasSuccessful() else 1
    finally:
        shutil.rmtree(tmp, ignore_errors=True)
    sys.exit(code)


if __name__ == "__main__":
    main()
