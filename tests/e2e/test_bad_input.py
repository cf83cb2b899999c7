"""End-to-end test of `modlens measure` on bad input and bad options.

Usage: /usr/bin/python3 test_bad_input.py /path/to/modlens

Every error case must exit 2 with exactly one line on stderr naming the file (or the option) and
the problem, print nothing on stdout, and create no report file (each run passes --output into
an otherwise empty directory, which must stay empty). Two valid-but-flagged captures -- all
zeros, and a clipped full-scale tone -- must exit 0 with a note and no NaN/Infinity in the JSON.
"""
import hashlib
import json
import os
import re
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))

import numpy as np  # noqa: E402
import soundfile as sf  # noqa: E402

import e2e_common as E  # noqa: E402

FS = 48000


def make_inputs():
    t = np.arange(2 * FS) / FS
    tone = 0.5 * np.sin(2 * np.pi * 1000 * t)
    E.write("stereo.wav", np.stack([tone, tone], axis=1), FS, "PCM_16")
    E.write("mono.wav", tone, FS, "PCM_16")
    E.write("noframes.wav", np.zeros(0), FS, "PCM_16")
    x = tone.copy()
    x[1234] = np.nan
    E.write("nan.wav", x, FS, "FLOAT")
    x = tone.copy()
    x[4321] = np.inf
    E.write("inf.wav", x, FS, "FLOAT")
    with open("notes.txt", "w") as f:
        f.write("this is a text file, not a recording\n" * 50)
    open("empty.wav", "wb").close()
    with open("stereo.wav", "rb") as f:
        head = f.read(30)  # inside the 44-byte canonical header: RIFF/WAVE/fmt cut short
    with open("truncated.wav", "wb") as f:
        f.write(head)
    os.mkdir("adir")
    os.mkdir("out")


# (name, args, regex the stderr line must match besides naming `names`, names)
ERROR_CASES = [
    ("missing file", ["nosuch.wav"], r"no such file", "nosuch.wav"),
    ("text file", ["notes.txt"], r"not .*audio|format|recogni", "notes.txt"),
    ("empty 0-byte file", ["empty.wav"], r"empty|not .*audio|format|recogni", "empty.wav"),
    ("WAV with 0 frames", ["noframes.wav"], r"no (audio )?frames|0 frames|empty", "noframes.wav"),
    ("NaN sample", ["nan.wav"], r"nan", "nan.wav"),
    ("+inf sample", ["inf.wav"], r"inf", "inf.wav"),
    ("--start beyond the end", ["--start", "5", "mono.wav"], r"past the end|beyond|longer|exceed", "mono.wav"),
    ("--duration too long", ["--duration", "3", "mono.wav"], r"past the end|beyond|longer|exceed", "mono.wav"),
    ("--start + --duration too long", ["--start", "1.5", "--duration", "1", "mono.wav"],
     r"past the end|beyond|longer|exceed", "mono.wav"),
    ("--channel 3 on a stereo file", ["--channel", "3", "stereo.wav"], r"channel", "stereo.wav"),
    ("truncated WAV header", ["truncated.wav"], r"not .*audio|format|header|chunk|truncat", "truncated.wav"),
    ("directory as input", ["adir"], r"directory", "adir"),
    ("--output in a missing folder", ["--output", "nofolder/r.json", "mono.wav"], r"no such file|director|folder",
     "nofolder/r.json"),
    ("--output is a directory", ["--output", "adir", "mono.wav"], r"directory", "adir"),
    ("--band 5:2", ["--band", "5:2", "mono.wav"], r"--band", "5:2"),
    ("--band without colon", ["--band", "100", "mono.wav"], r"--band", "100"),
    ("--harmonics 1", ["--harmonics", "1", "mono.wav"], r"--harmonics", "1"),
    ("--format xml", ["--format", "xml", "mono.wav"], r"--format", "xml"),
    ("--kind bogus", ["--kind", "bogus", "mono.wav"], r"--kind", "bogus"),
    ("--mains 55", ["--mains", "55", "mono.wav"], r"--mains", "55"),
    ("--channel 0", ["--channel", "0", "mono.wav"], r"--channel", "0"),
    ("--start -1", ["--start", "-1", "mono.wav"], r"--start", "-1"),
    ("--tone abc", ["--tone", "abc", "mono.wav"], r"--tone", "abc"),
    ("--tone outside the band", ["--band", "20:5000", "--tone", "8000", "mono.wav"], r"tone", "8000"),
    ("unknown option", ["--bogus", "mono.wav"], r"unknown option|unrecognized|bogus", "--bogus"),
    ("no input file", [], r"input|file", "measure"),
    ("two input files", ["mono.wav", "stereo.wav"], r"extra|one input", "stereo.wav"),
]


def out_listing():
    return sorted(os.listdir("out"))


def check_errors(ck, exe):
    for i, (what, args, problem, names) in enumerate(ERROR_CASES):
        report = "out/report%02d.json" % i
        full = args if "--output" in args else ["--output", report] + args
        rc, out, err = E.run(exe, ["--format", "json"] + full)
        lines = err.splitlines()
        msg = lines[0] if lines else ""
        ok = (rc == 2 and len(lines) == 1 and out == "" and names in msg
              and re.search(problem, msg, re.I) is not None and out_listing() == []
              and not os.path.exists("nofolder"))
        ck.check("%s: exit 2, one stderr line naming %r and the problem, no stdout, no file" % (what, names),
                 ok, "exit %d stdout %d bytes stderr %r out/ %r" % (rc, len(out), err, out_listing()))

    # --output equal to the input: refused, input unchanged
    digest = hashlib.sha256(open("mono.wav", "rb").read()).hexdigest()
    rc, out, err = E.run(exe, ["--format", "json", "--output", "mono.wav", "mono.wav"])
    lines = err.splitlines()
    ck.check("--output = input: exit 2, one stderr line naming it, no stdout",
             rc == 2 and len(lines) == 1 and "mono.wav" in lines[0] and out == "", "exit %d %r" % (rc, err))
    ck.check("--output = input: input unchanged",
             hashlib.sha256(open("mono.wav", "rb").read()).hexdigest() == digest)
    ck.check("--output = input: no temporary file left",
             sorted(f for f in os.listdir(".") if f.startswith("mono.wav")) == ["mono.wav"],
             repr(sorted(os.listdir("."))))
    # the same file under another name (hard link) is still the input
    os.link("mono.wav", "alias.wav")
    rc, out, err = E.run(exe, ["--output", "alias.wav", "mono.wav"])
    ck.check("--output = input by another name: exit 2, input unchanged",
             rc == 2 and hashlib.sha256(open("mono.wav", "rb").read()).hexdigest() == digest, "exit %d %r" % (rc, err))


def check_flagged(ck, exe):
    # all-zero capture: a valid report that says so
    E.write("silent.wav", np.zeros(2 * FS), FS, "PCM_16")
    rc, out, err = E.run(exe, ["--format", "json", "--output", "out/silent.json", "silent.wav"])
    text = open("out/silent.json").read() if os.path.exists("out/silent.json") else ""
    ck.check("silent: exit 0, report written, stdout empty", rc == 0 and text != "" and out == "",
             "exit %d %r" % (rc, err))
    ck.check("silent: JSON has no NaN/Infinity", text != "" and E.finite_json_text(text))
    rep = json.loads(text) if text and E.finite_json_text(text) else None
    if rep is not None:
        ck.check("silent: a note says the input is silent",
                 any(re.search(r"silent|all zero|every .*zero", n, re.I) for n in rep.get("notes", [])),
                 repr(rep.get("notes")))
        ck.check("silent: clipped_samples 0, dc 0", rep["audio"]["clipped_samples"] == 0
                 and rep["audio"]["dc_offset_pct"] == 0)
        ck.check("silent: no measured tone", rep["audio"]["fundamental_hz"] is None
                 and rep["audio"]["thd_pct"] is None, repr(rep["audio"]))
    rc, out, err = E.run(exe, ["silent.wav"])
    ck.check("silent text: exit 0, no nan/inf printed", rc == 0 and re.search(r"\b(nan|inf)\b", out, re.I) is None)
    rc, out, err = E.run(exe, ["--format", "csv", "silent.wav"])
    ck.check("silent csv: exit 0, no nan/inf printed", rc == 0 and re.search(r"\b(nan|inf)\b", out, re.I) is None)

    # clipped full-scale capture: a 1 kHz sine driven 1.5x into the rails, 16-bit
    t = np.arange(2 * FS) / FS
    E.write("clipped.wav", np.clip(1.5 * np.sin(2 * np.pi * 1000 * t + 0.1), -1.0, 1.0), FS, "PCM_16")
    codes, _ = sf.read("clipped.wav", dtype="int16")
    # dsp/stats.h: clipped = at or within 1 LSB of a full-scale code: code >= 32766 or <= -32767
    want = int(np.sum(codes.astype(int) >= 32766) + np.sum(codes.astype(int) <= -32767))
    rc, out, err = E.run(exe, ["--format", "json", "clipped.wav"])
    ck.check("clipped: exit 0, JSON has no NaN/Infinity", rc == 0 and E.finite_json_text(out), "exit %d %r" % (rc, err))
    rep = json.loads(out) if rc == 0 and E.finite_json_text(out) else None
    if rep is not None:
        ck.check("clipped: clipped_samples = count of codes within 1 LSB of full scale",
                 rep["audio"]["clipped_samples"] == want, "%r vs %d (of %d)" % (rep["audio"]["clipped_samples"], want, len(codes)))
        # the 1.5x sine sits on the rails for 1 - (2/pi) asin(1/1.5) = 53.5 % of the time
        ck.close("clipped: fraction on the rails", want / len(codes), 1 - 2 / np.pi * np.arcsin(1 / 1.5), 0.01,
                 "analytic; sampling of 48 samples per period")
        ck.check("clipped: a note about clipping", any(re.search(r"clip", n, re.I) for n in rep.get("notes", [])),
                 repr(rep.get("notes")))
        ck.check("clipped: peak 0 dBFS", abs(rep["audio"]["peak_dbfs"]) < 0.01, repr(rep["audio"].get("peak_dbfs")))
    rc, out, err = E.run(exe, ["clipped.wav"])
    ck.check("clipped text: exit 0, notes section mentions clipping",
             rc == 0 and re.search(r"^notes$[\s\S]*clip", out, re.M | re.I) is not None)


def main():
    exe = E.modlens_path()
    ck = E.Checker("test_bad_input")
    with E.scratch():
        make_inputs()
        check_errors(ck, exe)
        check_flagged(ck, exe)
    ck.finish()


if __name__ == "__main__":
    main()
