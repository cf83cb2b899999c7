"""`modlens compare` with saved JSON reports that no measurement could have written.

Run: /usr/bin/python3 test_compare_saved.py /path/to/modlens

A real report is made here (`modlens measure --format json` of a numpy sine with a 2nd harmonic
at -40 dBc and white noise), then changed by construction into one that is impossible or
incomplete. What makes each impossible comes from the figures' definitions (README "Metrics";
docs/references.md 4 for ENOB and SINAD, 5 for THD): THD and THD+N are r.m.s. ratios (never
negative), ENOB is counted in 0..32 bits, a level or ratio in dB lies within the reportable range
(+-290 dB, analyzer/values.h), a frequency is not negative. Each is refused: exit 2, nothing on
standard output, one line on stderr naming the file, the key and the problem. A report that lost
its audio section, or a JSON array, a byte-order mark or deeply nested JSON, is refused as "not a
modlens JSON report" (or says which section is missing). A report that lost one metric compares,
but a note names what was not compared and the count of compared metrics leaves it out.
"""
import json
import os
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402
import soundfile as sf  # noqa: E402

import e2e_common as E  # noqa: E402

RATE = 48000


def run(exe, args):
    p = subprocess.run(E.WRAP + [exe] + args, capture_output=True, text=True, timeout=E.RUN_TIMEOUT_S)
    return p.returncode, p.stdout, p.stderr


def write(name, rep):
    with open(name, "w") as f:
        json.dump(rep, f, indent=2)


def refused(ck, exe, label, name, words):
    rc, out, err = run(exe, ["compare", "good.json", name])
    lines = err.strip().splitlines()
    ck.check("%s: exit 2, one line naming %s and %s" % (label, name, ", ".join(words)),
             rc == 2 and out == "" and len(lines) == 1 and lines[0].startswith("modlens: %s: " % name)
             and all(w in lines[0] for w in words), "rc %d: %s" % (rc, err.strip()))


def main():
    exe = E.modlens_path()
    ck = E.Checker("compare saved")
    with E.scratch():
        n = np.arange(2 * RATE)
        x = 0.5 * np.sin(2 * np.pi * 1000 * n / RATE) + 0.005 * np.sin(2 * np.pi * 2000 * n / RATE)
        x = x + 1e-4 * np.random.default_rng(4).standard_normal(len(n))
        sf.write("tone.wav", x.astype(np.float32), RATE, subtype="FLOAT")
        rc, out, err = run(exe, ["measure", "--format", "json", "--output", "good.json", "tone.wav"])
        ck.check("measure writes a report", rc == 0, err)
        with open("good.json") as f:
            good = json.load(f)
        rc, out, err = run(exe, ["compare", "good.json", "good.json"])
        ck.check("a report against itself: exit 0", rc == 0, err)

        def changed(name, fn):
            r = json.loads(json.dumps(good))
            fn(r)
            write(name, r)

        changed("neg.json", lambda r: r["audio"].__setitem__("thd_pct", -5.0))
        refused(ck, exe, "negative THD", "neg.json", ["audio.thd_pct", "-5 %", "impossible"])
        changed("negn.json", lambda r: r["audio"].__setitem__("thdn_pct", -0.5))
        refused(ck, exe, "negative THD+N", "negn.json", ["audio.thdn_pct", "impossible"])
        changed("enob.json", lambda r: r["audio"].__setitem__("enob_bits", 40.0))
        refused(ck, exe, "ENOB 40 bits", "enob.json", ["audio.enob_bits", "0..32 bits"])
        changed("db.json", lambda r: r["audio"].__setitem__("thd_db", -299.0))
        refused(ck, exe, "THD -299 dB", "db.json", ["audio.thd_db", "impossible"])
        changed("hz.json", lambda r: r["audio"].__setitem__("fundamental_hz", -1000.0))
        refused(ck, exe, "negative frequency", "hz.json", ["audio.fundamental_hz", "impossible"])
        changed("noaudio.json", lambda r: r.pop("audio"))
        refused(ck, exe, "audio section deleted", "noaudio.json", ['no "audio" section'])
        changed("nohum.json", lambda r: r.pop("hum"))
        refused(ck, exe, "hum section deleted", "nohum.json", ['no "hum" section'])
        with open("array.json", "w") as f:
            f.write("[1, 2]")
        refused(ck, exe, "JSON array", "array.json", ["not a modlens JSON report", "array"])
        with open("bom.json", "wb") as f:
            f.write(b"\xef\xbb\xbf" + json.dumps(good).encode())
        refused(ck, exe, "byte-order mark", "bom.json", ["not a modlens JSON report", "byte-order mark"])
        with open("deep.json", "w") as f:
            f.write("[" * 5000 + "]" * 5000)
        refused(ck, exe, "deep JSON", "deep.json", ["not a modlens JSON report", "depth"])

        # one metric lost: compared, but named, and not counted as compared
        changed("lost.json", lambda r: r["audio"].pop("thd_pct"))
        rc, out, err = run(exe, ["compare", "--format", "json", "good.json", "lost.json"])
        ok = rc == 0
        ck.check("one metric lost: exit 0", ok, err)
        if ok:
            rep = json.loads(out)
            notes = [t for t in rep.get("notes", []) if "not compared" in t]
            ck.check("one metric lost: a note names it", len(notes) == 1 and "audio.thd_pct" in notes[0]
                     and "B lacks 1 metric" in notes[0], str(rep.get("notes")))
        rc, out, err = run(exe, ["compare", "good.json", "good.json"])
        whole = out.strip().splitlines()[-1] if out.strip() else ""
        rc2, out2, err2 = run(exe, ["compare", "good.json", "lost.json"])
        part = out2.strip().splitlines()[-1] if out2.strip() else ""
        nums = [int(w) for w in whole.split() if w.isdigit()], [int(w) for w in part.split() if w.isdigit()]
        ck.check("one metric lost: one fewer compared metric in the verdict line",
                 len(nums[0]) == 1 and len(nums[1]) == 1 and nums[1][0] == nums[0][0] - 1, "%s / %s" % (whole, part))
    ck.finish()


if __name__ == "__main__":
    main()
