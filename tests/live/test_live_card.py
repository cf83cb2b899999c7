"""The sound card's own floor through a real audio path: `card --device` on the JACK dummy server's
loopback, `tone --card-test --play` recorded by ml-feed, and the settings' default devices.

Usage: /usr/bin/python3 test_live_card.py /path/to/modlens /path/to/ml-feed

The loopback client returns what is played bit-exactly (DEVELOPERS.md, "Live audio without a
sound card"), so the path is the test signal's own: a flat response (0 dB at every step within
0.001 dB, float rounding), no crosstalk beyond the dither, no gain difference, one clock (0 ppm), and
a floor at the level of the signal's dither, which is all the path carries in its silence. That
level is analytic: TPDF dither of 24 bits (two uniform values of +-1/2 LSB, LSB = 2^-23) has variance
LSB^2/6; played as float it is not quantised again, so over 20 Hz .. 20 kHz of the 24 kHz band the
floor is 10 lg((LSB^2/6) (19980/24000) / 0.5) dBFS = -144.05 dBFS, and A-weighted 2.048 dB lower
(white noise, docs/references.md 1.3). Tolerance 1 dB (the brief's); the estimate's spread over 4 s
is a few hundredths of a dB.
"""
import json
import math
import os
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "e2e"))

import e2e_common as E  # noqa: E402
import jackserver as J  # noqa: E402

LSB = 2.0 ** -23
FLOOR_FLOAT = 10 * math.log10(LSB * LSB / 6 * (19980 / 24000) / 0.5)


def check_flat(ck, tag, prof, floor):
    for c, ch in enumerate(prof["channel"]):
        t = "%s, channel %d" % (tag, c + 1)
        worst = max(abs(r) for r in ch["response_db"])
        ck.check(t + ": flat response (every step within 0.001 dB)", worst <= 0.001, "worst %.5f dB" % worst)
        ck.close(t + ": floor at the path's own (dither) level", ch["noise_dbfs"], floor, 1.0)
        ck.close(t + ": A-weighted floor 2.048 dB lower (white)", ch["noise_a_dbfs"], floor - 2.048, 1.0)
        ck.close(t + ": the -1 dBFS tone returns at -1 dBFS", ch["level_dbfs"], -1.0, 0.001)
        ck.check(t + ": no crosstalk (an upper bound in the dither)", ch["crosstalk_bound"] == "upper"
                 and ch["crosstalk_db"] < -130, repr(ch["crosstalk_db"]))
    ck.close(tag + ": one clock: 0 ppm", prof["rate_error_ppm"], 0.0, 0.05)
    ck.close(tag + ": no gain difference", prof["gain_difference_db"], 0.0, 0.001)


def main():
    exe, feeder = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
    ck = E.Checker("live card")
    with E.scratch() as tmp:
        with J.Server(rate=48000) as srv:
            p = srv.run([exe, "card", "--device", "loopback", "--output-device", "loopback", "--out", "card.json"],
                        timeout=120)
            ck.check("card --device loopback: exit 0", p.returncode == 0 and os.path.exists("card.json"),
                     p.stderr.strip())
            if p.returncode == 0:
                with open("card.json") as f:
                    prof = json.load(f)
                check_flat(ck, "card --device", prof, FLOOR_FLOAT)
                # a device under test through the same path: a float tone has no dither, so its noise
                # lies below the card's floor and is marked card-limited
                rc, rep, err = srv.live_json(exe, ["--device", "loopback", "--output-device", "loopback",
                                                   "--play-tone", "997,-1", "--seconds", "3", "--kind", "audio",
                                                   "--card", "card.json"])
                ck.check("live --card: exit 0 with a card_limited list", rc == 0 and rep is not None
                         and isinstance(rep.get("card_limited"), list), err.strip())
                if rep:
                    ck.check("live --card: the dut's noise below the card's floor is card-limited",
                             "audio.noise_a_dbfs" in rep["card_limited"], repr(rep["card_limited"]))
                # watch --plain: the weighted noise, the level in dBu and the card-limited figures
                E.run_cmd(exe, ["tone", "--freq", "997", "--level", "-1", "--seconds", "3", "--bits", "32f",
                                "--out", "dut.wav"])
                srv.feed(feeder, "src", "dut.wav")
                p = srv.run([exe, "watch", "--plain", "--device", "src", "--kind", "audio", "--seconds", "2",
                             "--card", "card.json", "--full-scale-dbu", "18"], timeout=60)
                lines = [dict(t.split("=", 1) for t in ln.split()) for ln in p.stdout.splitlines()]
                last = lines[-1] if lines else {}
                ck.check("watch --plain --card: exit 0, the settings on stderr",
                         p.returncode == 0 and "card profile card.json" in p.stderr, p.stderr.strip())
                ck.check("watch --plain: noise_a_dbfs, snr_a_db, fundamental_dbu and card_limited on each line",
                         lines and all(k in ln for ln in lines for k in ("noise_a_dbfs", "snr_a_db",
                                                                         "fundamental_dbu", "card_limited")),
                         repr(last))
                if last.get("fundamental_dbu", "nan") != "nan":
                    ck.close("watch: -1 dBFS at +18 dBu full scale reads +17 dBu", float(last["fundamental_dbu"]),
                             17.0, 0.01)
            # tone --card-test --play, recorded straight from the player's ports (a third client
            # behind the loopback skips periods: DEVELOPERS.md); PortAudio's client is "PortAudio"
            player = srv.popen([exe, "tone", "--card-test", "--play", "--device", "loopback"])
            rec = srv.run([feeder, "--record", "rec", "PortAudio", "33", "played.wav"], timeout=90)
            out, perr = player.communicate(timeout=60)
            ck.check("tone --card-test --play: exit 0", player.returncode == 0, perr.strip())
            ck.check("recorder got the played signal", rec.returncode == 0, rec.stderr.strip())
            if rec.returncode == 0:
                rc, out, err = E.run_cmd(exe, ["card", "--out", "played.json", "played.wav"])
                ck.check("card on the recording of the played signal: exit 0", rc == 0, err.strip())
                if rc == 0:
                    with open("played.json") as f:
                        check_flat(ck, "tone --card-test --play", json.load(f), FLOOR_FLOAT)
            # the settings' default devices
            folder = os.path.join(tmp, "xdg", "modlens")
            os.makedirs(folder)
            with open(os.path.join(folder, "settings.ini"), "w") as f:
                f.write("device = loopback\noutput_device = loopback\n")
            env = dict(srv.env, XDG_CONFIG_HOME=os.path.join(tmp, "xdg"))
            p = subprocess.run([exe, "live", "--format", "json", "--play-tone", "1000,-6", "--seconds", "2",
                                "--kind", "audio"], env=env, capture_output=True, text=True, timeout=120)
            rep = json.loads(p.stdout) if p.returncode == 0 else None
            ck.check("live takes device and output_device from the settings", rep is not None
                     and rep["live"]["device"] == "loopback"
                     and "device, output_device" in E.get(rep, "settings.in_force"), p.stderr.strip())
            if rep:
                ck.close("... and measures the played tone", E.get(rep, "audio.fundamental_dbfs"), -6.0, 0.01)
    ck.finish()


if __name__ == "__main__":
    main()
