"""Levels in volts and weighted noise through `measure` (and `card --calibrate`, `log`).

Usage: /usr/bin/python3 test_levels.py /path/to/modlens

References (docs/references.md):
  14  0 dBu = sqrt(0.6) V = 0.774597 V; dBV = dBu - 2.2185 dB; +4 dBu = 1.228 V; -10 dBV = -7.78 dBu;
      EBU R68: 0 dBFS = +18 dBu (a -18 dBFS tone is 0 dBu); SMPTE RP155: +4 dBu at -20 dBFS, full
      scale +24 dBu = 12.28 V; power into R: V^2 / R (0 dBu into 600 ohm is 1 mW by definition).
  1   IEC 61672-1 A weighting: Table 3 at the exact base-10 frequencies (1.2) and the analytic
      curve (1.1); white noise over 20 Hz - 20 kHz: A-weighted minus unweighted -2.048 dB (1.3).
  2   ITU-R BS.468-4 Table 1 with its tolerances (2.1), the curve's closed form (2.2); white noise:
      468-weighted minus unweighted +7.263 dB (1.3).
The weighted levels of a white-noise capture are compared with the curve integrated over this very
realisation's periodogram (numpy FFT), so no statistical tolerance is needed beyond the Welch
estimate's: 0.3 dB, the brief's requirement. Band noise (20 s, flat over an octave up to 2 kHz, a
third of an octave above) checks the tables from 500 Hz to 16 kHz: the expected value is the table's
plus the curve's power average over the band minus its value at the centre (computed from the
curve: +0.33 dB at 500 Hz, a few hundredths above 2 kHz); the tolerance is the table's own plus
0.2 dB for the estimate (its spread over five seeds was 0.02 .. 0.07 dB, one standard deviation).
"""
import json
import math
import os
import sys

import numpy as np
import soundfile as sf

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_common as E  # noqa: E402

FS = 48000
V0 = math.sqrt(0.6)


def tone_file(path, level_dbfs, freq=997.0, seconds=3.0, noise=1e-6, seed=1):
    x = E.synth(FS, seconds, [(freq, 10 ** (level_dbfs / 20), 0.0)], noise_rms=noise, seed=seed)
    E.write(path, x.astype(np.float32), FS, "FLOAT")


def volts(ck, exe):
    # EBU R68 (docs/references.md 14): a -18 dBFS tone at 0 dBFS = +18 dBu is 0 dBu
    tone_file("r68.wav", -18.0)
    rc, rep, _, err = E.run_json(exe, ["--full-scale-dbu", "18", "--load-ohms", "600", "r68.wav"])
    ck.check("EBU R68 tone: exit 0", rc == 0 and rep is not None, err.strip())
    if rep:
        ck.close("EBU R68: -18 dBFS reads 0 dBu", E.get(rep, "audio.fundamental_dbu"), 0.0, 0.01)
        ck.close("0 dBu = 0.774597 V", E.get(rep, "audio.fundamental_vrms"), 0.774597, 0.774597 * 0.0012)
        ck.close("0 dBu = -2.2185 dBV", E.get(rep, "audio.fundamental_dbv"), -2.2185, 0.011)
        ck.close("0 dBu into 600 ohm = 1 mW", E.get(rep, "audio.fundamental_w"), 1e-3, 1e-3 * 0.0024)
        ck.close("rms_dbu = rms_dbfs + 18", E.get(rep, "audio.rms_dbu"), E.get(rep, "audio.rms_dbfs") + 18, 0.011)
        ck.close("noise_dbu = noise_dbfs + 18", E.get(rep, "audio.noise_dbu"), E.get(rep, "audio.noise_dbfs") + 18,
                 0.011)
        ck.close("noise_a_dbu = noise_a_dbfs + 18", E.get(rep, "audio.noise_a_dbu"),
                 E.get(rep, "audio.noise_a_dbfs") + 18, 0.011)
        ck.check("the settings line states the calibration and the load",
                 "0 dBFS = +18.00 dBu" in E.get(rep, "settings.in_force") and "600 ohm" in E.get(rep, "settings.in_force"),
                 repr(rep.get("settings")))
    # SMPTE RP155 (docs/references.md 14): +4 dBu at -20 dBFS, full scale +24 dBu: 1.228 V
    tone_file("rp155.wav", -20.0)
    rc, rep, _, err = E.run_json(exe, ["--full-scale-dbu", "24", "rp155.wav"])
    if rep:
        ck.close("SMPTE RP155: -20 dBFS reads +4 dBu", E.get(rep, "audio.fundamental_dbu"), 4.0, 0.01)
        ck.close("+4 dBu = 1.228 V", E.get(rep, "audio.fundamental_vrms"), 1.228, 0.0015)
        ck.check("no watts without --load-ohms", not E.has(rep, "audio.fundamental_w"), repr(rep["audio"].keys()))
    # docs/references.md 14: -10 dBV = -7.78 dBu; at +18 dBu full scale that is -25.78 dBFS
    tone_file("dbv.wav", -25.7815)
    rc, rep, _, err = E.run_json(exe, ["--full-scale-dbu", "18", "dbv.wav"])
    if rep:
        ck.close("-10 dBV = -7.78 dBu", E.get(rep, "audio.fundamental_dbv"), -10.0, 0.01)
        ck.close("-10 dBV = 0.3162 V", E.get(rep, "audio.fundamental_vrms"), 0.3162, 0.0005)
    rc, rep, _, err = E.run_json(exe, ["rp155.wav"])
    ck.check("no calibration: no dBu figures", rc == 0 and rep and not E.has(rep, "audio.fundamental_dbu")
             and not E.has(rep, "audio.fundamental_vrms"), err.strip())
    for args, why in [(["--full-scale-dbu", "61"], "out of range"), (["--full-scale-dbu", "x"], "not a number"),
                      (["--load-ohms", "0"], "no load"), (["--full-scale-dbu", "18", "--calibration", "r68.wav"],
                                                          "both")]:
        rc, out, err = E.run(exe, args + ["rp155.wav"])
        ck.check("refused (%s): exit 2, one line" % why, rc == 2 and len(err.strip().splitlines()) == 1, err.strip())


def calibration(ck, exe):
    """card --calibrate: a tone of 1.228 V r.m.s. (+4 dBu) read at -20 dBFS gives +24 dBu full scale."""
    tone_file("cal.wav", -20.0, freq=1000.0)
    rc, out, err = E.run_cmd(exe, ["card", "--calibrate", "1.228", "cal.wav", "--out", "cal.json"])
    ck.check("card --calibrate: exit 0", rc == 0 and os.path.exists("cal.json"), err.strip())
    ck.check("card --calibrate prints the full scale", "0 dBFS = +24.00 dBu" in out, out.strip())
    with open("cal.json") as f:
        cal = json.load(f)
    # 20 lg(1.228 / 0.774597) - (-20) = 24.0025 dB (1.228 V is +4 dBu to the printed 4 digits)
    ck.close("calibration file: full_scale_dbu", cal["full_scale_dbu"], 20 * math.log10(1.228 / V0) + 20, 0.01)
    rc, rep, _, err = E.run_json(exe, ["--calibration", "cal.json", "rp155.wav"])
    ck.check("measure --calibration: exit 0", rc == 0 and rep is not None, err.strip())
    if rep:
        ck.close("--calibration: the -20 dBFS tone reads 1.228 V", E.get(rep, "audio.fundamental_vrms"), 1.228,
                 0.0015)
        ck.check("the settings line names the calibration file", "calibration file cal.json" in
                 E.get(rep, "settings.in_force"), repr(rep.get("settings")))
    cal["full_scale_dbu"] = 30.0
    with open("badcal.json", "w") as f:
        json.dump(cal, f)
    rc, out, err = E.run(exe, ["--calibration", "badcal.json", "rp155.wav"])
    ck.check("inconsistent calibration file: exit 2 naming the key",
             rc == 2 and "badcal.json: key 'full_scale_dbu'" in err, err.strip())
    rc, out, err = E.run_cmd(exe, ["card", "--calibrate", "1", "noise.wav"])
    ck.check("card --calibrate on noise: exit 2", rc == 2 and "no clear tone" in err, err.strip())


def white_noise(ck, exe):
    """docs/references.md 1.3: white noise 20 Hz - 20 kHz, weighted minus unweighted A -2.048, 468 +7.263
    dB; here the curves are integrated over the realisation itself."""
    n = FS * 10
    x = np.random.default_rng(7).normal(0.0, 10 ** (-40 / 20) / math.sqrt(2), n)
    E.write("noise.wav", x.astype(np.float32), FS, "FLOAT")
    X = np.fft.rfft(x)
    f = np.fft.rfftfreq(n, 1 / FS)
    p = 2 * np.abs(X) ** 2 / n ** 2
    band = (f >= 20) & (f <= 20000)
    unweighted = p[band].sum()
    want_a = 10 * math.log10((p[band] * 10 ** (E.a_weighting_db(f[band]) / 10)).sum() / 0.5)
    want_468 = 10 * math.log10((p[band] * 10 ** (E.w468_db(f[band]) / 10)).sum() / 0.5)
    ck.close("docs/references.md 1.3: A minus unweighted on this noise", want_a - 10 * math.log10(unweighted / 0.5),
             -2.048, 0.02)
    rc, rep, _, err = E.run_json(exe, ["--kind", "audio", "noise.wav"])
    ck.check("white noise: exit 0", rc == 0 and rep is not None, err.strip())
    if not rep:
        return
    ck.close("A-weighted noise: the IEC 61672-1 curve over the noise (20 Hz-20 kHz)",
             E.get(rep, "audio.noise_a_dbfs"), want_a, 0.3)
    ck.close("468-weighted noise: the BS.468-4 curve over the noise", E.get(rep, "audio.noise_468_dbfs"), want_468,
             0.3)
    ck.check("no tone: no A-weighted SNR, with a reason", E.get(rep, "audio.snr_a_db") is None
             and E.has(rep, "reasons.audio.snr_a_db"), repr(rep.get("reasons")))
    qp = E.get(rep, "audio.noise_468_qp_dbfs") if E.has(rep, "audio.noise_468_qp_dbfs") else None
    ck.check("no tone: a BS.468-4 quasi-peak reading, qualified as fitted",
             qp is not None and "fitted" in E.get(rep, "qualifiers.audio.noise_468_qp_dbfs"), repr(qp))
    rc, rep, _, err = E.run_json(exe, ["r68.wav"])
    if rep:
        ck.check("with a tone: no quasi-peak reading (the meter would read the tone)",
                 not E.has(rep, "audio.noise_468_qp_dbfs"), repr(rep["audio"].keys()))
        ck.close("A-weighted SNR = tone over A-weighted noise", E.get(rep, "audio.snr_a_db"),
                 E.get(rep, "audio.fundamental_dbfs") - E.get(rep, "audio.noise_a_dbfs"), 0.011)


def band_noise(path, lo, hi, seed):
    """Noise with a flat spectrum from lo to hi Hz (exact FFT bins), 20 s, -30 dBFS; returns its power."""
    n = FS * 20
    f = np.fft.rfftfreq(n, 1 / FS)
    rng = np.random.default_rng(seed)
    X = np.where((f >= lo) & (f <= hi), np.exp(2j * np.pi * rng.random(len(f))), 0)
    x = np.fft.irfft(X, n)
    x *= 10 ** (-30 / 20) / math.sqrt(2) / np.sqrt(np.mean(x ** 2))
    E.write(path, x.astype(np.float32), FS, "FLOAT")
    return np.mean(x ** 2), f[(f >= lo) & (f <= hi)]


def tables(ck, exe):
    # docs/references.md 1.2: IEC 61672-1 Table 3, A at the exact frequencies, class 1 limits not needed
    table3 = [(501.2, -3.2), (1000.0, 0.0), (1995.3, 1.2), (3981.1, 1.0), (7943.3, -1.1), (12589.3, -4.3)]
    # docs/references.md 2.1: BS.468-4 Table 1 (response, tolerance)
    table1 = [(1000.0, 0.0, 0.5), (2000.0, 5.6, 0.5), (4000.0, 10.5, 0.5), (6300.0, 12.2, 0.05),
              (10000.0, 8.1, 0.8), (12500.0, 0.0, 1.2), (16000.0, -11.7, 1.6)]
    for curve, rows, key, name in [(E.a_weighting_db, [(f, a, 0.05) for f, a in table3], "audio.noise_a_dbfs",
                                    "IEC 61672-1 Table 3"),
                                   (E.w468_db, table1, "audio.noise_468_dbfs", "BS.468-4 Table 1")]:
        for i, (fc, want, tol) in enumerate(rows):
            frac = 1.0 if fc <= 2000 else 1 / 3
            lo, hi = fc * 2 ** (-frac / 2), fc * 2 ** (frac / 2)
            p, fb = band_noise("band.wav", lo, hi, 20 + i)
            # the curve's power average over the band minus its value at the centre (computed)
            spread = 10 * math.log10(np.mean(10 ** (curve(fb) / 10))) - float(curve(fc))
            rc, rep, _, err = E.run_json(exe, ["--kind", "audio", "band.wav"])
            got = E.get(rep, key) - 10 * math.log10(p / 0.5) if rc == 0 and rep and E.get(rep, key) is not None \
                else None
            ck.close("%s at %.1f Hz through measure (band noise, %+.3f dB for the band)" % (name, fc, spread), got,
                     want + spread, tol + 0.2)


def modulation(ck, exe):
    src = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "captures", "transmitter-if.wav")
    rc, rep, _, err = E.run_json(exe, ["--full-scale-dbu", "10", src])
    ck.check("if capture with a calibration: exit 0", rc == 0 and rep is not None, err.strip())
    if rep:
        ck.close("carrier.level_dbu = carrier.level_dbfs + 10", E.get(rep, "carrier.level_dbu"),
                 E.get(rep, "carrier.level_dbfs") + 10, 0.011)
        ck.close("capture.rms_dbu = capture.rms_dbfs + 10", E.get(rep, "capture.rms_dbu"),
                 E.get(rep, "capture.rms_dbfs") + 10, 0.011)
        ck.check("the demodulated audio stays re 100 % modulation (no dBu)",
                 not E.has(rep, "audio.fundamental_dbu") and any("re 100 % modulation" in n for n in rep["notes"]),
                 repr(rep.get("notes")))


def demodulated_noise(ck, exe):
    """if/iq: the demodulated audio's weighted noise re 100 % modulation. A 12 kHz IF carrier whose
    envelope is 1 + n(t), n band noise 300 Hz - 4 kHz at -40 dB re a 100 % sine (power 0.5): the
    demodulated audio is n in units of C, so its A- and 468-weighted noise are the curves
    (docs/references.md 1.1, 2.2) integrated over n's own periodogram, in dB re 0.5."""
    n = FS * 10
    f = np.fft.rfftfreq(n, 1 / FS)
    rng = np.random.default_rng(11)
    X = np.where((f >= 300) & (f <= 4000), np.exp(2j * np.pi * rng.random(len(f))), 0)
    x = np.fft.irfft(X, n)
    x *= 10 ** (-40 / 20) / math.sqrt(2) / np.sqrt(np.mean(x ** 2))
    env = 1 + x  # stationary: a lead-in without the noise would dilute it
    tt = np.arange(len(env)) / FS
    E.write("if-noise.wav", (0.4 * env * np.cos(2 * np.pi * 12000 * tt)).astype(np.float32), FS, "FLOAT")
    p = 2 * np.abs(np.fft.rfft(x)) ** 2 / n ** 2
    band = (f >= 20) & (f <= 20000)
    want_a = 10 * math.log10((p[band] * 10 ** (E.a_weighting_db(f[band]) / 10)).sum() / 0.5)
    want_468 = 10 * math.log10((p[band] * 10 ** (E.w468_db(f[band]) / 10)).sum() / 0.5)
    rc, rep, _, err = E.run_json(exe, ["--kind", "if", "if-noise.wav"])
    ck.check("if, envelope noise: exit 0", rc == 0 and rep is not None, err.strip())
    if not rep:
        return
    ck.close("if: unweighted noise of the demodulated audio = n's power re 0.5 (-40 dB)",
             E.get(rep, "audio.noise_nohum_dbfs"), 10 * math.log10(p[band].sum() / 0.5), 0.3)
    ck.check("if: band noise is no two-tone IMD signal", not E.has(rep, "imd"), repr(rep.get("imd")))
    ck.close("if: A-weighted noise of the demodulated audio re 100 % modulation (IEC 61672-1 curve over n)",
             E.get(rep, "audio.noise_a_dbfs"), want_a, 0.3)
    ck.close("if: 468-weighted noise of the demodulated audio (BS.468-4 curve over n)",
             E.get(rep, "audio.noise_468_dbfs"), want_468, 0.3)
    ck.check("if: no tone, so no A-weighted SNR, with a reason", E.get(rep, "audio.snr_a_db") is None
             and E.has(rep, "reasons.audio.snr_a_db"), repr(rep.get("reasons", {}).get("audio")))
    ck.check("if: no quasi-peak reading of the demodulated audio", not E.has(rep, "audio.noise_468_qp_dbfs"),
             repr(rep["audio"].keys()))


def log_columns(ck, exe):
    rc1, _, err1 = E.run_cmd(exe, ["log", "--out", "plain.csv", "--kind", "audio", "r68.wav"])
    rc2, _, err2 = E.run_cmd(exe, ["log", "--out", "dbu.csv", "--kind", "audio", "--full-scale-dbu", "18", "r68.wav"])
    ck.check("log with and without --full-scale-dbu: exit 0", rc1 == 0 and rc2 == 0, err1 + err2)
    if rc1 or rc2:
        return
    with open("plain.csv") as f:  # the head line (# modlens log ...) says what is logged
        a = [ln.strip().split(",") for ln in f if not ln.startswith("#")]
    with open("dbu.csv") as f:
        b = [ln.strip().split(",") for ln in f if not ln.startswith("#")]
    i = a[0].index("rms_dbfs") if "rms_dbfs" in a[0] else 0
    ck.check("log header: rms_dbu, peak_dbu, a_weighted_dbu with a calibration",
             b[0][i:i + 3] == ["rms_dbu", "peak_dbu", "a_weighted_dbu"] and a[0][i:i + 3] == ["rms_dbfs", "peak_dbfs",
                                                                                          "a_weighted_dbfs"],
             repr(b[0][:i + 3]))
    worst = max(abs(float(y) - float(x) - 18) for ra, rb in zip(a[1:], b[1:])
                for x, y in zip(ra[i:i + 3], rb[i:i + 3]))
    ck.check("log level columns: dBFS + 18 (to the printed 0.01)", worst <= 0.011, "worst %.4f" % worst)
    ck.check("log: the other columns unchanged", all(ra[i + 3:] == rb[i + 3:] and ra[:2] == rb[:2]
                                                       for ra, rb in zip(a[1:], b[1:])), "")


def main():
    exe = E.modlens_path()
    ck = E.Checker("levels")
    with E.scratch():
        volts(ck, exe)
        white_noise(ck, exe)
        calibration(ck, exe)
        tables(ck, exe)
        modulation(ck, exe)
        demodulated_noise(ck, exe)
        log_columns(ck, exe)
    ck.finish()


if __name__ == "__main__":
    main()
