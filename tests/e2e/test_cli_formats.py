"""End-to-end test of `modlens measure`: file formats, report keys and formats, and options.

Usage: /usr/bin/python3 test_cli_formats.py /path/to/modlens

A 997.3 Hz tone with known 2nd/3rd harmonics, 50 Hz hum, a DC offset and white noise is written
as 16/24-bit and float WAV, 16/24-bit FLAC and 16/24-bit AIFF; every report must carry the
required keys and agree with the analytic truth of the signal. Text and CSV must agree with JSON.
Then --channel, --start/--duration, --tone, --band, --harmonics and --mains on purpose-made files.
"""
import math
import os
import re
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402
import soundfile as sf  # noqa: E402

import e2e_common as E  # noqa: E402

FS = 48000
SECONDS = 10.0
F0 = 997.3                       # not a bin centre at any nfft, not a sub-multiple of FS
A1 = 0.5                         # fundamental: -6.0206 dBFS
A2, A3 = 0.005, 0.0025           # 2nd -40 dBc, 3rd -46.0206 dBc
HUM = [(50.0, 0.001), (150.0, 0.0005)]   # -60 dBFS and -66.0206 dBFS
NOISE = 1e-4                     # white, rms
DC = 0.002                       # 0.2 % of full scale

# Definitions used for the expectations (dsp/metrics.h, dsp/spectrum.h): nfft for 48 kHz is
# 65536 (bins of 0.732 Hz, the power of two nearest 0.75 Hz from above); lobe +-12 bins; band
# bins k = ceil(20/bin) .. floor(20000/bin).
NFFT = 65536
BIN = FS / NFFT
LOBE = 12
NBAND = math.floor(20000 / BIN) - max(math.ceil(20 / BIN), LOBE) + 1

REQUIRED = ["input.path", "input.kind", "input.sample_rate_hz", "input.channels", "input.frames",
            "input.duration_s", "audio.fundamental_hz", "audio.fundamental_dbfs", "audio.thd_pct",
            "audio.thd_db", "audio.thdn_pct", "audio.thdn_db", "audio.sinad_db", "audio.snr_db",
            "audio.enob_bits", "audio.noise_dbfs", "audio.dc_offset_pct", "audio.clipped_samples",
            "audio.harmonics", "hum.mains_hz", "hum.level_dbfs", "hum.level_dbc", "hum.components",
            "checks", "verdict"]

FORMATS = [("WAV", "PCM_16", "16-bit"), ("WAV", "PCM_24", "24-bit"), ("WAV", "FLOAT", "float"),
           ("FLAC", "PCM_16", "16-bit"), ("FLAC", "PCM_24", "24-bit"),
           ("AIFF", "PCM_16", "16-bit"), ("AIFF", "PCM_24", "24-bit")]


def truth(subtype):
    """Analytic values of the main signal under the documented definitions."""
    s2 = NOISE ** 2 + E.quantisation_var(subtype)
    p1 = A1 * A1 / 2
    d = (A2 * A2 + A3 * A3) / 2
    hum = sum(a * a / 2 for _, a in HUM)
    white_band = 2 * s2 * NBAND / NFFT             # white noise in the band (per-bin 2 s^2 ENBW/n)
    # 10 lobes (fundamental + harmonics 2..10, 10 x 997.3 < 20 kHz) are excluded from the noise
    # bins; the hum lobes stay in them, so N counts the hum spread over the remaining bins.
    ncount = NBAND - 10 * (2 * LOBE + 1)
    n = white_band + hum * NBAND / ncount
    return {
        "fundamental_dbfs": 10 * math.log10(p1 / 0.5),
        "thd_pct": 100 * math.sqrt(d / p1),
        # B - P1: harmonics, hum and the band's white noise outside the fundamental's lobe
        "thdn_pct": 100 * math.sqrt((d + hum + white_band) / p1),
        "snr_db": 10 * math.log10(p1 / n),
        "noise_dbfs": 10 * math.log10(n / 0.5),
        "hum_dbfs": 10 * math.log10(hum / 0.5),  # the 2 tones; the 4 noise-only slots are no lines
    }


def scalar_metrics(rep):
    """{dotted name: value} of every number (or null) under audio.* and hum.* (not the text
    fields such as audio.measurement)."""
    out = {}
    for group in ("audio", "hum"):
        for k, v in rep.get(group, {}).items():
            if not isinstance(v, (list, str)):
                out[group + "." + k] = v
    return out


def decimals_of(text):
    return len(text.split(".")[1]) if "." in text else 0


def check_keys(ck, name, rep):
    missing = [k for k in REQUIRED if not E.has(rep, k)]
    ck.check(name + " required keys", not missing, "missing %s" % missing if missing else "all %d" % len(REQUIRED))
    rows_ok = all(set(("order", "frequency_hz", "level_dbc")) <= set(h) for h in rep["audio"].get("harmonics", [])) \
        and all(set(("frequency_hz", "level_dbfs")) <= set(h) for h in rep["hum"].get("components", []))
    ck.check(name + " table row keys", rows_ok and len(rep["audio"].get("harmonics", [])) > 0)


def check_main(ck, name, rep, subtype, fmt, tag, file_mean):
    t = truth(subtype)
    check_keys(ck, name, rep)
    inp = rep["input"]
    ck.check(name + " input fields", inp["kind"] == "audio" and inp["sample_rate_hz"] == FS
             and inp["channels"] == 1 and inp["frames"] == int(FS * SECONDS)
             and abs(inp["duration_s"] - SECONDS) < 1e-9, repr({k: inp[k] for k in
                                                                ("kind", "sample_rate_hz", "channels", "frames", "duration_s")}))
    ck.check(name + " input.format names container and samples", fmt in inp.get("format", "")
             and tag in inp.get("format", ""), repr(inp.get("format")))
    a = rep["audio"]
    # Phase-advance frequency of a stable tone over 13 segments: error << 1 mHz (requirement 0.01 Hz).
    ck.close(name + " fundamental_hz", a["fundamental_hz"], F0, 0.01, "10 s file, requirement")
    # HFT248D flatness +-0.0009 dB; 16-bit write scale 32767/32768 (-0.0003 dB); noise << 1e-4 dB.
    ck.close(name + " fundamental_dbfs", a["fundamental_dbfs"], t["fundamental_dbfs"], 0.005,
             "20 lg 0.5; flat-top flatness")
    # THD: flatness (2 x 0.0009 dB = 0.02 %) and the noise-harmonic cross term (relative sd of
    # THD s sqrt(ENBW_w2 / (nfft S D)) = 7e-5, see the hum checks below): 0.1 %.
    ck.rel(name + " thd_pct", a["thd_pct"], t["thd_pct"], 1e-3, "sqrt(a2^2 + a3^2)/a1")
    ck.close(name + " thd_db", a["thd_db"], 20 * math.log10(t["thd_pct"] / 100), 0.01, "20 lg THD")
    # THD+N is dominated by harmonics and hum (exact); white noise is 0.05 % of it: 0.2 %.
    ck.rel(name + " thdn_pct", a["thdn_pct"], t["thdn_pct"], 2e-3, "harmonics + hum + band noise")
    ck.close(name + " thdn_db = 20 lg thdn", a["thdn_db"], 20 * math.log10(a["thdn_pct"] / 100), 1e-4,
             "same quantity in dB; JSON rounding")
    ck.close(name + " sinad_db = -thdn_db", a["sinad_db"], -a["thdn_db"], 1e-9, "definition")
    ck.close(name + " enob_bits", a["enob_bits"], (a["sinad_db"] - 1.7609125905568) / 6.0205999132796, 1e-4,
             "IEEE 1241-2000 eq. 94/102: (SINAD - 10 lg 1.5)/(20 lg 2)")
    # SNR/noise: N is the hum spread over the noise bins plus white noise; the white part scatters
    # by ~1 % (4 % of N): 0.1 dB.
    ck.close(name + " snr_db", a["snr_db"], t["snr_db"], 0.1, "P1 / (white + hum in noise bins)")
    ck.close(name + " noise_dbfs", a["noise_dbfs"], t["noise_dbfs"], 0.1, "white + hum in noise bins")
    # DC: the mean of the samples in the file (as read by soundfile) is exact up to the JSON's
    # 1e-7 %. Against the generated DC: the sine's mean over 10 s is <= 0.5/(2 pi 997.3 10) =
    # 8e-4 %, and the 16-bit writer rounds with a bias of up to 0.5 LSB = 1.5e-3 %: 0.005 %.
    ck.close(name + " dc_offset_pct = mean of the samples", a["dc_offset_pct"], 100 * file_mean, 1e-6,
             "numpy mean of the file as read by soundfile")
    ck.close(name + " dc_offset_pct = generated DC", a["dc_offset_pct"], 100 * DC, 5e-3, "generated DC")
    ck.check(name + " clipped_samples = 0", a["clipped_samples"] == 0, repr(a["clipped_samples"]))
    h = a["harmonics"]
    # the table lists the lines that stand above the noise (dsp/metrics.h): the generated 2nd and
    # 3rd; H4..H10 hold noise only and are not listed (THD says what they could hide)
    ck.check(name + " harmonic orders: the generated 2, 3", [r["order"] for r in h] == [2, 3],
             repr([r["order"] for r in h]))
    if len(h) >= 2:
        ck.close(name + " H2 frequency", h[0]["frequency_hz"], 2 * F0, 0.02, "2 f1")
        # flatness x 2 (0.0018 dB) and the noise cross term (sd 0.0007 / 0.0013 dB, see hum): 0.01 dB
        ck.close(name + " H2 level_dbc", h[0]["level_dbc"], 20 * math.log10(A2 / A1), 0.01, "-40 dBc")
        ck.close(name + " H3 level_dbc", h[1]["level_dbc"], 20 * math.log10(A3 / A1), 0.01, "-46.02 dBc")
        ck.check(name + " THD measured (every harmonic above the noise or negligible)",
                 "thd_pct" not in rep["bounds"].get("audio", {}), repr(rep["bounds"]))
    hum = rep["hum"]
    ck.check(name + " mains detected 50 Hz", hum["mains_hz"] == 50, repr(hum["mains_hz"]))
    # Hum tones: the noise inside a tone's lobe adds a cross term 2 Re(S N*) whose relative sd is
    # 2 s sqrt(ENBW_w2 / (nfft S P)) with ENBW_w2 = 6.3 bins (HFT248D weights the noise by w^2),
    # S = 13 segments: 0.0033 dB at -60 dBFS, 0.0067 dB at -66 dBFS. 4 sd + flatness 0.0009 dB.
    ck.close(name + " hum.level_dbfs", hum["level_dbfs"], t["hum_dbfs"], 0.02, "50 + 150 Hz tones")
    ck.close(name + " hum.level_dbc", hum["level_dbc"], hum["level_dbfs"] - a["fundamental_dbfs"], 1e-4,
             "dBFS re fundamental")
    comps = hum["components"]
    # only the mains lines above the noise: 50 and 150 Hz (100, 200, 250, 300 Hz are absent)
    ck.check(name + " hum component frequencies", [c["frequency_hz"] for c in comps] == [50, 150],
             repr([c["frequency_hz"] for c in comps]))
    if len(comps) == 2:
        ck.close(name + " hum 50 Hz", comps[0]["level_dbfs"], -60.0, 0.02, "20 lg 0.001")
        ck.close(name + " hum 150 Hz", comps[1]["level_dbfs"], 20 * math.log10(0.0005), 0.03, "20 lg 0.0005")
    ck.check(name + " no checks, verdict unchecked", rep["checks"] == [] and rep["verdict"] == "unchecked",
             "%r %r" % (rep["checks"], rep["verdict"]))
    ck.check(name + " no notes for a clean tone", rep.get("notes") == [], repr(rep.get("notes")))


def check_text_csv(ck, exe, path, rep):
    metrics = scalar_metrics(rep)
    rc, out, err = E.run(exe, ["--format", "csv", path])
    ck.check("csv exit 0", rc == 0, err.strip())
    # no header row (README "Reports"): every row is data, with every documented column
    try:
        rows = E.csv_rows(out)
    except ValueError as e:
        rows = []
        ck.check("csv rows have every documented column", False, str(e))
    ck.check("csv: no header row, file and kind on every row", rows != [] and all(
        r["file"] == path and r["input_kind"] == rep["input"]["kind"] and r["row_kind"] != "row_kind"
        for r in rows), repr(rows[:1]))
    byname = {r["name"]: r for r in rows if r["row_kind"] == "metric"}
    bad = []
    for k, v in metrics.items():
        r = byname.get(k)
        if r is None:
            bad.append((k, "missing"))
        elif v is None:
            if r["value"] != "":
                bad.append((k, r["value"]))
        elif abs(float(r["value"]) - v) > 0.5 * 10 ** -decimals_of(r["value"]) + 1e-9:
            bad.append((k, r["value"], v))
    ck.check("csv metric values = JSON (to the printed precision)", not bad, repr(bad))
    units = {"audio.fundamental_hz": "Hz", "audio.fundamental_dbfs": "dBFS", "audio.thd_pct": "%",
             "audio.thd_db": "dB", "audio.snr_db": "dB", "audio.enob_bits": "bits", "hum.level_dbc": "dBc"}
    ck.check("csv units", all(byname.get(k, {}).get("unit") == u for k, u in units.items()),
             repr({k: byname.get(k, {}).get("unit") for k in units}))
    ck.check("csv limits/verdict empty without limits", all(
        r["lower_limit"] == r["upper_limit"] == r["margin"] == r["verdict"] == "" for r in byname.values()))
    cells = {r["name"]: r for r in rows if r["row_kind"] == "cell"}
    tab = []
    for i, hrow in enumerate(rep["audio"]["harmonics"]):
        r = cells.get("audio.harmonics[%d].level_dbc" % i)
        if r is None or abs(float(r["value"]) - hrow["level_dbc"]) > 0.5 * 10 ** -decimals_of(r["value"]) + 1e-9:
            tab.append(i)
    ck.check("csv harmonic table = JSON", not tab, repr(tab))

    rc, out, err = E.run(exe, ["--format", "text", path])
    ck.check("text exit 0", rc == 0, err.strip())
    ck.check("text names the file", path in out.splitlines()[0] if out else False)
    bad = []
    for k, v in metrics.items():
        m = re.search(r"^%s\s+(\S+)" % re.escape(k), out, re.M)
        if m is None:
            bad.append((k, "missing"))
        elif v is None:
            if m.group(1) != "n/a":
                bad.append((k, m.group(1)))
        elif abs(float(m.group(1)) - v) > 0.5 * 10 ** -decimals_of(m.group(1)) + 1e-9:
            bad.append((k, m.group(1), v))
    ck.check("text metric values = JSON (to the printed precision)", not bad, repr(bad))
    ck.check("text verdict line", re.search(r"^verdict: UNCHECKED", out, re.M) is not None)

    # With a limits profile the CSV/text rows carry the limit and the result; JSON checks[] keys.
    with open("lim.ini", "w") as f:
        f.write("thd_pct_max = 2\nsnr_db_min = 90\n")
    rc, rj, out, err = E.run_json(exe, ["--limits", "lim.ini", path])
    ck.check("limits: exit 1 (snr check fails)", rc == 1, "exit %d %s" % (rc, err.strip()))
    ok = rj is not None and len(rj["checks"]) == 2 and all(
        set(("metric", "value", "min", "max", "pass")) <= set(c) for c in rj["checks"])
    ck.check("limits: JSON checks[] {metric, value, min, max, pass}", ok, repr(rj and rj["checks"]))
    if ok:
        c0, c1 = rj["checks"]
        ck.check("limits: thd check", c0["metric"] == "audio.thd_pct" and c0["max"] == 2 and c0["min"] is None
                 and c0["pass"] is True and abs(c0["value"] - rep["audio"]["thd_pct"]) < 1e-9, repr(c0))
        ck.check("limits: snr check", c1["metric"] == "audio.snr_db" and c1["min"] == 90 and c1["max"] is None
                 and c1["pass"] is False, repr(c1))
        ck.check("limits: verdict fail", rj["verdict"] == "fail")
    rc, out, err = E.run(exe, ["--format", "csv", "--limits", "lim.ini", path])
    byname = E.csv_metrics(out)
    thd, snr = byname.get("audio.thd_pct", {}), byname.get("audio.snr_db", {})
    ck.check("limits: csv thd row pass, upper limit 2, margin 2 - value",
             thd.get("lower_limit") == "" and thd.get("upper_limit") == "2" and thd.get("verdict") == "pass"
             and abs(float(thd.get("margin") or "nan") - (2 - rep["audio"]["thd_pct"])) < 1e-4, repr(thd))
    ck.check("limits: csv snr row fail, lower limit 90, margin value - 90",
             snr.get("lower_limit") == "90" and snr.get("upper_limit") == "" and snr.get("verdict") == "fail"
             and abs(float(snr.get("margin") or "nan") - (rep["audio"]["snr_db"] - 90)) < 0.01, repr(snr))
    rc, out, err = E.run(exe, ["--limits", "lim.ini", path])
    ck.check("limits: text rows PASS/FAIL",
             re.search(r"^audio\.thd_pct\s.*\bPASS\b", out, re.M) is not None
             and re.search(r"^audio\.snr_db\s.*\bFAIL\b", out, re.M) is not None)


def check_channels(ck, exe):
    fs, sec = 48000, 3.0
    x = np.stack([E.synth(fs, sec, [(1000.0, 0.5, 0)]), E.synth(fs, sec, [(440.0, 0.1, 0.2)]),
                    E.synth(fs, sec, [(3000.0, 0.25, 0.4)])], axis=1)
    E.write("three.wav", x, fs, "PCM_24")
    # --kind audio: with two or more channels, --kind auto reads the file as I/Q (measure --help)
    for ch, f, a in ((None, 1000.0, 0.5), (1, 1000.0, 0.5), (2, 440.0, 0.1), (3, 3000.0, 0.25)):
        args = ["--kind", "audio"] + (["--channel", ch] if ch else []) + ["three.wav"]
        rc, rep, out, err = E.run_json(exe, args)
        name = "--channel %s" % ch if ch else "default channel"
        if not ck.check(name + " runs", rc == 0 and rep is not None, err.strip()):
            continue
        ck.check(name + " input.kind audio, channels 3, channel %d" % (ch or 1),
                 rep["input"]["kind"] == "audio" and rep["input"]["channels"] == 3
                 and rep["input"].get("channel") == (ch or 1), repr(rep["input"]))
        # 3 segments: phase-advance frequency, far below 0.01 Hz; flat-top level
        ck.close(name + " tone frequency", rep["audio"]["fundamental_hz"], f, 0.01, "generated")
        ck.close(name + " tone level", rep["audio"]["fundamental_dbfs"], E.dbfs(a), 0.005, "generated")


def check_segments(ck, exe):
    """8 s float file: 0-4 s 1000 Hz at 0.5 + DC 0.02; 4-8 s 1500 Hz at 0.25 - DC 0.01. Both tones
    have whole periods in every segment edge used (48 and 32 samples per period), so the mean of
    a segment is exactly the time-weighted DC; a one-frame error moves it by >= 2.5e-5 %."""
    fs = 48000
    first = E.synth(fs, 4.0, [(1000.0, 0.5, 0)], dc=0.02, noise_rms=1e-6, seed=7)
    second = E.synth(fs, 4.0, [(1500.0, 0.25, 0)], dc=-0.01, noise_rms=1e-6, seed=8)
    E.write("halves.wav", np.concatenate([first, second]), fs, "FLOAT")
    cases = [  # args, tone Hz, level (None: mixed), DC %, start, analysed
        (["--duration", "4"], 1000.0, 0.5, 2.0, 0.0, 4.0),
        (["--start", "4"], 1500.0, 0.25, -1.0, 4.0, 4.0),
        (["--start", "4.5", "--duration", "3"], 1500.0, 0.25, -1.0, 4.5, 3.0),
        (["--start", "3.5", "--duration", "2.5"], None, None, (0.02 * 0.5 - 0.01 * 2.0) / 2.5 * 100, 3.5, 2.5),
        ([], None, None, 0.5, 0.0, 8.0),
    ]
    for args, f, a, dc, start, dur in cases:
        name = "segment %s" % (" ".join(args) or "whole file")
        rc, rep, out, err = E.run_json(exe, args + ["halves.wav"])
        if not ck.check(name + " runs", rc == 0 and rep is not None, err.strip()):
            continue
        ck.check(name + " start_s/analysed_s", abs(rep["input"].get("start_s", -1) - start) < 1e-9
                 and abs(rep["input"].get("analysed_s", -1) - dur) < 1e-9,
                 "%r %r" % (rep["input"].get("start_s"), rep["input"].get("analysed_s")))
        # float samples: DC exact to ~1e-8; noise mean 1e-6/sqrt(n) ~ 5e-9; JSON 1e-7 %
        ck.close(name + " dc_offset_pct", rep["audio"]["dc_offset_pct"], dc, 1e-5, "time-weighted DC")
        if f is not None:
            ck.close(name + " tone", rep["audio"]["fundamental_hz"], f, 0.01, "tone of that half")
            ck.close(name + " level", rep["audio"]["fundamental_dbfs"], E.dbfs(a), 0.005, "level of that half")
            other = 1500.0 if f == 1000.0 else 1000.0
            rc, rep2, out, err = E.run_json(exe, args + ["--tone", other, "halves.wav"])
            lvl = rep2["audio"]["fundamental_dbfs"] if rep2 else None
            # the other half's tone is absent: its lobe reads noise (-150 dBFS) and sidelobes
            ck.check(name + " other half's tone absent (--tone %g)" % other,
                     rc == 0 and (lvl is None or lvl < -100), "exit %d level %r" % (rc, lvl))


def check_options(ck, exe):
    # --tone: 1000 Hz at -6 dBFS and 3300 Hz (not a harmonic) at -20 dBFS
    E.write("two.wav", E.synth(48000, 3.0, [(1000.0, 0.5, 0), (3300.0, 0.1, 0.3)], noise_rms=1e-5),
            48000, "PCM_24")
    rc, rep, _, err = E.run_json(exe, ["two.wav"])
    ck.close("default: strongest tone", rep and rep["audio"]["fundamental_hz"], 1000.0, 0.01, "generated")
    rc, rep, _, err = E.run_json(exe, ["--tone", "3300", "two.wav"])
    if ck.check("--tone 3300 runs", rc == 0 and rep is not None, err.strip()):
        a = rep["audio"]
        ck.close("--tone 3300 frequency", a["fundamental_hz"], 3300.0, 0.01, "generated")
        ck.close("--tone 3300 level", a["fundamental_dbfs"], -20.0, 0.005, "20 lg 0.1; flatness")
        # THD+N = sqrt(B - P1)/P1 holds the 1000 Hz tone: sqrt(0.125/0.005) = 500 %
        ck.rel("--tone 3300 thdn_pct", a["thdn_pct"], 500.0, 1e-3, "the other tone counts as noise")
        ck.check("--tone 3300: no harmonic listed (none was generated)", a["harmonics"] == [],
                 repr(a["harmonics"]))

    # --band, --harmonics, --mains on a 3 s version of the main signal (24-bit)
    parts = [(F0, A1, 0.1), (2 * F0, A2, 0.2), (3 * F0, A3, 0.3)] + [(f, a, 0.4) for f, a in HUM]
    E.write("main3.wav", E.synth(FS, 3.0, parts, noise_rms=NOISE, seed=3), FS, "PCM_24")
    thd23 = 100 * math.hypot(A2, A3) / A1
    for args, orders, thd, what in (
            (["--band", "20:2500"], [2], 100 * A2 / A1, "3rd harmonic above the band"),
            (["--harmonics", "2"], [2], 100 * A2 / A1, "only the 2nd"),
            (["--harmonics", "3"], [2, 3], thd23, "2nd and 3rd"),
            (["--harmonics", "20"], [2, 3], thd23, "20 x 997.3 = 19946 Hz <= 20 kHz; only 2, 3 stand out")):
        rc, rep, _, err = E.run_json(exe, args + ["main3.wav"])
        name = " ".join(args)
        if not ck.check(name + " runs", rc == 0 and rep is not None, err.strip()):
            continue
        got = [h["order"] for h in rep["audio"]["harmonics"]]
        ck.check(name + " harmonic orders " + what, got == orders, repr(got))
        # flatness and the noise cross term (sd < 2e-4 relative) -> 0.2 %
        ck.rel(name + " thd_pct", rep["audio"]["thd_pct"], thd, 2e-3, what)
    rc, rep, _, err = E.run_json(exe, ["--band", "20:2500", "main3.wav"])
    ck.check("--band 20:2500 reported in analysis", rep is not None and "band 20.0..2500.0 Hz" in rep.get("analysis", ""),
             repr(rep and rep.get("analysis")))
    rc, rep, _, err = E.run_json(exe, ["--band", "20:30000", "main3.wav"])
    ck.check("--band above Nyquist is clipped to 24 kHz", rc == 0 and rep is not None
             and "band 20.0..24000.0 Hz" in rep.get("analysis", ""), repr(rep and rep.get("analysis")))

    # --mains: a 60 Hz hum file is detected as 60; --mains forces either
    E.write("hum60.wav", E.synth(FS, 3.0, [(F0, A1, 0.1), (60.0, 0.001, 0.2), (180.0, 0.0005, 0.3)],
                                 noise_rms=NOISE, seed=4), FS, "PCM_24")
    for args, f, mains in ((["hum60.wav"], "hum60.wav", 60), (["--mains", "60", "hum60.wav"], "", 60),
                           (["--mains", "50", "hum60.wav"], "", 50), (["main3.wav"], "", 50),
                           (["--mains", "50", "main3.wav"], "", 50), (["--mains", "60", "main3.wav"], "", 60)):
        rc, rep, _, err = E.run_json(exe, args)
        name = " ".join(args)
        if not ck.check(name + " runs", rc == 0 and rep is not None, err.strip()):
            continue
        fr = [c["frequency_hz"] for c in rep["hum"]["components"]]
        # the components listed are the generated hum tones at multiples of that mains (the lines
        # above the noise); hum at the other mains' multiples lists none
        tones = [60.0, 180.0] if args[-1] == "hum60.wav" else [f for f, _ in HUM]
        want = [f for f in tones if f % mains == 0 and f <= 6 * mains]
        ck.check(name + " mains %d Hz, components at the generated multiples" % mains,
                 rep["hum"]["mains_hz"] == mains and fr == want, "%r %r" % (rep["hum"]["mains_hz"], fr))
        if args[-1] == "hum60.wav" and mains == 60:
            # 60 + 180 Hz tones (power 6.25e-7) plus 4 noise-only lobes (2e-11 each): -59.03 dBFS
            ck.close(name + " hum level", rep["hum"]["level_dbfs"], 10 * math.log10(6.25e-7 / 0.5), 0.02,
                     "60 and 180 Hz tones")


def main():
    exe = E.modlens_path()
    ck = E.Checker("test_cli_formats")
    with E.scratch():
        parts = [(F0, A1, 0.1), (2 * F0, A2, 0.2), (3 * F0, A3, 0.3)] + [(f, a, 0.4) for f, a in HUM]
        x = E.synth(FS, SECONDS, parts, noise_rms=NOISE, dc=DC, seed=1)
        reps = {}
        for fmt, subtype, tag in FORMATS:
            path = "main_%s_%s.%s" % (fmt.lower(), subtype.lower(), {"WAV": "wav", "FLAC": "flac", "AIFF": "aiff"}[fmt])
            E.write(path, x, FS, subtype, fmt)
            rc, rep, out, err = E.run_json(exe, [path])
            name = "%s %s" % (fmt, subtype)
            if not ck.check(name + " exit 0, JSON parsed", rc == 0 and rep is not None,
                            "exit %d %s" % (rc, err.strip())):
                continue
            ck.check(name + " input.path", rep["input"]["path"] == path, repr(rep["input"]["path"]))
            ck.check(name + " JSON has no NaN/Infinity", E.finite_json_text(out))
            check_main(ck, name, rep, subtype, fmt, tag, float(np.mean(sf.read(path)[0])))
            reps[path] = rep
        if "main_wav_pcm_24.wav" in reps:
            check_text_csv(ck, exe, "main_wav_pcm_24.wav", reps["main_wav_pcm_24.wav"])
        check_channels(ck, exe)
        check_segments(ck, exe)
        check_options(ck, exe)
    ck.finish()


if __name__ == "__main__":
    main()
