"""End-to-end test of `modlens log --kind iq|if`: measure's carrier and modulation figures per row
(carrier level, C, CNR, peaks, index), and the carrier-loss event.

Usage: /usr/bin/python3 test_log_carrier.py /path/to/modlens

A 20 s capture, 48 kHz: a 6 kHz carrier of amplitude 0.3 modulated 50 % by a 400 Hz tone, with
white noise, whose carrier drops by 40 dB from 10 s to 12 s; as I/Q (complex exponential, noise
sigma 1e-4 per component) and as a real IF (cosine, noise sigma 1e-4).
"""
import math
import os
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402

import e2e_common as E  # noqa: E402

FS = 48000
T = 20
FC = 6000.0


def make():
    rng = np.random.default_rng(2)
    t = np.arange(T * FS) / FS
    env = 0.3 * (1 + 0.5 * np.sin(2 * np.pi * 400 * t))
    env[(t >= 10) & (t < 12)] *= 0.01
    z = env * np.exp(2j * np.pi * FC * t) + rng.normal(0, 1e-4, T * FS) + 1j * rng.normal(0, 1e-4, T * FS)
    E.write("iq.wav", np.stack([z.real, z.imag], 1).astype(np.float32), FS, "FLOAT")
    E.write("if.wav", (env * np.cos(2 * np.pi * FC * t) + rng.normal(0, 1e-4, T * FS)).astype(np.float32),
            FS, "FLOAT")


def main():
    exe = E.modlens_path()
    c = E.Checker("log carrier")
    with E.scratch():
        make()
        for kind in ("iq", "if"):
            p = subprocess.run([exe, "log", "--kind", kind, "--out", kind + ".csv", kind + ".wav"],
                               capture_output=True, timeout=E.RUN_TIMEOUT_S)
            c.check(kind + ": exit 0", p.returncode == 0, p.stderr.decode().strip())
            rows = E.log_dicts(kind + ".csv")
            ev = E.log_dicts(kind + "-events.csv")
            steady = [r for r in rows if float(r["offset_s"]) < 9 or float(r["offset_s"]) >= 13]
            # analytic: the carrier line's amplitude is the mean envelope 0.3: 20 lg 0.3 = -10.46 dBFS;
            # 0.05 dB for the lobe's noise and rounding (the column is measure's carrier.level_dbfs)
            c.check(kind + ": carrier -10.46 dBFS",
                    all(abs(float(r["carrier.level_dbfs"]) + 10.46) <= 0.05 for r in steady),
                    str([r["carrier.level_dbfs"] for r in steady[:3]]))
            # no unmodulated stretch: C is each interval's mean envelope, the same 0.3
            c.check(kind + ": C is the mean envelope", all(r["carrier_reference"] == "mean" for r in steady)
                    and all(abs(float(r["unmodulated_dbfs"]) + 10.46) <= 0.05 for r in steady))
            # analytic CNR as measure defines it (carrier.cnr_db): the carrier line's power over the
            # noise in the channel carrier +- B, the density the mean over the channel's bins between
            # the lines. B is measure's default, the widest channel that fits up to 10 kHz: 10 kHz
            # for iq; for if README's "Channel bandwidth" (the mixer's image D = 2 x 6 kHz away in
            # the stop band: 2 B + t <= D, t = D / 40 = 300 Hz), (12000 - 300) / 2 = 5850 Hz.
            # Carrier power 0.09 (iq) or 0.045 (if); noise
            # density 2e-8 / 48 kHz (iq) or 1e-8 / 24 kHz (if). 0.3 dB: the mean over some 5000
            # independent bins of a 1 s interval spreads by about 0.06 dB (5 sigma)
            b, pc, dens = (10000.0, 0.09, 2e-8 / 48000) if kind == "iq" else (5850.0, 0.045, 1e-8 / 24000)
            want = 10 * math.log10(pc / (dens * 2 * b))
            cn = [float(r["cnr_db"]) for r in steady]
            c.check(kind + ": cnr %.1f dB" % want, all(abs(v - want) <= 0.3 for v in cn),
                    "%.2f .. %.2f" % (min(cn), max(cn)))
            # analytic: 50 % modulation, re C; 0.5 % for the noise on the envelope's peak readings
            mp = [float(r["positive_peak_pct"]) for r in steady]
            mn = [float(r["negative_peak_pct"]) for r in steady]
            c.check(kind + ": positive peaks 50 %", all(abs(v - 50) <= 0.5 for v in mp), "%.2f .. %.2f" % (min(mp), max(mp)))
            c.check(kind + ": negative peaks 50 %", all(abs(v - 50) <= 0.5 for v in mn), "%.2f .. %.2f" % (min(mn), max(mn)))
            ix = [float(r["index"]) for r in steady]
            c.check(kind + ": index 0.50", all(abs(v - 0.5) <= 0.005 for v in ix), "%.4f .. %.4f" % (min(ix), max(ix)))
            loss = [e for e in ev if e["kind"] == "carrier-loss"]
            # the carrier's abrupt fall and return are steps of the envelope: what a listener hears
            # as clicks (impulses on the demodulated envelope, analyzer/log_listen.c) at 10 and 12 s
            clicks = [e for e in ev if e["kind"] == "impulse"]
            c.check(kind + ": one carrier-loss event, at most the two edges' clicks, nothing else",
                    len(loss) == 1 and len(ev) == 1 + len(clicks)
                    and all(min(abs(float(e["start_offset_s"]) - t) for t in (10, 12)) <= 0.005 for e in clicks), str(ev))
            if loss:
                c.close(kind + ": loss start", float(loss[0]["start_offset_s"]), 10.0, 1.0, "one interval")
                c.close(kind + ": loss end", float(loss[0]["end_offset_s"]), 12.0, 1.0, "one interval")
                c.close(kind + ": loss depth", float(loss[0]["rise_db"]), -40.0, 0.5,
                        "analytic 20 lg 0.01; 0.5 dB for the noise in the lobe at -50 dBFS")
            # no hum on these captures: no mains decided, no hum columns (and never for iq)
            c.check(kind + ": hum columns empty", all(r["hum_dbfs"] == "" and r["mains_hz"] == "" for r in rows))
    c.finish()


if __name__ == "__main__":
    main()
