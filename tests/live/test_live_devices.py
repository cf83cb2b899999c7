"""`modlens devices` lists the devices of a JACK test server (text and JSON), and says clearly
when there is no audio system at all.

Usage: /usr/bin/python3 test_live_devices.py /path/to/modlens /path/to/ml-feed
Expected devices (what the server offers): the server's loopback client with 2 inputs and
2 outputs at the server rate, and the feeder client `feed` with 2 outputs (PortAudio shows a
client's output ports as a capture device) -- see jackserver.py for the set-up.
"""
import json
import os
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "e2e"))

import e2e_common as E  # noqa: E402
import jackserver as J  # noqa: E402


def main():
    exe, feeder = os.path.abspath(sys.argv[1]), os.path.abspath(sys.argv[2])
    ck = E.Checker("live devices")
    with E.scratch():
        E.write("stereo.wav", E.synth(48000, 1.0, [(1000, 0.5, 0.0)]).repeat(2).reshape(-1, 2), 48000, "FLOAT")
        with J.Server(rate=48000) as srv:
            srv.feed(feeder, "feed", "stereo.wav")
            p = srv.run([exe, "devices", "--format", "json"])
            ck.check("devices json exits 0", p.returncode == 0, p.stderr.strip())
            try:
                devs = json.loads(p.stdout)["devices"]
            except (ValueError, KeyError):
                devs = []
            by = {d["name"]: d for d in devs}
            ck.check("loopback listed", "loopback" in by, str(sorted(by)))
            ck.check("feed listed", "feed" in by, str(sorted(by)))
            if "loopback" in by:
                d = by["loopback"]
                ck.check("loopback: 2 in, 2 out, 48000 Hz, JACK",
                         (d["input_channels"], d["output_channels"], d["default_rate_hz"]) == (2, 2, 48000.0)
                         and "JACK" in d["host_api"], str(d))
            if "feed" in by:
                d = by["feed"]
                ck.check("feed: 2 in, 0 out", (d["input_channels"], d["output_channels"]) == (2, 0), str(d))
            ck.check("one default input and one default output",
                     sum(d["default_input"] for d in devs) == 1 and sum(d["default_output"] for d in devs) == 1)
            p = srv.run([exe, "devices"])
            lines = p.stdout.splitlines()
            ck.check("text: a header and one row per device", p.returncode == 0 and len(lines) == 1 + len(devs)
                     and all(any(n in l for l in lines) for n in by), p.stdout)
            ck.check("text: stderr quiet (back-end scan noise hidden)", p.stderr.strip() == "", p.stderr)
            # the defaults in words in the last column, as JSON has them
            head = lines[0].split() if lines else []
            ck.check("text: header names the columns, defaults in words",
                     head[:2] == ["#", "device"] and lines[0].rstrip().endswith("default for"), repr(lines[:1]))
            for d in devs:
                row = next((l for l in lines[1:] if l.split()[:2] == [str(d["index"]), d["name"]]), "")
                want = {(True, True): "input and output", (True, False): "input", (False, True): "output",
                        (False, False): ""}[(d["default_input"], d["default_output"])]
                got = row.rstrip()
                ck.check("text: %s default column %r" % (d["name"], want),
                         (got.endswith(want) if want else not got.endswith(("input", "output")))
                         and ">" not in row and "<" not in row, row)
        # no server, no sound card on these machines: nothing to list, and live says why
        env = dict(os.environ, JACK_NO_START_SERVER="1", JACK_DEFAULT_SERVER="mlnone%d" % os.getpid())
        p = subprocess.run([exe, "devices", "--format", "json"], env=env, capture_output=True, text=True, timeout=60)
        has_card = p.returncode == 0 and json.loads(p.stdout)["devices"]
        if not has_card:
            ck.check("no audio system: devices lists none, exit 0", p.returncode == 0, p.stderr)
            p = subprocess.run([exe, "live", "--seconds", "1"], env=env, capture_output=True, text=True, timeout=60)
            ck.check("no audio system: live exits 2 with one line", p.returncode == 2
                     and len(p.stderr.strip().splitlines()) == 1 and "no audio devices" in p.stderr, p.stderr)
    ck.finish()


if __name__ == "__main__":
    main()
