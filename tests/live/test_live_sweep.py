"""Play-and-measure sweeps through the JACK server's loopback ports.

Usage: /usr/bin/python3 test_live_sweep.py /path/to/modlens /path/to/ml-feed

The loopback client returns what is played bit-exactly after one server period plus one 256-frame
PortAudio buffer (1280 frames at -p 1024; DEVELOPERS.md "Live audio without a sound card"), so:
- every planned step is found, at its planned frequency (within 0.01 Hz: the float generator's
  sine read by the phase-advance estimate) and level (-20 dBFS within 0.01 dB, AES17 level of a
  float sine, analytic);
- the response is flat: every step within 0.05 dB of the reference (the brief's requirement for
  the loopback; a bit-exact path has 0 dB);
- THD far below any real path (< 1e-3 %: the float generator's residue lies below -140 dB, and a
  short step's transform leaves some leakage); a step whose harmonics all lie above the 20 kHz
  band has no THD (null, with the reason);
- the round trip is the loopback's 1280 frames, measured as 'live --play-tone' measures it;
- --save keeps the capture, and 'sweep FILE' reads the same points back from it (the same
  analysis of the same samples: equal to the printed precision).
"""
import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "e2e"))

import e2e_common as E  # noqa: E402
import jackserver as J  # noqa: E402
import json  # noqa: E402


def sweep_json(srv, exe, args):
    p = srv.run([exe, "sweep", "--format", "json"] + list(args), timeout=120)
    try:
        return p.returncode, json.loads(p.stdout), p.stderr
    except ValueError:
        return p.returncode, None, p.stderr


def main():
    exe = os.path.abspath(sys.argv[1])
    ck = E.Checker("live sweep")
    freqs = [63, 250, 1000, 4000, 12500]
    with E.scratch():
        with J.Server(rate=48000, period=1024) as srv:
            rc, rep, err = sweep_json(srv, exe, ["--device", "loopback", "--freqs", ",".join(map(str, freqs)),
                                                 "--levels", "-20", "--step-seconds", "0.7",
                                                 "--pause-seconds", "0.2", "--save", "capture.wav"])
            ck.check("sweep --device exits 0", rc == 0 and rep is not None, err.strip())
            if rep is not None:
                pts = rep["sweep"]["points"]
                ck.check("every planned step found", len(pts) == len(freqs), str(len(pts)))
                for p, f in zip(pts, freqs):
                    ck.close(f"{f} Hz: frequency", p["frequency_hz"], f, 0.01)
                    ck.close(f"{f} Hz: level -20 dBFS", p["level_dbfs"], -20.0, 0.01)
                    ck.close(f"{f} Hz: flat within 0.05 dB", p["relative_db"], 0.0, 0.05)
                    if 2 * f <= 20000:
                        ck.check(f"{f} Hz: THD < 1e-3 %", p["thd_pct"] is not None and p["thd_pct"] < 1e-3,
                                 str(p["thd_pct"]))
                    else:  # no harmonic in the 20 kHz band: not measured, with the reason
                        why = rep["reasons"]["sweep"]["points"][pts.index(p)].get("thd_pct", "")
                        ck.check(f"{f} Hz: THD null with a reason", p["thd_pct"] is None and "band" in why, why)
                ck.close("reference 1 kHz", E.get(rep, "sweep.reference_hz"), 1000, 0.01)
                ck.close("round trip 1280 frames", E.get(rep, "live.latency_frames"), 1280, 0)
                ck.check("the capture is complete", E.get(rep, "live.complete") == "yes",
                         str(E.get(rep, "live.complete")))
            # the saved capture read back as a file: the same points
            p = srv.run([exe, "sweep", "--format", "json", "capture.wav"])
            back = json.loads(p.stdout) if p.returncode == 0 else None
            ck.check("sweep FILE of the saved capture exits 0", back is not None, p.stderr.strip())
            if rep is not None and back is not None:
                a, b = rep["sweep"]["points"], back["sweep"]["points"]
                ck.check("same points from the saved capture",
                         [(x["frequency_hz"], x["relative_db"], x["thd_pct"]) for x in a]
                         == [(x["frequency_hz"], x["relative_db"], x["thd_pct"]) for x in b],
                         "%s / %s" % (a[:1], b[:1]))
            # two levels: two groups, each with its own reference
            rc, rep, err = sweep_json(srv, exe, ["--device", "loopback", "--play-device", "loopback",
                                                 "--freqs", "200,1000,5000",
                                                 "--levels", "-30,-10", "--step-seconds", "0.6",
                                                 "--pause-seconds", "0.2"])
            ck.check("two levels: exits 0", rc == 0 and rep is not None, err.strip())
            if rep is not None:
                g = rep["sweep"]["groups"]
                ck.check("two groups", len(g) == 2, str(g))
                if len(g) == 2:
                    ck.close("group 0 at -30 dBFS", g[0]["level_dbfs"], -30, 0.01)
                    ck.close("group 1 at -10 dBFS", g[1]["level_dbfs"], -10, 0.01)
                for p in rep["sweep"]["points"]:
                    ck.close("flat at %g Hz, group %d" % (p["frequency_hz"], p["group"]), p["relative_db"], 0, 0.05)
            # an unknown device: one line, exit 2
            p = srv.run([exe, "sweep", "--device", "nosuch", "--freqs", "1000"])
            ck.check("unknown device: exit 2, one line",
                     p.returncode == 2 and len(p.stderr.strip().splitlines()) == 1, p.stderr)
    ck.finish()


if __name__ == "__main__":
    main()
