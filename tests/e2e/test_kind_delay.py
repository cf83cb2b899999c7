"""--kind auto on stereo copies with a delay, skewed IF pairs, genuine I/Q, and two-tone audio.

Usage: /usr/bin/python3 test_kind_delay.py /path/to/modlens

Signals are made here with numpy (fixed seeds). Truths come from the construction and numpy:
- a delay tau between two copies of one signal puts 360 f tau degrees between the channels at f;
  in z = x + j y the line at +f over the one at -f is (1 + g^2 + 2 g sin phi) / (1 + g^2 - 2 g sin phi)
  (expand cos into exponentials). I/Q needs every line one-sided (dsp/kind.h pair rule 3): a tone
  near 90 degrees passes, its 2nd harmonic near 180 degrees does not, so the pair is read as one
  channel;
- THD of the constructed tone: harmonics fitted together by least squares (the IEEE 1057
  3-parameter fit per frequency, docs/references.md 4) on the channel as written: sqrt(P2 + P3) / sqrt(P1);
- AM index m by construction (docs/references.md 6);
- two tones through y = x + c x^3: the products' amplitudes from numpy's FFT of the written samples
  (whole cycles in the file, so every line falls on a bin), the SMPTE/DIN figures as dsp/imd.h
  defines them (docs/references.md 5 and 12: IEC 60268-3 arithmetic sum per order, d3 =
  [U(fh - 2 fl) + U(fh + 2 fl)] / U(fh)).
"""
import math
import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402
import soundfile as sf  # noqa: E402

import e2e_common as E  # noqa: E402


def fdelay(x, d, fs):
    """x delayed by d seconds (circular, exact for the FFT's lines)."""
    n = len(x)
    f = np.fft.rfftfreq(n, 1 / fs)
    return np.fft.irfft(np.fft.rfft(x) * np.exp(-2j * np.pi * f * d), n)




def image_db(g, phi):
    """The line at +f over the one at -f, dB (inf: no image at all)."""
    lo = 1 + g * g - 2 * g * math.sin(phi)
    return 10 * math.log10((1 + g * g + 2 * g * math.sin(phi)) / lo) if lo > 1e-12 else float("inf")


def check_delayed_audio(ck, exe):
    """Receiver audio recorded in stereo with a delay between the channels: audio, THD of the tone."""
    cases = [  # rate, tone, delay (s), gain of the copy, subtype, 2nd harmonic, mains
        (44100, 1500.0, 0.17e-3, 0.92, "PCM_16", 0.008, 50.0),
        (32000, 650.0, 0.40e-3, 1.0, "PCM_24", 0.008, 50.0),
        (96000, 2200.0, 0.11e-3, 0.95, "PCM_16", 0.008, 50.0),
        (48000, 1200.0, 0.20e-3, 1.0, "FLOAT", 0.008, 50.0),
        # odd harmonics only at 90 degrees: the 3rd is one-sided too (270), the hum is the witness
        (22050, 1800.0, 1 / 7200.0, 1.0, "PCM_16", 0.0, 60.0),
    ]
    rng = np.random.default_rng(31)
    for fs, f0, tau, g, sub, h2, mains in cases:
        t = np.arange(int(2.5 * fs)) / fs
        x = 0.35 * (np.sin(2 * np.pi * f0 * t) + h2 * np.sin(2 * np.pi * 2 * f0 * t + 0.3)
                    + 0.006 * np.sin(2 * np.pi * 3 * f0 * t + 0.9))
        x += 8e-4 * np.sin(2 * np.pi * mains * t) + rng.normal(0, 2e-4, t.size)
        name = "delayed_%d_%d.wav" % (fs, f0)
        sf.write(name, np.stack([x, g * fdelay(x, tau, fs)], 1), fs, subtype=sub)
        left = sf.read(name)[0][:, 0]
        p = E.fit_powers(left, fs, [f0, 2 * f0, 3 * f0])
        thd = 100 * math.sqrt(p[1] + p[2]) / math.sqrt(p[0])
        phi = 2 * math.pi * f0 * tau
        rc, rep, _, err = E.run_json(exe, [name])
        if not ck.check(name + " runs", rc in (0, 1) and rep is not None, err.strip()):
            continue
        why = rep["input"]["kind_reason"]
        if h2:
            witness = "2nd harmonic at %.0f deg, image %.1f dB" % (math.degrees(2 * phi),
                                                                   abs(image_db(g, 2 * phi)))
        else:
            witness = "hum at %.1f deg, image %.1f dB" % (360 * mains * tau,
                                                         image_db(g, 2 * math.pi * mains * tau))
        ck.check("%s (tone at %.0f deg, image %.0f dB; %s): audio, the pair fails at some line "
                 "(dsp/kind.h pair rule 3)" % (name, math.degrees(phi), image_db(g, phi), witness),
                 rep["input"]["kind"] == "audio" and "one-sided" in why and "not an I/Q pair" in why,
                 "%s: %s" % (rep["input"]["kind"], why))
        ck.close(name + " audio.fundamental_hz", E.get(rep, "audio.fundamental_hz"), f0, 0.01,
                 "by construction")
        ck.rel(name + " audio.thd_pct vs the least-squares fit (docs/references.md 4)",
               E.get(rep, "audio.thd_pct"), thd, 0.03)


def check_skewed_if(ck, exe):
    """A real IF saved as stereo with the right channel 1.5 samples late: its carrier sits near
    90 degrees (one-sided), its sidebands 17 dB images: one channel, an IF, m by construction."""
    fs, fc, fm, m = 44100, 7200.0, 1200.0, 0.4
    t = np.arange(3 * fs) / fs
    x = 0.3 * (1 + m * np.sin(2 * np.pi * fm * t)) * np.cos(2 * np.pi * fc * t)
    x += np.random.default_rng(32).normal(0, 3e-5, t.size)
    sf.write("if_skewed.wav", np.stack([x, 0.97 * fdelay(x, 1.5 / fs, fs)], 1), fs, subtype="PCM_24")
    rc, rep, _, err = E.run_json(exe, ["if_skewed.wav"])
    if ck.check("if_skewed runs", rc in (0, 1) and rep is not None, err.strip()):
        ck.check("if_skewed: not I/Q (a sideband's image %.1f dB down, rule 3 asks 20), read as IF"
                 % image_db(0.97, 2 * math.pi * (fc - fm) * 1.5 / fs),
                 rep["input"]["kind"] == "if" and "not an I/Q pair" in rep["input"]["kind_reason"],
                 "%s: %s" % (rep["input"]["kind"], rep["input"]["kind_reason"]))
        ck.close("if_skewed modulation.index", E.get(rep, "modulation.index"), m, 0.005,
                 "m = 0.4 by construction (docs/references.md 6)")
        ck.close("if_skewed carrier.frequency_hz", E.get(rep, "carrier.frequency_hz"), fc, 0.05,
                 "by construction")


def check_genuine_iq(ck, exe):
    """Genuine I/Q stays I/Q: AM with hum sidebands, gain/phase error 0.6 dB / 3 degrees (image
    (1 + g^2 + 2 g cos p) / (1 + g^2 - 2 g cos p): 27.3 dB down), DC offsets; and a carrier near
    0 Hz whose envelope harmonics cross to the other side."""
    fs = 48000
    t = np.arange(3 * fs) / fs
    rng = np.random.default_rng(33)
    gg, ph = 10 ** (0.6 / 20), math.radians(3.0)
    def cos(f):
        return np.cos(2 * np.pi * f * t)

    cases = [
        ("iq_imbalanced.wav", -4400.0, 1 + 0.7 * cos(900) + 0.01 * cos(50), 0.7),
        ("iq_crossing.wav", 2000.0, 1 + 0.6 * cos(700) + 0.12 * cos(1400) + 0.05 * cos(2100)
         + 0.03 * cos(2800), None),
    ]
    for name, fc, env, m in cases:
        e = 0.3 * env
        i = e * np.cos(2 * np.pi * fc * t) + 0.005 + rng.normal(0, 5e-5, t.size)
        q = gg * e * np.sin(2 * np.pi * fc * t + ph) - 0.003 + rng.normal(0, 5e-5, t.size)
        sf.write(name, np.stack([i, q], 1), fs, subtype="PCM_24")
        rc, rep, _, err = E.run_json(exe, [name])
        if not ck.check(name + " runs", rc in (0, 1) and rep is not None, err.strip()):
            continue
        ck.check(name + ": I/Q (every line one-sided within its imbalance)", rep["input"]["kind"] == "iq",
                 "%s: %s" % (rep["input"]["kind"], rep["input"]["kind_reason"]))
        ck.close(name + " carrier.frequency_hz", E.get(rep, "carrier.frequency_hz"), fc, 0.05,
                 "by construction")
        if m is not None:
            # the image (amplitude eps = 10^(-27.3/20) of the signal) adds a ripple of relative
            # amplitude eps to |z|: a peak reading of m lies within (1 + m) eps of it
            eps = 10 ** (-image_db(gg, math.pi / 2 + ph) / 20)
            ck.close(name + " modulation.index", E.get(rep, "modulation.index"), m, (1 + m) * eps,
                     "m by construction, within the imbalance's ripple")


def bin_amp(y, fs, f):
    """Amplitude of the line at f (a whole number of cycles in y): 2 |Y| / n."""
    k = int(round(f * len(y) / fs))
    return 2 * abs(np.fft.rfft(y)[k]) / len(y)


def check_two_tone(ck, exe):
    """Two-tone audio through odd-order distortion: audio (dsp/kind.h rule 1b), IMD against numpy;
    forced to an IF, no absurd IMD figure."""
    cases = [  # rate, fl, fh, a, b, c, subtype
        (44100, 50.0, 6000.0, 0.4, 0.1, 0.02, "PCM_24"),
        (48000, 60.0, 8000.0, 0.4, 0.1, 0.08, "FLOAT"),
    ]
    for fs, fl, fh, a, b, c, sub in cases:
        t = np.arange(4 * fs) / fs
        x = a * np.sin(2 * np.pi * fl * t) + b * np.sin(2 * np.pi * fh * t)
        y = x + c * x ** 3 + np.random.default_rng(34).normal(0, 1e-5, t.size)
        name = "twotone_%d_%d.wav" % (fl, fh)
        sf.write(name, y, fs, subtype=sub)
        y = sf.read(name)[0]
        uh = bin_amp(y, fs, fh)
        d3 = 100 * (bin_amp(y, fs, fh - 2 * fl) + bin_amp(y, fs, fh + 2 * fl)) / uh
        rc, rep, _, err = E.run_json(exe, [name])
        if ck.check(name + " runs", rc in (0, 1) and rep is not None, err.strip()):
            ck.check(name + ": audio, the low tone outweighs the 'carrier' (dsp/kind.h rule 1b)",
                     rep["input"]["kind"] == "audio" and "no sideband of it" in rep["input"]["kind_reason"],
                     "%s: %s" % (rep["input"]["kind"], rep["input"]["kind_reason"]))
            ck.rel(name + " imd.smpte_d3_pct vs numpy (IEC 60268-3, docs/references.md 5, 12)",
                   E.get(rep, "imd.smpte_d3_pct") if E.has(rep, "imd.smpte_d3_pct") else None, d3, 0.02)
        rc, rep, _, err = E.run_json(exe, ["--kind", "if", "--carrier", str(fh),
                                           "--imd", "smpte:%g,%g" % (fl, fh), name])
        if ck.check(name + " --kind if --carrier runs", rc in (0, 1) and rep is not None, err.strip()):
            imd = rep.get("imd", {})
            figs = [imd.get(k) for k in ("smpte_pct", "smpte_d2_pct", "smpte_d3_pct")]
            ok = all(v is None or v <= 100 for v in figs)
            why = rep["reasons"].get("imd", {}).get("smpte_pct", "")
            ck.check(name + " --kind if: no IMD figure above 100 % (products outweighing the tone), n/a with "
                     "the reason", ok and (figs[0] is not None or "no two-tone signal" in why),
                     "%r %r" % (figs, why))


def main():
    exe = E.modlens_path()
    ck = E.Checker("test_kind_delay")
    with E.scratch():
        check_delayed_audio(ck, exe)
        check_skewed_if(ck, exe)
        check_genuine_iq(ck, exe)
        check_two_tone(ck, exe)
    ck.finish()


if __name__ == "__main__":
    main()
