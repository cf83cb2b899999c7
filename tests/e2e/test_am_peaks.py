"""Peaks and overmodulation read the way 47 CFR 73.1570(b)(1) is written, against the bundled US
profile (--kind if/iq).

Usage: /usr/bin/python3 test_am_peaks.py /path/to/modlens

The rule (docs/references.md 7, confirmed transcription): "In no case shall the amplitude
modulation of the carrier wave exceed 100 % on negative peaks of frequent recurrence, or 125 % on
positive peaks at any time." Percentages against C, the unmodulated carrier (47 CFR 73.14,
docs/references.md 6 and 7). profiles/am-broadcast-us.ini checks positive_peak_pct (the true peak,
"at any time") <= 125, negative_peak_pct (held 5 ms per second, the coherent reading where the
carrier is reversed) <= 100, carrier_off_pct (the share of the modulated time the carrier is off)
<= 0.5 (README "Modulation" gives the reasoning), and the 73.44 mask.

Every capture is numpy-built (tests/e2e/am_signals.py): a carrier of amplitude A = 0.4 on a 12 kHz
IF or at -4321 Hz in I/Q, 1 s unmodulated (so that C = A comes from the capture, README), then
the modulation faded in over 5 ms with a raised cosine (its spectrum is a few hundred hertz wide:
no band-limited ringing lifts a peak), then 3 s of it; a 997 Hz tone unless said otherwise;
white Gaussian noise set to a carrier-to-noise ratio in the channel 2B = 20 kHz (README
carrier.cnr_db). Models (docs/references.md 6.1): A, phase reversal: baseband 1 + m cos (signed);
B, pinch-off: max(0, 1 + m cos).

Noise, from the construction: per component of the baseband sigma = C / sqrt(2 CNR) in 2B
(carrier power C^2/2 on an IF, C^2 in I/Q, against the same share of noise), times
sqrt((B + 500 Hz) / B) for the channel filter's noise bandwidth (flat to B, 1 kHz transition):
the report's noise_pct. A held reading (the level exceeded for 0.5 % of the time) moves by at most
z sigma, z = 2.576 the standard normal's 0.995 quantile; a true peak (the largest value) by at
most sqrt(2 ln N) sigma over N independent samples (2B per second), the expected largest of N
Gaussian values (common practice as a bound: 1.3 x is allowed).
"""
import math
import os
import re
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402

import am_signals as S  # noqa: E402
import e2e_common as E  # noqa: E402

PROFILE = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "profiles", "am-broadcast-us.ini")
FS = S.FS
FM = 997.0
LEAD_S, RAMP_S, MOD_S = 1.0, 0.005, 3.0
FC = {"if": S.FC_IF, "iq": -4321.0}
B = 10000.0
Z_HELD = 2.5758293035489  # scipy.stats.norm.ppf(0.995)


def sigma_rel(cnr_db):
    """Noise per baseband component through the channel filter, in units of C (see above)."""
    if cnr_db is None:
        return 0.0
    return math.sqrt((B + 500.0) / B) / math.sqrt(2.0 * 10 ** (cnr_db / 10))


def top_allow_pct(cnr_db):
    """How far noise may lift a true peak over the 3 s modulated: 1.3 sqrt(2 ln N) sigma."""
    n = 2 * B * MOD_S
    return 100 * 1.3 * math.sqrt(2 * math.log(n)) * sigma_rel(cnr_db)


def fade(t):
    """0 before the modulation, a raised cosine over RAMP_S, then 1."""
    x = np.clip((t - LEAD_S) / RAMP_S, 0.0, 1.0)
    return 0.5 - 0.5 * np.cos(np.pi * x)


def capture(name, kind, baseband_of, cnr_db=None, seed=1):
    """Writes the capture whose baseband is baseband_of(t, w) (w the fade) and returns its path."""
    t = S.t_axis(LEAD_S + MOD_S)
    b = baseband_of(t, fade(t)).astype(complex)
    x = S.carrier_wave(b, kind, FC[kind])
    if cnr_db is not None:
        # noise power over the whole captured band (fs/2 real, fs complex) for this CNR in 2B
        width = FS / 2 if kind == "if" else FS
        x = S.add_noise(x, kind, S.carrier_power(kind) / 10 ** (cnr_db / 10) * width / (2 * B), seed)
    return S.write(name, x)


def tone(t, w, m, phase=0.4):
    return 1 + w * m * np.cos(2 * np.pi * FM * t + phase)


def measure(exe, path, kind, extra=()):
    rc, rep, _, err = E.run_json(exe, ["--kind", kind, "--limits", PROFILE] + list(extra) + [path])
    return rc, rep, err


def check_of(rep, metric):
    for c in rep.get("checks", []) if rep else []:
        if c.get("metric") == metric:
            return c
    return None


def qualifier(rep, dotted):
    q = "qualifiers." + dotted
    return str(E.get(rep, q)) if E.has(rep, q) else ""


def lowpass4(x, bw):
    """x through an ideal low-pass at bw, read 4 times per sample (zero-padded FFT)."""
    n = len(x)
    spec = np.fft.fft(x)
    f = np.fft.fftfreq(n, 1.0 / FS)
    spec[np.abs(f) > bw] = 0
    pad = np.zeros(4 * n, dtype=complex)
    half = n // 2
    pad[:half] = spec[:half]
    pad[-(n - half):] = spec[half:]
    return 4 * np.fft.ifft(pad)


def troughs_below(t, s, level):
    """Troughs of the modulated stretch whose signed baseband s goes below level (numpy: each ends
    once where s comes back above the level)."""
    k = t >= LEAD_S
    lo = s[k] < level
    return int(np.count_nonzero(lo[:-1] & ~lo[1:]))


def main():
    exe = E.modlens_path()
    ck = E.Checker("test_am_peaks")
    t = S.t_axis(LEAD_S + MOD_S)
    t4 = np.arange(4 * len(t)) / (4 * FS)
    with E.scratch():
        # ---- pinch-off, 105 .. 130 %, CNR 60 dB -------------------------------------------------
        # The carrier is off while 1 + m cos < 0; the report's carrier-off time is the time the
        # envelope lies below the floor F = 2 % of C (README) in the troughs judged pinch-off:
        # numpy, the band-limited envelope of the clean signal below 0.02 over the modulated time.
        # The channel filter is specified flat to B and stopping from B + 1 kHz, so the reference
        # is the interval over ideal low-passes at 10, 10.5 and 11 kHz (as test_am_overmod.py),
        # each read 4 times per sample as modlens reads the envelope (FFT interpolation: counted at
        # the sample rate the corners' share differs by 1 % of itself), widened by 1 % of itself
        # below (the 20 ms block the lead-in ends in counts as modulated time: 0.7 %; the cubic
        # interpolation against the exact band-limited one: 0.3 %) and by 0.1 pp (the noise at
        # 60 dB, 0.07 % of C, moves the F crossings a little).
        for m in (1.05, 1.10, 1.20, 1.30):
            for kind in ("if", "iq"):
                tag = "pinch-off %d %% %s" % (round(100 * m), kind)
                p = capture("pinch_%d_%s.wav" % (100 * m, kind), kind, lambda tt, w: np.maximum(0, tone(tt, w, m)),
                            60, seed=int(100 * m))
                rc, rep, err = measure(exe, p, kind)
                if not ck.check(tag + ": measured", rep is not None, err.strip()):
                    continue
                g = lambda k: E.get(rep, k)  # noqa: E731
                clean = np.maximum(0, tone(t, fade(t), m))
                want = troughs_below(t, tone(t, fade(t), m), 0.0)
                ck.close(tag + ": one pinch-off event per trough", g("modulation.carrier_pinch_events"), want, 6,
                         "numpy troughs below 0 (%d); the fade's 5 cycles may go either way" % want)
                ck.check(tag + ": no phase reversal", g("modulation.phase_reversal_events") == 0,
                         repr(g("modulation.phase_reversal_events")))
                shares = [100 * float(np.mean(np.abs(lowpass4(clean, bw))[t4 >= LEAD_S] < 0.02))
                          for bw in (B, B + 500, B + 1000)]
                off = g("modulation.carrier_off_pct")
                ck.check(tag + ": carrier_off_pct",
                         off is not None and 0.99 * min(shares) - 0.1 <= off <= max(shares) + 0.1,
                         "got %r, want %.3f..%.3f (-1 %%) +- 0.1 (numpy band-limited envelope below F = 2 %% of C, "
                         "4 points per sample)" % (off, min(shares), max(shares)))
                neg = g("modulation.negative_peak_pct")
                ck.check(tag + ": negative peak at most 100 % (a pinched carrier cannot go below 0)",
                         neg is not None and 99.0 <= neg <= 100.0, repr(neg))
                c_off = check_of(rep, "modulation.carrier_off_pct")
                ck.check(tag + ": the US profile fails it on carrier_off_pct (exit 1)",
                         rc == 1 and c_off is not None and c_off["pass"] is False and rep["verdict"] == "fail",
                         "rc %d, %r" % (rc, c_off))
                ck.check(tag + ": overmodulation_kind names the pinch-off",
                         g("modulation.overmodulation_kind") == "carrier pinch-off",
                         repr(g("modulation.overmodulation_kind")))

        # ---- phase reversal, 110 .. 130 % ------------------------------------------------------
        # The coherent (signed) reading reaches 1 - m: negative_peak_pct = 100 m less the hold
        # offset (m (pi 0.005)^2 / 2 = 1.2e-4 m of C) and plus what noise does to a held reading
        # (up to z sigma). One event per reversed lobe deeper than the reversal level
        # max(2 %, 5 sigma) (README). 110 % at 50 dB (5 sigma = 1.1 %: the 10 % lobe stands out),
        # 120 and 130 % at 30 dB (5 sigma = 11.5 %).
        for m, cnr in ((1.10, 50), (1.20, 30), (1.30, 30)):
            for kind in ("if", "iq"):
                tag = "reversal %d %% at %d dB %s" % (round(100 * m), cnr, kind)
                p = capture("rev_%d_%s.wav" % (100 * m, kind), kind, lambda tt, w: tone(tt, w, m), cnr, seed=7)
                rc, rep, err = measure(exe, p, kind)
                if not ck.check(tag + ": measured", rep is not None, err.strip()):
                    continue
                g = lambda k: E.get(rep, k)  # noqa: E731
                sig = sigma_rel(cnr)
                ck.close(tag + ": negative_peak_pct, coherent, beyond 100 %", g("modulation.negative_peak_pct"),
                         100 * m, 100 * Z_HELD * sig + 0.05, "100 m, noise up to z sigma")
                s = tone(t, fade(t), m)
                want = troughs_below(t, s, -max(0.02, 5 * sig))
                ck.close(tag + ": one reversal event per lobe", g("modulation.phase_reversal_events"), want, 6,
                         "numpy lobes deeper than the reversal level (%d)" % want)
                rev = 100 * float(np.mean(s[t >= LEAD_S] < 0))
                ck.close(tag + ": overmodulation_pct = the reversed share", g("modulation.overmodulation_pct"), rev,
                         0.5, "numpy share of 1 + m cos < 0; noise moves the zero crossings")
                ck.close(tag + ": carrier shift from the carrier line", g("modulation.carrier_shift_pct"), 0.0,
                         0.05 + 100 * sig / math.sqrt(2 * B * MOD_S),
                         "the mean of 1 + m cos is 1; the mean |E| would read %.2f %%"
                         % (100 * (float(np.mean(np.abs(s[t >= LEAD_S]))) - 1)))
                ck.check(tag + ": the carrier shift says where it comes from",
                         "carrier line" in qualifier(rep, "modulation.carrier_shift_pct"))
                c_neg = check_of(rep, "modulation.negative_peak_pct")
                ck.check(tag + ": the US profile fails it on negative_peak_pct (exit 1)",
                         rc == 1 and c_neg is not None and c_neg["pass"] is False, "rc %d, %r" % (rc, c_neg))

        # ---- isolated bursts to 130 .. 150 %: positive peaks "at any time" ----------------------
        # An 80 % tone; three times a smooth Gaussian pulse (tau 0.3 ms, its spectrum
        # exp(-(pi f tau)^2) is 88 nepers down at B: it passes the channel whole) sits on a crest,
        # raising it from 180 % of C to 1 + P/100. The held positive peak stays at 80 %; the true
        # peak reads P; three crests exceed 125 % (positive_peaks_over_limit); the profile fails.
        for peak in (130, 140, 150):
            for kind in ("if", "iq"):
                tag = "bursts to %d %% %s" % (peak, kind)
                # crests of 1 + 0.8 cos(2 pi FM t + 0.4), where 2 pi FM t + 0.4 = 2 pi j, near 1.5,
                # 2.5 and 3.5 s
                crests = [(round(c * FM) * 2 * np.pi - 0.4) / (2 * np.pi * FM) for c in (1.5, 2.5, 3.5)]

                def burst(tt, w, peak=peak, crests=crests):
                    e = tone(tt, w, 0.8)
                    for c in crests:
                        e = e + (peak / 100 - 0.8) * np.exp(-((tt - c) / 3e-4) ** 2)
                    return e

                p = capture("burst_%d_%s.wav" % (peak, kind), kind, burst, 50, seed=peak)
                rc, rep, err = measure(exe, p, kind)
                if not ck.check(tag + ": measured", rep is not None, err.strip()):
                    continue
                g = lambda k: E.get(rep, k)  # noqa: E731
                ck.close(tag + ": true positive peak", g("modulation.positive_peak_pct"), peak + 0.5 * top_allow_pct(50),
                         0.5 * top_allow_pct(50) + 0.05, "1 + P/100, plus noise up to %.2f %%" % top_allow_pct(50))
                ck.close(tag + ": held positive peak stays with the tone", g("modulation.positive_peak_held_pct"), 80.0,
                         100 * Z_HELD * sigma_rel(50) + 0.05, "80 %: three 0.6 ms pulses are far below 5 ms/s")
                ck.check(tag + ": three crests over the limit", g("modulation.positive_peaks_over_limit") == 3,
                         repr(g("modulation.positive_peaks_over_limit")))
                c_pos = check_of(rep, "modulation.positive_peak_pct")
                ck.check(tag + ": the US profile fails it on positive_peak_pct (exit 1)",
                         rc == 1 and c_pos is not None and c_pos["pass"] is False, "rc %d, %r" % (rc, c_pos))

        # ---- asymmetric peaks with a carrier shift ---------------------------------------------
        # e = 1 + 1.4 x (x > 0), 1 + 0.8 x (x <= 0), x = cos: +140 / -80 %, carrier shift
        # 100 (1.4 - 0.8) / pi = 19.099 % (mean of max(cos, 0) is 1/pi). The crests over 125 %
        # are counted against C, not the shifted mean (1.19 C): every cycle. The true peak is
        # the band-limited envelope's largest value (numpy, ideal low-pass at B: the kinks at x = 0
        # ring a little), within 0.2 % plus the noise at 60 dB.
        for kind in ("if", "iq"):
            tag = "asymmetric +140/-80 %% %s" % kind

            def asym(tt, w):
                x = np.cos(2 * np.pi * FM * tt + 0.4)
                return 1 + w * np.where(x > 0, 1.4 * x, 0.8 * x)

            p = capture("asym_%s.wav" % kind, kind, asym, 60, seed=3)
            rc, rep, err = measure(exe, p, kind)
            if not ck.check(tag + ": measured", rep is not None, err.strip()):
                continue
            g = lambda k: E.get(rep, k)  # noqa: E731
            th = 2 * np.pi * np.arange(1 << 16) / (1 << 16)
            x = np.cos(th)
            eb = S.periodic_bandlimited(1 + np.where(x > 0, 1.4 * x, 0.8 * x), FM, B).real
            ck.close(tag + ": true positive peak", g("modulation.positive_peak_pct"), 100 * (eb.max() - 1),
                     0.2 + top_allow_pct(60), "numpy band-limited maximum")
            # the 20 ms block the lead-in ends in counts as modulated, with no shift in it: the
            # 3 s mean reads up to 19.1 % x 0.02 / 3 = 0.13 pp low (0.16 with the fade)
            ck.close(tag + ": carrier shift", g("modulation.carrier_shift_pct"), 100 * 0.6 / math.pi, 0.16,
                     "100 (1.4 - 0.8)/pi")
            # crests over 2.25 C of the clean envelope over the demodulated span (the channel
            # filter's settling, 156 samples, left out at each end; a crest there may go either
            # way: +-1 at each end, +-1 for the fade)
            e_clean = asym(t, fade(t))
            k = (t >= LEAD_S) & (t < t[-1] - 156 / FS)
            over = e_clean[k] > 2.25
            want = int(np.count_nonzero(over[1:] & ~over[:-1]))
            ck.close(tag + ": every crest over 125 % of C counts (against C, not the shifted mean)",
                     g("modulation.positive_peaks_over_limit"), want, 3, "numpy crests over 2.25 (%d)" % want)
            ck.check(tag + ": C from the lead-in", "unmodulated" in str(g("modulation.carrier_reference")))

        # ---- 90 .. 99 % at CNR 30 .. 60 dB: clean transmitters pass -----------------------------
        # Nothing is overmodulated: no pinch-off, no reversal, no carrier-off time; the negative
        # peak within noise of 100 m (and never beyond 100 %); the lead-in is found at 30 dB too;
        # the spectral index is m (within 0.005: the sidebands stand far out of the noise); the
        # profile passes (exit 0).
        for m in (0.90, 0.95, 0.99):
            for cnr in (30, 40, 60):
                kind = "iq" if cnr != 40 else "if"
                tag = "%d %% at %d dB %s" % (round(100 * m), cnr, kind)
                p = capture("clean_%d_%d.wav" % (100 * m, cnr), kind, lambda tt, w: tone(tt, w, m), cnr, seed=cnr)
                rc, rep, err = measure(exe, p, kind)
                if not ck.check(tag + ": measured", rep is not None, err.strip()):
                    continue
                g = lambda k: E.get(rep, k)  # noqa: E731
                ck.check(tag + ": no overmodulation event", g("modulation.pinch_off_events") == 0,
                         repr(g("modulation.pinch_off_events")))
                ck.close(tag + ": no carrier-off time", g("modulation.carrier_off_pct"), 0.0, 0.0)
                ck.check(tag + ": no phase reversal", g("modulation.phase_reversal_events") == 0,
                         repr(g("modulation.phase_reversal_events")))
                ck.close(tag + ": no overmodulated time", g("modulation.overmodulation_pct"), 0.0, 0.0)
                sig = sigma_rel(cnr)
                neg = g("modulation.negative_peak_pct")
                ck.close(tag + ": negative peak", neg, 100 * m, 100 * Z_HELD * sig + 0.05, "100 m, noise z sigma")
                ck.check(tag + ": negative peak not beyond 100 %", neg is not None and neg <= 100.0, repr(neg))
                ck.close(tag + ": noise_pct from the construction", g("modulation.noise_pct"), 100 * sig, 0.05 * 100 * sig,
                         "C / sqrt(2 CNR) through the channel; 5 %: the estimate's spread")
                ck.check(tag + ": C from the lead-in", "unmodulated" in str(g("modulation.carrier_reference")),
                         repr(g("modulation.carrier_reference")))
                ck.close(tag + ": index_spectral", g("modulation.index_spectral"), m, 0.005, "the sidebands m/2 each")
                ck.check(tag + ": the US profile passes (exit 0)", rc == 0 and rep["verdict"] == "pass",
                         "rc %d, %s" % (rc, [c["metric"] for c in rep["checks"] if not c["pass"]]))

        # ---- small indices in noise: the held peaks read noise, the report says so ----------------
        # m = 0.05 .. 0.3 at 40 dB CNR (sigma 0.73 % of C): the held readings are lifted by up to
        # z sigma each, the envelope index by up to z sigma / C; index_spectral stays m. Where the
        # envelope index exceeds the spectral one beyond its uncertainty the index and the held
        # peaks carry a "noise-biased" qualifier. At 70 dB the two agree and nothing is qualified.
        for m in (0.05, 0.1, 0.3):
            for cnr in (40, 70):
                kind = "iq"
                tag = "m = %.2f at %d dB" % (m, cnr)
                p = capture("small_%d_%d.wav" % (100 * m, cnr), kind, lambda tt, w: tone(tt, w, m), cnr, seed=11)
                rc, rep, err = measure(exe, p, kind)
                if not ck.check(tag + ": measured", rep is not None, err.strip()):
                    continue
                g = lambda k: E.get(rep, k)  # noqa: E731
                sig = sigma_rel(cnr)
                ck.close(tag + ": index_spectral", g("modulation.index_spectral"), m, 0.002, "m")
                idx = g("modulation.index")
                ck.check(tag + ": envelope index within noise above m", idx is not None
                         and m - 0.002 <= idx <= m + Z_HELD * sig + 0.002, "%r, noise %.4f" % (idx, Z_HELD * sig))
                biased = "noise-biased" in qualifier(rep, "modulation.index")
                if cnr == 40:
                    ck.check(tag + ": the index is qualified noise-biased",
                             biased and "noise-biased" in qualifier(rep, "modulation.negative_peak_pct"),
                             "%r (index %.4f, spectral %.4f)" % (qualifier(rep, "modulation.index"), idx,
                                                               g("modulation.index_spectral")))
                else:
                    ck.check(tag + ": no noise qualifier at 70 dB", not biased, qualifier(rep, "modulation.index"))

        # ---- unmodulated stretches at 30 dB CNR --------------------------------------------------
        # The lead-in's blocks have an envelope spread of sigma = 2.3 % of C, above the 2 % a
        # noise-free block may have: found against the quadrature noise (README). C from it (the
        # carrier amplitude, 20 lg 0.4 dBFS, within 0.05 dB: the mean of the Rician envelope is
        # C (1 + sigma^2 / (2 C^2))), the carrier shift measured (+5 % by construction:
        # e = 1 + 0.05 + 0.8 cos), and the spectra over the modulated stretches only, so the
        # spectral index is 0.8 / 1.05 of the carrier line, undiluted.
        for kind in ("if", "iq"):
            tag = "lead-in at 30 dB %s" % kind
            p = capture("lead30_%s.wav" % kind, kind, lambda tt, w: 1 + w * (0.05 + 0.8 * np.cos(2 * np.pi * FM * tt)),
                        30, seed=5)
            rc, rep, err = measure(exe, p, kind)
            if not ck.check(tag + ": measured", rep is not None, err.strip()):
                continue
            g = lambda k: E.get(rep, k)  # noqa: E731
            ref = str(g("modulation.carrier_reference"))
            mt = re.search(r"\(([\d.]+) s\)", ref)
            ck.check(tag + ": C from the unmodulated lead-in (at least 0.9 s of it)",
                     "unmodulated" in ref and mt is not None and float(mt.group(1)) >= 0.9, ref)
            ck.close(tag + ": C", g("carrier.unmodulated_dbfs"), 20 * math.log10(S.A), 0.05, "amplitude 0.4")
            ck.close(tag + ": carrier shift measured", g("modulation.carrier_shift_pct"), 5.0, 0.15,
                     "+5 %; 0.15 pp for the noise and the block the fade falls in")
            ck.close(tag + ": index_spectral undiluted", g("modulation.index_spectral"), 0.8 / 1.05, 0.005,
                     "0.8 / 1.05 (the carrier line under modulation is 1.05 C)")
    ck.finish()


if __name__ == "__main__":
    main()
