"""Cross-check of `modlens measure` against an independent numpy/scipy implementation.

Usage: /usr/bin/python3 test_crosscheck_scipy.py /path/to/modlens

Two oracles, both computed here without modlens code:
 1. The metric definitions of dsp/metrics.h, re-implemented on a Welch power spectrum from
    scipy.signal.welch with the HFT248D flat-top window (scipy.signal.windows.general_cosine,
    periodic), per-bin power scaling and ENBW as documented in dsp/spectrum.h, and the FFT length
    rule of dsp/spectrum.h / analyzer/measure.c. Same samples (read back from the written
    file), same definitions: the figures must agree to the precision of the JSON report.
 2. The truth of the synthetic signal: THD from the generated harmonic amplitudes, and the
    fundamental's level and frequency from a least-squares sine fit (IEEE Std 1057 3-parameter
    fit at a known frequency, refined by the 4-parameter iteration; docs/references.md section 4).
"""
import math
import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402
import soundfile as sf  # noqa: E402
from scipy import signal  # noqa: E402

import e2e_common as E  # noqa: E402

# HFT248D coefficients, Heinzel, Ruediger, Schilling (2002), as listed in docs/references.md 3.2.
HFT248D = [1, 1.985844164102, 1.791176438506, 1.282075284005, 0.667777530266, 0.240160796576,
           0.056656381764, 0.008134974479, 0.000624544650, 0.000019808998, 0.000000132974]
LOBE = len(HFT248D) + 1  # dsp/spectrum.h: a tone's lobe is +-(terms + 1) bins


def nfft_for(fs, nframes):
    """dsp/spectrum.h: the power of two giving bins of about 0.75 Hz (at most 2^18);
    analyzer/measure.c halves it (not below 256) while it exceeds the analysed frames."""
    n = 1024
    while n < (1 << 18) and fs / n > 0.75:
        n *= 2
    while n > 256 and n > nframes:
        n //= 2
    return n


def reference_analysis(x, fs, f1, band=(20.0, 20000.0), harmonics=10, mains=None, hum_harm=6,
                       present=(), hum_tones=()):
    """The definitions at the top of dsp/metrics.h, written from that text with numpy/scipy.
    f1 is the fundamental frequency used to place the harmonics (here: from the sine fit).
    present: the harmonic orders generated, hum_tones the hum frequencies generated -- the lines
    that stand above the noise by construction (each at least 20 dB over the noise in its lobe,
    a design guard below); the others hold noise only. A line is measured at its lobe's power
    less the noise expected there (the local noise density: the mean over the noise bins within
    4 lobes on either side), THD and hum are sums over the lines above the noise, and the tables
    list those lines only."""
    nfft = nfft_for(fs, len(x))
    w = signal.windows.general_cosine(nfft, HFT248D, sym=False)
    enbw = nfft * np.sum(w * w) / np.sum(w) ** 2
    # scaling='spectrum': 2|X|^2/(sum w)^2 per bin (|X|^2/(sum w)^2 at DC and Nyquist), averaged
    # over segments of nfft with 50 % overlap -- the per-bin power of dsp/spectrum.h.
    _, p = signal.welch(x, fs, window=w, nperseg=nfft, noverlap=nfft // 2, detrend=False,
                        scaling="spectrum", average="mean")
    nbins = len(p)
    bin_hz = fs / nfft
    nyq = fs / 2
    lo, hi = band[0], min(band[1], nyq)
    klo = max(int(math.ceil(lo / bin_hz)), LOBE)
    khi = min(int(math.floor(hi / bin_hz)), nbins - 1)
    used = np.zeros(nbins, bool)  # fundamental or harmonic lobe, or DC

    def lobe(c):
        return max(c - LOBE, 0), min(c + LOBE, nbins - 1)

    def power(c):
        a, b = lobe(c)
        return np.sum(p[a:b + 1]) / enbw

    def mark(c):
        a, b = lobe(c)
        used[a:b + 1] = True

    kf = klo + int(np.argmax(p[klo:khi + 1]))
    p1 = power(kf)
    mark(kf)
    harm = []
    for h in range(2, harmonics + 1):
        fh = h * f1
        if fh > hi or fh >= nyq:
            break
        c = int(math.floor(fh / bin_hz + 0.5))
        if c > khi:
            break
        harm.append((h, c))
        mark(c)
    used_dc = used.copy()
    used_dc[:LOBE] = True
    quiet = used_dc.copy()  # not noise: DC, the tone, its harmonics and the hum lines
    for fh in hum_tones:
        a, bb = lobe(int(math.floor(fh / bin_hz + 0.5)))
        quiet[a:bb + 1] = True

    def local_noise(c):
        """The noise expected in c's lobe: the mean density over the noise bins within 4 lobes
        (4 x LOBE bins) on either side, the reach doubled until 4 lobes' worth (4 x 25 bins) are
        found or the band is covered."""
        reach = 4 * LOBE
        while True:
            a, bb = max(c - reach, klo), min(c + reach, khi)
            idx = np.arange(a, bb + 1)
            idx = idx[~quiet[a:bb + 1]]
            if len(idx) >= 4 * (2 * LOBE + 1) or (a <= klo and bb >= khi):
                break
            reach *= 2
        return float(np.mean(p[idx])) * (2 * LOBE + 1) / enbw

    lines = [(h, c) for h, c in harm if h in present]
    d = float(sum(power(c) - local_noise(c) for _, c in lines))
    guard = min([power(c) / local_noise(c) for _, c in lines] + [math.inf])
    band_bins = np.arange(klo, khi + 1)
    noise_bins = band_bins[~used_dc[klo:khi + 1]]
    nband = len(band_bins)
    nd = float(np.mean(p[noise_bins]))
    n = nd * nband / enbw
    b = float(np.sum(p[klo:khi + 1])) / enbw

    def collides(c):
        a, bb = lobe(c)
        return bool(np.any(used_dc[a:bb + 1]))

    if mains is None:  # decide 50/60 from the first four multiples that do not collide
        sums = []
        for cand in (50.0, 60.0):
            s = 0.0
            for m in range(1, 5):
                c = int(math.floor(m * cand / bin_hz + 0.5))
                if c + LOBE >= nbins or collides(c):
                    continue
                s += power(c)
            sums.append(s)
        mains = 60.0 if sums[1] > sums[0] else 50.0
    hum = []
    for m in range(1, hum_harm + 1):
        c = int(math.floor(m * mains / bin_hz + 0.5))
        if c + LOBE >= nbins:
            break
        if collides(c):
            continue
        if any(abs(m * mains - f) < 0.5 for f in hum_tones):
            hum.append((m * mains, power(c) - local_noise(c)))
            guard = min(guard, power(c) / local_noise(c))
    hum_p = sum(v for _, v in hum)
    sinad = 10 * math.log10(p1 / (b - p1))
    return {
        "nfft": nfft, "enbw": enbw, "segments": (len(x) - nfft) // (nfft // 2) + 1,
        "nband": nband, "ncount": len(noise_bins), "harm_bins": lines, "guard": guard,
        "p1": p1, "d": d, "n": n, "b": b, "hum": hum, "mains": mains,
        "audio.fundamental_dbfs": 10 * math.log10(p1 / 0.5),
        "audio.thd_pct": 100 * math.sqrt(d / p1) if d > 0 else None,
        "audio.thd_db": 10 * math.log10(d / p1) if d > 0 else None,
        "audio.thdn_pct": 100 * math.sqrt((b - p1) / p1),
        "audio.sinad_db": sinad,
        "audio.thdn_db": -sinad,
        "audio.snr_db": 10 * math.log10(p1 / n),
        "audio.enob_bits": (sinad - 10 * math.log10(1.5)) / (20 * math.log10(2)),
        "audio.noise_dbfs": 10 * math.log10(n / 0.5),
        "hum.level_dbfs": 10 * math.log10(hum_p / 0.5) if hum_p > 0 else None,
        "hum.level_dbc": 10 * math.log10(hum_p / p1) if hum_p > 0 else None,
    }


def sine_fit(x, fs, f_start, iterations=8):
    """IEEE 1057 sine fit: 3-parameter linear least squares on [cos, sin, 1] at a frequency,
    refined by the 4-parameter iteration (extra column t(-A sin wt + B cos wt), w += dw).
    Returns (frequency Hz, amplitude, offset)."""
    t = np.arange(len(x)) / fs
    tc = t - t.mean()  # centred time keeps the normal equations well conditioned
    w = 2 * np.pi * f_start
    for _ in range(iterations):
        c, s = np.cos(w * tc), np.sin(w * tc)
        a3, b3, _ = np.linalg.lstsq(np.column_stack([c, s, np.ones_like(tc)]), x, rcond=None)[0]
        cols = np.column_stack([c, s, np.ones_like(tc), tc * (-a3 * s + b3 * c)])
        sol = np.linalg.lstsq(cols, x, rcond=None)[0]
        w += sol[3]
        if abs(sol[3]) < 1e-12 * w:
            break
    c, s = np.cos(w * tc), np.sin(w * tc)
    a3, b3, c3 = np.linalg.lstsq(np.column_stack([c, s, np.ones_like(tc)]), x, rcond=None)[0]
    return w / (2 * np.pi), math.hypot(a3, b3), c3


def coarse_peak(x, fs):
    """Start value of the sine fit: peak of a zero-padded Hann spectrum, parabolic in log power."""
    n = 1 << int(math.ceil(math.log2(len(x) * 4)))
    s = np.abs(np.fft.rfft(x * signal.windows.hann(len(x), sym=False), n)) ** 2
    s[: int(20 * n / fs)] = 0
    k = int(np.argmax(s))
    a, b, c = np.log(s[k - 1:k + 2])
    return (k + 0.5 * (a - c) / (a - 2 * b + c)) * fs / n


def noise_budget(cs, ref, ntotal):
    """Standard deviations of the noise-induced scatter, from white noise of variance s^2:
     - a windowed amplitude estimate with weights g has var(A) = 2 s^2 ENBW_g / n per segment;
       the +-lobe power sum of a tone weights the noise by w^2 (its lobe holds the whole windowed
       tone), so ENBW_g = n sum w^4 / (sum w^2)^2 (6.3 bins for HFT248D), and HFT248D segments
       at 50 % overlap are nearly uncorrelated (w^2 overlap correlation 4e-7): / segments;
       power P = A^2/2 then scatters by A * sd(A), i.e. 2 s sqrt(ENBW_g / (n S P)) relative;
     - the full-record least-squares fit: var(A) = 2 s^2 / N, var(f) = 24 s^2 fs^2 / (4 pi^2 A^2 N^3);
     - the segment-phase frequency: phase noise sd(A)/A per segment, the phase sum over S - 1
       consecutive pairs telescopes to (phi_S - phi_1)/(S - 1), divided by 2 pi hop / fs;
     - the noise density: a mean over ncount bins correlated over ~ENBW bins, S segments."""
    s2 = cs["noise"] ** 2 + E.quantisation_var(cs["subtype"])
    s = math.sqrt(s2)
    n, segs, fs, a = ref["nfft"], ref["segments"], cs["fs"], cs["amp"]
    w = signal.windows.general_cosine(n, HFT248D, sym=False)
    enbw2 = n * np.sum(w ** 4) / np.sum(w ** 2) ** 2
    p1 = a * a / 2
    sd_a_seg = math.sqrt(2 * s2 * enbw2 / n)
    lvl_ml = 20 / math.log(10) * sd_a_seg / math.sqrt(segs) / a
    lvl_fit = 20 / math.log(10) * math.sqrt(2 * s2 / ntotal) / a
    f_fit = math.sqrt(24 * s2 * fs * fs / (4 * math.pi ** 2 * a * a * float(ntotal) ** 3))
    f_ml = math.sqrt(2) * (sd_a_seg / a) / (segs - 1) / (2 * math.pi * (n // 2) / fs)
    lobe_noise = (2 * LOBE + 1) * 2 * s2 / n
    d_sig = sum((a * 10 ** (dbc / 20)) ** 2 / 2 for dbc in cs["harm"].values())
    if d_sig == 0:  # no generated harmonics: THD is a noise reading, no analytic tolerance
        d_sig = math.inf
    rel_d = 2 * s * math.sqrt(enbw2 / (n * segs * d_sig))
    rel_p1 = 2 * s * math.sqrt(enbw2 / (n * segs * p1))
    nh = len(ref["harm_bins"])
    # noise-only lobe power: ~25/ENBW independent values per segment -> 1/sqrt(S 25/ENBW)
    rel_ln = nh * lobe_noise / d_sig / math.sqrt(segs * (2 * LOBE + 1) / ref["enbw"])
    thd_rel = 4 * 0.5 * math.sqrt(rel_d ** 2 + rel_p1 ** 2 + rel_ln ** 2) + 2.1e-4  # 2 x 0.0009 dB
    noise_db = 4 * 10 / math.log(10) * math.sqrt(ref["enbw"] / (ref["ncount"] * segs)) + 0.01
    return dict(s2=s2, lvl_ml=lvl_ml, lvl_fit=lvl_fit, f_fit=f_fit, f_ml=f_ml,
                lobe_noise=lobe_noise, thd_rel=thd_rel, noise_db=noise_db)


# Generated cases. amp: fundamental peak amplitude; harm: {order: level dBc}; hum: [(Hz, amp)];
# noise: white Gaussian rms. Durations give >= 2 Welch segments, so modlens measures the
# frequency from the segment-to-segment phase (dsp/spectrum.h), not the coarse 1-segment fallback.
CASES = [
    dict(name="48k_997Hz_-1dBFS_24bit", fs=48000, sec=4.0, f=997.0, amp=10 ** (-1 / 20),
         harm={2: -50, 3: -60, 5: -70}, hum=[(50, 3e-4), (100, 1e-4)], noise=1e-4,
         subtype="PCM_24", fmt="WAV", args=[], analytic_thd=True),
    dict(name="44k1_1233.9Hz_-10dBFS_16bit_flac", fs=44100, sec=3.0, f=1233.9, amp=10 ** (-10 / 20),
         harm={2: -45, 3: -52, 4: -58}, hum=[(60, 5e-4), (180, 2e-4)], noise=3e-4,
         subtype="PCM_16", fmt="FLAC", args=[], analytic_thd=True),
    dict(name="96k_3150.2Hz_-3dBFS_float", fs=96000, sec=3.0, f=3150.2, amp=10 ** (-3 / 20),
         harm={3: -40, 5: -55}, hum=[], noise=1e-5, subtype="FLOAT", fmt="WAV", args=[],
         analytic_thd=True),
    dict(name="48k_251.7Hz_-20dBFS_9harmonics", fs=48000, sec=3.0, f=251.7, amp=0.1,
         harm={h: -60 for h in range(2, 11)}, hum=[(50, 2e-4)], noise=2e-4, subtype="PCM_24",
         fmt="WAV", args=["--harmonics", "10"], analytic_thd=True),
    # Noise-dominated tone in a narrowed band: its "harmonics" are lobes of noise, so THD is a
    # noise reading (random); only the scipy cross-check applies to THD here.
    dict(name="48k_1000.3Hz_-40dBFS_noisy_band200-8000", fs=48000, sec=3.0, f=1000.3, amp=0.01,
         harm={}, hum=[], noise=1e-3, subtype="PCM_16", fmt="WAV",
         args=["--band", "200:8000", "--harmonics", "5", "--mains", "60"], analytic_thd=False,
         band=(200.0, 8000.0), harmonics=5, mains=60.0),
]

# Same samples, same definitions: the only differences are the JSON rounding (3 digits beyond
# the displayed precision: 1e-5 dB, 1e-7 %) and double-precision rounding in two FFT libraries
# (relative ~1e-12 at the tone, ~1e-7 at a noise bin 140 dB down). 0.001 dB and 1e-4 relative
# leave a wide margin for those yet catch any change of a lobe, band edge or noise rule.
DB_TOL = 1e-3
REL_TOL = 1e-4


def main():
    exe = E.modlens_path()
    ck = E.Checker("test_crosscheck_scipy")
    with E.scratch():
        for idx, cs in enumerate(CASES):
            fs, name = cs["fs"], cs["name"]
            parts = [(cs["f"], cs["amp"], 0.7)]
            for h, dbc in cs["harm"].items():
                parts.append((h * cs["f"], cs["amp"] * 10 ** (dbc / 20), 0.3 * h))
            parts += [(fh, a, 1.1) for fh, a in cs["hum"]]
            x = E.synth(fs, cs["sec"], parts, noise_rms=cs["noise"], seed=100 + idx)
            path = name + "." + cs["fmt"].lower()
            E.write(path, x, fs, cs["subtype"], cs["fmt"])
            y, fs_read = sf.read(path, dtype="float64")  # exactly the samples modlens reads
            assert fs_read == fs

            rc, rep, out, err = E.run_json(exe, cs["args"] + [path])
            if not ck.check(name + " runs", rc == 0 and rep is not None, "exit %d %s" % (rc, err.strip())):
                continue

            ck.check(name + " read as audio (--kind auto)", rep["input"]["kind"] == "audio",
                     repr(rep["input"].get("kind_reason")))
            f_fit, a_fit, _ = sine_fit(y, fs, coarse_peak(y, fs))
            band = cs.get("band", (20.0, 20000.0))
            ref = reference_analysis(y, fs, f_fit, band=band, harmonics=cs.get("harmonics", 10),
                                     mains=cs.get("mains"), present=set(cs["harm"]),
                                     hum_tones=[f for f, _ in cs["hum"]])
            ck.check(name + " design: generated lines 20 dB or more above the noise in their lobes",
                     ref["guard"] >= 100, "weakest %.1f dB" % (10 * math.log10(ref["guard"])))
            bin_hz = fs / ref["nfft"]
            # Test design guard: h*f must not sit near a bin boundary, or the harmonic's centre
            # bin would depend on the last digits of the frequency estimate.
            frac = [abs((h * f_fit / bin_hz) % 1 - 0.5) for h, _ in ref["harm_bins"]]
            ck.check(name + " design: harmonics clear of bin boundaries", min(frac + [1]) > 0.01,
                     "min distance %.3f bin" % min(frac + [1]))
            ck.check(name + " FFT length and segments",
                     ("%d-point FFT" % ref["nfft"]) in rep.get("analysis", "")
                     and ("%d segments" % ref["segments"]) in rep.get("analysis", ""),
                     "%r vs nfft %d, %d segments" % (rep.get("analysis"), ref["nfft"], ref["segments"]))

            # 1. scipy re-implementation of the definitions
            # The noise subtracted from each line is a local mean over some 50 bins here and in
            # modlens alike, but the bins chosen may differ by a few at the window's edges: for
            # the weakest line (20 dB or more over its lobe's noise) that moves the line by at
            # most 1 % of 1 % of it, 4e-4 dB -- inside DB_TOL.
            for key in ("audio.fundamental_dbfs", "audio.thd_db", "audio.thdn_db", "audio.sinad_db",
                        "audio.snr_db", "audio.noise_dbfs", "hum.level_dbfs", "hum.level_dbc"):
                if ref[key] is None:  # no line above the noise: a bound or not measured, never a value
                    ck.check("%s %s: no line above the noise, a bound or n/a" % (name, key),
                             E.get(rep, key) is None or key.split(".")[1] in rep["bounds"].get(key.split(".")[0], {}),
                             repr(E.get(rep, key)))
                    continue
                ck.close("%s %s = scipy" % (name, key), E.get(rep, key), ref[key], DB_TOL,
                         "same definitions; JSON and FFT rounding")
            for key in ("audio.thd_pct", "audio.thdn_pct"):
                if ref[key] is None:
                    ck.check("%s %s: noise-limited, an upper bound or n/a" % (name, key),
                             E.get(rep, key) is None or rep["bounds"].get("audio", {}).get("thd_pct") == "upper",
                             repr(E.get(rep, key)))
                    continue
                ck.rel("%s %s = scipy" % (name, key), E.get(rep, key), ref[key], REL_TOL,
                       "same definitions; JSON and FFT rounding")
            # ENOB is SINAD through an exact affine map: 1e-3 dB / 6.02 dB per bit.
            ck.close(name + " audio.enob_bits = scipy", E.get(rep, "audio.enob_bits"),
                     ref["audio.enob_bits"], DB_TOL / 6.0 + 1e-5, "from SINAD (IEEE 1241 eq. 94/102)")
            ck.check(name + " harmonic orders = scipy",
                     [h["order"] for h in E.get(rep, "audio.harmonics")] == [h for h, _ in ref["harm_bins"]],
                     "%s vs %s" % ([h["order"] for h in E.get(rep, "audio.harmonics")],
                                   [h for h, _ in ref["harm_bins"]]))
            ck.check(name + " hum mains and components = scipy",
                     (E.get(rep, "hum.mains_hz") == ref["mains"] or not ref["hum"])
                     and [round(c["frequency_hz"], 1) for c in E.get(rep, "hum.components")]
                     == [round(f, 1) for f, _ in ref["hum"]],
                     "%s Hz %s vs %s Hz %s" % (E.get(rep, "hum.mains_hz"),
                                               [c["frequency_hz"] for c in E.get(rep, "hum.components")],
                                               ref["mains"], [f for f, _ in ref["hum"]]))

            # 2. the synthetic truth and the sine fit. Tolerances: 4 standard deviations of the
            # noise-induced scatter (see noise_budget) plus the window's amplitude flatness.
            nb = noise_budget(cs, ref, len(y))
            ck.close(name + " fundamental_hz = sine fit", E.get(rep, "audio.fundamental_hz"), f_fit,
                     1e-4 + 4 * math.hypot(nb["f_ml"], nb["f_fit"]),
                     "IEEE 1057 4-parameter fit; segment-phase and fit noise")
            ck.close(name + " sine fit frequency = generated", f_fit, cs["f"], 1e-5 + 4 * nb["f_fit"],
                     "oracle sanity: the fit recovers the synthesis frequency")
            # HFT248D amplitude flatness +-0.0009 dB (docs/references.md 3.2) and the noise.
            ck.close(name + " fundamental_dbfs = sine fit", E.get(rep, "audio.fundamental_dbfs"),
                     E.dbfs(a_fit), 1e-3 + 4 * math.hypot(nb["lvl_ml"], nb["lvl_fit"]),
                     "IEEE 1057 3-parameter fit amplitude; flatness and noise")
            ck.close(name + " sine fit amplitude = generated", E.dbfs(a_fit), E.dbfs(cs["amp"]),
                     5e-4 + 4 * nb["lvl_fit"], "oracle sanity; 16-bit write scale 32767/32768 = -0.0003 dB")
            if cs["analytic_thd"]:
                # THD truth: the generated harmonic powers a_h^2/2 (the noise in their lobes is
                # taken out by definition, and the harmonics that were not generated hold noise
                # only: they are no lines)
                orders = {h for h, _ in ref["harm_bins"]}
                d_sig = sum((cs["amp"] * 10 ** (dbc / 20)) ** 2 / 2
                            for h, dbc in cs["harm"].items() if h in orders)
                thd_true = 100 * math.sqrt(d_sig / (cs["amp"] ** 2 / 2))
                ck.rel(name + " thd_pct = analytic", E.get(rep, "audio.thd_pct"), thd_true,
                       nb["thd_rel"], "sqrt(sum a_h^2)/a_1 + lobe noise; flatness and noise")
            # Noise truth: E[N] = 2 s^2 nband / nfft (white noise) plus every hum component, whose
            # lobe is part of the noise bins: P_hum * nband / ncount.
            hum_in_noise = sum(a * a / 2 for _, a in cs["hum"]) * ref["nband"] / ref["ncount"]
            n_true = 2 * nb["s2"] * ref["nband"] / ref["nfft"] + hum_in_noise
            ck.close(name + " noise_dbfs = analytic", E.get(rep, "audio.noise_dbfs"),
                     10 * math.log10(n_true / 0.5), nb["noise_db"], "white noise in the band + hum")
            print("  info %s: modlens thd %s%% thd+n %s%% snr %s dB noise %s dBFS; scipy %s%% "
                  "%s%% %s dB %s dBFS; fit %.6f Hz %.5f dBFS" % (
                      name, E.get(rep, "audio.thd_pct"), E.get(rep, "audio.thdn_pct"),
                      E.get(rep, "audio.snr_db"), E.get(rep, "audio.noise_dbfs"), ref["audio.thd_pct"],
                      ref["audio.thdn_pct"], ref["audio.snr_db"], ref["audio.noise_dbfs"], f_fit,
                      E.dbfs(a_fit)))
    ck.finish()


if __name__ == "__main__":
    main()
