"""`modlens live` on a feeder playing a generated capture gives the figures `modlens measure`
gives on the file itself.

Usage: /usr/bin/python3 test_live_measure.py /path/to/modlens /path/to/ml-feed

The feeder (ml-feed, a JACK client of ours) loops the file bit-exactly; each file holds whole
periods of every tone and of the carrier, so the loop is seamless and any 4 s window of it is the
same signal with a different stretch of noise. Expected: the figures agree within the tolerances
the AM tests use at a 40 dB carrier-to-noise ratio (m within 0.01, peaks within 1 %; issue text of
the modulation analysis), THD within 0.2 dB (the envelope-distortion tolerance), frequencies
within 0.01 Hz (the foundation's frequency requirement); and a capture through --save is the
captured stream itself (the same figures when measured as a file).
"""
import math
import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "e2e"))


import soundfile as sf  # noqa: E402

import e2e_common as E  # noqa: E402
import jackserver as J  # noqa: E402


def tone(exe, args):
    p = __import__("subprocess").run([exe, "tone"] + args, capture_output=True, text=True, timeout=60)
    if p.returncode != 0:
        sys.exit("tone failed: " + p.stderr)




def db(x):
    return 20 * math.log10(x) if x and x > 0 else None


def compare(ck, label, live, ref, keys):
    for key, tol, how in keys:
        try:
            a, b = E.get(live, key), E.get(ref, key)
        except (KeyError, TypeError):
            ck.check(f"{label}: {key} present", False)
            continue
        if how == "db":
            ck.close(f"{label}: {key} (as dB)", db(a), db(b), tol, f"file {b}")
        else:
            ck.close(f"{label}: {key}", a, b, tol, "measure on the file")


def main():
    exe, feeder = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
    ck = E.Checker("live measure")
    with E.scratch():
        # I/Q: 3 kHz carrier, 1 kHz tone at 80 %, 1 % 2nd harmonic of the modulating tone, CNR 50 dB
        tone(exe, ["--carrier", "3000", "--iq", "--depth", "0.8", "--harmonic", "2:-40", "--cnr", "50",
                   "--seconds", "6", "--bits", "32f", "--seed", "3", "--out", "iq.wav"])
        # IF: 12 kHz carrier, asymmetric peaks 90 % / 70 %
        tone(exe, ["--carrier", "12000", "--positive-peak", "90", "--negative-peak", "70", "--cnr", "50",
                   "--seconds", "6", "--bits", "32f", "--seed", "4", "--out", "if.wav"])
        # audio: 1 kHz at -10 dBFS with 0.3 % 3rd harmonic, 50 Hz hum, noise
        tone(exe, ["--freq", "1000", "--level", "-10", "--harmonic", "3:-50", "--hum", "50", "--hum-level", "-70",
                   "--noise", "-90", "--seconds", "6", "--bits", "32f", "--seed", "5", "--out", "audio.wav"])
        mod_keys = [("modulation.index", 0.01, ""), ("modulation.index_spectral", 0.01, ""),
                    ("modulation.positive_peak_pct", 1.0, ""), ("modulation.negative_peak_pct", 1.0, ""),
                    ("carrier.frequency_hz", 0.01, ""), ("modulation.envelope_thd_pct", 0.2, "db")]
        aud_keys = [("audio.fundamental_hz", 0.01, ""), ("audio.fundamental_dbfs", 0.01, ""),
                    ("audio.thd_pct", 0.2, "db"), ("audio.snr_db", 0.2, ""), ("hum.level_dbfs", 0.2, "")]
        with J.Server(rate=48000) as srv:
            for name, kind, keys in [("iq.wav", "iq", mod_keys), ("if.wav", "auto", mod_keys),
                                     ("audio.wav", "auto", aud_keys)]:
                rc, ref, _, err = E.run_json(exe, [name])
                ck.check(f"{name}: measure exits 0", rc == 0 and ref is not None, err)
                feed = srv.feed(feeder, "feed", name)
                nch = sf.info(name).channels
                save = name.replace(".wav", "-live.wav")
                png = name.replace(".wav", "-live.png")
                rc, rep, err = srv.live_json(exe, ["--device", "feed", "--channels", str(nch), "--kind", kind,
                                                    "--seconds", "4", "--save", save, "--plot", png])
                feed.terminate()
                feed.wait()
                ck.check(f"{name}: live exits 0", rc == 0 and rep is not None, err.strip())
                if rep is None or ref is None:
                    continue
                ck.check(f"{name}: same kind chosen", rep["input"]["kind"] == ref["input"]["kind"],
                         f'{rep["input"]["kind"]} vs {ref["input"]["kind"]}')
                ck.check(f"{name}: complete, nothing lost", rep["live"]["complete"] == "yes"
                         and rep["live"]["lost_frames"] == 0, str(rep["live"]))
                ck.close(f"{name}: captured 4 s", rep["input"]["duration_s"], 4.0, 1e-9)
                compare(ck, name, rep, ref, keys)
                with open(png, "rb") as f:
                    head = f.read(8)
                ck.check(f"{name}: --plot works live (a PNG file)", head == b"\x89PNG\r\n\x1a\n"
                         and os.path.getsize(png) > 10000, str(head))
                info = sf.info(save)
                ck.check(f"{name}: --save holds every captured frame", info.frames == rep["input"]["frames"]
                         and info.channels == nch and info.samplerate == 48000, str(info))
                rc, back, _, err = E.run_json(exe, ["--kind", kind, save])
                if back is not None:
                    k0 = keys[0][0]
                    ck.close(f"{name}: --save file measures as the live capture ({k0})", E.get(back, k0),
                             E.get(rep, k0), 1e-9)
    ck.finish()


if __name__ == "__main__":
    main()
