"""End-to-end test: `modlens log` never destroys a file it was not asked to write.

Usage: /usr/bin/python3 test_log_state_safety.py /path/to/modlens

The log keeps its detectors' state in NAME.state beside --out, and names some files itself (the
events file beside --out, rotated periods' files). Such a name that holds anything but what the
log wrote there -- another program's data, a symbolic link (to a precious file, or dangling), a
folder, a FIFO -- is refused before anything is written: one line `modlens: <path>: ...`, exit 2,
no rows, events or state file created, the thing at that name unchanged. A genuine state of a
resumable log keeps working, and the state is replaced by a rename (a new inode each time), so
a link put at its name while the log runs is replaced, never written through.
"""
import os
import signal
import stat
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


def one_line(err, path):
    lines = err.strip().split("\n")
    return len(lines) == 1 and lines[0].startswith("modlens: %s: " % path)


def make_input(path, seconds):
    t = np.arange(int(seconds * FS)) / FS
    rng = np.random.default_rng(5)
    x = 0.001 * rng.standard_normal(len(t)) + 0.01 * np.sin(2 * np.pi * 50 * t)
    E.write(path, x.astype(np.float32), FS, "FLOAT")


def main():
    exe = E.modlens_path()
    c = E.Checker("log state safety")
    with E.scratch():
        make_input("in.wav", 6)
        args = ["in.wav", "--seconds", "3", "--start-time", "2024-01-01T00:00:00Z"]

        # another program's data at NAME.state
        with open("u.csv.state", "w") as f:
            f.write("user data, not a modlens file\n")
        rc, _, err = log(exe, args + ["--out", "u.csv"])
        c.check("foreign data at the state's name: exit 2, one line naming it",
                rc == 2 and one_line(err, "u.csv.state"), "rc %d, stderr %r" % (rc, err))
        c.check("foreign data at the state's name: unchanged",
                open("u.csv.state").read() == "user data, not a modlens file\n")
        c.check("foreign data at the state's name: no rows or events written",
                not os.path.exists("u.csv") and not os.path.exists("u-events.csv"), str(sorted(os.listdir("."))))

        # an empty file and one without a line break are not a state either
        open("e.csv.state", "w").close()
        rc, _, err = log(exe, args + ["--out", "e.csv"])
        c.check("empty file at the state's name: refused, unchanged",
                rc == 2 and one_line(err, "e.csv.state") and os.path.getsize("e.csv.state") == 0
                and not os.path.exists("e.csv"), "rc %d, %r" % (rc, err))

        # a symbolic link to a precious file, and a dangling one
        with open("precious.txt", "w") as f:
            f.write("precious\n")
        os.symlink("precious.txt", "s.csv.state")
        rc, _, err = log(exe, args + ["--out", "s.csv"])
        c.check("link to a file at the state's name: exit 2, one line",
                rc == 2 and one_line(err, "s.csv.state"), "rc %d, stderr %r" % (rc, err))
        c.check("link to a file at the state's name: target and link unchanged",
                open("precious.txt").read() == "precious\n" and os.path.islink("s.csv.state")
                and os.readlink("s.csv.state") == "precious.txt")
        c.check("link at the state's name: nothing written", not os.path.exists("s.csv")
                and not os.path.exists("s-events.csv"))
        # a link to a genuine modlens state is refused too (never written through a link)
        rc, _, _ = log(exe, args + ["--out", "real.csv"])
        os.symlink("real.csv.state", "l.csv.state")
        before = open("real.csv.state", "rb").read()
        rc, _, err = log(exe, args + ["--out", "l.csv"])
        c.check("link to a modlens state: refused, its target unchanged",
                rc == 2 and one_line(err, "l.csv.state") and open("real.csv.state", "rb").read() == before,
                "rc %d, %r" % (rc, err))
        os.symlink("nowhere", "d.csv.state")
        rc, _, err = log(exe, args + ["--out", "d.csv"])
        c.check("dangling link at the state's name: refused, nothing created",
                rc == 2 and one_line(err, "d.csv.state") and not os.path.exists("nowhere")
                and not os.path.exists("d.csv"), "rc %d, %r" % (rc, err))

        # a folder and a FIFO
        os.mkdir("f.csv.state")
        rc, _, err = log(exe, args + ["--out", "f.csv"])
        c.check("folder at the state's name: refused", rc == 2 and one_line(err, "f.csv.state")
                and not os.path.exists("f.csv"), "rc %d, %r" % (rc, err))
        os.mkfifo("p.csv.state")
        rc, _, err = log(exe, args + ["--out", "p.csv"])
        c.check("FIFO at the state's name: refused", rc == 2 and one_line(err, "p.csv.state")
                and stat.S_ISFIFO(os.lstat("p.csv.state").st_mode) and not os.path.exists("p.csv"),
                "rc %d, %r" % (rc, err))

        # the events file the log names itself (beside --out) as a link to a precious file
        os.symlink("precious.txt", "v-events.csv")
        rc, _, err = log(exe, args + ["--out", "v.csv"])
        c.check("link at the events file's own name: refused, target unchanged",
                rc == 2 and one_line(err, "v-events.csv") and open("precious.txt").read() == "precious\n"
                and not os.path.exists("v.csv") and not os.path.exists("v.csv.state"), "rc %d, %r" % (rc, err))
        # a rotated period's file named by the log (a link there) is refused as well
        os.symlink("precious.txt", "r-20240101T000000Z.csv")
        rc, _, err = log(exe, args + ["--out", "r.csv", "--rotate-hours", "1"])
        c.check("link at a rotated file's name: refused, target unchanged",
                rc == 2 and one_line(err, "r-20240101T000000Z.csv") and open("precious.txt").read() == "precious\n",
                "rc %d, %r" % (rc, err))

        # a genuine state keeps working: a stopped log resumes from it
        rc1, _, _ = log(exe, ["in.wav", "--out", "g.csv", "--seconds", "3", "--start-time", "2024-01-01T00:00:00Z"])
        # a second name for the first run's state: written in place, it would change too
        os.link("g.csv.state", "g-old.state")
        old = open("g-old.state", "rb").read()
        rc2, out2, err2 = log(exe, ["in.wav", "--out", "g.csv", "--start-time", "2024-01-01T00:00:00Z"])
        rows = E.log_dicts("g.csv")
        c.check("a genuine state: the log continues from it", rc1 == 0 and rc2 == 0 and len(rows) == 6
                and [float(r["offset_s"]) for r in rows] == [0, 1, 2, 3, 4, 5], "rc %d %d, rows %d, %r" % (rc1, rc2, len(rows), err2))
        c.check("the state is replaced by a rename, never rewritten in place",
                open("g-old.state", "rb").read() == old and open("g.csv.state", "rb").read() != old
                and stat.S_ISREG(os.lstat("g.csv.state").st_mode))
        c.check("no temporary left beside the state", not [n for n in os.listdir(".") if ".state." in n],
                str(sorted(os.listdir("."))))

        # a link put at the state's name while the log runs is replaced, never written through
        make_input("long.wav", 30)
        with open("precious2.txt", "w") as f:
            f.write("precious too\n")
        p = subprocess.Popen([exe, "log", "long.wav", "--out", "w.csv", "--pace", "10",
                              "--start-time", "2024-01-01T00:00:00Z"], stdout=subprocess.DEVNULL,
                             stderr=subprocess.PIPE)
        deadline = time.monotonic() + 30
        while time.monotonic() < deadline and not os.path.exists("w.csv.state") and p.poll() is None:
            time.sleep(0.02)
        swapped = False
        if os.path.exists("w.csv.state"):
            os.remove("w.csv.state")
            os.symlink("precious2.txt", "w.csv.state")
            swapped = True
        p.send_signal(signal.SIGTERM)
        _, err = p.communicate(timeout=E.RUN_TIMEOUT_S)
        c.check("a link put at the state's name meanwhile: its target never written",
                swapped and open("precious2.txt").read() == "precious too\n", "stderr %r" % err.decode())

        # a stop (SIGTERM) inside a buzz, then the same command again: no impulse counted twice --
        # the buzz closed at the stop and the one after it do not overlap, and together they hold
        # at most the impulses the capture has (constructed: 100 Hz clicks from 10 to 20 s)
        t = np.arange(30 * FS) / FS
        x = 0.001 * np.random.default_rng(9).standard_normal(len(t))
        clicks = np.arange(10.0, 20.0, 0.01)
        for tc in clicks:
            i = int(round(tc * FS))
            x[i:i + 10] += 0.2 * np.hanning(10)
        E.write("buzz.wav", x.astype(np.float32), FS, "FLOAT")
        a = ["buzz.wav", "--out", "z.csv", "--start-time", "2024-01-01T00:00:00Z"]
        p = subprocess.Popen([exe, "log"] + a + ["--pace", "10"], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline and p.poll() is None:  # wait until 14 rows: inside the buzz
            if os.path.exists("z.csv") and open("z.csv", "rb").read().count(b"\n") >= 16:
                break
            time.sleep(0.02)
        p.send_signal(signal.SIGTERM)
        p.communicate(timeout=E.RUN_TIMEOUT_S)
        rc, _, err = log(exe, a)
        buzz = [r for r in E.log_dicts("z-events.csv") if r["kind"] == "buzz"]
        spans = sorted((float(b["start_offset_s"]), float(b["end_offset_s"])) for b in buzz)
        n = sum(int(b["detail"].split(" ")[0]) for b in buzz)
        c.check("stop inside a buzz, resumed: the buzz events do not overlap",
                rc == 0 and len(spans) >= 1 and all(spans[i][1] <= spans[i + 1][0] for i in range(len(spans) - 1)),
                "spans %r, %r" % (spans, err))
        c.check("stop inside a buzz, resumed: at most the %d constructed impulses counted" % len(clicks),
                0 < n <= len(clicks), "%d impulses in %d buzz events" % (n, len(buzz)))
    c.finish()


if __name__ == "__main__":
    main()
