"""End-to-end test of `modlens log`: interval rows and events on a generated file.

Usage: /usr/bin/python3 test_log_events.py /path/to/modlens

A 90 s, 48 kHz recording: white noise (sigma 1e-3) under a 1 kHz programme tone of 0.1, single
sample clicks of 0.5 at known times, hum (50 Hz 3e-3 and 150 Hz 1.5e-3) from 30 s to the end, and
a noise rise (an extra sigma 3e-3) from 45 s to 55 s. Every event must be found with its start
(and end) within one interval, impulses within 5 ms, and nothing else; the per-interval levels are
checked against numpy computations on the same samples and analytic values. A second file checks
the A-weighted level against IEC 61672-1.
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
T = 90
CLICKS = [5.0123, 12.5, 20.25, 33.3337, 40.9985, 70.5]  # 40.9985: confirmed after its row ends


def make():
    rng = np.random.default_rng(3)
    t = np.arange(T * FS) / FS
    x = rng.normal(0, 1e-3, T * FS) + 0.1 * np.sin(2 * np.pi * 1000 * t)
    for c in CLICKS:
        x[int(c * FS)] += 0.5
    h = t >= 30
    x[h] += 3e-3 * np.sin(2 * np.pi * 50 * t[h]) + 1.5e-3 * np.sin(2 * np.pi * 150 * t[h])
    nr = (t >= 45) & (t < 55)
    x[nr] += rng.normal(0, 3e-3, nr.sum())
    x = x.astype(np.float32)
    E.write("events.wav", x, FS, "FLOAT")
    return x.astype(np.float64)


def log(exe, args):
    p = subprocess.run([exe, "log"] + args, capture_output=True, timeout=E.RUN_TIMEOUT_S)
    return p.returncode, p.stdout.decode(), p.stderr.decode()


def read_csv(path):
    return E.log_dicts(path)


def num(s):
    return float(s) if s != "" else None


def main():
    exe = E.modlens_path()
    c = E.Checker("log events")
    with E.scratch():
        x = make()
        rc, out, err = log(exe, ["--out", "rows.csv", "--start-time", "2026-03-01T23:59:30Z", "events.wav"])
        c.check("exit 0", rc == 0, err.strip())
        c.check("summary printed", "events:" in out and "events per UTC hour" in out, out[:200])
        rows = read_csv("rows.csv")
        ev = read_csv("rows-events.csv")
        c.check("90 rows of 1 s", len(rows) == 90 and all(r["duration_s"] == "1.000" for r in rows),
                "%d rows" % len(rows))
        c.check("utc of the first and a later row", rows[0]["start_utc"] == "2026-03-01T23:59:30.000Z"
                and rows[40]["start_utc"] == "2026-03-02T00:00:10.000Z", rows[40]["start_utc"])

        imp = [e for e in ev if e["kind"] == "impulse"]
        c.check("one impulse event per click", len(imp) == len(CLICKS), "%d impulses" % len(imp))
        for e, t in zip(sorted(imp, key=lambda e: float(e["start_offset_s"])), CLICKS):
            # 1 ms frames: the start is the frame holding the click, 0..1 ms before it
            c.close("impulse at %.4f s" % t, float(e["start_offset_s"]), t, 0.005, "few ms")
            # numpy: the largest |sample| over the event's span; 0.01 dB is the CSV's rounding
            a, b = int(round(float(e["start_offset_s"]) * FS)), int(round(float(e["end_offset_s"]) * FS))
            c.close("impulse peak at %.4f s" % t, float(e["peak_dbfs"]),
                    20 * math.log10(np.max(np.abs(x[a:b]))), 0.006, "numpy over the span")
        counts = [int(r["impulses"]) for r in rows]
        want = [sum(1 for t in CLICKS if int(t) == i) for i in range(T)]
        c.check("impulse counts per interval", counts == want)

        hum = [e for e in ev if e["kind"] == "hum"]
        c.check("one hum event", len(hum) == 1, str(hum))
        if hum:
            c.close("hum start", float(hum[0]["start_offset_s"]), 30.0, 1.0, "within one interval")
            c.close("hum lasts to the end", float(hum[0]["end_offset_s"]), 90.0, 1.0)
        noise = [e for e in ev if e["kind"] == "noise"]
        c.check("one noise event", len(noise) == 1, str(noise))
        if noise:
            c.close("noise start", float(noise[0]["start_offset_s"]), 45.0, 1.0, "within one interval")
            c.close("noise end", float(noise[0]["end_offset_s"]), 55.0, 1.0, "within one interval")
            # analytic: the floor density rises by 10 lg((1e-6 + 9e-6)/1e-6) = 10 dB; 1 dB for the
            # estimate's spread over 0.17 s steps
            c.close("noise rise", float(noise[0]["rise_db"]), 10.0, 1.0)
        other = [e for e in ev if e["kind"] not in ("impulse", "hum", "noise")]
        c.check("no other events", not other, str(other))

        # per-interval levels against numpy on the same samples
        worst_rms = worst_pk = 0.0
        for i, r in enumerate(rows):
            seg = x[i * FS:(i + 1) * FS]
            worst_rms = max(worst_rms, abs(float(r["rms_dbfs"]) - 10 * math.log10(np.mean(seg ** 2) / 0.5)))
            worst_pk = max(worst_pk, abs(float(r["peak_dbfs"]) - 20 * math.log10(np.max(np.abs(seg)))))
        c.check("rms_dbfs = numpy within 0.01 dB", worst_rms <= 0.01, "worst %.4f" % worst_rms)
        c.check("peak_dbfs = numpy within 0.01 dB", worst_pk <= 0.01, "worst %.4f" % worst_pk)
        seg = x[2 * FS:3 * FS]
        c.close("crest factor", float(rows[2]["crest_db"]),
                20 * math.log10(np.max(np.abs(seg)) / math.sqrt(np.mean(seg ** 2))), 0.006,
                "numpy: 20 lg(peak / rms); 0.006 dB for the CSV's rounding")
        # hum components: analytic 20 lg(amplitude); 0.2 dB for the noise inside the lobe
        for name, amp in (("hum_h1_dbfs", 3e-3), ("hum_h3_dbfs", 1.5e-3)):
            got = [num(r[name]) for r in rows[31:44]]
            c.check("%s = %.2f dBFS (31..44 s)" % (name, 20 * math.log10(amp)),
                    all(g is not None and abs(g - 20 * math.log10(amp)) <= 0.2 for g in got), str(got[:3]))
        # no hum, no mains: decided by the hum's line at 50 Hz, then held
        c.check("mains 50 Hz from the hum on", all(r["mains_hz"] == "50" for r in rows[30:]),
                str([r["mains_hz"] for r in rows[28:36]]))
        c.check("no mains before the hum", all(r["mains_hz"] == "" for r in rows[:30]))
        # noise floor: one-sided density sigma^2/(fs/2) = 4.17e-11 /Hz = -100.8 dBFS/Hz; the median
        # of an average of 5 Hann periodograms (chi-square, 10 degrees of freedom) lies 0.30 dB below
        # the mean: -101.1; 0.4 dB for the spread of one interval's estimate
        fl = [float(r["noise_floor_dbfs_hz"]) for i, r in enumerate(rows[:30]) if want[i] == 0]
        c.check("noise floor -101.1 dBFS/Hz (0..30 s, intervals without clicks)", all(abs(v + 101.1) <= 0.4 for v in fl),
                "%.2f .. %.2f" % (min(fl), max(fl)))

        # A-weighted level: IEC 61672-1 Table 3 (docs/references.md 1.2): 100 Hz -19.1, 10 kHz -2.5 dB.
        # 100 Hz: the filter is within 0.04 dB of the standard's formula there (-19.14; unit test
        # test_dsp_aweight), so 0.1 dB; 10 kHz: the class-1 limits +2.0/-3.0 dB.
        t = np.arange(5 * FS) / FS
        for f, table, lo, hi in ((100.0, -19.14, -0.1, 0.1), (10000.0, -2.5, -3.0, 2.0)):
            E.write("tone.wav", 0.1 * np.sin(2 * np.pi * f * t), FS, "FLOAT")
            for p in ("a.csv", "a-events.csv"):
                if os.path.exists(p):
                    os.remove(p)
            rc, _, err = log(exe, ["--out", "a.csv", "tone.wav"])
            r = read_csv("a.csv")[3]
            d = float(r["a_weighted_dbfs"]) - float(r["rms_dbfs"])
            c.check("A-weighted minus rms at %.0f Hz within %.1f .. %+.1f dB of %.2f" % (f, lo, hi, table),
                    rc == 0 and table + lo <= d <= table + hi, "%.3f dB" % d)

        # a buzz: 0.3 clicks every 10 ms from 10 s to 12 s (a dimmer's noise): 200 impulses, counted
        # 100 per 1 s row, and ONE buzz event at their 100 Hz rate (dsp/buzz.h: the impulses lie on a
        # 10 ms grid), not impulse events. (Being regular, its spectrum is lines 100 Hz apart: the
        # median bin, the noise floor, hardly moves.)
        rng = np.random.default_rng(8)
        y = rng.normal(0, 1e-3, 20 * FS)
        buzz = [int(round((10.0 + 0.01 * k) * FS)) + 7 for k in range(200)]
        y[buzz] += 0.3
        E.write("buzz.wav", y, FS, "FLOAT")
        rc, _, err = log(exe, ["--out", "buzz.csv", "--kind", "audio", "buzz.wav"])  # auto takes the comb for an IF carrier
        rows = read_csv("buzz.csv")
        ev = read_csv("buzz-events.csv")
        bz = [e for e in ev if e["kind"] == "buzz"]
        c.check("buzz: one buzz event, no impulse events", rc == 0 and len(bz) == 1
                and not [e for e in ev if e["kind"] == "impulse"], str(ev))
        if bz:
            # analytic: one click per 10 ms is 100 Hz; 1 Hz is the tolerance
            c.close("buzz: rate", float(bz[0]["rate_hz"]), 100.0, 1.0, "clicks every 10 ms")
            c.check("buzz: 200 impulses in it", bz[0]["detail"].startswith("200 impulses"), bz[0]["detail"])
            c.close("buzz: start", float(bz[0]["start_offset_s"]), buzz[0] / FS, 0.002, "1 ms frames")
            c.close("buzz: end", float(bz[0]["end_offset_s"]), buzz[-1] / FS, 0.002, "its last impulse's start")
        c.check("buzz: 100 impulses in each of its rows", [int(r["impulses"]) for r in rows[9:13]] == [0, 100, 100, 0])

        # 60 Hz mains: hum (2e-3 at 60 Hz and 180 Hz) from 8 s of a 20 s file of noise
        t = np.arange(20 * FS) / FS
        y = np.random.default_rng(9).normal(0, 1e-3, 20 * FS)
        y[t >= 8] += 2e-3 * (np.sin(2 * np.pi * 60 * t[t >= 8]) + np.sin(2 * np.pi * 180 * t[t >= 8]))
        E.write("hum60.wav", y, FS, "FLOAT")
        rc, _, err = log(exe, ["--out", "h60.csv", "hum60.wav"])
        rows = read_csv("h60.csv")
        ev = read_csv("h60-events.csv")
        c.check("60 Hz: mains 60 from the hum on", rc == 0 and all(r["mains_hz"] == "60" for r in rows[8:]))
        hum = [e for e in ev if e["kind"] == "hum"]
        c.check("60 Hz: one hum event from 8 s, nothing else", len(hum) == 1 and len(ev) == 1
                and abs(float(hum[0]["start_offset_s"]) - 8) <= 1, str(ev))
        # analytic: 20 lg 2e-3 = -53.98 dBFS; 0.2 dB for the noise inside the lobe
        c.close("60 Hz: hum_h1_dbfs", float(rows[12]["hum_h1_dbfs"]), -53.98, 0.2)
    c.finish()


if __name__ == "__main__":
    main()
