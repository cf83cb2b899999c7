"""The dsp audio analysis's honest figures against numpy/scipy, through the test probes.

Runs tests/e2e/audio_probe.c (ml-audio-probe: the result fields of dsp/metrics.h as JSON) on
signals made here with numpy, and compares with independent computations:
  1. hum on short captures (0.1, 0.25, 0.5, 1 s at 48 and 44.1 kHz, 50 and 60 Hz mains): the
     transform from ml_audio_plan_transform must resolve the mains, and the hum power must match
     the power of the hum components fitted by numpy least squares (known frequencies) within
     0.2 dB; the mains frequency must be the one put in; at 0.1 s hum is a lower bound.
  2. a 20 Hz tone at the band edge: the residual R (band bins outside the fundamental's lobe, the
     lobe counted whole) against the same sum over scipy.signal.welch's spectrum with the same
     window (HFT248D through scipy.signal.windows.general_cosine), 1e-6 relative; B - P1 >= 0.
  3. no tone: hum and noise only (mains 60 Hz) -- no tone figures, hum against the numpy fit; white
     noise only -- mains none, hum an upper bound.
  4. every figure reported (state not "none") lies inside +-299 dB, ENOB inside 0..32 bits.
usage: test_dsp_honest.py PROBE_DIR (the build directory holding ml-audio-probe)
"""
import json
import math
import os
import subprocess
import sys

import numpy as np
import scipy.signal as sg

import e2e_common as E

HFT248D = [1.0, 1.985844164102, 1.791176438506, 1.282075284005, 0.667777530266, 0.240160796576,
           0.056656381764, 0.008134974479, 0.000624544650, 0.000019808998, 0.000000132974]


def probe(exe, x, fs, *args):
    path = "probe.f32"
    np.asarray(x, dtype=np.float32).tofile(path)
    p = subprocess.run([exe, str(fs), path] + [str(a) for a in args], capture_output=True, timeout=120)
    if p.returncode != 0:
        return None
    return json.loads(p.stdout.decode())


def fit_power(x, fs, freqs, others=()):
    """Least-squares amplitudes of sines at the given frequencies, fitted together with the other
    known components (and DC: over a capture that is no whole number of their periods, sines are
    not orthogonal): the sum of A^2/2 of the given ones."""
    t = np.arange(len(x)) / fs
    cols = [np.ones_like(t)]
    for f in list(freqs) + list(others):
        cols += [np.cos(2 * np.pi * f * t), np.sin(2 * np.pi * f * t)]
    coef, *_ = np.linalg.lstsq(np.stack(cols, axis=1), x.astype(np.float64), rcond=None)
    return sum((coef[1 + 2 * i] ** 2 + coef[2 + 2 * i] ** 2) / 2 for i in range(len(freqs)))


def in_range(ck, name, rep):
    bad = []
    for key, f in rep["figures"].items():
        if f["state"] == "none":
            if not f["text"]:
                bad.append(key + " without a reason")
            continue
        v = f["value"]
        if v is None or not math.isfinite(v):
            bad.append(key)
        elif key == "enob" and not 0 <= v <= 32:
            bad.append("enob %g" % v)
        elif key in ("thd", "thdn", "sinad", "snr", "hum_rel") and abs(10 * math.log10(v)) >= 299:
            bad.append("%s %g" % (key, v))
        elif key in ("fundamental", "noise", "noise_nohum", "hum") and abs(10 * math.log10(v / 0.5)) >= 299:
            bad.append("%s %g" % (key, v))
    ck.check(name + " figures inside the reportable range", not bad, ", ".join(bad))


def db(p, ref):
    return 10 * math.log10(p / ref)


def short_captures(ck, exe):
    rng = np.random.default_rng(17)
    for fs in (48000, 44100):
        for sec in (0.1, 0.25, 0.5, 1.0):
            for mains in (50.0, 60.0):
                n = int(round(fs * sec))
                t = np.arange(n) / fs
                x = 0.5 * np.sin(2 * np.pi * 1000 * t) + 0.01 * np.sin(2 * np.pi * mains * t + 0.4) \
                    + 0.003 * np.sin(2 * np.pi * 2 * mains * t + 1.3) + rng.normal(0, 1e-5, n)
                x = x.astype(np.float32).astype(np.float64)
                truth = fit_power(x, fs, [mains, 2 * mains], [1000.0])
                name = "%g kHz %g s %g Hz" % (fs / 1000, sec, mains)
                rep = probe(exe, x, fs)
                if not ck.check(name + " runs", rep is not None and rep["status"] == "success"):
                    continue
                in_range(ck, name, rep)
                F = rep["figures"]
                ck.check(name + " mains", F["mains_hz"]["state"] == "measured" and F["mains_hz"]["value"] == mains,
                         repr(F["mains_hz"]))
                hum = F["hum"]
                if rep["plan"]["hum_resolved"]:
                    ck.check(name + " hum measured", hum["state"] == "measured", repr(hum))
                    if hum["value"]:
                        ck.close(name + " hum = numpy fit (dB)", db(hum["value"], truth), 0.0, 0.2,
                                 "hum %.3f dBFS" % db(truth, 0.5))
                else:
                    fund = fit_power(x, fs, [mains], [2 * mains, 1000.0])
                    ck.check(name + " hum a lower bound", hum["state"] == "lower" and hum["value"] is not None
                             and 0.95 * fund <= hum["value"] <= 1.05 * truth, repr(hum))


def band_edge(ck, exe):
    fs, n = 48000, 48000 * 8
    rng = np.random.default_rng(23)
    t = np.arange(n) / fs
    x = (0.5 * np.sin(2 * np.pi * 20.0 * t + 0.2) + rng.normal(0, 1e-4, n)).astype(np.float32)
    nfft, hop = 65536, 32768
    rep = probe(exe, x, fs, "--nfft", nfft, "--hop", hop)
    if not ck.check("20 Hz runs", rep is not None and rep["status"] == "success"):
        return
    in_range(ck, "20 Hz", rep)
    R = rep["result"]
    w = sg.windows.general_cosine(nfft, HFT248D, sym=False)
    enbw = nfft * np.sum(w ** 2) / np.sum(w) ** 2
    # spectrum scaling: power per bin, one-sided (x2 except DC/Nyquist), averaged over segments
    f, p = sg.welch(x.astype(np.float64), fs=fs, window=w, nperseg=nfft, noverlap=nfft - hop, detrend=False,
                    scaling="spectrum")
    lobe, bin_hz = 12, fs / nfft
    klo, khi = max(math.ceil(20.0 / bin_hz), lobe), math.floor(20000.0 / bin_hz)
    kf = int(round(R["fundamental_hz"] / bin_hz))
    band = np.arange(klo, khi + 1)
    outside = band[np.abs(band - kf) > lobe]
    r_scipy = float(np.sum(p[outside])) / enbw
    p1_scipy = float(np.sum(p[kf - lobe:kf + lobe + 1])) / enbw
    ck.rel("20 Hz residual = scipy welch", R["residual_power"], r_scipy, 1e-6)
    ck.rel("20 Hz P1 = scipy welch", R["fundamental_power"], p1_scipy, 1e-6)
    ck.check("20 Hz B - P1 >= 0", R["band_power"] - R["fundamental_power"] >= 0,
             "%r" % (R["band_power"] - R["fundamental_power"]))
    sinad = 10 * math.log10(p1_scipy / r_scipy)
    ck.close("20 Hz SINAD (dB)", 10 * math.log10(rep["figures"]["sinad"]["value"]), sinad, 1e-4)
    ck.close("20 Hz ENOB (IEEE 1241 eq. 94/102)", rep["figures"]["enob"]["value"],
             (sinad - 10 * math.log10(1.5)) / (20 * math.log10(2)), 1e-4)


def no_tone(ck, exe):
    fs, n = 48000, 48000 * 3
    rng = np.random.default_rng(29)
    t = np.arange(n) / fs
    x = 0.004 * np.sin(2 * np.pi * 60 * t) + 0.0015 * np.sin(2 * np.pi * 120 * t + 1) + 0.001 * np.sin(
        2 * np.pi * 180 * t + 2) + rng.normal(0, 3e-4, n)
    x = x.astype(np.float32).astype(np.float64)
    rep = probe(exe, x, fs)
    if ck.check("hum and noise runs", rep is not None and rep["status"] == "success"):
        in_range(ck, "hum and noise", rep)
        F = rep["figures"]
        ck.check("hum and noise: no tone", not rep["result"]["tone_present"]
                 and all(F[k]["state"] == "none" for k in ("fundamental", "thd", "thdn", "sinad", "snr", "enob")),
                 rep["result"]["tone_why"])
        ck.check("hum and noise: mains 60", F["mains_hz"]["value"] == 60.0, repr(F["mains_hz"]))
        truth = fit_power(x, fs, [60.0, 120.0, 180.0])
        if F["hum"]["value"]:
            ck.close("hum and noise: hum = numpy fit (dB)", db(F["hum"]["value"], truth), 0.0, 0.1)
        # noise without hum: white noise in 20 Hz..20 kHz, numpy variance of the noise alone
        noise = x - 0.004 * np.sin(2 * np.pi * 60 * t) - 0.0015 * np.sin(2 * np.pi * 120 * t + 1) - 0.001 * np.sin(
            2 * np.pi * 180 * t + 2)
        n_band = float(np.var(noise)) * (19980.0 / 24000.0)
        ck.close("hum and noise: noise without hum (dB)", db(F["noise_nohum"]["value"], n_band), 0.0, 0.15)
    x = rng.normal(0, 0.05, n)
    rep = probe(exe, x, fs)
    if ck.check("noise only runs", rep is not None and rep["status"] == "success"):
        in_range(ck, "noise only", rep)
        F = rep["figures"]
        ck.check("noise only: mains none", F["mains_hz"]["state"] == "none", repr(F["mains_hz"]))
        ck.check("noise only: hum an upper bound", F["hum"]["state"] == "upper", repr(F["hum"]))


def main():
    probe_dir = os.path.abspath(sys.argv[1]) if len(sys.argv) > 1 else None
    exe = os.path.join(probe_dir, "ml-audio-probe") if probe_dir else None
    if exe is None or not os.access(exe, os.X_OK):
        sys.exit("usage: test_dsp_honest.py BUILD_DIR_WITH_ml-audio-probe")
    ck = E.Checker("dsp honest figures")
    with E.scratch():
        short_captures(ck, exe)
        band_edge(ck, exe)
        no_tone(ck, exe)
    ck.finish()


if __name__ == "__main__":
    main()
