"""Generator round trip through the analyser: files made by `modlens tone` measure, with
`modlens measure`, as the parameters they were made with.

Run: /usr/bin/python3 test_tone_measure.py /path/to/modlens

Expected values are the generation parameters (analytic; dsp/synth.h defines each):
- a 1 kHz tone with its 3rd harmonic at -40 dBc has THD 10^(-40/20) = 1 % exactly;
- AM at depth m has modulation index m (textbook single-tone AM, Haykin sec. 3.1);
- --positive-peak P --negative-peak N with a lead-in of unmodulated carrier reads back as P and N
  (the published peak definitions relative to the unmodulated carrier, README);
- --cnr R puts the noise at R dB below the carrier over the full Nyquist band (a real IF: 0..fs/2,
  I/Q: -fs/2..fs/2); measured over the channel 2B = 20 kHz, white noise reads
  R + 10 lg(band / 20 kHz): +0.792 dB for IF at 48 kHz, +3.802 dB for I/Q;
- --hum-depth D modulates the envelope with hum at D dB re 100 % modulation, which
  modulation.hum_db reports.
Tolerances: index 0.001 noise-free (the modulation issue), 0.01 % for THD, 1 % of peak for the
peaks (the asymmetric-modulation requirement), 0.3 dB for CNR (the noise estimate of a few
hundred bins at 5 s: standard error about 0.1 dB), 0.2 dB for hum.
"""
import math
import os
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import e2e_common as E  # noqa: E402


def main():
    exe = E.modlens_path()
    ck = E.Checker("tone -> measure")
    with E.scratch():
        def make(name, args):
            p = subprocess.run([exe, "tone", "--out", name, "--bits", "32f"] + args, capture_output=True, text=True,
                               timeout=60)
            ck.check(f"tone {name}", p.returncode == 0, p.stderr.strip())
            rc, rep, _, err = E.run_json(exe, [name])
            ck.check(f"measure {name}", rc == 0 and rep is not None, err.strip())
            return rep

        r = make("thd.wav", ["--freq", "1000", "--level", "-6", "--harmonic", "3:-40", "--seconds", "3"])
        if r:
            ck.close("THD of 3:-40", E.get(r, "audio.thd_pct"), 1.0, 0.01)
            ck.close("tone level", E.get(r, "audio.fundamental_dbfs"), -6.0, 0.01)
        for kind, extra in [("if", ["--carrier", "12000"]), ("iq", ["--carrier", "3000", "--iq"])]:
            r = make(f"depth-{kind}.wav", extra + ["--depth", "0.8", "--seconds", "5"])
            if r:
                ck.check(f"{kind}: kind detected", r["input"]["kind"] == kind, r["input"]["kind"])
                ck.close(f"{kind}: index at depth 0.8", E.get(r, "modulation.index"), 0.8, 0.001)
                ck.close(f"{kind}: spectral index", E.get(r, "modulation.index_spectral"), 0.8, 0.001)
            r = make(f"asym-{kind}.wav", extra + ["--positive-peak", "120", "--negative-peak", "90", "--lead-in", "1",
                                                  "--seconds", "5"])
            if r:
                ck.close(f"{kind}: positive peak 120 %", E.get(r, "modulation.positive_peak_pct"), 120, 1.2)
                ck.close(f"{kind}: negative peak 90 %", E.get(r, "modulation.negative_peak_pct"), 90, 0.9)
            r = make(f"cnr-{kind}.wav", extra + ["--depth", "0.5", "--cnr", "40", "--seconds", "5"])
            if r:
                band = 24000 if kind == "if" else 48000
                ck.close(f"{kind}: CNR 40 dB over the full band", E.get(r, "carrier.cnr_db"),
                         40 + 10 * math.log10(band / E.get(r, "carrier.cnr_bandwidth_hz")), 0.3)
            r = make(f"hum-{kind}.wav", extra + ["--depth", "0.5", "--hum", "50", "--hum-depth", "-40", "--seconds", "5"])
            if r:
                ck.close(f"{kind}: hum modulation -40 dB", E.get(r, "modulation.hum_db"), -40, 0.2)
    ck.finish()


if __name__ == "__main__":
    main()
