"""Each case of issue 17 through `modlens measure` / `compare`, against independent truths.

Usage: /usr/bin/python3 test_honest_cases.py /path/to/modlens

The captures come from tests/e2e/honest_signals.py (numpy, fixed seeds). The truths are the
captures' construction (analytic), numpy least-squares fits of known components (the IEEE 1057
3-parameter fit, docs/references.md 4), white-noise power in the band (docs/references.md 5,
band-limited white-noise check) and the project's written rules where a rule decides (dsp/kind.h
for the kind, dsp/metrics.h for the tone decision and bounds, analyzer/limits.h for bounds against
limits). Sources are named beside each check.
"""
import json
import math
import os
import re
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402
import soundfile as sf  # noqa: E402

import e2e_common as E  # noqa: E402
import honest_signals as H  # noqa: E402

BAND_SHARE = 19980.0 / 24000.0  # the 20..20000 Hz band's share of 0..24 kHz (docs/references.md 5)




def db(p):
    return 10 * math.log10(p)


def bound(rep, key):
    group, leaf = key.split(".")
    return rep["bounds"].get(group, {}).get(leaf, "")


def reason(rep, key):
    group, leaf = key.split(".")
    return rep["reasons"].get(group, {}).get(leaf, "")


def notes(rep):
    return " | ".join(rep.get("notes", []))


def check_kind(ck, exe):
    """dsp/kind.h: identical or near-identical channels are never I/Q; I/Q must be a quadrature
    pair; one channel is IF when its carrier carries symmetric sidebands (or stands alone), else
    audio. The figures then show that the channel was read as the construction says."""
    t = H.t_axis(2.0)
    left, right = 0.3 * np.sin(2 * np.pi * 1000 * t), 0.3 * np.sin(2 * np.pi * 1700 * t + 0.4)
    sf.write("two_programmes.wav", np.stack([left, right], 1) + H.noise(2 * t.size, 1e-5, 20).reshape(-1, 2),
             H.FS, subtype="PCM_24")
    sf.write("left_silent.wav", np.stack([np.zeros_like(t), left + H.noise(t.size, 1e-5, 21)], 1), H.FS,
             subtype="PCM_24")
    cases = [
        # file, kind, text in the reason, figure to check, its truth, tolerance, source
        ("stereo_copy.wav", "audio", "one signal", "audio.fundamental_dbfs", 20 * math.log10(0.3), 0.01,
         "one channel read: 0.3 sin -> -10.46 dBFS (AES17 dBFS, docs/references.md 5)"),
        ("stereo_near.wav", "audio", "one signal", "audio.fundamental_dbfs", 20 * math.log10(0.3), 0.01,
         "channel 1 read: 0.3 sin -> -10.46 dBFS"),
        ("two_programmes.wav", "audio", "two real signals", "audio.fundamental_hz", 1000.0, 0.01,
         "channel 1 holds the 1 kHz programme"),
        ("left_silent.wav", "audio", "silent", "audio.fundamental_hz", 1000.0, 0.01,
         "the silent channel 1 gives way to channel 2, the 1 kHz tone"),
        ("if_stereo.wav", "if", "one signal", "modulation.index", 0.5, 0.003,
         "an IF saved as stereo: m = 0.5 by construction (docs/references.md 6)"),
        ("am_iq.wav", "iq", "quadrature pair", "modulation.index", 0.6, 0.003,
         "I/Q at +3 kHz: m = 0.6 by construction"),
        ("carrier_iq.wav", "iq", "quadrature pair", "carrier.frequency_hz", 5000.0, 0.01, "carrier at +5 kHz"),
        ("carrier_if.wav", "if", "sidebands", "carrier.frequency_hz", 12000.0, 0.01,
         "a carrier with hum sidebands is an IF"),
        ("pure_carrier.wav", "if", "lone line", "carrier.frequency_hz", 12000.0, 0.01, "a pure carrier is an IF"),
        ("tone5k_hum.wav", "audio", "weaker than the hum", "audio.fundamental_hz", 5000.0, 0.01,
         "a 5 kHz tone whose hum sidebands are weaker than its hum is audio"),
        ("noise.wav", "audio", "no line stands clear", None, None, None, "noise alone is no carrier"),
    ]
    for f, kind, why, key, want, tol, src in cases:
        rc, rep, _, err = E.run_json(exe, [f])
        if not ck.check(f + " runs", rc == 0 and rep is not None, err.strip()):
            continue
        ck.check("%s read as %s: %s (dsp/kind.h)" % (f, kind, why), rep["input"]["kind"] == kind
                 and why in rep["input"]["kind_reason"], "%s: %s" % (rep["input"]["kind"], rep["input"]["kind_reason"]))
        if key:
            ck.close("%s %s" % (f, key), E.get(rep, key), want, tol, src)


def check_no_tone(ck, exe):
    """The carrier hum-and-noise test (docs/references.md 8: hum and noise re 100 % modulation).
    An envelope 1 + h sin(2 pi 50 t) holds, in units of C, an AC line of amplitude h: power h^2/2
    against the 0.5 of 100 % sine modulation, 20 lg h dB (h = 0.005: -46.02 dB). The envelope's
    noise, for complex noise of sigma per component on a carrier of amplitude A, is the in-phase
    part: variance sigma^2 / A^2 over 0..fs/2, so sigma^2 / A^2 2 (B - 20) / fs in the audio band
    20..B (B the channel's one-sided width, 10 kHz here)."""
    for f in ("carrier_iq.wav", "carrier_if.wav"):
        rc, rep, _, err = E.run_json(exe, [f])
        if not ck.check(f + " runs", rc == 0 and rep is not None, err.strip()):
            continue
        ck.check(f + ": no tone: hum and noise measured, tone figures n/a with the reason",
                 rep["audio"]["measurement"] == "hum and noise" and rep["audio"]["thd_pct"] is None
                 and "no test tone" in reason(rep, "audio.thd_pct") and rep["modulation"]["index_spectral"] is None
                 and "hum-and-noise measurement of the demodulated audio" in notes(rep),
                 "%r %r" % (rep["audio"].get("measurement"), notes(rep)[:200]))
        ck.close(f + " modulation.hum_db re 100 % modulation", E.get(rep, "modulation.hum_db"),
                 20 * math.log10(0.005), 0.1, "20 lg h, h = 0.005 by construction")
        ck.check(f + " hum.mains_hz 50 (the hum line stands above the noise)", E.get(rep, "hum.mains_hz") == 50)
    # a pure carrier (float samples, no noise): its envelope is constant, C removed from each
    # segment leaves only rounding residue in the demodulated audio: no tone, no figure, and the
    # report says so (never DC's leakage taken for a tone)
    rc, rep, _, err = E.run_json(exe, ["pure_carrier.wav"])
    if ck.check("pure_carrier runs", rc == 0 and rep is not None, err.strip()):
        ck.check("pure_carrier: the demodulated audio holds no tone and no figure, with the reason",
                 rep["audio"].get("measurement") in (None, "hum and noise") and rep["audio"]["fundamental_hz"] is None
                 and rep["audio"]["thdn_pct"] is None and rep["modulation"]["index_spectral"] is None
                 and ("no modulation in the demodulated audio band" in notes(rep)
                      or rep["audio"].get("measurement") == "hum and noise"),
                 "%r %r" % (rep["audio"].get("measurement"), notes(rep)[:300]))
    rc, rep, _, err = E.run_json(exe, ["carrier_iq.wav"])
    if rep is not None:
        bw = 10000.0
        n_true = (4e-5 / 0.4) ** 2 * 2 * (bw - 20) / H.FS
        # 0.5 dB: the channel filter's transition (1 kHz at its edge) and the estimate's scatter
        ck.close("carrier_iq audio.noise_nohum_dbfs (envelope noise re 100 %)", E.get(rep, "audio.noise_nohum_dbfs"),
                 db(n_true / 0.5), 0.5, "in-phase noise sigma^2/A^2 over 20..10000 Hz")
    # --no-tone on a tone: the tone is part of the band's noise (dsp/metrics.h, no tone)
    rc, rep, _, err = E.run_json(exe, ["--no-tone", "short1.wav"])
    if ck.check("--no-tone runs", rc == 0 and rep is not None, err.strip()):
        ck.check("--no-tone: tone figures n/a, reason 'no test tone was declared'",
                 rep["audio"]["fundamental_hz"] is None and reason(rep, "audio.sinad_db") == "no test tone was declared"
                 and rep["audio"]["measurement"] == "hum and noise", repr(rep["reasons"].get("audio")))
        # all of the band is noise or hum: the 0.5 sine (-6.02 dBFS) dominates
        ck.close("--no-tone: noise is the band's power, the tone's -6.02 dBFS", E.get(rep, "audio.noise_dbfs"),
                 20 * math.log10(0.5), 0.05, "0.5 sin: -6.02 dBFS (docs/references.md 5); hum 54 dB down")
    rc, rep, _, err = E.run_json(exe, ["--with-tone", "noise.wav"])
    if ck.check("--with-tone runs", rc == 0 and rep is not None, err.strip()):
        ck.check("--with-tone on noise: a tone taken, with the note that it is not clear of the noise",
                 rep["audio"]["measurement"] == "tone" and rep["audio"]["fundamental_hz"] is not None
                 and "does not stand 10 dB clear" in notes(rep), notes(rep)[:200])
    rc, out, err = E.run(exe, ["--no-tone", "--tone", "1000", "short1.wav"])
    ck.check("--no-tone with --tone: a usage error", rc == 2 and "contradict" in err, err.strip())


def check_short(ck, exe):
    """Hum on short captures (the transform plan, dsp/metrics.h ml_audio_plan_transform): against
    the least-squares power of the hum lines fitted with the tone (docs/references.md 4)."""
    for secs, fs, mains in ((0.25, 48000, 50.0), (0.5, 48000, 60.0), (1.0, 44100, 50.0), (0.25, 44100, 60.0)):
        x = H.tone_with_hum(secs, mains, fs=fs, seed=int(secs * 1000) + fs)
        name = "short_%g_%d_%g.wav" % (secs, fs, mains)
        sf.write(name, x.astype(np.float32), fs, subtype="FLOAT")
        rc, rep, _, err = E.run_json(exe, [name])
        if not ck.check(name + " runs", rc == 0 and rep is not None, err.strip()):
            continue
        p = E.fit_powers(x, fs, [1000.0, mains, 2 * mains, 3 * mains])
        hum_true = db(sum(p[1:]) / 0.5)
        got = E.get(rep, "hum.level_dbfs")
        ck.check(name + " mains frequency", E.get(rep, "hum.mains_hz") == mains, repr(E.get(rep, "hum.mains_hz")))
        ck.close(name + " hum.level_dbfs = least-squares hum power", got, hum_true, 0.3,
                 "IEEE 1057 3-parameter fits of the known lines; 0.3 dB: window scalloping of a short transform")
        ck.check(name + " hum a measurement (not a bound)", bound(rep, "hum.level_dbfs") == "", bound(rep, "hum.level_dbfs"))
        # the weighted noise sums the unweighted noise's bins (docs/references.md 1 and 2 weight
        # them): where that noise is a bound at the analysis' floor, so are they
        nb = bound(rep, "audio.noise_dbfs")
        ck.check(name + " noise_a / noise_468 / snr_a carry the unweighted noise's bound (%r)" % nb,
                 bound(rep, "audio.noise_a_dbfs") == nb and bound(rep, "audio.noise_468_dbfs") == nb
                 and bound(rep, "audio.snr_a_db") == {"upper": "lower", "": ""}[nb],
                 repr([bound(rep, k) for k in ("audio.noise_a_dbfs", "audio.noise_468_dbfs", "audio.snr_a_db")]))
    # 0.1 s: the mains fundamental may be resolved, its multiples not: never a floor value
    rc, rep, _, err = E.run_json(exe, ["short0.1.wav"])
    if ck.check("short0.1 runs", rc == 0 and rep is not None, err.strip()):
        v, b, r = E.get(rep, "hum.level_dbfs"), bound(rep, "hum.level_dbfs"), reason(rep, "hum.level_dbfs")
        ck.check("short0.1 hum: a bound or n/a with a reason, never a plain reading or -300",
                 (v is None and r) or (v is not None and b in ("upper", "lower") and v > -290), "%r %r %r" % (v, b, r))
        ck.check("short0.1: the notes say how long the capture must be",
                 re.search(r"\(\d+\.\d+ s needed", notes(rep)) is not None, notes(rep)[:300])


def check_tones(ck, exe):
    # 20 Hz at the band's edge: THD n/a with the reason; SINAD a figure; THD+N = -SINAD
    rc, rep, _, err = E.run_json(exe, ["tone20.wav"])
    if ck.check("tone20 runs", rc == 0 and rep is not None, err.strip()):
        x, fs = sf.read("tone20.wav", dtype="float64")
        p1 = E.fit_powers(x, fs, [20.0])[0]
        ck.close("tone20 fundamental_dbfs = fit", E.get(rep, "audio.fundamental_dbfs"), db(p1 / 0.5), 0.01,
                 "IEEE 1057 3-parameter fit (docs/references.md 4)")
        ck.check("tone20 THD n/a with a reason", E.get(rep, "audio.thd_pct") is None and reason(rep, "audio.thd_pct"),
                 reason(rep, "audio.thd_pct"))
        s = E.get(rep, "audio.sinad_db")
        ck.check("tone20 SINAD a figure in range and THD+N = -SINAD",
                 s is not None and -290 < s < 290 and abs(E.get(rep, "audio.thdn_db") + s) < 1e-4, repr(s))
    # 15 kHz: no harmonic in the band: THD n/a, and a THD limit cannot pass
    with open("thd.ini", "w") as fh:
        fh.write("thd_pct_max = 1\n")
    rc, rep, _, err = E.run_json(exe, ["--kind", "audio", "--limits", "thd.ini", "tone15k.wav"])
    if ck.check("tone15k runs", rep is not None, err.strip()):
        ck.check("tone15k THD n/a: no harmonic inside the band",
                 E.get(rep, "audio.thd_pct") is None and "no harmonic" in reason(rep, "audio.thd_pct"),
                 reason(rep, "audio.thd_pct"))
        ck.check("tone15k THD limit: a failed check (not measured), exit 1 (analyzer/limits.h)",
                 rc == 1 and rep["checks"][0]["pass"] is False and rep["checks"][0]["value"] is None, repr(rep["checks"]))
    # 8 kHz, 16 bits: 8 samples a period, the rounding repeats each period: SINAD from one period
    rc, rep, _, err = E.run_json(exe, ["tone8k16.wav"])
    if ck.check("tone8k16 runs", rc == 0 and rep is not None, err.strip()):
        x, _ = sf.read("tone8k16.wav", dtype="float64")
        per = x[:8]
        p1 = 2 * abs(np.fft.fft(per)[1] / 8) ** 2  # power of the 1 kHz line (amplitude 2|X1|/8)
        rest = np.mean(per ** 2) - p1 - np.mean(per) ** 2
        ck.close("tone8k16 SINAD = one period's DFT (IEEE 1241 eq. 94, docs/references.md 4)",
                 E.get(rep, "audio.sinad_db"), db(p1 / rest), 0.05, "exact periodic signal")
        e = E.get(rep, "audio.enob_bits")
        ck.check("tone8k16 ENOB in 0..32 and noise never a floor value", e is not None and 0 <= e <= 32
                 and (E.get(rep, "audio.noise_dbfs") is None or E.get(rep, "audio.noise_dbfs") > -290), repr(e))
    # denormal samples: levels are bounds at -290 dBFS, not -800
    rc, rep, _, err = E.run_json(exe, ["denormal.wav"])
    if ck.check("denormal runs", rc == 0 and rep is not None, err.strip()):
        ck.check("denormal: peak and rms are upper bounds at -290 dBFS",
                 E.get(rep, "audio.peak_dbfs") == -290 and bound(rep, "audio.peak_dbfs") == "upper"
                 and E.get(rep, "audio.rms_dbfs") == -290 and bound(rep, "audio.rms_dbfs") == "upper",
                 "%r %r" % (E.get(rep, "audio.peak_dbfs"), rep["bounds"]))


def check_noise(ck, exe):
    # a -20 dBFS sine in -35 dBFS white noise: THD is an upper bound, no hum, SNR analytic
    rc, rep, _, err = E.run_json(exe, ["tone_noise.wav"])
    if ck.check("tone_noise runs", rc == 0 and rep is not None, err.strip()):
        ck.check("tone_noise: a clear tone", rep["audio"]["measurement"] == "tone")
        ck.check("tone_noise: THD noise-limited, an upper bound", bound(rep, "audio.thd_pct") == "upper",
                 repr(rep["bounds"]))
        ck.check("tone_noise: mains n/a (no hum line above the noise), hum an upper bound",
                 E.get(rep, "hum.mains_hz") is None and bound(rep, "hum.level_dbfs") == "upper")
        sigma2 = 10 ** (-35 / 10)
        ck.close("tone_noise SNR = P1 / (sigma^2 in the band)", E.get(rep, "audio.snr_db"),
                 db(0.01 / (sigma2 * BAND_SHARE)), 0.15, "P1 = 0.01; white noise over 20..20000 Hz")
    # hum alone: no tone, hum against the least-squares fit, noise without hum analytic
    rc, rep, _, err = E.run_json(exe, ["humonly.wav"])
    if ck.check("humonly runs", rc == 0 and rep is not None, err.strip()):
        x, fs = sf.read("humonly.wav", dtype="float64")
        p = E.fit_powers(x, fs, [50.0, 100.0, 150.0])
        ck.check("humonly: hum and noise, mains 50", rep["audio"]["measurement"] == "hum and noise"
                 and E.get(rep, "hum.mains_hz") == 50)
        ck.close("humonly hum.level_dbfs = least-squares", E.get(rep, "hum.level_dbfs"), db(sum(p) / 0.5), 0.05,
                 "IEEE 1057 fits of 50, 100, 150 Hz")
        ck.close("humonly noise_nohum_dbfs = white noise in the band", E.get(rep, "audio.noise_nohum_dbfs"),
                 db(1e-10 * BAND_SHARE / 0.5), 0.3, "sigma = 1e-5 over 20..20000 Hz (float32 rounding negligible)")
    rc, rep, _, err = E.run_json(exe, ["noise.wav"])
    if ck.check("noise runs", rc == 0 and rep is not None, err.strip()):
        ck.check("noise: mains n/a, hum an upper bound", E.get(rep, "hum.mains_hz") is None
                 and bound(rep, "hum.level_dbfs") == "upper")
        ck.close("noise noise_dbfs = sigma^2 in the band", E.get(rep, "audio.noise_dbfs"),
                 db(10 ** (-40 / 10) * BAND_SHARE / 0.5), 0.1, "white noise at -40 dBFS rms")


def check_dropout(ck, exe):
    """A 150 ms dropout at 0.7 s: a note with its times, and the figures of the rest: RMS of the
    samples outside it, SINAD of the tone in its white noise (0.5 sin, sigma 1e-4)."""
    rc, rep, _, err = E.run_json(exe, ["dropout.wav"])
    if not ck.check("dropout runs", rc == 0 and rep is not None, err.strip()):
        return
    ck.check("dropout: a note with its times", re.search(r"silence 0\.7\d\d-0\.85\d s", notes(rep)) is not None,
             notes(rep)[:300])
    x, fs = sf.read("dropout.wav", dtype="float64")
    keep = np.r_[x[:int(0.7 * fs)], x[int(0.85 * fs):]]
    ck.close("dropout: audio.rms_dbfs of the samples outside it", E.get(rep, "audio.rms_dbfs"),
             db(np.mean(keep ** 2) / 0.5), 0.01, "AES17 dBFS (docs/references.md 5)")
    sinad = db(0.125 / (1e-8 * BAND_SHARE + 2 ** -46 / 3 * BAND_SHARE))
    ck.close("dropout: SINAD of the tone in its noise (the gap left out)", E.get(rep, "audio.sinad_db"), sinad, 0.3,
             "0.5 sin in white noise sigma 1e-4 plus 24-bit rounding")
    # a 1.1 s grab at 44.1 kHz with 80 ms of zeros at 0.45 s: every analysis segment holds it, so the
    # spectral figures include it and each says so; the sample levels leave it out (AES17 dBFS of the
    # samples outside the gap, docs/references.md 5)
    fs = 44100
    t = np.arange(int(1.1 * fs)) / fs
    x = 0.3 * np.sin(2 * np.pi * 700 * t) + np.random.default_rng(8).normal(0, 1e-4, t.size)
    x[int(0.45 * fs):int(0.53 * fs)] = 0.0
    sf.write("dropout_short.wav", x, fs, subtype="PCM_24")
    rc, rep, _, err = E.run_json(exe, ["dropout_short.wav"])
    if ck.check("dropout_short runs", rc == 0 and rep is not None, err.strip()):
        qual = rep.get("qualifiers", {}).get("audio", {})
        spectral = ("thdn_db", "sinad_db", "snr_db", "noise_dbfs", "fundamental_dbfs", "noise_a_dbfs")
        ck.check("dropout_short: every spectral figure says it includes the dropout",
                 all("includes a dropout" in qual.get(k, "") for k in spectral if E.get(rep, "audio." + k) is not None),
                 repr({k: qual.get(k) for k in spectral}))
        keep = np.r_[x[:int(0.45 * fs)], x[int(0.53 * fs):]]
        ck.close("dropout_short: audio.rms_dbfs of the samples outside the gap", E.get(rep, "audio.rms_dbfs"),
                 db(np.mean(keep ** 2) / 0.5), 0.01, "AES17 dBFS (docs/references.md 5)")
        ck.check("dropout_short: the sample levels carry no such qualifier", "rms_dbfs" not in qual, repr(qual.get("rms_dbfs")))


def check_compare_and_limits(ck, exe):
    p = subprocess.run(E.WRAP + [exe, "compare", "short1.wav", "am_iq.wav"], capture_output=True, text=True,
                       timeout=E.RUN_TIMEOUT_S)
    ck.check("compare audio with iq: refused, exit 2, one line", p.returncode == 2 and p.stdout == ""
             and len(p.stderr.strip().splitlines()) == 1 and "--mixed-kinds" in p.stderr, p.stderr.strip())
    p = subprocess.run(E.WRAP + [exe, "compare", "--mixed-kinds", "--format", "json", "short1.wav", "am_iq.wav"],
                       capture_output=True, text=True, timeout=E.RUN_TIMEOUT_S)
    ck.check("compare --mixed-kinds: compared, with the note", p.returncode in (0, 1)
             and "measured as audio and B as iq" in p.stdout, p.stderr.strip())
    # limits on a bound (analyzer/limits.h): tone_noise's THD is an upper bound U
    rc, rep, _, err = E.run_json(exe, ["tone_noise.wav"])
    if rep is None:
        return
    u = E.get(rep, "audio.thd_pct")
    for text, want_rc, verdict, undecided in (("thd_pct_max = %g\n" % (2 * u), 0, "pass", False),
                                              ("thd_pct_max = %g\n" % (u / 2), 1, "undecided", True),
                                              ("thd_pct_min = %g\n" % (2 * u), 1, "fail", False)):
        with open("bound.ini", "w") as fh:
            fh.write(text)
        rc, rep, _, err = E.run_json(exe, ["--limits", "bound.ini", "tone_noise.wav"])
        ok = rep is not None and rc == want_rc and rep["verdict"] == verdict \
            and rep["checks"][0]["undecided"] is undecided
        ck.check("THD < %.4f against %s: %s, exit %d" % (u, text.strip(), verdict, want_rc), ok,
                 "exit %d %r" % (rc, rep and (rep["verdict"], rep["checks"])))
    rc, out, err = E.run(exe, ["--limits", "bound.ini", "tone_noise.wav"])
    with open("bound.ini", "w") as fh:
        fh.write("thd_pct_max = %g\n" % (u / 2))
    rc, out, err = E.run(exe, ["--limits", "bound.ini", "tone_noise.wav"])
    ck.check("text: UNDECIDED row and verdict", re.search(r"^audio\.thd_pct\s+<.*UNDECIDED", out, re.M) is not None
             and "verdict: UNDECIDED" in out, out[-400:])


def check_short_carrier_hum(ck, exe):
    """The carrier hum-and-noise test on short grabs (0.15 .. 1 s), IF and I/Q, 50 and 60 Hz, at
    44.1 and 48 kHz: an unmodulated carrier with hum modulation of index h = 10^(-45/20) at the
    mains and 0.3 h at twice it, 95 dB above the noise. The demodulated audio is hum alone: no
    test tone (neither the hum line, nor its window's skirt on the short transform, nor an
    unresolved multiple), and modulation.hum_db is 20 lg h + 10 lg(1 + 0.3^2) re 100 % modulation
    by construction (-44.63 dB), or a lower bound between the fundamental's -45 dB and that where
    the capture resolves the fundamental only (dsp/metrics.h, ml_audio_plan_transform)."""
    h = 10 ** (-45 / 20)
    want = 20 * math.log10(h) + 10 * math.log10(1 + 0.3 ** 2)
    for fs in (44100, 48000):
        for secs in (0.15, 0.3, 0.6, 1.0):
            for mains in (50.0, 60.0):
                for iq in (False, True):
                    t = np.arange(int(round(secs * fs))) / fs
                    env = 0.4 * (1 + h * np.sin(2 * np.pi * mains * t) + 0.3 * h * np.sin(2 * np.pi * 2 * mains * t + 1))
                    g = np.random.default_rng(int(fs + 10 * secs + mains))
                    if iq:
                        z = env * np.exp(-2j * np.pi * 3000.0 * t)
                        z = z + g.normal(0, 1e-6, t.size) + 1j * g.normal(0, 1e-6, t.size)
                        x = np.stack([z.real, z.imag], axis=1)
                    else:
                        x = env * np.cos(2 * np.pi * 5000.0 * t) + g.normal(0, 1e-6, t.size)
                    name = "shorthum_%d_%g_%d_%s.wav" % (fs, secs, mains, "iq" if iq else "if")
                    sf.write(name, x, fs, subtype="FLOAT")
                    rc, rep, _, err = E.run_json(exe, ["--kind", "iq" if iq else "if", name])
                    if not ck.check(name + " runs", rc == 0 and rep is not None, err.strip()):
                        continue
                    hum = E.get(rep, "modulation.hum_db")
                    bound = rep["bounds"].get("modulation", {}).get("hum_db")
                    ok = rep["audio"].get("measurement") == "hum and noise" and rep["audio"]["fundamental_hz"] is None \
                        and hum is not None and E.get(rep, "hum.mains_hz") == mains \
                        and (abs(hum - want) <= 0.2 if bound is None else -45.2 <= hum <= want + 0.2)
                    ck.check(name + ": no tone; hum %.2f dB re 100 %% (want %.2f%s)" % (
                        hum if hum is not None else float("nan"), want, "" if bound is None else ", a lower bound"),
                        ok, "%r %r %r" % (rep["audio"].get("measurement"), rep["audio"]["fundamental_hz"],
                                          E.get(rep, "hum.mains_hz")))


def check_one_modulated_segment(ck, exe):
    """A lead-in that leaves one wholly modulated FFT segment (1.5 s, 0.4 s of carrier first, at
    44.1 and 48 kHz): the spectra read over the modulated segments have no phase advance of their
    own, so the carrier's and the tone's frequencies come from every segment's (dsp/spectrum.h).
    Truth: the construction (7000 Hz carrier, 400 Hz tone); 0.02 Hz is some hundredth of a bin."""
    for fs in (44100, 48000):
        t = np.arange(int(1.5 * fs)) / fs
        m = np.where(t >= 0.4, 0.8 * np.sin(2 * np.pi * 400 * (t - 0.4)), 0.0)
        g = np.random.default_rng(fs)
        x = 0.4 * (1 + m) * np.cos(2 * np.pi * 7000 * t) + g.normal(0, 0.4 / math.sqrt(2 * 10 ** 5.5), t.size)
        name = "onesegment_%d.wav" % fs
        sf.write(name, x, fs, subtype="PCM_24")
        rc, rep, _, err = E.run_json(exe, [name])
        if not ck.check(name + " runs", rc == 0 and rep is not None, err.strip()):
            continue
        ck.close(name + " carrier.frequency_hz", E.get(rep, "carrier.frequency_hz"), 7000.0, 0.02, "by construction")
        ck.close(name + " audio.fundamental_hz (the tone)", E.get(rep, "audio.fundamental_hz"), 400.0, 0.02,
                 "by construction")


def main():
    exe = E.modlens_path()
    ck = E.Checker("test_honest_cases")
    with E.scratch():
        H.write_all()
        check_kind(ck, exe)
        check_no_tone(ck, exe)
        check_short(ck, exe)
        check_short_carrier_hum(ck, exe)
        check_one_modulated_segment(ck, exe)
        check_tones(ck, exe)
        check_noise(ck, exe)
        check_dropout(ck, exe)
        check_compare_and_limits(ck, exe)
    ck.finish()


if __name__ == "__main__":
    main()
