"""Intermodulation in `modlens measure`: signals with constructed sidebands, the test signals
`modlens tone --imd` writes, forcing and switching off, and the demodulated audio of an AM capture.

Run: /usr/bin/python3 test_imd.py /path/to/modlens

Expected values come from outside the program:
- docs/references.md 5 and 12, the IEC 60268-3 worked examples: U(fh) = 0.25 with sidebands
  0.02, 0.02 (fh +- fl) and 0.01, 0.01 (fh +- 2 fl) gives d2 = 16 %, d3 = 8 % (arithmetic sums
  per order) and the r.s.s. (SMPTE RP120 analyser convention) 12.649 %; difference frequency with
  two tones of 0.5 and U(f2 - f1) = 0.03, U(2 f1 - f2) = U(2 f2 - f1) = 0.02 gives d2 = 3 %,
  d3 = 4 %. The brief's tolerance: 2 % of each value.
- a polynomial nonlinearity y = x + a2 x^2 + a3 x^3 applied to a two-tone signal: the sideband
  amplitudes are read by numpy from an FFT of y over a whole number of periods (an independent
  computation, docs/references.md 9), and the figures formed from them by the definitions.
- the test signals of `tone --imd`: SMPTE 60 Hz + 7 kHz and DIN 250 Hz + 8 kHz at 4:1 (the high
  tone 20 lg 4 = 12.04 dB down), twin tone 19 + 20 kHz at equal levels (docs/references.md 5, 12);
  with white noise at -120 dBFS the generator's products lie below the noise, so each figure is
  an upper bound.
- AM whose modulating signal is the SMPTE worked example: the demodulated audio holds the same
  ratios (the envelope is 1 + m x(t); textbook AM, docs/references.md 6).
"""
import math
import os
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402
import soundfile as sf  # noqa: E402

import e2e_common as E  # noqa: E402

RATE = 48000
N = 4 * RATE


def tones(parts, scale=1.0):
    n = np.arange(N)
    x = np.zeros(N)
    for k, (f, a) in enumerate(parts):
        x += a * np.sin(2 * np.pi * f * n / RATE + 0.37 * k)
    return scale * x


def smpte_parts(fl, fh):
    """The worked example: fl at 1.0 (4:1), fh at 0.25, sidebands 0.02 and 0.01."""
    return [(fl, 1.0), (fh, 0.25), (fh - fl, 0.02), (fh + fl, 0.02), (fh - 2 * fl, 0.01), (fh + 2 * fl, 0.01)]


def write(path, x):
    sf.write(path, x.astype(np.float32), RATE, subtype="FLOAT")


def check_worked_examples(exe, ck):
    for name, fl, fh in [("smpte", 60, 7000), ("din", 250, 8000)]:
        write(f"{name}.wav", tones(smpte_parts(fl, fh), 0.5))
        rc, rep, _, err = E.run_json(exe, [f"{name}.wav"])
        ck.check(f"{name}: measure exits 0", rc == 0 and rep is not None, err.strip())
        if rep is None:
            continue
        ck.check(f"{name}: detected as SMPTE/DIN", E.get(rep, "imd.method") == "smpte (detected)",
                 str(E.get(rep, "imd.method")))
        ck.close(f"{name}: low tone", E.get(rep, "imd.f1_hz"), fl, 0.01)
        ck.close(f"{name}: high tone", E.get(rep, "imd.f2_hz"), fh, 0.01)
        ck.close(f"{name}: 4:1 = 12.04 dB", E.get(rep, "imd.ratio_db"), 20 * math.log10(4), 0.01)
        ck.rel(f"{name}: r.s.s. 12.649 % (2 %)", E.get(rep, "imd.smpte_pct"), 100 * math.sqrt(0.001) / 0.25, 0.02)
        ck.rel(f"{name}: IEC d2 16 % (2 %)", E.get(rep, "imd.smpte_d2_pct"), 16.0, 0.02)
        ck.rel(f"{name}: IEC d3 8 % (2 %)", E.get(rep, "imd.smpte_d3_pct"), 8.0, 0.02)
        ck.check(f"{name}: THD not measurable, with the reason",
                 E.get(rep, "audio.thd_pct") is None and "two-tone" in rep["reasons"]["audio"]["thd_pct"], "")
        ck.check(f"{name}: THD+N, SINAD, SNR, noise not measurable",
                 all(E.get(rep, k) is None for k in ("audio.thdn_pct", "audio.sinad_db", "audio.snr_db",
                                                      "audio.noise_dbfs")), "")
        ck.check(f"{name}: no harmonics table", not E.has(rep, "audio.harmonics"), "")
        if fl == 60:  # the low tone lies on a mains line: hum is not measurable
            ck.check("smpte: hum not measurable (60 Hz tone)", E.get(rep, "hum.level_dbfs") is None
                     and "mains" in rep["reasons"]["hum"]["level_dbfs"], "")
    write("dfd.wav", tones([(13000, 0.5), (14000, 0.5), (1000, 0.03), (12000, 0.02), (15000, 0.02)], 0.9))
    rc, rep, _, err = E.run_json(exe, ["dfd.wav"])
    ck.check("dfd: measure exits 0", rc == 0 and rep is not None, err.strip())
    if rep is not None:
        ck.check("dfd: detected", E.get(rep, "imd.method") == "dfd (detected)", str(E.get(rep, "imd.method")))
        ck.rel("dfd: d2 3 % (2 %)", E.get(rep, "imd.dfd2_pct"), 3.0, 0.02)
        ck.rel("dfd: d3 4 % (2 %)", E.get(rep, "imd.dfd3_pct"), 4.0, 0.02)
        ck.check("dfd: no SMPTE figures", not E.has(rep, "imd.smpte_pct"), "")
        ck.check("dfd: hum stays (no tone on a mains line)", E.has(rep, "hum.level_dbfs")
                 and "hum" not in rep["reasons"], str(rep["reasons"].get("hum")))
    # forced with the tones named; switched off
    rc, rep, _, err = E.run_json(exe, ["--imd", "dfd:13000,14000", "dfd.wav"])
    ck.check("dfd forced: not 'detected'", rep is not None and E.get(rep, "imd.method") == "dfd", err.strip())
    if rep is not None:
        ck.rel("dfd forced: d2 3 %", E.get(rep, "imd.dfd2_pct"), 3.0, 0.02)
    rc, rep, _, err = E.run_json(exe, ["--imd", "off", "dfd.wav"])
    ck.check("--imd off: no imd figures, THD as for one tone", rep is not None and not E.has(rep, "imd")
             and E.get(rep, "audio.thd_pct") is not None, err.strip())


def check_polynomial(exe, ck):
    """y = x + a2 x^2 + a3 x^3 on SMPTE 60 Hz + 7 kHz and on twin tone 19 + 20 kHz."""
    a2, a3 = 0.02, 0.01
    for name, parts, smpte in [("poly-smpte", [(60, 0.6), (7000, 0.15)], True),
                               ("poly-dfd", [(19000, 0.4), (20000, 0.4)], False)]:
        x = tones(parts)
        y = x + a2 * x ** 2 + a3 * x ** 3
        write(f"{name}.wav", y)
        # numpy: amplitudes from one FFT of the whole file (4 s: whole periods of every component)
        spec = np.abs(np.fft.rfft(y)) * 2 / N
        u = lambda f: spec[int(round(f * N / RATE))]  # noqa: E731
        rc, rep, _, err = E.run_json(exe, [f"{name}.wav"])
        ck.check(f"{name}: exits 0", rc == 0 and rep is not None, err.strip())
        if rep is None:
            continue
        f1, f2 = parts[0][0], parts[1][0]
        if smpte:
            side = [u(f2 + s * n * f1) for n in (1, 2, 3) for s in (-1, 1)]
            ck.rel(f"{name}: r.s.s. (numpy FFT)", E.get(rep, "imd.smpte_pct"),
                   100 * math.sqrt(sum(v * v for v in side)) / u(f2), 0.02)
            ck.rel(f"{name}: d2 (numpy FFT)", E.get(rep, "imd.smpte_d2_pct"), 100 * (side[0] + side[1]) / u(f2), 0.02)
            ck.rel(f"{name}: d3 (numpy FFT)", E.get(rep, "imd.smpte_d3_pct"), 100 * (side[2] + side[3]) / u(f2), 0.02)
        else:
            ck.rel(f"{name}: d2 (numpy FFT)", E.get(rep, "imd.dfd2_pct"), 100 * u(f2 - f1) / (2 * u(f2)), 0.02)
            ck.rel(f"{name}: d3 (numpy FFT)", E.get(rep, "imd.dfd3_pct"),
                   100 * (u(2 * f1 - f2) + u(2 * f2 - f1)) / (2 * u(f2)), 0.02)


def check_tone_signals(exe, ck):
    for kind, f1, f2, ratio in [("smpte", 60, 7000, 12.04), ("din", 250, 8000, 12.04), ("dfd", 19000, 20000, 0.0)]:
        p = subprocess.run([exe, "tone", "--imd", kind, "--level", "-10", "--noise", "-120", "--seconds", "3",
                            "--bits", "32f", "--out", f"tone-{kind}.wav"], capture_output=True, text=True, timeout=60)
        ck.check(f"tone --imd {kind}: written", p.returncode == 0, p.stderr.strip())
        rc, rep, _, err = E.run_json(exe, [f"tone-{kind}.wav"])
        if rep is None:
            ck.check(f"tone --imd {kind}: measured", False, err.strip())
            continue
        method = "smpte" if kind != "dfd" else "dfd"
        ck.check(f"tone --imd {kind}: detected", E.get(rep, "imd.method") == method + " (detected)",
                 str(E.get(rep, "imd.method")))
        ck.close(f"tone --imd {kind}: f1", E.get(rep, "imd.f1_hz"), f1, 0.01)
        ck.close(f"tone --imd {kind}: f2", E.get(rep, "imd.f2_hz"), f2, 0.01)
        ck.close(f"tone --imd {kind}: ratio", E.get(rep, "imd.ratio_db"), ratio, 0.01)
        name = "imd.smpte_pct" if method == "smpte" else "imd.dfd2_pct"
        ck.check(f"tone --imd {kind}: a clean signal's IMD is an upper bound below 0.001 %",
                 E.get(rep, name) is not None and E.get(rep, name) < 1e-3
                 and E.get(rep, "bounds." + name) == "upper", str(E.get(rep, name)))
    p = subprocess.run([exe, "tone", "--imd", "smpte", "--two-tone", "50,6000", "--out", "moved.wav", "--seconds", "2",
                        "--bits", "32f"], capture_output=True, text=True, timeout=60)
    rc, rep, _, err = E.run_json(exe, ["moved.wav"]) if p.returncode == 0 else (2, None, "", p.stderr)
    ck.check("tone --imd smpte --two-tone 50,6000: the tones moved, 4:1 kept", rep is not None
             and abs(E.get(rep, "imd.f1_hz") - 50) < 0.01 and abs(E.get(rep, "imd.ratio_db") - 12.04) < 0.01, err)
    for args, word in [(["--imd", "ccif"], "--imd"), (["--imd", "smpte", "--level2", "-30"], "--level2")]:
        p = subprocess.run([exe, "tone"] + args + ["--out", "x.wav"], capture_output=True, text=True, timeout=60)
        ck.check("tone %s: refused" % " ".join(args), p.returncode == 2 and word in p.stderr
                 and not os.path.exists("x.wav"), p.stderr.strip())
    for arg in ["smpte:7000,60", "dfd:1", "both"]:
        rc, out, err = E.run(exe, ["--imd", arg, "dfd.wav"])
        ck.check(f"measure --imd {arg}: usage error", rc == 2 and out == "" and "--imd" in err, err.strip())
    rc, rep, _, err = E.run_json(exe, ["--imd", "smpte", "tone-dfd.wav"])
    ck.check("--imd smpte on a twin tone: measured as asked (forced)", rep is not None
             and E.get(rep, "imd.method") == "smpte", err.strip())


def check_demodulated(exe, ck):
    """AM at 12 kHz (IF) and 3 kHz (I/Q) whose modulation is the SMPTE worked example, scaled to
    a peak depth of 0.5: the demodulated audio has the same ratios."""
    x = tones(smpte_parts(60, 3000))
    x = 0.5 * x / np.max(np.abs(x))
    n = np.arange(N)
    e = 1 + np.concatenate([np.zeros(RATE // 2), x[:N - RATE // 2]])
    for kind in ("if", "iq"):
        if kind == "if":
            data = 0.4 * e * np.cos(2 * np.pi * 12000 * n / RATE)
        else:
            z = 0.4 * e * np.exp(2j * np.pi * 3000 * n / RATE)
            data = np.stack([z.real, z.imag], axis=1)
        write(f"am-{kind}.wav", data)
        rc, rep, _, err = E.run_json(exe, [f"am-{kind}.wav"])
        ck.check(f"{kind}: measure exits 0", rc == 0 and rep is not None, err.strip())
        if rep is None:
            continue
        ck.check(f"{kind}: kind", rep["input"]["kind"] == kind, rep["input"]["kind"])
        ck.check(f"{kind}: SMPTE detected in the demodulated audio", E.has(rep, "imd.method")
                 and E.get(rep, "imd.method") == "smpte (detected)", str(rep.get("imd")))
        if E.has(rep, "imd.smpte_pct"):
            ck.rel(f"{kind}: r.s.s. 12.649 %", E.get(rep, "imd.smpte_pct"), 100 * math.sqrt(0.001) / 0.25, 0.02)
            ck.rel(f"{kind}: d2 16 %", E.get(rep, "imd.smpte_d2_pct"), 16.0, 0.02)
            ck.rel(f"{kind}: d3 8 %", E.get(rep, "imd.smpte_d3_pct"), 8.0, 0.02)
        ck.check(f"{kind}: envelope THD not measurable", E.get(rep, "modulation.envelope_thd_pct") is None
                 and "two-tone" in rep["reasons"]["modulation"]["envelope_thd_pct"], "")


def main():
    exe = E.modlens_path()
    ck = E.Checker("imd")
    with E.scratch():
        check_worked_examples(exe, ck)
        check_polynomial(exe, ck)
        check_tone_signals(exe, ck)
        check_demodulated(exe, ck)
    ck.finish()


if __name__ == "__main__":
    main()
