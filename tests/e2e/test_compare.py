"""compare: verdicts, exit statuses, saved JSON inputs, and the uncertainty's coverage.

Usage: /usr/bin/python3 test_compare.py /path/to/modlens

Signals (numpy, fixed seeds, 48 kHz float): x = 0.5 sin(w t) + white noise of RMS 1e-3.
1. The same file twice: B - A = 0 for every metric, so every verdict is "same"; exit 0.
2. A pair differing only in distortion: B = A + harmonics (2nd at -60 dBc as sin 2wt, 3rd at
   -66 dBc as cos 3wt: both vanish at the tone's peaks, so the peak level does not move), the
   same noise samples in both. THD (and THD+N, SINAD, ENOB, which count the harmonics by their
   README definitions) read worse; every other metric excludes the harmonics' bins or is a level
   the harmonics change by less than the printed resolution (RMS by 10 lg(1 + 1.25e-6) = 5e-6 dB),
   so it reads "same". Exit 1; swapped (B cleaner than A) THD reads better, exit 0.
3. Saved JSON reports of the same pair give the same verdicts.
4. --limits: only the profile's metrics decide the exit status; --tolerance widens "same".
5. Uncertainty (README "Measurement uncertainty"): 40 captures with independent noise. The
   SNR is analytic: P1 = 0.5^2/2 = 0.125, noise in the 20..20000 Hz band = 1e-6 x 19980/24000
   (white noise spreads its power evenly up to 24 kHz), SNR = 10 lg(0.125 / 8.325e-7) = 51.765 dB.
   The stated 95 % interval must cover it in about 95 % of captures: with 40 captures the count
   covered is binomial(40, 0.95), and 34..40 holds 99 % of its mass; too narrow an interval falls
   below. Too wide an interval is caught by the width: u / sd(captures) must be about
   t(0.975, n-1) E[s]/sigma ~ 2.2..2.6 for n = 6 blocks; 1.5..3.5 allows the spread of 40 captures.
"""
import csv
import io
import json
import os
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402

import e2e_common as E  # noqa: E402

FS = 48000
F1 = 997.0
DISTORTION = ("audio.thd_pct", "audio.thd_db", "audio.thdn_pct", "audio.thdn_db", "audio.sinad_db",
              "audio.enob_bits")


def compare(exe, args):
    p = subprocess.run([exe, "compare"] + [str(a) for a in args], capture_output=True, timeout=E.RUN_TIMEOUT_S)
    out = p.stdout.decode()
    try:
        rep = json.loads(out)
    except ValueError:
        rep = None
    return p.returncode, rep, out, p.stderr.decode()


def verdicts(rep):
    return {m["metric"]: m["verdict"] for m in rep["metrics"]} if rep else {}


def signal(seconds, seed, harmonics):
    t = np.arange(int(seconds * FS)) / FS
    w = 2 * np.pi * F1 * t
    x = 0.5 * np.sin(w) + np.random.default_rng(seed).normal(0, 1e-3, t.size)
    if harmonics:
        x += 0.5 * 1e-3 * np.sin(2 * w) + 0.5 * 10 ** (-66 / 20) * np.cos(3 * w)
    return x


def main():
    exe = E.modlens_path()
    ck = E.Checker("test_compare")
    with E.scratch():
        E.write("a.wav", signal(10, 7, False), FS, "FLOAT")
        E.write("b.wav", signal(10, 7, True), FS, "FLOAT")

        rc, rep, out, err = compare(exe, ["--format", "json", "a.wav", "a.wav"])
        v = verdicts(rep)
        ck.check("same file: exit 0", rc == 0, err.strip())
        # every metric same; hum.mains_hz is not measured on either side (no hum line above the
        # noise): n/a
        ck.check("same file: every metric same (or n/a on both sides)",
                 v and all(x == "same" or (k == "hum.mains_hz" and x == "n/a") for k, x in v.items()),
                 repr({k: x for k, x in v.items() if x != "same"}))
        keys = {"metric", "a", "b", "difference", "uncertainty", "verdict"}
        ck.check("json entries carry metric, a, b, difference, uncertainty, verdict",
                 rep is not None and all(keys <= set(m) for m in rep["metrics"]))
        # A's THD is noise-limited (no harmonic generated): an upper bound, with no uncertainty;
        # THD+N is a measurement with one
        ck.check("same file: uncertainty of thdn_pct stated",
                 rep is not None and any(m["metric"] == "audio.thdn_pct" and (m["uncertainty"] or 0) > 0
                                         for m in rep["metrics"]))
        ck.check("same file: thd_pct an upper bound on both sides",
                 rep is not None and any(m["metric"] == "audio.thd_pct" and m.get("a_bound") == "upper"
                                         and m.get("b_bound") == "upper" for m in rep["metrics"]))

        rc, rep, _, err = compare(exe, ["--format", "json", "a.wav", "b.wav"])
        v = verdicts(rep)
        ck.check("distortion pair: exit 1", rc == 1, err.strip())
        ck.check("distortion pair: thd_pct and thd_db worse", v.get("audio.thd_pct") == "worse"
                 and v.get("audio.thd_db") == "worse", repr(v))
        ck.check("distortion pair: thdn/sinad/enob worse (they include distortion)",
                 all(v.get(k) == "worse" for k in DISTORTION), repr({k: v.get(k) for k in DISTORTION}))
        others = {k: x for k, x in v.items() if k not in DISTORTION and x != "same"
                  and not (k == "hum.mains_hz" and x == "n/a")}
        ck.check("distortion pair: everything else same", v and not others, repr(others))

        rc, rep, _, err = compare(exe, ["--format", "json", "b.wav", "a.wav"])
        ck.check("swapped: thd better, exit 0", rc == 0 and verdicts(rep).get("audio.thd_pct") == "better",
                 "rc=%d" % rc)

        # saved JSON reports
        for n in ("a", "b"):
            r = subprocess.run([exe, "measure", "--format", "json", "--output", n + ".json", n + ".wav"],
                               capture_output=True, timeout=E.RUN_TIMEOUT_S)
            ck.check("measure %s.json" % n, r.returncode == 0, r.stderr.decode().strip())
        rc2, rep2, _, err = compare(exe, ["--format", "json", "a.json", "b.json"])
        ck.check("saved JSON: same verdicts and exit as the recordings", rc2 == 1 and verdicts(rep2) == v
                 or (rc2 == 1 and {k: verdicts(rep2).get(k) for k in v} == v), err.strip())
        ck.check("mixed inputs (recording and JSON) work", compare(exe, ["a.wav", "b.json"])[0] == 1)

        # limits: only the profile's metrics count
        open("snr.ini", "w").write("[audio]\nsnr_db_min = 40\n")
        open("thd.ini", "w").write("[audio]\nthd_pct_max = 1\n")
        ck.check("--limits without thd: exit 0", compare(exe, ["--limits", "snr.ini", "a.wav", "b.wav"])[0] == 0)
        rc, rep, _, _ = compare(exe, ["--format", "json", "--limits", "thd.ini", "a.wav", "b.wav"])
        row = [m for m in rep["metrics"] if m["metric"] == "audio.thd_pct"][0] if rep else {}
        ck.check("--limits thd: exit 1, both checked (PASS)", rc == 1 and row.get("a_pass") is True
                 and row.get("b_pass") is True, repr(row))
        # thd_pct goes from about 0.0x % to 0.11 %: a tolerance of 1 % makes it "same"
        rc, rep, _, _ = compare(exe, ["--format", "json", "--limits", "thd.ini", "--tolerance", "thd_pct=1",
                                      "a.wav", "b.wav"])
        ck.check("--tolerance thd_pct=1: same, exit 0", rc == 0 and verdicts(rep).get("audio.thd_pct") == "same",
                 "rc=%d" % rc)
        rc, _, out, _ = compare(exe, ["--format", "csv", "a.wav", "b.wav"])
        rows = list(csv.reader(io.StringIO(out)))
        ck.check("csv: no header, 22 columns, both files on every row, a verdict row last",
                 rows and all(len(r) == 22 and r[0] == "a.wav" and r[1] == "b.wav" for r in rows)
                 and rows[-1][4] == "verdict" and rows[-1][19] in ("worse", "not worse"), repr(rows[:1]))

        # errors: exit 2, one line naming the file
        for args, what in ((["a.wav", "missing.wav"], "missing.wav"), (["a.wav"], "compare"),
                           (["--tolerance", "x", "a.wav", "b.wav"], "--tolerance"),
                           (["--output", "a.wav", "a.wav", "b.wav"], "a.wav")):
            before = open("a.wav", "rb").read()
            rc, _, out, err = compare(exe, args)
            ck.check("error %s: exit 2, one line" % " ".join(args), rc == 2 and err.count("\n") == 1
                     and err.startswith("modlens: ") and what in err and out == "", repr(err))
            ck.check("error %s: input untouched" % " ".join(args), open("a.wav", "rb").read() == before)

        # if/iq: two captures of one transmitter differing only in their noise read "same" on the
        # modulation figures (now with block intervals); 80 % against 83 % depth reads "worse"/
        # "changed" on the peaks and the index (a 3 % step is about 100 times their interval).
        def iq(name, depth, seed):
            p = subprocess.run([exe, "tone", "--carrier", "3000", "--iq", "--depth", str(depth), "--cnr", "40",
                                "--seconds", "10", "--seed", str(seed), "--bits", "32f", "--out", name],
                               capture_output=True, timeout=E.RUN_TIMEOUT_S)
            assert p.returncode == 0, p.stderr
        iq("m1.wav", 0.8, 1)
        iq("m2.wav", 0.8, 2)
        iq("m3.wav", 0.83, 3)
        rc, rep, _, err = compare(exe, ["--format", "json", "m1.wav", "m2.wav"])
        v = verdicts(rep)
        # the held peaks carry the blocks' uncertainty (the true peak, an extreme, has none)
        for k in ("modulation.index", "modulation.positive_peak_held_pct", "modulation.negative_peak_pct"):
            ck.check("iq noise only: %s same" % k, v.get(k) == "same", str(v.get(k)))
        unc = {m["metric"]: m["uncertainty"] for m in rep["metrics"]} if rep else {}
        ck.check("iq: peaks and index carry an uncertainty", all(
            isinstance(unc.get(k), float) and unc[k] > 0
            for k in ("modulation.index", "modulation.positive_peak_held_pct")),
            str({k: unc.get(k) for k in ("modulation.index", "modulation.positive_peak_held_pct")}))
        rc, rep, _, err = compare(exe, ["--format", "json", "m1.wav", "m3.wav"])
        v = verdicts(rep)
        for k in ("modulation.index", "modulation.positive_peak_held_pct", "modulation.negative_peak_pct"):
            ck.check("iq depth 0.80 -> 0.83: %s not same" % k, v.get(k) not in ("same", None), str(v.get(k)))

        # uncertainty coverage
        snr_true = 10 * np.log10(0.125 / (1e-6 * 19980 / 24000))
        got, us = [], []
        for seed in range(40):
            E.write("n.wav", signal(10, 100 + seed, False), FS, "FLOAT")
            rc, r, _, err = E.run_json(exe, ["n.wav"])
            if rc == 0 and r and E.has(r, "uncertainty.audio.snr_db"):
                got.append(E.get(r, "audio.snr_db"))
                us.append(E.get(r, "uncertainty.audio.snr_db"))
        got, us = np.array(got), np.array(us)
        ck.check("40 captures measured with an uncertainty", got.size == 40, "%d" % got.size)
        covered = int(np.sum(np.abs(got - snr_true) <= us))
        ck.check("snr interval covers the analytic value in 34..40 of 40", 34 <= covered <= 40,
                 "%d of %d (analytic %.3f dB, mean %.3f)" % (covered, got.size, snr_true, got.mean()))
        ratio = us.mean() / got.std(ddof=1)
        ck.check("snr interval width: u / sd in 1.5..3.5", 1.5 <= ratio <= 3.5, "%.2f" % ratio)
    ck.finish()


if __name__ == "__main__":
    main()
