"""`modlens log` on live input through the JACK test server: rows as the file's figures, kill -9
safety, restart append, and a server that stops mid-log.

Usage: /usr/bin/python3 test_live_log.py /path/to/modlens /path/to/ml-feed

Input: captures/receiver-1khz.wav looped by ml-feed (seamless: whole periods). Its figures are
analytic (captures/README.md): tone -12.00 dBFS, so RMS -12.00 dBFS (the tone dominates: hum and
noise add < 0.001 dB); hum total -69.03 dBFS at 50 Hz. Tolerances: 0.05 dB RMS (the block
position in the loop changes nothing but the noise), 0.3 dB hum (a 1 s interval's hum estimate).
Row timing: UTC of the first row within 10 s of the wall clock when the log started (the device
start adds a fraction of a second; this is not a speed check).
"""
import csv
import datetime
import os
import signal
import sys
import time

sys.dont_write_bytecode = True
HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
sys.path.insert(0, os.path.join(HERE, "..", "e2e"))

import e2e_common as E  # noqa: E402
import jackserver as J  # noqa: E402

CAPTURE = os.path.join(HERE, "..", "..", "captures", "receiver-1khz.wav")


def rows(path):
    """The file's text and its rows as dicts (the '#' line that says what is logged skipped)."""
    with open(path, newline="") as f:
        text = f.read()
    return text, list(csv.DictReader(line for line in text.splitlines() if not line.startswith("#")))


def main():
    exe, feeder = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
    ck = E.Checker("live log")
    with E.scratch():
        with J.Server(rate=48000) as srv:
            srv.feed(feeder, "feed", os.path.abspath(CAPTURE))
            t0 = time.time()
            p = srv.run([exe, "log", "--device", "feed", "--channels", "1", "--seconds", "3", "--out", "a.csv"])
            ck.check("3 s live log exits 0", p.returncode == 0, p.stderr.strip())
            text, r = rows("a.csv")
            ck.check("3 rows", len(r) == 3, str(len(r)))
            for i, row in enumerate(r):
                ck.close(f"row {i}: offset_s", float(row["offset_s"]), float(i), 1e-9)
                ck.close(f"row {i}: rms_dbfs", float(row["rms_dbfs"]), -12.0, 0.05)
                ck.close(f"row {i}: hum_dbfs", float(row["hum_dbfs"]), -69.03, 0.3)
            if r:
                utc = datetime.datetime.strptime(r[0]["start_utc"], "%Y-%m-%dT%H:%M:%S.%fZ").replace(
                    tzinfo=datetime.timezone.utc).timestamp()
                ck.close("first row's UTC is the wall clock at the start", utc, t0, 10.0)

            # kill -9 in the middle of a live log: the CSV ends with its last complete row
            log = srv.popen([exe, "log", "--device", "feed", "--channels", "1", "--seconds", "60", "--out", "k.csv"])
            for _ in range(200):  # wait for the second row (the log runs in real time)
                if os.path.exists("k.csv") and len(rows("k.csv")[1]) >= 2:
                    break
                time.sleep(0.05)
            log.send_signal(signal.SIGKILL)
            log.wait(timeout=10)
            text, r = rows("k.csv")
            lines = list(csv.reader(line for line in text.splitlines() if not line.startswith("#")))
            ck.check("after kill -9: ends with a newline, every row complete", text.endswith("\n")
                     and all(len(f) == len(lines[0]) for f in lines) and len(r) >= 2, f"{len(r)} rows")
            n_before = len(r)
            last = float(r[-1]["offset_s"]) if r else 0.0
            # restart with the same --out: appends after the last row, one header
            p = srv.run([exe, "log", "--device", "feed", "--channels", "1", "--seconds", "2", "--out", "k.csv"])
            ck.check("restart exits 0", p.returncode == 0, p.stderr.strip())
            text, r = rows("k.csv")
            ck.check("restart: one header", text.count("start_utc,") == 1)
            ck.check("restart: 2 rows appended", len(r) == n_before + 2, f"{n_before} -> {len(r)}")
            ck.check("restart: offsets go on increasing", all(float(r[i + 1]["offset_s"]) > float(r[i]["offset_s"])
                                                             for i in range(len(r) - 1)) and float(r[-1]["offset_s"]) > last)

            # the server stops mid-log: the log ends cleanly with the reason, rows kept
            log = srv.popen([exe, "log", "--device", "feed", "--channels", "1", "--seconds", "60", "--out", "g.csv"])
            for _ in range(200):
                if os.path.exists("g.csv") and len(rows("g.csv")[1]) >= 2:
                    break
                time.sleep(0.05)
            srv.kill()
            out, err = log.communicate(timeout=60)
            ck.check("server gone: exit 1 with the reason", log.returncode == 1 and "stopped delivering" in err,
                     err.strip())
            text, r = rows("g.csv")
            ck.check("server gone: rows kept", len(r) >= 2 and text.endswith("\n"), str(len(r)))
            # the last row's note holds the reason, commas and all, in one quoted field (RFC 4180)
            lines = list(csv.reader(line for line in text.splitlines() if not line.startswith("#")))
            ck.check("server gone: every row has the header's fields, the reason in the note",
                     all(len(f) == len(lines[0]) for f in lines) and "stopped delivering" in r[-1]["note"],
                     r[-1]["note"] if r else "")
            _, ev = rows("g-events.csv")
            ck.check("server gone: an input-end event", any(e["kind"] == "input-end" for e in ev), str(ev))
    ck.finish()


if __name__ == "__main__":
    main()
