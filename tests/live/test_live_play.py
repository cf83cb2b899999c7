"""Play and measure through the JACK server's loopback ports, and `tone --play`.

Usage: /usr/bin/python3 test_live_play.py /path/to/modlens /path/to/ml-feed

The loopback client returns what is played bit-exactly, so the measured tone must be the
generated one: frequency exact (0.01 Hz, the foundation's requirement), level within 0.01 dB
(AES17 level of a float sine, analytic), THD far below any real path (< 1e-4 %, the float
generator's own residue is below -140 dB). Round-trip latency through the loopback with a
1024-frame server period and PortAudio's 256-frame buffers: one period plus one buffer,
1280 frames (measured for this set-up; see the live-audio testing notes in DEVELOPERS.md); with
a 512-frame period, 768 frames.
"""
import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "e2e"))

import e2e_common as E  # noqa: E402
import jackserver as J  # noqa: E402




def main():
    exe, feeder = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
    ck = E.Checker("live play")
    with E.scratch():
        for period, latency in [(1024, 1280), (512, 768)]:
            with J.Server(rate=48000, period=period) as srv:
                for freq, level in [(1000, -6.0), (3150, -20.0)]:
                    rc, rep, err = srv.live_json(exe, ["--device", "loopback", "--output-device", "loopback",
                                                        "--play-tone", f"{freq},{level}", "--seconds", "3",
                                                        "--kind", "audio"])
                    tag = f"period {period}, {freq} Hz"
                    ck.check(f"{tag}: exits 0", rc == 0 and rep is not None, err.strip())
                    if rep is None:
                        continue
                    ck.close(f"{tag}: frequency", E.get(rep, "audio.fundamental_hz"), freq, 0.01)
                    ck.close(f"{tag}: level", E.get(rep, "audio.fundamental_dbfs"), level, 0.01)
                    thd = E.get(rep, "audio.thd_pct")
                    ck.check(f"{tag}: THD < 1e-4 %", thd is not None and thd < 1e-4, f"got {thd}")
                    ck.close(f"{tag}: latency frames", E.get(rep, "live.latency_frames"), latency, 0)
                    ck.close(f"{tag}: latency ms", E.get(rep, "live.latency_ms"), 1000 * latency / 48000, 1e-3)
                    ck.check(f"{tag}: analysis starts after the tone's return",
                             rep["input"]["start_s"] >= 0.25 + latency / 48000, str(rep["input"]["start_s"]))
        # tone --play, recorded straight from the player's own JACK ports by ml-feed --record
        # (a third client behind the loopback sees skipped or repeated periods: measured, see
        # DEVELOPERS.md); PortAudio's JACK client is named "PortAudio".
        with J.Server(rate=48000) as srv:
            player = srv.popen([exe, "tone", "--play", "--device", "loopback", "--freq", "2000", "--level", "-10",
                                "--seconds", "4"])
            rec = srv.run([feeder, "--record", "rec", "PortAudio", "2", "played.wav"], timeout=60)
            out, perr = player.communicate(timeout=30)
            ck.check("tone --play exits 0 after --seconds", player.returncode == 0, perr.strip())
            ck.check("recorder got the played signal", rec.returncode == 0, rec.stderr.strip())
            rc, rep, _, err = E.run_json(exe, ["--kind", "audio", "played.wav"]) if rec.returncode == 0 \
                else (2, None, "", "")
            if rep:
                ck.close("tone --play: frequency", E.get(rep, "audio.fundamental_hz"), 2000, 0.01)
                ck.close("tone --play: level", E.get(rep, "audio.fundamental_dbfs"), -10.0, 0.01)
                thd = E.get(rep, "audio.thd_pct")
                ck.check("tone --play: continuous (THD < 1e-4 %)", thd is not None and thd < 1e-4, f"got {thd}")
            p = srv.run([exe, "tone", "--play", "--device", "nosuch", "--seconds", "1"])
            ck.check("tone --play on an unknown device: exit 2, one line",
                     p.returncode == 2 and len(p.stderr.strip().splitlines()) == 1 and "nosuch" in p.stderr, p.stderr)
            p = srv.run([exe, "tone", "--play", "--device", "loopback", "--rate", "44100", "--seconds", "1"])
            ck.check("tone --play at a refused rate: exit 2", p.returncode == 2 and "44100" in p.stderr, p.stderr)
    ck.finish()


if __name__ == "__main__":
    main()
