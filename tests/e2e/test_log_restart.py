"""End-to-end test of `modlens log` surviving interruption: kill -9, SIGTERM, restart, rotation,
the lock, what a log holds.

Usage: /usr/bin/python3 test_log_restart.py /path/to/modlens

A 40 s file is logged at 0.5 s intervals, read at 8 times real time (--pace, a documented testing
option) and, once its CSV holds some rows, killed with SIGKILL mid-way: the CSV must parse and end
with a complete row. A partial line is then appended by hand (as a kill inside a write would
leave) and the same command is run again: it must cut the partial line, keep one head, and continue
so that the rows and events are exactly those of an uninterrupted run. A 60 s file with hum from
20 s is killed inside the hum: resumed from the detectors' state saved beside the log, its events
are those of an uninterrupted run (one hum event, none lost at the kill, none invented at the
restart). SIGTERM ends a run cleanly with the summary and closes open events with the reason. A
second log on the same --out is locked out; another input or other settings are refused (or start
a new log with --new-log); a file's start recorded in the log does not move when the file's
modification time does. --rotate-hours splits rows by UTC period; bad inputs exit 2 with one line
and write nothing; --plot writes a PNG.
"""
import csv
import os
import signal
import struct
import subprocess
import sys
import time

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402

import e2e_common as E  # noqa: E402

FS = 48000


def log(exe, args, **kw):
    p = subprocess.run([exe, "log"] + args, capture_output=True, timeout=E.RUN_TIMEOUT_S, **kw)
    return p.returncode, p.stdout.decode(), p.stderr.decode()


def rows_of(path):
    return E.log_lines(path)


def wait_rows(path, n, proc):
    """Waits (at most 30 s, polling) until path holds n lines or proc ended: no fixed sleeps."""
    deadline = time.monotonic() + 30
    while time.monotonic() < deadline and proc.poll() is None:
        if os.path.exists(path):
            with open(path, "rb") as f:
                if f.read().count(b"\n") >= n:
                    return True
        time.sleep(0.02)
    return False


def clean(*names):
    for n in names:
        if os.path.exists(n):
            os.remove(n)


def hum_restart(exe, c):
    """kill -9 inside a hum event, then resume; SIGTERM inside it."""
    t = np.arange(60 * FS) / FS
    x = 0.1 * np.sin(2 * np.pi * 1000 * t) + np.random.default_rng(6).normal(0, 1e-3, t.size)
    on = t >= 20
    x[on] += 3e-3 * np.sin(2 * np.pi * 50 * t[on]) + 1.5e-3 * np.sin(2 * np.pi * 150 * t[on])
    E.write("hum.wav", x.astype(np.float32), FS, "FLOAT")
    common = ["--start-time", "2026-05-01T09:00:00Z", "hum.wav"]
    rc, _, err = log(exe, ["--out", "href.csv"] + common)
    ref, ref_ev = rows_of("href.csv"), rows_of("href-events.csv")
    hum = [r for r in ref_ev[1:] if r[4] == "hum"]
    c.check("hum reference: one hum event from 20 s to the end", rc == 0 and len(hum) == 1
            and abs(float(hum[0][2]) - 20) <= 1 and hum[0][3] == "60.000", str(ref_ev[1:]))
    p = subprocess.Popen([exe, "log", "--out", "hk.csv", "--pace", "8"] + common,
                         stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    c.check("hum: paced log under way", wait_rows("hk.csv", 2 + 40, p))  # head and 40 rows: 40 s in
    time.sleep(0.3)
    p.send_signal(signal.SIGKILL)
    p.wait(timeout=10)
    c.check("hum: killed by SIGKILL inside the hum", p.returncode == -signal.SIGKILL
            and 40 < len(rows_of("hk.csv")) < 61, "%s, %d rows" % (p.returncode, len(rows_of("hk.csv"))))
    c.check("hum: no hum event written before the kill",
            not [r for r in rows_of("hk-events.csv")[1:] if r[4] == "hum"])
    c.check("hum: the detectors' state lies beside the log", os.path.exists("hk.csv.state"))
    rc, out, err = log(exe, ["--out", "hk.csv"] + common)
    c.check("hum: resumed, exit 0", rc == 0, err.strip())
    c.check("hum: resumed rows as in the reference", rows_of("hk.csv") == ref)
    c.check("hum: resumed events as in the reference (one hum event, none invented)",
            sorted(rows_of("hk-events.csv")[1:]) == sorted(ref_ev[1:]), str(rows_of("hk-events.csv")[1:]))

    # SIGTERM inside the hum: the open event is closed with the reason
    p = subprocess.Popen([exe, "log", "--out", "ht.csv", "--pace", "8"] + common,
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    c.check("hum: paced log under way (2)", wait_rows("ht.csv", 2 + 30, p))
    p.send_signal(signal.SIGTERM)
    p.communicate(timeout=10)
    hum = [r for r in rows_of("ht-events.csv")[1:] if r[4] == "hum"]
    c.check("SIGTERM closes the open hum event with the reason", p.returncode == 0 and len(hum) == 1
            and hum[0][8].endswith("; open at terminated (SIGTERM)"), str(hum))


def lock_and_identity(exe, c, common):
    """Two logs on one --out; another input, other settings, a moved modification time."""
    p = subprocess.Popen([exe, "log", "--out", "lk.csv", "--pace", "8"] + common,
                         stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    c.check("lock: first log under way", wait_rows("lk.csv", 6, p))
    rc, out, err = log(exe, ["--out", "lk.csv"] + common)
    lines = err.strip().splitlines()
    c.check("lock: a second log on the same --out is refused", rc == 2 and len(lines) == 1
            and "lk.csv: is being written by another process" in lines[0], err.strip())
    p.wait(timeout=30)
    c.check("lock: the first log is whole, rows once each", p.returncode == 0
            and rows_of("lk.csv") == rows_of("ref.csv"))

    x = E.synth(FS, 5, [(700, 0.2, 0)], seed=5)
    E.write("other.wav", x, FS, "FLOAT")
    before = open("ref.csv", "rb").read()
    rc, out, err = log(exe, ["--out", "ref.csv", "--start-time", "2026-05-01T08:00:00Z", "other.wav"])
    c.check("another input is refused, the log untouched", rc == 2
            and "holds a log of something else (it logs input=file:long.wav, this run input=file:other.wav)" in err
            and open("ref.csv", "rb").read() == before, err.strip())
    rc, out, err = log(exe, ["--out", "ref.csv", "--interval", "1"] + common[2:])
    c.check("other settings are refused", rc == 2 and "interval_s=0.5, this run interval_s=1" in err, err.strip())
    rc, out, err = log(exe, ["--out", "ref.csv", "--new-log", "--start-time", "2026-05-01T08:00:00Z", "other.wav"])
    c.check("--new-log starts a new log beside it", rc == 0 and len(rows_of("ref-2.csv")) == 6
            and open("ref.csv", "rb").read() == before and E.log_meta("ref-2.csv").find("other.wav") > 0, err.strip())

    # a file's start: its modification time minus its length, recorded in the log; a later
    # modification time does not move the rows of the same log
    os.utime("long.wav", (1700000000, 1700000000))
    rc, _, err = log(exe, ["--out", "mt.csv", "--seconds", "10", "long.wav"])
    os.utime("long.wav", (1800000000, 1800000000))
    rc2, _, err2 = log(exe, ["--out", "mt.csv", "long.wav"])
    rows = E.log_dicts("mt.csv")
    t0 = {round(E_utc(r["start_utc"]) - float(r["offset_s"]), 3) for r in rows}
    # 1700000000 - 40 s = 2023-11-14T22:12:40Z: every row's start is that plus its offset
    c.check("start times never jump inside one log", rc == 0 and rc2 == 0 and len(rows) == 40
            and t0 == {1700000000 - 40.0}, "%s %s %s" % (sorted(t0)[:3], err.strip(), err2.strip()))
    rc, _, err = log(exe, ["--out", "mt.csv", "--start-time", "2026-05-01T08:00:00Z", "long.wav"])
    c.check("a --start-time that contradicts the log is refused", rc == 2 and "--start-time says" in err,
            err.strip())


def E_utc(s):
    """Seconds since 1970 of an ISO 8601 UTC time with milliseconds (YYYY-MM-DDTHH:MM:SS.fffZ)."""
    import datetime
    d = datetime.datetime.strptime(s, "%Y-%m-%dT%H:%M:%S.%fZ").replace(tzinfo=datetime.timezone.utc)
    return d.timestamp()


def main():
    exe = E.modlens_path()
    c = E.Checker("log restart")
    with E.scratch():
        x = E.synth(FS, 40, [(1000, 0.1, 0)], noise_rms=1e-3, seed=4)
        for t in (3.2, 11.7, 27.05, 36.6):
            x[int(t * FS)] += 0.5
        E.write("long.wav", x, FS, "FLOAT")
        common = ["--interval", "0.5", "--start-time", "2026-05-01T08:00:00Z", "long.wav"]

        rc, _, err = log(exe, ["--out", "ref.csv"] + common)
        ref = rows_of("ref.csv")
        c.check("reference run", rc == 0 and len(ref) == 81, "%d lines %s" % (len(ref), err.strip()))

        p = subprocess.Popen([exe, "log", "--out", "k.csv", "--pace", "8"] + common,
                             stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        c.check("paced log under way", wait_rows("k.csv", 12, p))
        time.sleep(0.3)  # lands anywhere in an interval; the run has about 4 s to go
        p.send_signal(signal.SIGKILL)
        p.wait(timeout=10)
        c.check("killed by SIGKILL", p.returncode == -signal.SIGKILL, str(p.returncode))
        data = open("k.csv", "rb").read()
        c.check("killed log ends with a newline", data.endswith(b"\n"))
        k = rows_of("k.csv")
        c.check("killed log parses, header first", k and k[0] == ref[0], str(k[:1]))
        c.check("killed mid-way", 2 < len(k) < 81, "%d lines" % len(k))
        c.check("every row complete", all(len(r) == len(ref[0]) for r in k))
        c.check("last row equals the reference row", k[-1] == ref[len(k) - 1], "%s vs %s" % (k[-1][:3],
                                                                                          ref[len(k) - 1][:3]))
        with open("k.csv", "ab") as f:
            f.write(b"2026-05-01T08:00:59.000Z,59.0")  # what a kill inside a write could leave
        rc, out, err = log(exe, ["--out", "k.csv"] + common)
        k2 = rows_of("k.csv")
        c.check("restart exit 0", rc == 0, err.strip())
        c.check("one header after restart", sum(1 for r in k2 if r and r[0] == "start_utc") == 1)
        c.check("restart continues: offsets as in the reference",
                [r[2] for r in k2] == [r[2] for r in ref], "%d vs %d rows" % (len(k2), len(ref)))
        # every cell, A-weighting included: the filter's state comes back from the saved state
        c.check("rows as in the reference, cell by cell", k2 == ref,
                str([(a, b) for a, b in zip(k2, ref) if a != b][:2]))
        ev = rows_of("k-events.csv")
        keys = [(r[2], r[4]) for r in ev[1:]]
        c.check("no duplicated events", len(keys) == len(set(keys)), str(keys))
        c.check("impulses found across the restart", sum(1 for r in ev[1:] if r[4] == "impulse") >= 3, str(keys))
        c.check("events as in the reference", sorted(ev[1:]) == sorted(rows_of("ref-events.csv")[1:]))
        rc, out, err = log(exe, ["--out", "k.csv"] + common)
        c.check("a complete log is left alone", rc == 0 and rows_of("k.csv") == k2 and "already" in out, out.strip())

        p = subprocess.Popen([exe, "log", "--out", "t.csv", "--pace", "8"] + common,
                             stdout=subprocess.PIPE, stderr=subprocess.PIPE)
        c.check("paced log under way (2)", wait_rows("t.csv", 8, p))
        time.sleep(0.2)
        p.send_signal(signal.SIGTERM)
        out, err = p.communicate(timeout=10)
        t = rows_of("t.csv")
        c.check("SIGTERM: exit 0 with the summary", p.returncode == 0 and b"events:" in out,
                "%s %s" % (p.returncode, err.decode().strip()))
        c.check("SIGTERM: last row marked", t[-1][-1] == "terminated (SIGTERM)", str(t[-1][-3:]))
        rc, _, _ = log(exe, ["--out", "t.csv"] + common)
        t = rows_of("t.csv")
        off = [(float(r[2]), float(r[3])) for r in t[1:]]
        contiguous = all(abs(a[0] + a[1] - b[0]) < 1.5e-3 for a, b in zip(off, off[1:]))
        c.check("after SIGTERM the restart is contiguous to the end",
                contiguous and abs(off[-1][0] + off[-1][1] - 40.0) < 1e-3, str(off[-2:]))

        hum_restart(exe, c)
        lock_and_identity(exe, c, common)

        # rotation every 0.0025 h = 9 s of UTC time: rows 0..8.5 s, 9..17.5 s, ... in five files
        rc, _, err = log(exe, ["--out", "rot.csv", "--rotate-hours", "0.0025"] + common)
        names = sorted(n for n in os.listdir(".") if n.startswith("rot-") and not n.endswith("-events.csv"))
        want = ["rot-20260501T0800%02dZ.csv" % s for s in (0, 9, 18, 27, 36)]
        c.check("rotation file names", rc == 0 and names == want, "%s %s" % (names, err.strip()))
        total = sum(len(rows_of(n)) - 1 for n in names)
        c.check("rotation keeps every row once", total == 80, str(total))
        c.check("rotation: events files beside rows", all(os.path.exists(n[:-4] + "-events.csv") for n in names))
        c.check("rotated rows start in their period", names and rows_of(names[1])[1][2] == "9.000")

        # plot: a PNG of the documented size
        rc, _, err = log(exe, ["--out", "pl.csv", "--plot", "pl.png"] + common)
        head = open("pl.png", "rb").read(24) if os.path.exists("pl.png") else b""
        ok = rc == 0 and head[:8] == b"\x89PNG\r\n\x1a\n" and struct.unpack(">II", head[16:24]) == (1200, 820)
        c.check("--plot writes a 1200x820 PNG", ok, err.strip())

        # bad input: exit 2, one line naming the problem
        with open("other.csv", "w") as f:
            f.write("a,b,c\n1,2,3\n")
        for name, args, text in (
                ("missing file", ["--out", "m.csv", "nosuch.wav"], "nosuch.wav:"),
                # no sound card and no audio server on the test machines (a live log: tests/live)
                ("unknown device", ["--out", "m.csv", "--device", "nosuch-device"], "nosuch-device:"),
                ("foreign csv", ["--out", "other.csv", "long.wav"], "holds something other than a modlens log"),
                ("no --out", ["long.wav"], "--out"),
                ("bad interval", ["--out", "m.csv", "--interval", "0", "long.wav"], "--interval"),
                ("same rows and events", ["--out", "m.csv", "--events", "m.csv", "long.wav"], "same file")):
            rc, out, err = log(exe, args)
            lines = err.strip().splitlines()
            c.check("bad input: " + name, rc == 2 and len(lines) == 1 and lines[0].startswith("modlens: ")
                    and text in lines[0], err.strip())
        c.check("foreign csv untouched", open("other.csv").read() == "a,b,c\n1,2,3\n")
        clean("m.csv", "m-events.csv")
    c.finish()


if __name__ == "__main__":
    main()
