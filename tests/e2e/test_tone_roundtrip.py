"""End-to-end test of `modlens tone`: files written by the command, checked with numpy/scipy/soundfile.

Run: /usr/bin/python3 test_tone_roundtrip.py /path/to/modlens   (exit 0: every check passed)

Every expected value is analytic from the generation parameters (derivation beside each check) or
a published value named beside it; every tolerance has its reason. modlens measure is not used.

References:
[AES17] AES17-2015 3.12.1: a full-scale sine reads 0 dBFS (docs/references.md section 5).
[haykin] S. Haykin, Communication Systems, 4th ed., sec. 3.1: envelope A(1 + m cos), modulation
    index (Emax - Emin)/(Emax + Emin) (docs/references.md section 6, "confirmed").
[scipy-hilbert] scipy.signal.hilbert is FFT based, exact for records of whole periods
    (docs/references.md section 9 and pitfall 5).
"""
import math
import os
import re
import shlex
import subprocess
import sys
import tempfile

import numpy as np
import scipy.signal
import soundfile as sf

RATE = 48000
RUN_TIMEOUT_S = 120  # the largest file here is 10 s of audio: about a second of work
# MODLENS_WRAP (for example "valgrind ...") goes in front of every modlens command, with more time
WRAP = os.environ.get("MODLENS_WRAP", "").split()
if WRAP:
    RUN_TIMEOUT_S *= 10

failures = []
count = 0


def check(name, ok, detail=""):
    global count
    count += 1
    print("%s %s%s" % ("PASS" if ok else "FAIL", name, ": " + detail if detail else ""), flush=True)
    if not ok:
        failures.append(name)
    return ok


def close(name, got, want, tol, reason):
    return check(name, got is not None and abs(got - want) <= tol,
                 "got %.9g, want %.9g +- %.3g (%s)" % (got, want, tol, reason))


def run(exe, args):
    return subprocess.run(WRAP + [exe, "tone"] + args, capture_output=True, text=True, timeout=RUN_TIMEOUT_S)


def make(exe, args, path, name):
    """Runs modlens tone ... --out path; True when it exits 0 and the file exists."""
    r = run(exe, args + ["--out", path])
    return check(name + ": exit 0", r.returncode == 0 and os.path.isfile(path),
                 "rc %d, stderr %r" % (r.returncode, r.stderr.strip()))


def amp_at(x, hz, rate=RATE):
    """Amplitude of a real sine at hz in x (whole periods): 2|X_k|/N with a rectangular window."""
    n = len(x)
    k = hz * n / rate
    assert abs(k - round(k)) < 1e-9, "not a whole number of periods"
    return 2 * abs(np.fft.rfft(x)[int(round(k))]) / n


def db(x):
    return 20 * math.log10(x)


# ---- formats and the 1 % third harmonic ----------------------------------------------------------

# io/sink.h: PCM files hold the nearest code, so a sample errs by at most half a code, plus the
# rounding of the generator's value to float (2^-24 relative of <= 0.51: 3.1e-8). Float files hold
# that float value: 3.1e-8 (1e-7 with margin).
FLOAT_ROUNDING = 3.1e-8
FORMATS = [  # (name, extension, --bits, soundfile format, subtype, per-sample tolerance)
    ("WAV 16", "wav", "16", "WAV", "PCM_16", 2.0 ** -16 + FLOAT_ROUNDING),
    ("WAV 24", "wav", "24", "WAV", "PCM_24", 2.0 ** -24 + FLOAT_ROUNDING),
    ("WAV float", "wav", "32f", "WAV", "FLOAT", 1e-7),
    ("FLAC 16", "flac", "16", "FLAC", "PCM_16", 2.0 ** -16 + FLOAT_ROUNDING),
    ("FLAC 24", "flac", "24", "FLAC", "PCM_24", 2.0 ** -24 + FLOAT_ROUNDING),
]


def test_formats(exe, tmp):
    a = 10 ** (-6 / 20)  # [AES17]: -6 dBFS sine has peak 10^(-6/20) = 0.501187
    n = np.arange(RATE)
    # dsp/synth.h: zero-phase sines; harmonic 3 at -40 dBc = 0.01 of the fundamental.
    ideal = a * np.sin(2 * np.pi * 1000 * n / RATE) + a * 0.01 * np.sin(2 * np.pi * 3000 * n / RATE)
    for name, ext, bits, fmt, subtype, tol in FORMATS:
        path = os.path.join(tmp, "h3-%s.%s" % (bits, ext))
        if not make(exe, ["--freq", "1000", "--level", "-6", "--harmonic", "3:-40", "--seconds", "1",
                          "--bits", bits], path, name):
            continue
        info = sf.info(path)
        check(name + ": container and encoding", info.format == fmt and info.subtype == subtype,
              "%s %s" % (info.format, info.subtype))
        check(name + ": 48 kHz mono, 1 s", info.samplerate == RATE and info.channels == 1
              and info.frames == RATE, "%d Hz, %d ch, %d frames" % (info.samplerate, info.channels, info.frames))
        x, _ = sf.read(path, dtype="float64")
        close(name + ": samples match the formula", float(np.max(np.abs(x - ideal))), 0.0, tol,
              "half a code plus float rounding")
        # Nearest-code rounding leaves no DC: the mean error over 48000 samples of an error
        # uniform in +-half a code (sd q/sqrt(12)) has sd q/sqrt(12 * 48000) = 1.3e-3 q; a
        # round-down converter would show -0.5 q. Tolerance 0.01 q (7.6 sd).
        q = 2.0 ** (1 - int(bits)) if bits != "32f" else 2.0 ** -24
        close(name + ": no DC from rounding (mean error / code)", float(np.mean(x - ideal)) / q, 0.0, 0.01,
              "7.6 sd of the mean rounding error")
        h1, h3 = amp_at(x, 1000), amp_at(x, 3000)
        # The quantisation error's component in one bin is at most its largest value, half a code,
        # times 2 (amplitude scaling): 3.05e-5 at 16 bits, so H3/H1 is within 3.05e-5/0.501 =
        # 6.1e-5 of 0.01; 1e-4 covers every format.
        close(name + ": 3rd harmonic 1 % by numpy FFT", h3 / h1, 0.01, 1e-4, "16-bit quantisation bound 6.1e-5")
        # Fundamental level: 20 log10(0.501187) = -6 dBFS; half a 16-bit code in 0.5 is 5e-4 dB.
        close(name + ": fundamental -6 dBFS", db(h1), -6.0, 0.001, "16-bit quantisation 5e-4 dB")


# ---- AM ------------------------------------------------------------------------------------------

def mod_index(env):
    """[haykin]: m = (Emax - Emin) / (Emax + Emin)."""
    return (env.max() - env.min()) / (env.max() + env.min())


def test_am(exe, tmp):
    a = 10 ** (-6 / 20)
    # Real IF: 12 kHz carrier, 1 kHz at m = 0.8; 1 s holds whole periods, so |hilbert| is exact
    # [scipy-hilbert]. 24-bit samples err by < 1.2e-7 of a carrier of 0.5: the index is good to
    # ~1e-6; 1e-4 leaves margin.
    path = os.path.join(tmp, "am-if.wav")
    if make(exe, ["--carrier", "12000", "--depth", "0.8", "--mod-freq", "1000", "--level", "-6",
                  "--seconds", "1"], path, "AM IF"):
        x, _ = sf.read(path, dtype="float64")
        check("AM IF: one channel", x.ndim == 1)
        env = np.abs(scipy.signal.hilbert(x))
        close("AM IF: (max-min)/(max+min) of |hilbert|", mod_index(env), 0.8, 1e-4, "24-bit quantisation")
        # Envelope extremes A(1 +- m) = 0.902137 and 0.100237 [haykin]; same bound.
        close("AM IF: envelope max A(1+m)", env.max(), a * 1.8, 1e-5, "24-bit quantisation")
        close("AM IF: envelope min A(1-m)", env.min(), a * 0.2, 1e-5, "24-bit quantisation")

    # I/Q: two channels I, Q; carrier +3 kHz; |I + jQ| is the envelope directly.
    path = os.path.join(tmp, "am-iq.wav")
    if make(exe, ["--carrier", "3000", "--iq", "--depth", "0.8", "--level", "-6", "--seconds", "1"],
            path, "AM I/Q"):
        z, _ = sf.read(path, dtype="float64")
        check("AM I/Q: two channels", z.ndim == 2 and z.shape[1] == 2)
        c = z[:, 0] + 1j * z[:, 1]
        close("AM I/Q: (max-min)/(max+min) of |I+jQ|", mod_index(np.abs(c)), 0.8, 1e-4, "24-bit quantisation")
        spec = np.abs(np.fft.fft(c)) / len(c)
        # e^{+j 2 pi 3000 t}: the carrier A sits at +3 kHz (bin 3000), side frequencies m A / 2
        # at 2 and 4 kHz, nothing at -3 kHz (bin N - 3000). 1e-5: 24-bit quantisation in one bin.
        close("AM I/Q: carrier at +3 kHz", spec[3000], a, 1e-5, "24-bit quantisation")
        close("AM I/Q: side frequency at +4 kHz = m A / 2", spec[4000], 0.4 * a, 1e-5, "[haykin] mu A/2")
        close("AM I/Q: image at -3 kHz", spec[len(c) - 3000], 0.0, 1e-5, "I/Q is single-sided")

    # Negative carrier and a lead-in: carrier at -3 kHz; 0.25 s of unmodulated carrier first, whose
    # |I+jQ| is the carrier peak A exactly; then +120 % / -90 % peaks: A * 2.2 and A * 0.1.
    path = os.path.join(tmp, "am-iq-neg.wav")
    if make(exe, ["--carrier", "-3000", "--iq", "--positive-peak", "120", "--negative-peak", "-90",
                  "--lead-in", "0.25", "--level", "-9", "--seconds", "1"], path, "AM I/Q negative carrier"):
        z, _ = sf.read(path, dtype="float64")
        c = z[:, 0] + 1j * z[:, 1]
        a9 = 10 ** (-9 / 20)
        lead = np.abs(c[:12000])
        close("AM I/Q lead-in: constant carrier", float(np.max(np.abs(lead - a9))), 0.0, 1e-6,
              "24-bit: one code is 1.2e-7 per channel")
        spec = np.abs(np.fft.fft(c[:12000])) / 12000
        close("AM I/Q lead-in: carrier at -3 kHz", spec[12000 - 750], a9, 1e-5,
              "bin 750 of 12000 frames = 3 kHz; 24-bit quantisation")
        env = np.abs(c[12000:])
        close("AM I/Q: positive peak +120 %", env.max() / a9 - 1, 1.2, 1e-5, "24-bit quantisation")
        close("AM I/Q: negative peak -90 %", 1 - env.min() / a9, 0.9, 1e-5, "24-bit quantisation")

    # CNR 30 dB (dsp/synth.h): noise power (A^2/2)/10^3 in the full band 0..24 kHz. The noise is
    # the difference from the same file without noise. 2 s = 96000 samples: the sample variance has
    # relative sd sqrt(2/96000) = 0.46 %, so 3 % is 6.5 sd; float files avoid quantisation.
    p0 = os.path.join(tmp, "cnr-off.wav")
    p1 = os.path.join(tmp, "cnr-on.wav")
    base = ["--carrier", "12000", "--depth", "0.8", "--level", "-6", "--seconds", "2", "--bits", "32f"]
    if make(exe, base, p0, "CNR reference") and make(exe, base + ["--cnr", "30"], p1, "CNR 30 dB"):
        x0, _ = sf.read(p0, dtype="float64")
        x1, _ = sf.read(p1, dtype="float64")
        ratio = np.mean((x1 - x0) ** 2) / (a * a / 2 / 1000)
        close("CNR 30 dB: noise power = carrier power / 1000", ratio, 1.0, 0.03, "6.5 sd of the variance estimate")


# ---- noise determinism -----------------------------------------------------------------------------

def test_seed(exe, tmp):
    paths = [os.path.join(tmp, "seed-%d.wav" % i) for i in range(3)]
    seeds = ["7", "7", "8"]
    ok = all(make(exe, ["--silence", "--noise", "-40", "--seconds", "0.5", "--seed", s], p, "noise seed " + s)
             for s, p in zip(seeds, paths))
    if ok:
        data = [open(p, "rb").read() for p in paths]
        check("same seed, identical file", data[0] == data[1])
        check("other seed, other noise", data[0] != data[2])
        x, _ = sf.read(paths[0], dtype="float64")
        # [AES17] level rule for noise: r.m.s. 10^(-40/20)/sqrt(2) = 7.07e-3. 24000 samples: the
        # r.m.s. has relative sd 1/sqrt(2 * 24000) = 0.46 %; 0.3 dB (3.5 %) is 7 sd.
        close("noise -40 dBFS: r.m.s. level", db(np.sqrt(np.mean(x ** 2)) * math.sqrt(2)), -40.0, 0.3,
              "7 sd of the r.m.s. estimate")


# ---- usage errors -------------------------------------------------------------------------------

def test_errors(exe, tmp):
    d = os.path.join(tmp, "errors")
    os.mkdir(d)
    os.mkdir(os.path.join(d, "adir.wav"))
    out = os.path.join(d, "x.wav")
    cases = [
        ("bad number", ["--depth", "abc", "--carrier", "12000", "--out", out]),
        ("bad --bits", ["--bits", "12", "--out", out]),
        ("tone above Nyquist", ["--freq", "30000", "--out", out]),
        ("sidebands outside the band", ["--carrier", "500", "--out", out]),
        ("unknown extension", ["--out", os.path.join(d, "x.mp3")]),
        ("float FLAC", ["--bits", "32f", "--out", os.path.join(d, "x.flac")]),
        ("existing directory", ["--out", os.path.join(d, "adir.wav")]),
        ("peak above full scale", ["--level", "1", "--out", out]),
        ("no --out", ["--freq", "1000"]),
        ("AM option without --carrier", ["--depth", "0.5", "--out", out]),
        ("--noise and --cnr", ["--carrier", "12000", "--noise", "-60", "--cnr", "40", "--out", out]),
        ("unknown option", ["--frequency", "1000", "--out", out]),
        ("stray argument", ["extra.wav", "--out", out]),
    ]
    for name, args in cases:
        r = run(exe, args)
        lines = r.stderr.strip().splitlines()
        check("usage error, %s: exit 2, one line" % name,
              r.returncode == 2 and len(lines) == 1 and lines[0].startswith("modlens: "),
              "rc %d, stderr %r" % (r.returncode, r.stderr.strip()))
    left = sorted(os.listdir(d))
    check("usage errors leave no file or temporary", left == ["adir.wav"], "folder holds %s" % left)
    check("the existing directory is untouched", os.listdir(os.path.join(d, "adir.wav")) == [])

    r = run(exe, ["--help"])
    check("--help: exit 0, options and safety paragraph",
          r.returncode == 0 and "--out FILE" in r.stdout and "--hum-depth" in r.stdout and "Safety:" in r.stdout)


# ---- the demo captures ------------------------------------------------------------------------------

def capture_commands(readme):
    """(file name, argument list) of every 'modlens tone ... --out captures/NAME' in the README."""
    text = open(readme).read().replace("\\\n", " ")
    cmds = []
    for line in text.splitlines():
        line = line.strip()
        if line.startswith("modlens tone "):
            args = shlex.split(line)[2:]
            i = args.index("--out")
            cmds.append((os.path.basename(args[i + 1]), args[:i] + args[i + 2:]))
    return cmds


def test_captures(exe, tmp):
    cap = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "captures")
    readme = os.path.join(cap, "README.md")
    if not check("captures/README.md exists", os.path.isfile(readme)):
        return
    cmds = capture_commands(readme)
    check("README gives the command of each demo capture",
          sorted(c[0] for c in cmds) == ["receiver-1khz.wav", "transmitter-if.wav", "transmitter-iq.wav"],
          str([c[0] for c in cmds]))
    for name, args in cmds:
        path = os.path.join(tmp, name)
        committed = os.path.join(cap, name)
        if not make(exe, args, path, "capture " + name) or not check(name + " is in captures/",
                                                                    os.path.isfile(committed)):
            continue
        check(name + ": < 1 MB", os.path.getsize(committed) < 1 << 20, "%d bytes" % os.path.getsize(committed))
        a, ra = sf.read(path, dtype="int32")
        b, rb = sf.read(committed, dtype="int32")
        # The generator is deterministic (fixed seed); allow one 16-bit code (65536 in int32 units)
        # for a libm that rounds a last bit differently on another machine.
        check(name + ": the README command reproduces the file",
              ra == rb and a.shape == b.shape and int(np.max(np.abs(a.astype(np.int64) - b))) <= 65536)
    receiver = os.path.join(cap, "receiver-1khz.wav")
    if os.path.isfile(receiver):
        check_receiver_figures(receiver)


def check_receiver_figures(path):
    """The component levels captures/README.md states for receiver-1khz.wav, from the parameters."""
    x, rate = sf.read(path, dtype="float64")
    n = len(x)
    check("receiver: 10 s, 48 kHz mono 16-bit", rate == RATE and x.ndim == 1 and n == 10 * RATE
          and sf.info(path).subtype == "PCM_16")
    # Bin amplitudes over 10 s (every component has whole periods). White noise of r.m.s. s adds
    # r.m.s. 2 s / sqrt(N) = 1.2e-7 to a bin: 0.007 dB on the weakest line (-76 dBFS = 1.6e-4), so
    # 0.05 dB; 16-bit codes (3e-5) move a -12 dBFS line by < 0.001 dB: 0.01 dB.
    for hz, want, tol in [(1000, -12, 0.01), (2000, -64, 0.05), (3000, -70, 0.05), (50, -70, 0.05),
                          (100, -76, 0.05)]:
        close("receiver: %d Hz at %d dBFS" % (hz, want), db(amp_at(x, hz)), want, tol, "bin noise and 16-bit codes")
    # Noise: everything but the lines above, over the full band. Expected -85 dBFS [AES17] plus
    # the 16-bit rounding noise q^2/12 with q = 2^-15 (-98.09 dBFS): 10 log10(10^-8.5 + 10^-9.809)
    # = -84.79 dBFS. 480000 samples: the power estimate has sd sqrt(2/480000) = 0.2 % (0.009 dB);
    # 0.1 dB covers it and the removed bins.
    X = np.fft.rfft(x)
    for hz in (0, 50, 100, 1000, 2000, 3000):
        X[hz * n // RATE] = 0
    p = 2 * np.sum(np.abs(X[1:-1]) ** 2) / n ** 2  # mean square of what is left (Parseval)
    close("receiver: noise -84.79 dBFS (full band, with 16-bit rounding)", 10 * math.log10(p / 0.5), -84.79, 0.1,
          "variance of the estimate")


def main():
    if len(sys.argv) != 2:
        print("usage: test_tone_roundtrip.py /path/to/modlens", file=sys.stderr)
        return 2
    exe = os.path.abspath(sys.argv[1])
    with tempfile.TemporaryDirectory(prefix="modlens-tone-") as tmp:
        test_formats(exe, tmp)
        test_am(exe, tmp)
        test_seed(exe, tmp)
        test_errors(exe, tmp)
        test_captures(exe, tmp)
    print("%d checks, %d failed%s" % (count, len(failures), (": " + ", ".join(failures)) if failures else ""))
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
