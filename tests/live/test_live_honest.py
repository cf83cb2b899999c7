"""Live inputs read honestly: a feed that stops is reported, a device's kind is tested on the
signal, and watch's --plain line carries the bounds measure reports.

Usage: /usr/bin/python3 test_live_honest.py /path/to/modlens /path/to/ml-feed

1. A feeder plays a 3 s tone once, then silence, into a 6 s capture: the report flags the capture
   incomplete (live.complete "no") with the time the input stopped, and the level is the tone's
   (0.25 sin: 20 lg 0.25 = -12.04 dBFS, AES17 dBFS, docs/references.md 5), not 3 to 8 dB low.
2. --kind auto on a device looks at two channels: an I/Q file played as a stereo device is read
   as iq without --channels (dsp/kind.h: a quadrature pair), two copies of one signal as audio.
3. watch --plain on a tone in heavy noise: THD is an upper bound in measure, "<x" in the line.
"""
import math
import os
import re
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "e2e"))

import numpy as np  # noqa: E402

import e2e_common as E  # noqa: E402
import honest_signals as H  # noqa: E402
import jackserver as J  # noqa: E402


def main():
    exe, feeder = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
    ck = E.Checker("live honest")
    with E.scratch():
        t = H.t_axis(3.0)
        E.write("burst.wav", (0.25 * np.sin(2 * np.pi * 1000 * t) + H.noise(t.size, 1e-5, 30)).astype(np.float32),
                H.FS, "FLOAT")
        H.write_all({"am_iq.wav", "stereo_copy.wav", "tone_noise.wav"})
        with J.Server(rate=48000) as srv:
            # 1. the feed stops after 3 s (less what passed before the capture started)
            srv.feed(feeder, "burst", "burst.wav", once=True)
            rc, rep, err = srv.live_json(exe, ["--device", "burst", "--kind", "audio", "--seconds", "6"])
            if ck.check("stopped feed: live runs", rc == 0 and rep is not None, err.strip()):
                ck.check("stopped feed: live.complete no", E.get(rep, "live.complete") == "no",
                         repr(E.get(rep, "live.complete")))
                notes = " | ".join(rep["notes"])
                m = re.search(r"stopped delivering at (\d+\.\d+) s", notes)
                ck.check("stopped feed: the note gives the time (within the 3 s the feed played)",
                         m is not None and 0.5 < float(m.group(1)) <= 3.05, notes[:300])
                ck.close("stopped feed: rms_dbfs is the tone's, the silence left out", E.get(rep, "audio.rms_dbfs"),
                         20 * math.log10(0.25), 0.05, "0.25 sin: -12.04 dBFS (AES17)")
            # 2. the kind of a stereo device, tested on its signal
            srv.feed(feeder, "iqdev", "am_iq.wav")
            rc, rep, err = srv.live_json(exe, ["--device", "iqdev", "--seconds", "3"])
            if ck.check("I/Q device, --kind auto: live runs", rc == 0 and rep is not None, err.strip()):
                ck.check("I/Q device read as iq without --channels", rep["input"]["kind"] == "iq"
                         and "quadrature pair" in rep["input"]["kind_reason"], rep["input"]["kind_reason"])
                ck.close("I/Q device: modulation.index", E.get(rep, "modulation.index"), 0.6, 0.01,
                         "m = 0.6 by construction (docs/references.md 6)")
            srv.feed(feeder, "copies", "stereo_copy.wav")
            rc, rep, err = srv.live_json(exe, ["--device", "copies", "--seconds", "2"])
            if ck.check("stereo copies device: live runs", rc == 0 and rep is not None, err.strip()):
                ck.check("stereo copies read as audio", rep["input"]["kind"] == "audio"
                         and "one signal" in rep["input"]["kind_reason"], rep["input"]["kind_reason"])
            # 3. watch --plain: a bound shows as <x
            srv.feed(feeder, "noisy", "tone_noise.wav")
            p = srv.run([exe, "watch", "--plain", "--device", "noisy", "--kind", "audio", "--seconds", "1.5"],
                        timeout=60)
            last = p.stdout.strip().splitlines()[-1] if p.stdout.strip() else ""
            cells = dict(tok.split("=", 1) for tok in last.split() if "=" in tok)
            ck.check("watch --plain: THD of a tone in heavy noise is an upper bound (<x)",
                     p.returncode == 0 and cells.get("thd_pct", "").startswith("<"), last[:300])
            ck.check("watch --plain: no nan anywhere", "nan" not in p.stdout, last[:300])
    ck.finish()


if __name__ == "__main__":
    main()
