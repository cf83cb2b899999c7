"""Live-capture faults: unknown device, refused rate and channel count, the audio server stopped
mid-capture, Ctrl-C -- each a clear one-line message (exit 2 for faults), and data captured before
a fault or an interrupt still reported, flagged as incomplete, with a valid --save file.

Usage: /usr/bin/python3 test_live_faults.py /path/to/modlens /path/to/ml-feed
Expected behaviour: `modlens live --help` (exit status) and README (live capture).
"""
import json
import os
import signal
import sys
import time

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "e2e"))

import soundfile as sf  # noqa: E402

import e2e_common as E  # noqa: E402
import jackserver as J  # noqa: E402


def one_line(err):
    return len(err.strip().splitlines()) == 1 and err.startswith("modlens: ")


def main():
    exe, feeder = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
    ck = E.Checker("live faults")
    with E.scratch():
        # 6 s of a 3 kHz-carrier I/Q signal at 80 % (whole periods: loops seamlessly)
        p = __import__("subprocess").run([exe, "tone", "--carrier", "3000", "--iq", "--depth", "0.8", "--seconds",
                                          "6", "--bits", "32f", "--out", "iq.wav"], capture_output=True, text=True)
        assert p.returncode == 0, p.stderr
        with J.Server(rate=48000) as srv:
            srv.feed(feeder, "feed", "iq.wav")
            for args, what, needle in [(["--device", "nosuch"], "unknown device", "nosuch"),
                                       (["--device", "99"], "unknown index", "99"),
                                       (["--device", "feed", "--rate", "44100"], "refused rate", "44100"),
                                       (["--device", "feed", "--channels", "3"], "too many channels", "3 asked"),
                                       (["--device", "feed", "--output-device", "loopback"], "output without tone",
                                        "--play-tone"),
                                       (["--device", "feed", "--seconds", "0"], "zero seconds", "--seconds")]:
                p = srv.run([exe, "live", "--save", "never.wav"] + args)
                ck.check(f"{what}: exit 2, one line naming it", p.returncode == 2 and one_line(p.stderr)
                         and needle in p.stderr, p.stderr.strip())
                ck.check(f"{what}: no output, no --save file", p.stdout == "" and not os.path.exists("never.wav"))

            # the analysis fails after frames arrived: --save keeps the capture (published under its
            # name), while the report and the picture are not written; no temporary is left behind
            p = srv.run([exe, "live", "--device", "feed", "--kind", "if", "--carrier", "20000", "--seconds", "2",
                         "--save", "kept.wav", "--plot", "kept.png", "--output", "kept.json"])
            ck.check("analysis fails after capture: exit 2, one line, no report", p.returncode == 2
                     and one_line(p.stderr) and p.stdout == "" and not os.path.exists("kept.json")
                     and not os.path.exists("kept.png"), p.stderr.strip())
            kept = sf.info("kept.wav") if os.path.exists("kept.wav") else None
            ck.check("analysis fails after capture: --save kept, a valid WAV", kept is not None and kept.frames > 0,
                     str(kept))
            ck.check("no temporaries left", not [f for f in os.listdir(".") if f.startswith(("kept.", "never."))
                                                 and f not in ("kept.wav",)], str(sorted(os.listdir("."))))

            # Ctrl-C after about 2 s of a 10 s capture: the part captured is analysed
            live = srv.popen([exe, "live", "--device", "feed", "--kind", "iq", "--seconds", "10", "--format", "json",
                              "--save", "int.wav"])
            time.sleep(2.5)
            live.send_signal(signal.SIGINT)
            out, err = live.communicate(timeout=30)
            rep = json.loads(out) if out.strip() else None
            ck.check("interrupt: exit 0 (no limits given)", live.returncode == 0 and rep is not None, err.strip())
            if rep:
                ck.check("interrupt: flagged incomplete", rep["live"]["complete"] == "no"
                         and any("interrupted" in n for n in rep["notes"]), str(rep["notes"]))
                ck.check("interrupt: 1.5..3.5 s captured", 1.5 < rep["input"]["duration_s"] < 3.5,
                         str(rep["input"]["duration_s"]))
                ck.close("interrupt: index still measured", E.get(rep, "modulation.index"), 0.8, 0.01)
                info = sf.info("int.wav")
                ck.check("interrupt: --save valid, every captured frame", info.frames == rep["input"]["frames"],
                         f"{info.frames} vs {rep['input']['frames']}")

        # the server killed mid-capture
        with J.Server(rate=48000) as srv:
            srv.feed(feeder, "feed", "iq.wav")
            live = srv.popen([exe, "live", "--device", "feed", "--kind", "iq", "--seconds", "10", "--format", "json",
                              "--save", "gone.wav"])
            time.sleep(2.5)
            srv.kill()
            out, err = live.communicate(timeout=60)  # a hang is a failure (TimeoutExpired)
            ck.check("server gone: exit 2 with one line saying so", live.returncode == 2 and one_line(err)
                     and "stopped delivering" in err, err.strip())
            rep = json.loads(out) if out.strip() else None
            ck.check("server gone: the data so far is reported", rep is not None)
            if rep:
                ck.check("server gone: flagged incomplete", rep["live"]["complete"] == "no"
                         and any("device failed" in n for n in rep["notes"]), str(rep["notes"]))
                ck.close("server gone: index still measured", E.get(rep, "modulation.index"), 0.8, 0.01)
                info = sf.info("gone.wav")
                ck.check("server gone: --save valid, every captured frame", info.frames == rep["input"]["frames"]
                         and info.frames > 48000, f"{info.frames} vs {rep['input']['frames']}")
    ck.finish()


if __name__ == "__main__":
    main()
