"""End-to-end tests of `modlens log` as an interference hunter uses it (numpy-built captures).

Usage: /usr/bin/python3 test_log_interference.py /path/to/modlens

- clicks are found in all three kinds (audio, IF, I/Q) within 5 ms: on what the listener hears
  (the audio, or the envelope the log demodulates), against its own recent background;
- the CISPR 16-1-1 Band B quasi-peak chain (dsp/qpeak.h) through log: a CW reads its level, pulse
  trains read as the standard's pulse-response table has them (docs/references.md 11; which rows
  are verified and which recalled is said beside each);
- a dimmer-like buzz (docs/references.md 15: bursts at twice the mains) is ONE buzz event with its
  rate within 1 Hz and a mains hint, not hundreds of impulse events; its broadband rise is an event;
- one mains value across a long log with a steady weak hum (no 50/60 flips);
- local time beside UTC across DST changes (TZ and --timezone), checked with Python's zoneinfo;
- round-number ticks on the log picture, read back from a PDF (pdftotext -bbox, poppler-utils),
  with their positions, and the spectrogram's colour scale;
- log decides the kind as measure does (an I/Q file without --kind);
- absolute noise: Fa and the nearest ITU-R P.372 environment from a calibration
  (docs/references.md 15: Fam = c - d lg f_MHz; kT0 = -173.975 dBm/Hz).
"""
import math
import os
import re
import subprocess
import sys
import xml.etree.ElementTree as ET
from datetime import datetime, timedelta, timezone
from zoneinfo import ZoneInfo

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402

import e2e_common as E  # noqa: E402

FS = 48000
CLICKS = [2.5031, 7.2507, 12.0503, 16.7779]  # 10 ms and more from a row's edge


def log(exe, args, env=None):
    p = subprocess.run(E.WRAP + [exe, "log"] + args, capture_output=True, timeout=E.RUN_TIMEOUT_S,
                       env=env)
    return p.returncode, p.stdout.decode(), p.stderr.decode()


def num(s):
    return float(s) if s not in ("", None) else None


def clicks(exe, c):
    """One impulse event per click, its start within 5 ms, in audio, IF and I/Q captures."""
    t = np.arange(20 * FS) / FS
    rng = np.random.default_rng(21)
    audio = 0.1 * np.sin(2 * np.pi * 1000 * t) + rng.normal(0, 1e-3, t.size)
    env = 0.3 * (1 + 0.3 * np.sin(2 * np.pi * 400 * t))  # 30 % AM of a 0.3 carrier
    ifc = env * np.cos(2 * np.pi * 12000 * t) + rng.normal(0, 1e-4, t.size)
    iq = env * np.exp(2j * np.pi * 5000 * t) + rng.normal(0, 1e-4, t.size) + 1j * rng.normal(0, 1e-4, t.size)
    for x in (audio, ifc):
        for k in CLICKS:
            x[int(k * FS)] += 0.5
    for k in CLICKS:
        iq[int(k * FS)] += 0.5  # a real click on I: broadband in the complex band too
    E.write("clk-audio.wav", audio.astype(np.float32), FS, "FLOAT")
    E.write("clk-if.wav", ifc.astype(np.float32), FS, "FLOAT")
    E.write("clk-iq.wav", np.stack([iq.real, iq.imag], 1).astype(np.float32), FS, "FLOAT")
    for kind in ("audio", "if", "iq"):
        rc, out, err = log(exe, ["--out", "clk-%s.csv" % kind, "--kind", kind, "clk-%s.wav" % kind])
        ev = E.log_dicts("clk-%s-events.csv" % kind)
        imp = sorted((e for e in ev if e["kind"] == "impulse"), key=lambda e: float(e["start_offset_s"]))
        c.check("%s: one impulse event per click, nothing else" % kind, rc == 0 and len(imp) == len(CLICKS)
                and len(ev) == len(CLICKS), "%s %s" % ([(e["kind"], e["start_offset_s"]) for e in ev], err.strip()))
        for e, k in zip(imp, CLICKS):
            # 1 ms frames; the envelope's channel filter is linear-phase (its ringing sits around
            # the click); 5 ms is the tolerance
            c.close("%s: click at %.4f s" % (kind, k), float(e["start_offset_s"]), k, 0.005, "5 ms")
        rows = E.log_dicts("clk-%s.csv" % kind)
        counts = [int(r["impulses"]) for r in rows]
        c.check("%s: impulse counts per row" % kind, counts == [sum(1 for k in CLICKS if int(k) == i)
                                                              for i in range(20)], str(counts))
    # the kind as measure decides it: two channels are I/Q
    rc, out, err = log(exe, ["--out", "auto-iq.csv", "clk-iq.wav"])
    rows = E.log_dicts("auto-iq.csv")
    c.check("no --kind: an I/Q file is logged as iq", rc == 0 and "; kind=iq;" in E.log_meta("auto-iq.csv")
            and all(num(r["carrier.level_dbfs"]) is not None for r in rows[1:]), err.strip())


def qp_rows(exe, name, x, kind, extra=()):
    E.write(name + ".wav", x, FS, "FLOAT")
    rc, out, err = log(exe, ["--out", name + ".csv", "--kind", kind] + list(extra) + [name + ".wav"])
    return rc, E.log_dicts(name + ".csv"), err


def quasi_peak(exe, c):
    t = np.arange(8 * FS) / FS
    # a CW at L dBFS reads L (dsp/qpeak.h: the detector's output is scaled by its steady share, the
    # meters settle within 8 x 160 ms); 0.05 dB for the Gaussian IF's ripple on a settled carrier
    a = 0.2
    want = 20 * math.log10(a)
    for kind, x in (("if", (a * np.cos(2 * np.pi * 12000 * t)).astype(np.float32)),
                    ("iq", np.stack([a * np.cos(2 * np.pi * 3000 * t), a * np.sin(2 * np.pi * 3000 * t)], 1)
                     .astype(np.float32))):
        rc, rows, err = qp_rows(exe, "cw-" + kind, x, kind)
        qp = [num(r["qp_dbfs"]) for r in rows]
        av = [num(r["av_dbfs"]) for r in rows]
        c.check("%s CW: the first row (the meter still settling) has no reading" % kind, rc == 0 and qp[0] is None,
                "%s %s" % (qp[:3], err.strip()))
        c.check("%s CW: qp_dbfs %.2f in every settled row" % (kind, want),
                all(v is not None and abs(v - want) <= 0.05 for v in qp[2:]), str(qp))
        c.check("%s CW: av_dbfs %.2f in every settled row" % (kind, want),
                all(v is not None and abs(v - want) <= 0.05 for v in av[2:]), str(av))
        # measure reports the same readings over the whole capture (after the settling)
        rc, rep, out, err = E.run_json(exe, ["--kind", kind, "cw-%s.wav" % kind])
        qpm = rep and E.get(rep, "interference.qp_dbfs")
        avm = rep and E.get(rep, "interference.av_dbfs")
        c.close("%s CW: measure's interference.qp_dbfs" % kind, qpm, want, 0.05, "as the log's rows")
        c.close("%s CW: measure's interference.av_dbfs" % kind, avm, want, 0.05, "as the log's rows")
    # a capture shorter than the meters' settling: no reading, and why
    E.write("cw-short.wav", (a * np.cos(2 * np.pi * 12000 * t[:FS])).astype(np.float32), FS, "FLOAT")
    rc, rep, out, err = E.run_json(exe, ["--kind", "if", "cw-short.wav"])
    c.check("measure: a 1 s capture has no quasi-peak reading, with the reason", rc == 0 and rep
            and E.get(rep, "interference.qp_dbfs") is None
            and "settling" in E.get(rep, "reasons.interference.qp_dbfs"), str(rep and rep.get("reasons")))
    # pulse trains of equal impulses (one sample of 0.5) on a real IF, the chain tuned to 12 kHz
    # (--carrier): the reading relative to 100 Hz. docs/references.md 11: 1000 Hz -4.5 +-1.0,
    # 10 Hz +10.0 +-1.5, 2 Hz +20.5 +-2.0, 1 Hz +22.5 +-2.0 (input change for a constant reading:
    # verified, transcription of the 2006 edition); 20 Hz +6.5 +-1.0 (recalled: the transcription
    # labels it 25 Hz). At constant input the reading changes by the negative; the standard's own
    # tolerances (the idealised chain needs no widening, tests/unit/test_dsp_qpeak.c).
    table = [(1000, +4.5, 1.0), (20, -6.5, 1.0), (10, -10.0, 1.5), (2, -20.5, 2.0), (1, -22.5, 2.0)]
    reading = {}
    for prf in [100] + [p for p, _, _ in table]:
        x = np.zeros(10 * FS, dtype=np.float32)
        x[100::int(FS / prf)] = 0.5
        rc, rows, err = qp_rows(exe, "pulse%d" % prf, x, "if", ["--carrier", "12000"])
        vals = [num(r["qp_dbfs"]) for r in rows[3:]]
        ok = rc == 0 and vals and all(v is not None for v in vals)
        reading[prf] = max(vals) if ok else None
        c.check("pulses %d Hz: a reading in every settled row" % prf, ok, "%s %s" % (vals, err.strip()))
    for prf, rel, tol in table:
        got = reading[prf] - reading[100] if reading[prf] is not None and reading[100] is not None else None
        c.close("pulses %d Hz: QP re 100 Hz" % prf, got, rel, tol, "CISPR 16-1-1 Band B, docs/references.md 11")


def dimmer(exe, c):
    """docs/references.md 15: a phase-control dimmer chops twice per mains cycle. The signal of
    tests/unit/test_dsp_buzz.c: noise of sigma 0.01 for 40 s; from 10 s to 30 s a burst every 10 ms
    (+-0.5 ms jitter), each a click alternating sample by sample and decaying with 3.83 samples of
    28 sigma: the level rises by 7 dB and the peak by 15 dB."""
    rng = np.random.default_rng(11)
    sigma = 0.01
    x = rng.normal(0, sigma, 40 * FS)
    bursts = []
    for k in range(2000):
        t0 = 10.0 + 0.005 + k * 0.01 + (rng.uniform() - 0.5) * 1e-3
        n0 = int(round(t0 * FS))
        j = np.arange(40)
        x[n0:n0 + 40] += 28 * sigma * np.where(j & 1, -1.0, 1.0) * np.exp(-j / 3.83)
        bursts.append(t0)
    ms0, ms1 = np.mean(x[:int(9.9 * FS)] ** 2), np.mean(x[10 * FS:30 * FS] ** 2)
    c.close("dimmer: the fixture's level rise", 10 * math.log10(ms1 / ms0), 7.0, 0.5, "as its docstring says")
    E.write("dimmer.wav", x.astype(np.float32), FS, "FLOAT")
    rc, out, err = log(exe, ["--out", "dim.csv", "--kind", "audio", "dimmer.wav"])
    ev = E.log_dicts("dim-events.csv")
    bz = [e for e in ev if e["kind"] == "buzz"]
    c.check("dimmer: ONE buzz event", rc == 0 and len(bz) == 1, str([(e["kind"], e["start_offset_s"]) for e in ev]))
    c.check("dimmer: not impulse events", not [e for e in ev if e["kind"] == "impulse"])
    if bz:
        b = bz[0]
        c.close("dimmer: rate", float(b["rate_hz"]), 100.0, 1.0, "twice 50 Hz; 1 Hz is the issue's tolerance")
        c.close("dimmer: start", float(b["start_offset_s"]), bursts[0], 0.02, "as the dsp test: the first burst")
        c.close("dimmer: end", float(b["end_offset_s"]), bursts[-1], 0.02, "the last burst")
        c.check("dimmer: the mains hint", "2 x 50 Hz mains" in b["detail"] and "dimmers" in b["detail"], b["detail"])
        c.check("dimmer: its impulses counted", int(b["detail"].split()[0]) >= 1990, b["detail"])
    lv = [e for e in ev if e["kind"] == "level"]
    c.check("dimmer: the broadband level rise is one event over the buzz", len(lv) == 1
            and abs(float(lv[0]["start_offset_s"]) - 10) <= 1 and abs(float(lv[0]["end_offset_s"]) - 30) <= 1,
            str(lv))
    c.check("dimmer: a hum event, if any, says it lies in the buzz",
            all("during a buzz" in e["detail"] for e in ev if e["kind"] == "hum"))


def mains(exe, c):
    """A weak, steady 50 Hz hum (with 150 and 250 Hz) for 120 s: the mains is decided once and held;
    its line stands only ~11 dB over a noise bin, so interval by interval the 50 and 60 Hz lobes'
    powers (which overlap at this resolution) could disagree."""
    t = np.arange(120 * FS) / FS
    rng = np.random.default_rng(1)
    a = 1e-4
    x = rng.normal(0, 1e-3, t.size) + a * np.sin(2 * np.pi * 50 * t) + 0.7 * a * np.sin(2 * np.pi * 150 * t + 1) \
        + 0.5 * a * np.sin(2 * np.pi * 250 * t + 2)
    E.write("weakhum.wav", x.astype(np.float32), FS, "FLOAT")
    rc, out, err = log(exe, ["--out", "wh.csv", "--kind", "audio", "weakhum.wav"])
    m = [r["mains_hz"] for r in E.log_dicts("wh.csv")]
    c.check("one mains value across the log", rc == 0 and set(m) - {""} == {"50"}, str(sorted(set(m))))
    c.check("decided once, then held", "".join("x" if v else "." for v in m).strip(".").find(".") < 0
            and m.index("50") <= 30, "".join("x" if v else "." for v in m))
    c.check("no mains event", not [e for e in E.log_dicts("wh-events.csv") if e["kind"] == "mains"])


def local_time(exe, c):
    """Rows and events carry the local time beside UTC; across a DST change (spring forward and
    fall back) it must be what Python's zoneinfo says."""
    x = np.random.default_rng(3).normal(0, 1e-3, 20 * FS)
    x[int(12.25 * FS)] += 0.5
    E.write("dst.wav", x.astype(np.float32), FS, "FLOAT")
    cases = [("Europe/Berlin", "2026-03-29T00:59:50Z", None),   # 02:00 CET -> 03:00 CEST
             ("Europe/Berlin", "2026-10-25T00:59:50Z", None),   # 03:00 CEST -> 02:00 CET
             ("America/New_York", "2026-03-08T06:59:50Z", "--timezone")]  # 02:00 EST -> 03:00 EDT
    for i, (zone, start, how) in enumerate(cases):
        env = dict(os.environ)
        args = ["--out", "dst%d.csv" % i, "--start-time", start, "dst.wav"]
        if how:
            env["TZ"] = "UTC"
            args = ["--timezone", zone] + args
        else:
            env["TZ"] = zone
        rc, out, err = log(exe, args, env)
        rows, ev = E.log_dicts("dst%d.csv" % i), E.log_dicts("dst%d-events.csv" % i)
        tz = ZoneInfo(zone)

        def local(utc):
            d = datetime.strptime(utc, "%Y-%m-%dT%H:%M:%S.%fZ").replace(tzinfo=timezone.utc).astimezone(tz)
            off = d.utcoffset()
            sign = "-" if off < timedelta(0) else "+"
            mins = abs(int(off.total_seconds())) // 60
            return d.strftime("%Y-%m-%dT%H:%M:%S.") + "%03d" % (d.microsecond // 1000) + \
                "%s%02d:%02d" % (sign, mins // 60, mins % 60)
        bad = [(r["start_utc"], r["start_local"]) for r in rows + ev if r["start_local"] != local(r["start_utc"])]
        offsets = sorted({r["start_local"][-6:] for r in rows})
        c.check("%s from %s: local times as zoneinfo has them, across the change" % (zone, start),
                rc == 0 and len(rows) == 20 and not bad and len(offsets) == 2, "%s %s %s" % (bad[:2], offsets, err.strip()))
        c.check("%s: the summary counts events per local hour" % zone,
                "events per local hour (%s):" % zone in out and len(ev) == 1, out[-300:])


def words(pdf):
    """(text, xMin, yMin, xMax, yMax) of every word of a PDF's first page (pdftotext -bbox)."""
    html = subprocess.run(["pdftotext", "-bbox", pdf, "-"], capture_output=True, timeout=60).stdout.decode()
    out = []
    for m in re.finditer(r'<word xMin="([\d.]+)" yMin="([\d.]+)" xMax="([\d.]+)" yMax="([\d.]+)">([^<]*)</word>',
                         html):
        out.append((m.group(5), float(m.group(1)), float(m.group(2)), float(m.group(3)), float(m.group(4))))
    return out


ROUND = {1, 2, 5}


def is_round(v):
    """v is 0 or d x 10^n with d in 1, 2, 5 (or a multiple of such a step: checked by the caller)."""
    if v == 0:
        return True
    e = math.floor(math.log10(abs(v)) + 1e-9)
    return round(abs(v) / 10 ** e, 6) in ROUND


def plot_ticks(exe, c):
    """The picture's ticks read back from a PDF: values and places."""
    rc, out, err = log(exe, ["--out", "pl.csv", "--plot", "pl.pdf", "--kind", "audio", "clk-audio.wav"])
    c.check("--plot FILE.pdf written", rc == 0 and open("pl.pdf", "rb").read(5) == b"%PDF-", err.strip())
    w = words("pl.pdf")
    # io/logplot.c's frame (points, the page is 1200 x 820): time axis X0 = 70 .. X1 = 1100; level
    # panel 48 .. 400; spectrogram 460 .. 770
    x0, x1, ly0, ly1, sy0, sy1 = 70.0, 1100.0, 48.0, 400.0, 460.0, 770.0
    # time labels under the level panel: "N s" centred on their tick
    row = sorted((t for t in w if 400 < t[2] < 420 and x0 - 20 < t[1] < x1 + 20), key=lambda t: t[1])
    labels, i = [], 0
    while i + 1 < len(row):
        if re.fullmatch(r"\d+", row[i][0]) and row[i + 1][0] == "s":
            labels.append((float(row[i][0]), (row[i][1] + row[i + 1][3]) / 2))
            i += 2
        else:
            i += 1
    vals = [v for v, _ in labels]
    steps = {round(b - a, 9) for a, b in zip(vals, vals[1:])}
    c.check("time ticks: round values, one round step", len(vals) >= 5 and len(steps) == 1
            and is_round(steps.pop()) and all(v == round(v) for v in vals), str(vals))
    # the rows span 0 .. 20 s: a label's centre lies where its value does on the axis
    worst = max((abs(x - (x0 + v / 20.0 * (x1 - x0))) for v, x in labels), default=99)
    c.check("time ticks sit at their values (within 1.5 pt)", worst <= 1.5, "%.2f pt" % worst)
    # level labels, right-aligned at X0 - 6 in the level panel: a round step, evenly spaced
    lv = sorted(((float(t[0]), (t[2] + t[4]) / 2) for t in w if re.fullmatch(r"-?\d+", t[0])
                 and abs(t[3] - (x0 - 6)) < 2 and ly0 - 8 < t[2] < ly1), key=lambda p: p[0])
    dv = {round(b[0] - a[0], 6) for a, b in zip(lv, lv[1:])}
    dy = [(a[1] - b[1]) / (b[0] - a[0]) for a, b in zip(lv, lv[1:])]
    c.check("level ticks: a round step, evenly placed", len(lv) >= 3 and len(dv) == 1 and is_round(dv.pop())
            and max(dy) - min(dy) < 0.05, str(lv))
    # frequency labels in the spectrogram: 1, 2, 5 x 10^n ("1k" = 1000), placed logarithmically
    fr = []
    for t in w:
        m = re.fullmatch(r"(\d+(?:\.\d+)?)(k?)", t[0])
        if m and abs(t[3] - (x0 - 6)) < 2 and sy0 - 8 < t[2] < sy1 + 8:
            fr.append((float(m.group(1)) * (1000 if m.group(2) else 1), (t[2] + t[4]) / 2))
    fr.sort()
    slope = [(a[1] - b[1]) / math.log(b[0] / a[0]) for a, b in zip(fr, fr[1:])]
    c.check("frequency ticks: 1, 2, 5 x 10^n, on a logarithmic axis", len(fr) >= 5
            and all(is_round(f) for f, _ in fr) and max(slope) - min(slope) < 0.5,
            "%s %s" % ([f for f, _ in fr], [round(s, 2) for s in slope]))
    # the colour scale: its title and round dB ticks beside the spectrogram
    cs = sorted(float(t[0]) for t in w if re.fullmatch(r"-?\d+", t[0]) and t[1] > x1 + 30 and sy0 - 8 < t[2] < sy1 + 8)
    c.check("the spectrogram has a colour scale in dBFS/Hz with round ticks", any(t[0] == "dBFS/Hz" for t in w)
            and len(cs) >= 3 and len({round(b - a, 6) for a, b in zip(cs, cs[1:])}) == 1, str(cs))
    c.check("events are marked (the legend names them)", all(any(t[0] == k for t in w)
                                                              for k in ("impulse", "buzz", "hum", "level")))


def absolute_noise(exe, c):
    """Fa = density (dBm/Hz) + 173.975 dB; the nearest of P.372's environments (docs/references.md
    15: city 76.8/27.7, residential 72.5/27.7, rural 67.2/27.7, quiet rural 53.6/28.6, galactic
    52.0/23.0 as c/d of Fam = c - d lg f_MHz)."""
    env = {"city": (76.8, 27.7), "residential": (72.5, 27.7), "rural": (67.2, 27.7),
           "quiet-rural": (53.6, 28.6), "galactic": (52.0, 23.0)}
    t = np.arange(10 * FS) / FS
    rng = np.random.default_rng(17)
    sigma = 1e-4
    ifc = 0.1 * np.cos(2 * np.pi * 12000 * t) + rng.normal(0, sigma, t.size)
    E.write("fa-if.wav", ifc.astype(np.float32), FS, "FLOAT")
    iq = 0.1 * np.exp(2j * np.pi * 4000 * t) + rng.normal(0, sigma, t.size) + 1j * rng.normal(0, sigma, t.size)
    E.write("fa-iq.wav", np.stack([iq.real, iq.imag], 1).astype(np.float32), FS, "FLOAT")
    # densities re the full-scale reference: real, one-sided sigma^2 / (fs/2) re a full-scale sine's
    # 0.5; I/Q, two-sided 2 sigma^2 / fs re a full-scale complex tone's 1
    dens = {"if": 10 * math.log10(sigma ** 2 / (FS / 2) / 0.5), "iq": 10 * math.log10(2 * sigma ** 2 / FS / 1.0)}
    for kind, fs_dbm, f_hz in (("if", 20.0, 1e6), ("if", 0.0, 1e6), ("iq", 17.0, 3.6e6)):
        rc, out, err = log(exe, ["--out", "fa-%s-%g.csv" % (kind, fs_dbm), "--kind", kind, "--fullscale-dbm",
                                 str(fs_dbm), "--rf-hz", str(f_hz), "fa-%s.wav" % kind])
        rows = E.log_dicts("fa-%s-%g.csv" % (kind, fs_dbm))
        fa = dens[kind] + fs_dbm + 173.975
        fam = {k: cc - d * math.log10(f_hz / 1e6) for k, (cc, d) in env.items()}
        near = min(fam, key=lambda k: abs(fa - fam[k]))
        got = [num(r["fa_db"]) for r in rows]
        # 0.3 dB: the median of some 1600 bins spreads by ~0.05 dB, the median-to-mean correction
        # (Wilson-Hilferty) is good to ~0.05 dB, the float capture's rounding is far below
        c.check("%s, %+g dBm full scale, %.1f MHz: Fa %.2f dB in every row" % (kind, fs_dbm, f_hz / 1e6, fa),
                rc == 0 and got and all(v is not None and abs(v - fa) <= 0.3 for v in got), "%s %s" % (got[:4], err.strip()))
        c.check("%s: nearest environment %s" % (kind, near), all(r["noise_environment"] == near for r in rows),
                str({r["noise_environment"] for r in rows}))
        c.check("%s: distance to it" % kind, all(abs(float(r["environment_distance_db"]) - (fa - fam[near])) <= 0.3
                                                 for r in rows))
        c.check("%s: the summary's median Fa" % kind, re.search(r"noise: Fa median %.1f dB" % round(fa, 1), out)
                is not None or re.search(r"noise: Fa median (-?[\d.]+)", out) is not None
                and abs(float(re.search(r"noise: Fa median (-?[\d.]+)", out).group(1)) - fa) <= 0.3, out[-400:])


def main():
    exe = E.modlens_path()
    c = E.Checker("log interference")
    with E.scratch():
        for part in (clicks, quasi_peak, dimmer, mains, local_time, plot_ticks, absolute_noise):
            try:
                part(exe, c)
            except (KeyError, ValueError, IndexError, TypeError, OSError) as e:  # a file not as it should be
                c.check("%s: ran to its end" % part.__name__, False, repr(e))
    c.finish()


if __name__ == "__main__":
    main()
