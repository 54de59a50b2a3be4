#!/usr/bin/python3
"""Writes the text seed corpora of the fuzz targets and the request dictionary.

  tests/fuzz/make_text_seeds.py   (from anywhere; writes next to itself)

corpus/request_path_fuzz: one request of every op against the fixture's jobs
and files (fuzz_fixture.h), tokens, deep nesting and 32 MiB lines written
with repeat marks (byte_expansion.h), pipelined and CRLF lines, invalid
UTF-8; corpus/planned_log_fuzz: logs in the documented format and every
per-row problem; corpus/name_time_fuzz: logger file names, patterns, ISO
8601 times at the edges of the calendar. The audio seeds come from
make_audio_seeds (the project's synthesizer).
"""
import base64
import math
import os
import struct

HERE = os.path.dirname(os.path.abspath(__file__))
R = "/tmp/godwit-fuzz-v1/root"  # fuzz_fixture.cc
REC = f"{R}/h-20260314T060000.wav"
REC2 = f"{R}/h-20260314T060002.flac"
LIB = f"{R}/lib"
TOKEN = "fuzz-token-0123456789"  # request_path_fuzz.cc


def wav(n=160, rate=8000):
    data = b"".join(struct.pack("<h", int(8000 * math.sin(i * 0.3))) for i in range(n))
    return (b"RIFF" + struct.pack("<I", 36 + len(data)) + b"WAVEfmt " +
            struct.pack("<IHHIIHH", 16, 1, 1, rate, rate * 2, 2, 16) + b"data" + struct.pack("<I", len(data)) + data)


def rep(k, unit):
    """A repeat mark: `unit` written 2**k times, k <= 25 (byte_expansion.h)."""
    return b"\xff" + bytes([230 + k, len(unit) - 1]) + unit


def request_seeds():
    tiny = base64.b64encode(wav()).decode()
    return {
        "health": b'{"op":"health","id":1}\n',
        "status-each": b"".join(b'{"op":"status","job":"j00000000000000%s","id":"s%s"}\n' % (c, c)
                                for c in (b"d", b"f", b"q", b"c")),
        "result-done": b'{"op":"result","job":"j00000000000000d"}\n{"op":"result","job":"j00000000000000f"}\n',
        "jobs-pages": b'{"op":"jobs","limit":2}\n{"op":"jobs","state":"done","limit":1,'
                      b'"cursor":"2026-12-01T00:00:01Z/j00000000000000d"}\n',
        "cancel-queued": b'{"op":"cancel","job":"j00000000000000q"}\n{"op":"cancel","job":"j00000000000000d"}\n'
                         b'{"op":"jobs"}\n',
        "watch": b'{"op":"watch"}\n{"op":"watch","job":"j00000000000000q"}\n',
        "files": b'{"op":"files","job":"j00000000000000d"}\n{"op":"file","job":"j00000000000000d","name":"listen/S1.opus"}\n'
                 b'{"op":"file","job":"j00000000000000d","name":"../j00000000000000d.json"}\n',
        "submit-locate": ('{"op":"submit","id":7,"job":{"kind":"locate","recordings":["%s","%s"],"library":"%s",'
                          '"threshold":0.4}}\n' % (REC, REC2, LIB)).encode(),
        "submit-reconcile-zone": ('{"op":"submit","job":{"kind":"reconcile","library":"%s","schedule":"%s/log-2026-03-14.csv",'
                                  '"recordings":["%s"],"time_zone":"Europe/Berlin","excerpts":false}}\n' % (LIB, R, REC)).encode(),
        "submit-templates": ('{"op":"submit","job":{"kind":"locate","recordings":["%s"],"templates":["%s/spot-a.wav",'
                             '"%s/spot-b.flac"],"fft_size":65536,"max_speed_change_pct":0}}\n'
                             % (REC, LIB, LIB)).encode(),
        "submit-reconcile": ('{"op":"submit","job":{"kind":"reconcile","library":"%s","schedule":"%s/log-2026-03-14.csv",'
                             '"recordings":["%s","%s"],"window_s":30}}\n' % (LIB, R, REC, REC2)).encode(),
        "submit-inline": ('{"op":"submit","job":{"kind":"locate","recordings":["%s"],"inline":[{"id":"tiny",'
                          '"format":"wav","audio_base64":"%s"}]}}\n' % (REC, tiny)).encode(),
        "inline-wrong-type": ('{"op":"submit","job":{"kind":"locate","recordings":["%s"],"inline":[{"id":"x",'
                              '"audio_base64":"AAAA","format":1}]}}\n' % REC).encode(),
        "submit-awkward": "".join('{"op":"submit","job":{"kind":"locate","recordings":["%s"]}}\n' % p for p in (
            f"{R}/noise.wav", f"{R}/pipe.wav", f"{R}/outside.wav", f"{R}/empty.wav", f"{R}/sub", "/etc/passwd",
            f"{R}/../../etc/passwd")).encode(),
        "token": ('{"op":"health","token":"%s","id":"x"}\n{"op":"cluster","token":"%s"}\n'
                  '{"op":"health","token":"wrong"}\n' % (TOKEN, TOKEN)).encode(),
        "deep-id": b'{"op":"health","id":' + rep(16, b"[") + rep(16, b"]") + b'}\n',
        "deep-object": b'{"op":"submit","job":' + rep(15, b'{"a":') + b'1' + rep(15, b'}') + b'}\n',
        "deep-in-string": b'{"op":"health","id":"' + rep(7, b"[") + b'"}\n',
        "line-32mib": b'{"op":"health","x":"' + rep(25, b"a") + b'"}\n{"op":"health"}\n',
        "line-just-under": b'{"op":"health","x":"' + rep(23, b"ab") + b'"}\n',
        "many-recordings": b'{"op":"submit","job":{"kind":"locate","recordings":[' + rep(12, ('"%s",' % REC).encode())
                           + ('"%s"]}}\n' % REC).encode(),
        "many-lines": b'{"op":"watch"}\n' + rep(25, b"\n" * 24 + b'{"op":"health"}\n'),
        "crlf-pipelined": b'{"op":"health"}\r\n\r\n\n{"op":"status","job":"j00000000000000d"}\r\n{"op":',
        "invalid-utf8": b'{"op":"health","id":"\xc3\x28\xff"}\n{"op":"st\xe9tus","job":"j\xed\xa0\x80"}\n'
                        b'\xfe\xff\x00\x01\n',
        "numbers": b'{"op":"jobs","limit":1e400}\n{"op":"jobs","limit":-1}\n{"op":"health","id":-0.0}\n'
                   b'{"op":"health","id":123456789012345678901234567890}\n',
    }


def log_seeds():
    return {
        "demo": b"slot,spot,planned,window_s\nS001,marlow-bakery,2026-03-14T06:00:30,60\n"
                b"S002,tidewater-tyres-spring,2026-03-14T06:01:30,\n# a comment\nS003,x,2026-03-14T25:00:00,60\n",
        "any-order-bom": b"\xef\xbb\xbfwindow_s,planned,spot,slot\r\n30,2026-03-14T06:00:00.250,\"spot, quoted\","
                         b"\"S\"\"1\"\r\n,20260314T060000,b,S2\r\n",
        "problems": b"slot,spot,planned\nS1,a,2026-02-30T00:00:00\nS1,a,2026-03-01T00:00:00\nS1,b,2026-03-01T00:00:01\n"
                    b",a,2026-03-01T00:00:00\nS2,,2026-03-01T00:00:00\nS3,a,\"unterminated\nS4,a,2026-03-01T00:00:00Z\n",
        "windows": b"slot,spot,planned,window_s\nA,a,2026-03-14T06:00:00,-1\nB,a,2026-03-14T06:00:00,nan\n"
                   b"C,a,2026-03-14T06:00:00,1e999\nD,a,2026-03-14T06:00:00,0x10\nE,a,2026-03-14T06:00:00, 5 \n",
        "no-header": b"S1,a,2026-03-14T06:00:00\n",
        "semicolons-aliases": b"Placement ID;Cart;Air Time;Tolerance\r\n1;marlow;2026-03-14 06:00;30,5\r\n2;\"a;b\";2026-03-14 06:05:10,25;\r\n;;;\r\n",
        "tabs-offsets": b"slot\tspot\tplanned\nA\ta\t2026-03-29T01:30:00Z\nB\tb\t2026-10-25T02:30:00+02:00\nC\tc\t2026-10-25 00:30z\n"
                        b"D\td\t20260314T0615+0530\nE\te\t2026-03-14T06:15:00+19:00\n",
        "twice-named": b"slot,spot,time,Air Time\nS1,a,2026-03-14T06:00:00,2026-03-14T06:00:00\n",
        "utf16": "slot,spot,planned\nS1,a,2026-03-14T06:00:00\n".encode("utf-16"),
        "short-rows": b"slot,spot,planned,window_s\nS1,a\nS2,b,2026-03-14T06:00:00,5,extra\nS3,c,2026-03-14T06:00:00,86401\n",
        "blank": b"\n\n   \n#only\n",
    }


def name_seeds():
    return {
        "logger": b"kestrel-fm-20260314T060000.flac",
        "nested": b"/srv/airchecks/2026/03/station-20260314T235959-part2.wav",
        "iso": b"2026-03-14T06:15:00.125",
        "iso-comma": b"2026-03-14T06:15:00,999999999",
        "basic": b"20260314T061500",
        "pattern": b"rec_2026-03-14_06-15-00.mp3\x00rec_%Y-%m-%d_%H-%M-%S",
        "pattern-percent": b"0615%14032026.ogg\x00%H%M%%%d%m%Y",
        "invalid-dates": b"x-20260230T000000-20261301T000000-20260314T240000-20260314T236000-20260314T060060-"
                         b"00000101T000000.wav",
        "leap": b"20240229T235959 20230229T000000",
        "far": b"9999-12-31T23:59:59.999999",
        "year0": b"0000-01-01T00:00:00.5",
        "latin1": b"h\xe9-20260314T060000.flac",
        "written-space": b"2026-03-14 06:15",
        "written-offset": b"2026-03-14T06:15:00.123456789-05:30",
        "written-basic-z": b"20260314T0615Z",
    }


DICTIONARY = [
    '"op"', '"id"', '"job"', '"token"', '"state"', '"limit"', '"cursor"', '"kind"',
    '"submit"', '"status"', '"result"', '"cancel"', '"jobs"', '"watch"', '"health"', '"cluster"',
    '"locate"', '"reconcile"', '"segment"', '"recordings"', '"templates"', '"library"', '"schedule"', '"inline"',
    '"window_s"', '"threshold"', '"floor_k"', '"fft_size"', '"max_speed_change_pct"', '"audio_base64"', '"format"',
    '"files"', '"file"', '"name"', '"excerpts"', '"time_zone"', '"Europe/Berlin"', '"listen/S1.opus"', '"reconcile.html"',
    '"queued"', '"running"', '"done"', '"failed"', '"cancelled"',
    '"j00000000000000d"', '"j00000000000000f"', '"j00000000000000q"', '"j00000000000000c"',
    f'"{TOKEN}"', '"2026-12-01T00:00:01Z/j00000000000000d"',
    f'"{REC}"', f'"{REC2}"', f'"{LIB}"', f'"{LIB}/spot-a.wav"', f'"{R}/log-2026-03-14.csv"', f'"{R}/pipe.wav"',
    f'"{R}/noise.wav"', f'"{R}/outside.wav"', f'"{R}/sub"', '"/etc/passwd"', '"/../"',
    '"{"', '"}"', '"["', '"]"', '":"', '","', '"\\\\"', '"\\\\u0000"', '"\\\\ud800"', '"\\\\n"', '"null"',
    '"true"', '"1e999"', '"-0"',
    '"\\xff\\xf6\\x00["', '"\\xff\\xf6\\x00{"', '"\\xff\\xf8\\x04{\\"a\\":"', '"\\xff\\xff\\x00a"',
    '"\\xff\\xfa\\x00\\""', '"\\xff\\x40\\x00["', '"\\xc3\\x28"', '"\\xed\\xa0\\x80"', '"\\xf4\\x90\\x80\\x80"', '"\\x0d\\x0a"',
]


def main():
    for target, seeds in (("request_path_fuzz", request_seeds()), ("planned_log_fuzz", log_seeds()),
                           ("name_time_fuzz", name_seeds())):
        d = os.path.join(HERE, "corpus", target)
        os.makedirs(d, exist_ok=True)
        for name, data in seeds.items():
            with open(os.path.join(d, name), "wb") as f:
                f.write(data)
    with open(os.path.join(HERE, "request_path.dict"), "w") as f:
        f.write("# Tokens of the request protocol (PROTOCOL.md), the fixture's paths and jobs (fuzz_fixture.h,\n"
                "# request_path_fuzz.cc) and repeat marks (byte_expansion.h). Written by make_text_seeds.py.\n")
        f.write("\n".join(DICTIONARY) + "\n")


if __name__ == "__main__":
    main()
