"""One recording through every command: measure, live, log (every row) and watch --plain must give
the same carrier and modulation figures (the one definition of each figure, dsp/modulation.h).

Usage: /usr/bin/python3 test_live_consistency.py /path/to/modlens /path/to/ml-feed

The recording (numpy, 48 kHz float I/Q, 5 s): a 3 kHz carrier of amplitude A = 0.3, unmodulated
for the first second, then the envelope
    E = A (0.95 + 0.8 s + 0.2 s^2 + 0.003 sin(2 pi 50 t)),  s = sin(2 pi 1000 t),
i.e. A (1.05 + 0.8 s - 0.1 cos(2 w t)) plus 50 Hz hum: its crest A 1.95 and trough A 0.35 are
+95 % and -65 % re C = A (47 CFR 73.14, docs/references.md 7; the hum moves the peak readings by
a little more than 0.1 %, computed below), its mean A 1.05 a +5 % carrier shift, its second
harmonic 0.1 / 0.8 = 12.5 %
envelope THD, its hum 20 lg 0.003 = -50.46 dB re 100 % modulation; white noise of sigma 1e-4 per
component gives a CNR of 10 lg(1.05^2 A^2 / (2 sigma^2 x 2B / fs)) = 70.76 dB in the channel
+-B = +-10 kHz (analytic). Read against the mean envelope instead of C, the peaks would be
+85.7 / -66.7 % (the drift this test guards against).

- measure on the file: the reference, checked against the analytic values above;
- log on the file: every row of the stationary stretch (the rows after the first second);
- live through the JACK dummy server (ml-feed loops the file): 12 s of capture, which hold an
  unmodulated second whole wherever the loop stands;
- watch --plain through the same path for 12 s: it hears an unmodulated second within the first
  7 s and latches C; then 3 s of every 5 s loop give wholly modulated windows (at least 20
  updates); its last update whose window is wholly modulated (carrier_reference=latched) is
  compared.
Tolerances, where the figures are estimated over 1 s (log, watch) rather than 4 s: the peaks
0.1 % of modulation (the held readings are hold-share quantiles: a periodic tone gives the same
quantile in any whole second to the histogram's 6e-5 C, the noise moves them by about 1e-4 C; the
true peak is the largest value, the envelope's crest plus the noise's largest excursion, which
differs between 1 s and 4 s by 0.3 noise standard deviations, 7e-5 C),
the index 0.002, C 0.01 dB, the carrier shift 0.05 %, the CNR 0.3 dB (a 1 s mean over some 5000
independent bins spreads by 0.06 dB), THD 0.05 % of 12.5 % (0.035 dB), hum 0.2 dB (its lobes hold
noise some 45 dB below the hum). Each tolerance is at least measure's own 95 % interval.
"""
import csv
import math
import os
import subprocess
import sys

sys.dont_write_bytecode = True
HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)
sys.path.insert(0, os.path.join(HERE, "..", "e2e"))

import numpy as np  # noqa: E402

import e2e_common as E  # noqa: E402
import jackserver as J  # noqa: E402

FS = 48000
A = 0.3
SIGMA = 1e-4
T = 5



def envelope(t):
    """The recording's envelope in units of C (noise-free)."""
    s = np.sin(2 * np.pi * 1000 * t)
    e = 0.95 + 0.8 * s + 0.2 * s * s + 0.003 * np.sin(2 * np.pi * 50 * t)
    return np.where(t < 1.0, 1.0, e)


def peak_readings():
    """The peak readings as README "Peak readings" defines them, computed independently with numpy
    (docs/references.md 9) from the envelope's construction: the levels the modulated envelope
    exceeds, and stays under, for 5 ms per second (quantiles 0.995 and 0.005), on a grid 16 times
    the sample rate over the modulated 4 s. Without the hum they would be 1.95 and 0.35."""
    t = 1.0 + np.arange((T - 1) * FS * 16) / (FS * 16)
    e = envelope(t)
    return float(np.quantile(e, 0.995)), float(np.quantile(e, 0.005))


def true_peak():
    """The positive peak "at any time" (README: the highest oversampled envelope): the envelope's
    largest value over the modulated 4 s on the same grid, 1.953 with the hum; the noise adds its
    largest excursion, about sqrt(2 ln N) sigma for N = 2B x 4 s independent samples of the
    channel's per-component noise sigma sqrt(2 (B + 500) / fs) (4.8 x 2.2e-4 C: 0.1 %)."""
    t = 1.0 + np.arange((T - 1) * FS * 16) / (FS * 16)
    noise = math.sqrt(2 * math.log(2 * 10000 * (T - 1))) * SIGMA * math.sqrt(2 * 10500 / FS) / A
    return float(envelope(t).max()) + noise


HI, LO = peak_readings()
TOP = true_peak()
# name in JSON, short name in log rows and --plain lines, expected value, tolerance across commands
# (the true peak: a 1 s window's largest noise excursion is 0.3 sigma smaller than 4 s's, 0.007 %)
FIGURES = [
    ("modulation.positive_peak_pct", "positive_peak_pct", 100 * (TOP - 1), 0.1),
    ("modulation.negative_peak_pct", "negative_peak_pct", 100 * (1 - LO), 0.1),
    ("modulation.index", "index", (HI - LO) / (HI + LO), 0.002),
    ("carrier.unmodulated_dbfs", "unmodulated_dbfs", 20 * math.log10(A), 0.01),
    ("modulation.carrier_shift_pct", "carrier_shift_pct", 5.0, 0.05),
    ("carrier.cnr_db", "cnr_db", 10 * math.log10((1.05 * A) ** 2 / (2 * SIGMA ** 2 * 2 * 10000 / FS)), 0.3),
    ("modulation.envelope_thd_pct", "envelope_thd_pct", 12.5, 0.05),
    ("modulation.hum_db", "hum_db", 20 * math.log10(0.003), 0.2),
]
# figures of measure, live and watch --plain (log's rows do not carry them)
FIGURES_NOT_LOG = [
    ("modulation.positive_peak_held_pct", "positive_peak_held_pct", 100 * (HI - 1), 0.1),
    ("modulation.carrier_off_pct", "carrier_off_pct", 0.0, 0.0),
]
# how far measure may lie from the expected value: the histogram's bins (6e-5 C) and the noise for
# the peaks, the lead-in's last block counted as modulated (the shift reads up to 0.03 % low), the
# spread of the mean density over 4 s for the CNR (0.2 dB)
TRUTH_TOL = {"positive_peak_pct": 0.1, "negative_peak_pct": 0.1, "index": 0.001, "unmodulated_dbfs": 0.01,
             "carrier_shift_pct": 0.05, "cnr_db": 0.2, "envelope_thd_pct": 0.05, "hum_db": 0.2,
             "positive_peak_held_pct": 0.1, "carrier_off_pct": 0.0}


def make(path):
    rng = np.random.default_rng(11)
    t = np.arange(T * FS) / FS
    z = A * envelope(t) * np.exp(2j * np.pi * 3000 * t)
    z = z + rng.normal(0, SIGMA, z.size) + 1j * rng.normal(0, SIGMA, z.size)
    E.write(path, np.stack([z.real, z.imag], 1).astype(np.float32), FS, "FLOAT")


def plain_rows(text):
    rows = []
    for line in text.splitlines():
        pairs = [p.split("=", 1) for p in line.split()]
        if pairs and all(len(p) == 2 for p in pairs):
            # an empty value is not measured; "<x" / ">x" a bound (its value x)
            rows.append({k: (v if k == "carrier_reference" else None if v == "" else float(v.lstrip("<>")))
                         for k, v in pairs})
    return rows


def compare(ck, what, got, ref, log=False):
    for key, short, _, tol in FIGURES + ([] if log else FIGURES_NOT_LOG):
        want = E.get(ref, key)
        u = E.get(ref["uncertainty"], key) if E.has(ref, "uncertainty." + key) else 0.0
        ck.close(f"{what}: {short} agrees with measure", got.get(short), want, max(tol, u))


def main():
    exe, feeder = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
    ck = E.Checker("one recording, every command")
    with E.scratch():
        make("rec.wav")
        rc, ref, _, err = E.run_json(exe, ["rec.wav"])
        ck.check("measure: exit 0", rc == 0 and ref is not None, err)
        if ref is None:
            ck.finish()
        ck.check("measure: C from the unmodulated second",
                 str(E.get(ref, "modulation.carrier_reference")).startswith("unmodulated stretches"))
        for key, short, truth, _ in FIGURES + FIGURES_NOT_LOG:
            ck.close(f"measure: {short} analytic", E.get(ref, key), truth, TRUTH_TOL[short])

        # log on the file: every row after the first second carries measure's figures
        p = subprocess.run([exe, "log", "--out", "rec.csv", "rec.wav"], capture_output=True, text=True,
                           timeout=E.RUN_TIMEOUT_S)
        ck.check("log: exit 0", p.returncode == 0, p.stderr)
        rows = list(csv.DictReader(line for line in open("rec.csv") if not line.startswith("#")))
        steady = [r for r in rows if float(r["offset_s"]) >= 1.0 and float(r["duration_s"]) >= 0.999]
        ck.check("log: 4 rows of the stationary stretch, C latched", len(steady) == T - 1
                 and all(r["carrier_reference"] == "latched" for r in steady), str([r["carrier_reference"] for r in rows]))
        for i, r in enumerate(steady):
            compare(ck, f"log row {i + 1}", {k: float(v) if v else None for k, v in r.items()
                                             if k not in ("start_utc", "start_local", "note", "carrier_reference",
                                                          "noise_environment")}, ref, log=True)

        with J.Server(rate=FS) as srv:
            srv.feed(feeder, "rec", "rec.wav")
            # live: 12 s of the looped recording hold its unmodulated second whole
            rc, live, err = srv.live_json(exe, ["--device", "rec", "--kind", "iq", "--seconds", "12"])
            ck.check("live: exit 0", rc == 0 and live is not None, err)
            if live:
                ck.check("live: C from the unmodulated second",
                         str(E.get(live, "modulation.carrier_reference")).startswith("unmodulated stretches"))
                compare(ck, "live", {short: E.get(live, key) for key, short, _, _ in FIGURES + FIGURES_NOT_LOG}, ref)
            # watch: 12 s of 100 ms updates; it hears the unmodulated second and latches C
            p = srv.run([exe, "watch", "--plain", "--device", "rec", "--kind", "iq", "--seconds", "12"], timeout=90)
            ck.check("watch --plain: exit 0", p.returncode == 0, p.stderr[-300:])
            lines = plain_rows(p.stdout)
            latched = [r for r in lines if r.get("carrier_reference") == "latched"]
            ck.check("watch: C latched from the unmodulated second it heard", len(latched) >= 20,
                     f"{len(latched)} of {len(lines)} updates")
            if latched:
                compare(ck, "watch (last wholly modulated update)", latched[-1], ref)
    ck.finish()


if __name__ == "__main__":
    main()
