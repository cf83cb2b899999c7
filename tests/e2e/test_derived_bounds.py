"""End-to-end test: a level in other units carries the state of the dBFS figure it comes from.

Usage: /usr/bin/python3 test_derived_bounds.py /path/to/modlens

With a calibration (--full-scale-dbu) measure adds dBu, dBV, volts and watts beside dBFS. A dBFS
figure that is an upper bound (hum with no mains line above the noise) makes its dBu figure the
same bound: printed "< value", listed in JSON `bounds` with the same direction and reason, its
value the dBFS bound plus the full-scale dBu (docs/references.md 14: dBu = dBFS + the dBu of a
full-scale sine). A dBFS figure that is not measured (no test tone) leaves its dBu, dBV, V and W
figures null with the same reason. Captures built with numpy.
"""
import json
import os
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402

import e2e_common as E  # noqa: E402

FS = 48000
FS_DBU = 18.0


def measure(exe, wav, fmt):
    p = subprocess.run([exe, "measure", wav, "--full-scale-dbu", str(FS_DBU), "--load-ohms", "8", "--format", fmt],
                       capture_output=True, timeout=E.RUN_TIMEOUT_S)
    return p.returncode, p.stdout.decode()


def main():
    exe = E.modlens_path()
    c = E.Checker("derived level states")
    with E.scratch():
        t = np.arange(3 * FS) / FS
        rng = np.random.default_rng(3)
        # a clean 1 kHz tone at -6.02 dBFS, no hum: hum.level_dbfs is an upper bound
        E.write("tone.wav", (0.5 * np.sin(2 * np.pi * 1000 * t) + 1e-5 * rng.standard_normal(len(t))).astype(np.float32),
                FS, "FLOAT")
        # noise alone: no test tone, and no hum
        E.write("noise.wav", (1e-3 * rng.standard_normal(len(t))).astype(np.float32), FS, "FLOAT")
        for wav in ("tone.wav", "noise.wav"):
            rc, out = measure(exe, wav, "json")
            d = json.loads(out) if rc == 0 else {}
            hum = d.get("hum", {})
            bounds = d.get("bounds", {}).get("hum", {})
            quals = d.get("qualifiers", {}).get("hum", {})
            c.check("%s: hum.level_dbfs is an upper bound (the premise)" % wav, bounds.get("level_dbfs") == "upper",
                    "bounds %r" % d.get("bounds"))
            c.check("%s: hum.level_dbu is the same upper bound" % wav, bounds.get("level_dbu") == "upper",
                    "bounds %r" % d.get("bounds"))
            c.check("%s: hum.level_dbu's reason is hum.level_dbfs's" % wav,
                    quals.get("level_dbu") is not None and quals.get("level_dbu") == quals.get("level_dbfs"),
                    "qualifiers %r" % quals)
            if isinstance(hum.get("level_dbfs"), float):
                # docs/references.md 14: dBu = dBFS + full-scale dBu; both bounds rounded outward (0.01 each)
                c.close("%s: hum.level_dbu = hum.level_dbfs + %g" % (wav, FS_DBU), hum.get("level_dbu"),
                        hum["level_dbfs"] + FS_DBU, 0.011)
            rc, text = measure(exe, wav, "text")
            line = [ln for ln in text.split("\n") if ln.startswith("hum.level_dbu")]
            c.check("%s: text prints hum.level_dbu as '< value'" % wav, rc == 0 and line and "<" in line[0], repr(line))

        # no test tone: every level of the tone is null, with the tone's reason
        rc, out = measure(exe, "noise.wav", "json")
        d = json.loads(out) if rc == 0 else {"audio": {}, "reasons": {"audio": {}}}
        why = d["reasons"]["audio"].get("fundamental_dbfs")
        c.check("noise.wav: audio.fundamental_dbfs not measured (the premise)",
                d["audio"].get("fundamental_dbfs") is None and why)
        for k in ("fundamental_dbu", "fundamental_dbv", "fundamental_vrms", "fundamental_w"):
            c.check("noise.wav: audio.%s null with the tone's reason" % k,
                    d["audio"].get(k, "absent") is None and d["reasons"]["audio"].get(k) == why,
                    "value %r, reason %r" % (d["audio"].get(k, "absent"), d["reasons"]["audio"].get(k)))

        # a measured figure stays a plain reading: the tone at 20 lg 0.5 dBFS
        rc, out = measure(exe, "tone.wav", "json")
        d = json.loads(out) if rc == 0 else {"audio": {}, "bounds": {}}
        want = 20 * np.log10(0.5) + FS_DBU
        c.close("tone.wav: audio.fundamental_dbu = 20 lg 0.5 + %g (AES17, docs/references.md 5 and 14)" % FS_DBU,
                d["audio"].get("fundamental_dbu"), want, 0.02)
        c.check("tone.wav: no tone level listed as a bound",
                not any(k.startswith("fundamental") for k in d.get("bounds", {}).get("audio", {})),
                "bounds %r" % d.get("bounds"))
    c.finish()


if __name__ == "__main__":
    main()
