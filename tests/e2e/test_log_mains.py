"""End-to-end test of `modlens log`'s mains decision and hum columns on steady hum.

Usage: /usr/bin/python3 test_log_mains.py /path/to/modlens

Captures built with numpy: mains hum at 50 or 60 Hz, a pure line or with harmonics, in white
noise. The log must decide the mains from its first interval (as `measure` decides it on a
capture of that length: a lone line on the mains itself is hum) and hold it in every row, and
its hum columns must read the constructed levels. A sine of peak A reads 20 lg(A) dBFS
(docs/references.md 5: AES17, a full-scale sine is 0 dBFS; its r.m.s. A / sqrt 2 re the
full-scale sine's 1 / sqrt 2). Negative checks: noise alone, and a 1 kHz test tone with no hum,
decide no mains.
"""
import math
import os
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402

import e2e_common as E  # noqa: E402

FS = 48000


def capture(path, seconds, lines, noise_dbfs, seed):
    """lines: (frequency, dBFS) sines; white noise of power noise_dbfs re a full-scale sine."""
    t = np.arange(int(seconds * FS)) / FS
    rng = np.random.default_rng(seed)
    x = rng.standard_normal(len(t)) * math.sqrt(0.5 * 10 ** (noise_dbfs / 10))
    for f, l in lines:
        x += 10 ** (l / 20) * np.sin(2 * np.pi * f * t + 0.3 * f / 50)
    E.write(path, x.astype(np.float32), FS, "FLOAT")


def log_rows(exe, wav, out, extra=()):
    for p in (out, out + ".state", out.replace(".csv", "-events.csv")):
        if os.path.exists(p):
            os.remove(p)
    p = subprocess.run([exe, "log", wav, "--out", out, "--start-time", "2024-01-01T00:00:00Z"] + list(extra),
                       capture_output=True, timeout=E.RUN_TIMEOUT_S)
    return p.returncode, E.log_dicts(out) if p.returncode == 0 else []


def num(s):
    return float(s) if s not in ("", None) else None


def main():
    exe = E.modlens_path()
    c = E.Checker("log mains and hum")
    with E.scratch():
        cases = [
            # name, mains, lines (order, dBFS), noise dBFS, seconds
            ("50 Hz pure -40", 50, [(1, -40.0)], -70.0, 20),
            ("50 Hz pure -27", 50, [(1, -27.0)], -70.0, 12),
            ("60 Hz pure -40", 60, [(1, -40.0)], -70.0, 20),
            ("60 Hz pure -27", 60, [(1, -27.0)], -70.0, 12),
            ("50 Hz with harmonics", 50, [(1, -40.0), (2, -46.0), (3, -52.0)], -70.0, 12),
            ("60 Hz with harmonics", 60, [(1, -40.0), (2, -46.0), (3, -52.0)], -70.0, 12),
        ]
        for i, (name, mains, lines, noise, secs) in enumerate(cases):
            wav = "h%d.wav" % i
            capture(wav, secs, [(k * mains, l) for k, l in lines], noise, 10 + i)
            rc, rows = log_rows(exe, wav, "h%d.csv" % i)
            c.check("%s: log exits 0 with rows" % name, rc == 0 and len(rows) >= secs - 1, "rc %d, %d rows" % (rc, len(rows)))
            if not rows:
                continue
            # the mains is decided from the first full interval and held in every row
            c.check("%s: mains_hz %d in the first row" % (name, mains), num(rows[0]["mains_hz"]) == mains,
                    "first row mains_hz %r" % rows[0]["mains_hz"])
            bad = [r["offset_s"] for r in rows if num(r["mains_hz"]) != mains]
            c.check("%s: mains_hz %d in every row" % (name, mains), not bad, "rows without it at %s" % bad[:5])
            # docs/references.md 5 (AES17): a sine of peak A reads 20 lg A dBFS; the lobe holds the
            # noise of ~7 bins (< -95 dBFS here), far below the 0.2 dB tolerance
            for k, l in lines:
                got = [num(r["hum_h%d_dbfs" % k]) for r in rows]
                worst = max((abs(g - l) if g is not None else 99.0) for g in got)
                c.check("%s: hum_h%d_dbfs %.1f in every row" % (name, k, l), worst <= 0.2,
                        "worst deviation %.3f dB" % worst)
            total = 10 * math.log10(sum(10 ** (l / 10) for _, l in lines))
            got = [num(r["hum_dbfs"]) for r in rows]
            worst = max((abs(g - total) if g is not None else 99.0) for g in got)
            c.check("%s: hum_dbfs %.2f (power sum of the lines) in every row" % (name, total), worst <= 0.3,
                    "worst deviation %.3f dB" % worst)
            # --mains given: the same columns (one definition of the hum figures)
            rc2, rows2 = log_rows(exe, wav, "g%d.csv" % i, ["--mains", str(mains)])
            same = rc2 == 0 and len(rows2) == len(rows) and all(
                a["hum_h1_dbfs"] == b["hum_h1_dbfs"] for a, b in zip(rows, rows2))
            c.check("%s: hum_h1_dbfs as with --mains %d" % (name, mains), same)

        # no hum: noise alone, and a clear 1 kHz tone in noise, decide no mains
        capture("n.wav", 8, [], -60.0, 30)
        rc, rows = log_rows(exe, "n.wav", "n.csv")
        c.check("noise alone: no mains decided", rc == 0 and rows and all(r["mains_hz"] == "" for r in rows),
                "mains_hz %s" % sorted(set(r["mains_hz"] for r in rows)))
        capture("t.wav", 8, [(1000.0, -20.0)], -70.0, 31)
        rc, rows = log_rows(exe, "t.wav", "t.csv")
        c.check("1 kHz tone without hum: no mains decided", rc == 0 and rows and all(r["mains_hz"] == "" for r in rows),
                "mains_hz %s" % sorted(set(r["mains_hz"] for r in rows)))
        # a 100 Hz buzz line joining steady 50 Hz hum later does not decide it: the first row does
        t = np.arange(20 * FS) / FS
        rng = np.random.default_rng(32)
        x = rng.standard_normal(len(t)) * math.sqrt(0.5e-7) + 0.01 * np.sin(2 * np.pi * 50 * t)
        x += np.where(t >= 10, 0.02, 0.0) * np.sin(2 * np.pi * 100 * t)
        E.write("b.wav", x.astype(np.float32), FS, "FLOAT")
        rc, rows = log_rows(exe, "b.wav", "b.csv")
        c.check("50 Hz hum, 100 Hz line from 10 s: mains 50 from the first row on",
                rc == 0 and rows and all(num(r["mains_hz"]) == 50 for r in rows),
                "mains_hz by row %s" % [r["mains_hz"] for r in rows][:12])
    c.finish()


if __name__ == "__main__":
    main()
