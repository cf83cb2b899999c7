"""A real IF anywhere in the band: the mixer's image stays out of the default channel.

Usage: /usr/bin/python3 test_am_if_image.py /path/to/modlens

Mixing a real IF x(t) = A e(t) cos(2 pi fc t + phi) by exp(-j 2 pi fc t) gives the wanted
baseband A e(t) / 2 at 0 Hz and its image A e(t) / 2 at -2 fc, which the sampling folds to
fs - 2 fc: the image's carrier lies D = min(2 fc, fs - 2 fc) from 0 Hz, and its side
frequencies (docs/references.md 6: a tone fm on a carrier puts side frequencies at the carrier
+- fm) reach down to D - fm. README ("Channel bandwidth") keeps 2 B + t <= D, so for every tone
inside the channel (fm <= B) the image lies in the channel filter's stop band, for carriers below
and above fs / 4 alike.

Signals: 2 s of textbook AM (docs/references.md 6, Haykin ch. 3 / Newnes 8.3.1)
    x(t) = A (1 + m cos(2 pi fm t + 0.4)) cos(2 pi fc t + phi),  A = 0.4, no lead-in,
plus white noise 70 dB below the carrier power over the whole band, at 16, 22.05, 44.1, 48 and
96 kHz; the carrier below fs / 4, above it, and close to Nyquist (fc = fs / 2 - 2 fm); the tone at
94 % of D / 2 (just inside the channel's edge, which README puts at 97.5 % of D / 2) or 9 kHz
where the 10 kHz limit bounds the channel; m from 0.3 to 0.95.

Truths:
 - from the construction: index (Emax - Emin) / (Emax + Emin) = m, positive and negative peaks
   100 m % (47 CFR 73.14, docs/references.md 7; the mean envelope of a symmetric tone is C = A);
   the envelope never nears zero (m <= 0.95), so no pinch-off, no phase reversal, no
   overmodulation;
 - from an independent numpy demodulation (docs/references.md 9): the analytic signal by FFT
   (negative frequencies zeroed, so no image at all), mixed to 0 Hz, an ideal (brick-wall) low
   pass at the channel modlens reports, 4x FFT interpolation, the levels exceeded and not reached
   for 5 ms per second (README's peak hold), 10 % of the capture left out at both ends; its
   quadrature part (the noise, README modulation.noise_pct) relative to the mean envelope.
Checks: index within 0.01 of m and of numpy's; peaks within 1 % of C of 100 m; no pinch-off,
reversal or overmodulation; noise_pct under 1.25 times numpy's + 0.002 % (the FIR passes a little
more noise than the ideal filter, up to B + t / 2); the reported channel keeps 2 B + t <= D. Also:
a --bandwidth that fits is used (and measures right), one that would let the image in is refused
(exit 2, one line naming the file and the widest), and a carrier with no room for a 300 Hz
channel is refused.
"""
import os
import re
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402
from scipy import signal  # noqa: E402

import am_signals as S  # noqa: E402
import e2e_common as E  # noqa: E402

DUR_S = 2.0
CNR_FULL_DB = 70.0
HOLD = 0.005          # README: peak hold 5 ms per second
RATES = (16000, 22050, 44100, 48000, 96000)
MS = (0.3, 0.5, 0.8, 0.95)


def cases():
    """(fs, fc, fm, m): per rate a carrier below fs / 4, one above, one near Nyquist."""
    out = []
    k = 0
    for fs in RATES:
        for place in ("below", "above", "nyquist"):
            if place == "below":
                fc = round(0.19 * fs)
            elif place == "above":
                fc = round(0.33 * fs)
            else:
                fm = round(0.04 * fs)
                fc = fs // 2 - 2 * fm
            d = min(2 * fc, fs - 2 * fc)
            if place != "nyquist":
                fm = round(min(0.94 * d / 2, 9000))   # near the channel's edge (97.5 % of D / 2)
            out.append((fs, fc, fm, MS[k % len(MS)]))
            k += 1
    return out


def make(fs, fc, fm, m, seed):
    t = S.t_axis(DUR_S, fs)
    b = S.tone_envelope(t, m, fm, 0.4).astype(complex)
    x = S.carrier_wave(b, "if", fc, fs=fs)
    return S.add_noise(x, "if", S.carrier_power("if") / 10 ** (CNR_FULL_DB / 10), seed)


def numpy_truth(x, fs, fc, bandwidth):
    """Analytic-signal demodulation with an ideal channel: (index, pos %, neg %, noise %)."""
    n = len(x)
    f = np.fft.fftfreq(n, 1.0 / fs)
    spec = np.fft.fft(x)
    spec[f < 0] = 0
    spec[f > 0] *= 2                      # analytic signal: the image is gone before mixing
    z = np.fft.ifft(spec) * np.exp(-2j * np.pi * fc * np.arange(n) / fs)
    z = S.brickwall(z, bandwidth, fs)
    z = z[n // 10:-n // 10]
    c = np.mean(np.abs(z))
    e = np.abs(signal.resample(z, 4 * len(z)))
    emax, emin = np.quantile(e, [1 - HOLD, HOLD])
    phase = np.angle(np.mean(z))          # the carrier's phase: the quadrature part is the noise
    q = np.imag(z * np.exp(-1j * phase))
    noise_pct = 100 * np.sqrt(np.mean((q - q.mean()) ** 2)) / c
    return (emax - emin) / (emax + emin), 100 * (emax / c - 1), 100 * (1 - emin / c), noise_pct


def channel_of(rep):
    """(B, stop band start) from the analysis line."""
    a = str(rep.get("analysis", ""))
    mb = re.search(r"channel filter \+-(\d+) Hz \(stop band from (\d+) Hz", a)
    return (float(mb.group(1)), float(mb.group(2))) if mb else (None, None)


def check_case(exe, ck, tag, path, fs, fc, fm, m, x, extra=()):
    rc, rep, out, err = E.run_json(exe, ["--kind", "if"] + list(extra) + [path])
    if not ck.check(tag + " runs", rc == 0 and rep is not None, err.strip()):
        return
    d = min(2 * fc, fs - 2 * fc)
    b, stop = channel_of(rep)
    if not ck.check(tag + " analysis names the channel", b is not None, str(rep.get("analysis"))):
        return
    # README "Channel bandwidth": the image's nearer sideband (D - B at the nearest) in the stop band
    # (the printed figures are rounded to 1 Hz)
    ck.check(tag + " channel keeps the image out: B + stop <= D", b + stop <= d + 1.0,
             "B %g, stop band from %g, D %g" % (b, stop, d))
    ck.check(tag + " tone inside the channel", fm <= b, "fm %g, B %g" % (fm, b))
    t_index, t_pos, t_neg, t_noise = numpy_truth(x, fs, fc, b)
    mod = rep.get("modulation", {})
    ck.close(tag + " index = m (construction)", mod.get("index"), m, 0.01)
    ck.close(tag + " index = numpy's analytic-signal index", mod.get("index"), t_index, 0.01)
    ck.close(tag + " positive peak = 100 m", mod.get("positive_peak_pct"), 100 * m, 1.0)
    ck.close(tag + " negative peak = 100 m", mod.get("negative_peak_pct"), 100 * m, 1.0)
    ck.close(tag + " positive peak = numpy's", mod.get("positive_peak_pct"), t_pos, 1.0)
    ck.close(tag + " negative peak = numpy's", mod.get("negative_peak_pct"), t_neg, 1.0)
    ck.check(tag + " no pinch-off", mod.get("pinch_off_events") == 0, str(mod.get("pinch_off_events")))
    ck.check(tag + " no phase reversal", mod.get("phase_reversal_events") == 0,
             str(mod.get("phase_reversal_events")))
    ck.check(tag + " no overmodulation", mod.get("overmodulation_pct") == 0
             and mod.get("overmodulation_kind") == "none",
             "%r %r" % (mod.get("overmodulation_pct"), mod.get("overmodulation_kind")))
    noise = mod.get("noise_pct")
    ck.check(tag + " noise_pct small (numpy's quadrature noise)",
             isinstance(noise, (int, float)) and noise <= 1.25 * t_noise + 0.002,
             "got %r, numpy %.4f %%" % (noise, t_noise))


def main():
    exe = E.modlens_path()
    ck = E.Checker("test_am_if_image")
    with E.scratch():
        for i, (fs, fc, fm, m) in enumerate(cases()):
            tag = "fs %d fc %d fm %d m %.2f" % (fs, fc, fm, m)
            x = make(fs, fc, fm, m, 10 + i)
            path = S.write("if_%d.wav" % i, x, fs)
            check_case(exe, ck, tag, path, fs, fc, fm, m, x)

        # --bandwidth: 22.05 kHz, fc 8 kHz (above fs / 4): D = 22050 - 16000 = 6050, the widest
        # (6050 - 6050 / 40) / 2 = 2949.4 Hz (README). 2900 Hz fits (its transition narrowed to
        # D - 2 B = 250 Hz); 3000 Hz would let the image's sideband at 6050 - 3000 Hz in.
        fs, fc, fm, m = 22050, 8000, 2800, 0.9
        x = make(fs, fc, fm, m, 99)
        path = S.write("if_bw.wav", x, fs)
        check_case(exe, ck, "--bandwidth 2900", path, fs, fc, fm, m, x, ["--bandwidth", "2900"])
        rc, out, err = E.run(exe, ["--kind", "if", "--bandwidth", "3000", path])
        lines = err.strip().splitlines()
        ck.check("--bandwidth 3000 refused: exit 2, nothing written", rc == 2 and out == "", "rc %d" % rc)
        ck.check("--bandwidth 3000 refused in one line naming the file and the widest",
                 len(lines) == 1 and path in lines[0] and "2949.4" in lines[0]
                 and "image" in lines[0], err.strip())

        # no room: fs 16 kHz, fc 7800 Hz: D = 400 Hz, B = (400 - 10) / 2 = 195 Hz < 300 Hz
        x = make(16000, 7800, 100, 0.5, 98)
        path = S.write("if_edge.wav", x, 16000)
        rc, out, err = E.run(exe, ["--kind", "if", path])
        lines = err.strip().splitlines()
        ck.check("carrier 200 Hz from Nyquist refused: exit 2, one line naming the file",
                 rc == 2 and out == "" and len(lines) == 1 and path in lines[0] and "too close" in lines[0],
                 "rc %d: %s" % (rc, err.strip()))
    ck.finish()


if __name__ == "__main__":
    main()
