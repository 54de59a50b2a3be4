"""Hostile clients for the daemon benchmark (daemon_bench.py --hostile).

run(port, seconds, read_timeout_s, result_queue) drives every kind of
hostile client at once, each from a loopback address of its own (127.0.0.N,
as clients on other hosts would be; the daemon limits connections per
address), and reports, per kind, how many requests it made and how many
were answered (or, for a line never finished, closed) within their deadline:

  deep       {"op":"health","id":[[[...100 000 deep...]]]}: answered within 1 s
  huge       a 32 MiB line (over max_line_bytes): answered too_large within
             read_timeout_s of its first byte
  big        a 16 MiB request (under the limit; a long string to parse, as
             bulk work, below short requests): answered within 5 s of its
             last byte
  slowloris  a line sent a byte every 0.5 s, never finished: closed within
             read_timeout_s + 1 s
  flood      connections opened, asked for health and closed as fast as one
             thread can, and 64 more held idle from one address: each
             answered (health, or busy beyond the per-address limit) within 1 s
  utf8       requests holding bytes that are not UTF-8: answered within 1 s
  garbage    random binary lines of 1-64 KiB: each answered within 1 s

Runs in its own process (the well-behaved clients run in another), so the
two do not share Python's interpreter lock. The hostile clients stand for
other hosts: the CPU they spend making their lines (Python threads, the
kernel copying 32 MiB lines into loopback) would not be the daemon's
machine's, so `nice` (19 in the benchmark) lowers this process's priority,
never the daemon's or the well-behaved clients'. Where Linux groups tasks
by session for the scheduler (autogroup, /proc/sys/kernel/sched_autogroup_enabled),
nice orders tasks only within their group: the process also starts a
session of its own, so that its CPU comes from a share of its own, as
another host's would, and not out of the daemon's group (where, at nice
19 on a busy machine, it got no CPU at all for whole runs), and sets its
group's nice value (/proc/self/autogroup): a group otherwise competes with
the others at nice 0 whatever its tasks' nice values, so the hostile lines
took the CPU of a third of the machine beside the daemon's. What the
daemon spends reading and parsing its lines stays on the daemon's account.
"""
import json
import os
import random
import socket
import threading
import time

DEEP = 100000
NO_CONTROL = bytes(b if b >= 14 else b + 14 for b in range(256))  # random bytes with no newline


class Tally:
    def __init__(self):
        self.lock = threading.Lock()
        self.kinds = {}

    def add(self, kind, ok, seconds=None, sent=0):
        with self.lock:
            k = self.kinds.setdefault(kind, {"requests": 0, "within_deadline": 0, "missed": 0, "worst_s": 0.0,
                                             "sent_bytes": 0})
            k["requests"] += 1
            k["sent_bytes"] += sent
            k["within_deadline" if ok else "missed"] += 1
            if seconds is not None:
                k["worst_s"] = max(k["worst_s"], round(seconds, 4))


def connect(port, source, timeout=10):
    return socket.create_connection(("127.0.0.1", port), timeout=timeout, source_address=(source, 0))


def read_line(sock, deadline):
    """One answer line, or None when the connection closes or the deadline passes."""
    buf = b""
    while b"\n" not in buf:
        left = deadline - time.time()
        if left <= 0:
            return None
        sock.settimeout(left)
        try:
            chunk = sock.recv(65536)
        except (socket.timeout, OSError):
            return None
        if not chunk:
            return None
        buf += chunk
    return buf.split(b"\n", 1)[0]


def request_loop(kind, port, source, stop, tally, make_line, deadline_s, after_send=True):
    """Sends lines one after another on one connection; reconnects when closed."""
    sock = None
    while time.time() < stop:
        try:
            if sock is None:
                sock = connect(port, source)
            line = make_line()
            t0 = time.time()
            sock.settimeout(30)
            sock.sendall(line)
            start = time.time() if after_send else t0
            answer = read_line(sock, start + deadline_s)
            took = time.time() - start
            tally.add(kind, answer is not None and answer.startswith(b"{"), took, len(line))
            if answer is None:
                sock.close()
                sock = None
        except OSError:
            tally.add(kind, False)
            if sock:
                sock.close()
            sock = None
            time.sleep(0.05)
    if sock:
        sock.close()


def slowloris(port, source, stop, tally, read_timeout_s):
    while time.time() < stop:
        try:
            sock = connect(port, source)
        except OSError:
            tally.add("slowloris", False)
            time.sleep(0.1)
            continue
        t0 = time.time()
        closed_at = None
        payload = b'{"op":"health","padding":"' + b"x" * 1000
        for b in payload:
            try:
                sock.sendall(bytes([b]))
                sock.settimeout(0.5)
                if sock.recv(1024) == b"":
                    closed_at = time.time()
                    break
            except socket.timeout:
                pass
            except OSError:
                closed_at = time.time()
                break
            if time.time() > t0 + read_timeout_s + 5:
                break
        sock.close()
        if closed_at is None and time.time() >= stop:
            return  # the run ended first: not counted
        took = (closed_at or time.time()) - t0
        tally.add("slowloris", closed_at is not None and took <= read_timeout_s + 1, took)


def flood(port, source, stop, tally):
    while time.time() < stop:
        t0 = time.time()
        try:
            sock = connect(port, source, timeout=1)
            sock.sendall(b'{"op":"health"}\n')
            answer = read_line(sock, t0 + 1)
            sock.close()
            tally.add("flood", answer is not None, time.time() - t0)
        except OSError:
            tally.add("flood", False)


def hold_idle(port, source, stop, tally):
    """64 idle connections from one address (its limit), then one more: busy."""
    held = []
    try:
        for _ in range(64):
            held.append(connect(port, source))
        while time.time() < stop:
            t0 = time.time()
            try:
                extra = connect(port, source, timeout=1)
                answer = read_line(extra, t0 + 1)
                extra.close()
                ok = answer is not None and json.loads(answer).get("error", {}).get("code") == "busy"
                tally.add("flood", ok, time.time() - t0)
            except OSError:
                tally.add("flood", False)
            time.sleep(0.2)
    finally:
        for s in held:
            s.close()


def run(port, seconds, read_timeout_s, queue, start_at, nice=19):
    os.setsid()  # a scheduling group (autogroup) of its own: see above
    os.nice(nice)
    # The group's own weight: nice inside a group orders only its threads;
    # between groups (the daemon's, the clients') the group's nice counts.
    try:
        with open("/proc/self/autogroup", "w") as f:
            f.write(str(nice))
    except OSError:
        pass
    # Every line is made before the start (at a low priority on a busy
    # machine, making them took longer than the run).
    stop = start_at + seconds
    tally = Tally()
    rng = random.Random(14)
    deep = b'{"op":"health","id":' + b"[" * DEEP + b"]" * DEEP + b"}\n"
    huge = b'{"op":"health","x":"' + b"a" * (32 << 20) + b'"}\n'
    big = b'{"op":"health","x":"' + b"b" * (16 << 20) + b'"}\n'

    def utf8():
        return b'{"op":"health","id":"\xc3\x28' + bytes([rng.randrange(0x80, 0x100)]) + b'"}\n'

    def garbage():
        n = rng.randint(1, 64 << 10)
        return rng.randbytes(n).translate(NO_CONTROL) + b"\n"

    garbage_lines = [garbage() for _ in range(16)]
    threads = []

    def spawn(fn, *args):
        t = threading.Thread(target=fn, args=args, daemon=True)
        t.start()
        threads.append(t)

    while time.time() < start_at:
        time.sleep(0.005)
    for i in range(4):
        spawn(request_loop, "deep", port, "127.0.0.2", stop, tally, lambda: deep, 1.0)
    for i in range(2):
        spawn(request_loop, "huge", port, "127.0.0.2", stop, tally, lambda: huge, read_timeout_s, False)
        spawn(request_loop, "big", port, "127.0.0.2", stop, tally, lambda: big, 5.0)
        spawn(request_loop, "utf8", port, "127.0.0.2", stop, tally, utf8, 1.0)
        spawn(request_loop, "garbage", port, "127.0.0.2", stop, tally, lambda: rng.choice(garbage_lines), 1.0)
    for i in range(20):
        spawn(slowloris, port, "127.0.0.4", stop, tally, read_timeout_s)
    spawn(flood, port, "127.0.0.5", stop, tally)
    spawn(hold_idle, port, "127.0.0.3", stop, tally)
    for t in threads:
        t.join(seconds + read_timeout_s + 30)
    queue.put(tally.kinds)
